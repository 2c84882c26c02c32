"""Results, cautions and methods bookkeeping shared by the stages of a run."""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from ..cautions import STANDING_CAUTION, Say, Warning_  # noqa: F401  (re-exported)
from .stages import Headline


class Methods:
    """Collects each method used with its published reference, once."""

    def __init__(self):
        self.rows: list[dict] = []

    def add(self, topic: str, method: str, reference: str):
        row = {"topic": topic, "method": method, "reference": reference}
        if row not in self.rows:
            self.rows.append(row)

    def table(self) -> pd.DataFrame:
        return pd.DataFrame(self.rows, columns=["topic", "method", "reference"])


#: Result tables in reading order; each is a :class:`Results` attribute and the name of
#: its CSV file (``<name>.csv``).
TABLE_ORDER = (
    "summary",
    "inputs",
    "grade_lines",
    "pressure_checks",
    "flagged_stretches",
    "loss_breakdown",
    "flow_duration",
    "power_duration",
    "energy_by_year",
    "energy_by_month",
    "design_flow_study",
    "turbine_choice",
    "turbine_setting",
    "draft_tube",
    "water_hammer_checks",
    "wave_speeds",
    "transient_envelope",
    "turbine_head_history",
    "closure_time_study",
    "design_pressure_line",
    "own_wall_checks",
    "fitting_thrusts",
    "wave_speed_sensitivity",
    "diameter_candidates",
    "diameter_sweep",
    "diameter_empirical_checks",
    "diameter_sensitivity",
    "diameter_one_at_a_time",
    "wall_profile",
    "stepped_design",
    "design_comparison",
    "stepped_thrusts",
    "material_comparison",
    "flow_diameter_study",
    "uncertainty_summary",
    "uncertainty_samples",
    "uncertainty_energy_exceedance",
    "uncertainty_cost_histogram",
    "cautions",
    "methods",
)


@dataclass
class Results:
    """Everything a run produced, as pandas tables with units in the column names.

    Tables of stages that did not run are ``None``.
    """

    case: object
    run_date: str
    version: str
    summary: pd.DataFrame
    inputs: pd.DataFrame
    grade_lines: pd.DataFrame
    pressure_checks: pd.DataFrame
    flagged_stretches: pd.DataFrame
    loss_breakdown: pd.DataFrame
    profile: pd.DataFrame
    cautions: pd.DataFrame
    methods: pd.DataFrame
    flow_duration: pd.DataFrame | None = None
    power_duration: pd.DataFrame | None = None
    energy_by_year: pd.DataFrame | None = None
    energy_by_month: pd.DataFrame | None = None
    design_flow_study: pd.DataFrame | None = None
    turbine_choice: pd.DataFrame | None = None
    turbine_setting: pd.DataFrame | None = None
    draft_tube: pd.DataFrame | None = None
    water_hammer_checks: pd.DataFrame | None = None
    wave_speeds: pd.DataFrame | None = None
    transient_envelope: pd.DataFrame | None = None
    turbine_head_history: pd.DataFrame | None = None
    closure_time_study: pd.DataFrame | None = None
    design_pressure_line: pd.DataFrame | None = None
    own_wall_checks: pd.DataFrame | None = None
    fitting_thrusts: pd.DataFrame | None = None
    wave_speed_sensitivity: pd.DataFrame | None = None
    diameter_candidates: pd.DataFrame | None = None
    diameter_sweep: pd.DataFrame | None = None
    diameter_empirical_checks: pd.DataFrame | None = None
    diameter_sensitivity: pd.DataFrame | None = None
    diameter_one_at_a_time: pd.DataFrame | None = None
    wall_profile: pd.DataFrame | None = None
    stepped_design: pd.DataFrame | None = None
    design_comparison: pd.DataFrame | None = None
    stepped_thrusts: pd.DataFrame | None = None
    material_comparison: pd.DataFrame | None = None
    flow_diameter_study: pd.DataFrame | None = None
    uncertainty_summary: pd.DataFrame | None = None
    uncertainty_samples: pd.DataFrame | None = None
    uncertainty_energy_exceedance: pd.DataFrame | None = None
    uncertainty_cost_histogram: pd.DataFrame | None = None
    headline: Headline | None = None

    def tables(self) -> dict[str, pd.DataFrame]:
        """The result tables by file-system name, in reading order."""
        return {name: getattr(self, name) for name in TABLE_ORDER
                if getattr(self, name) is not None}
