"""Results, cautions and methods bookkeeping shared by the stages of a run."""

from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from ..cautions import STANDING_CAUTION, Say, Warning_  # noqa: F401  (re-exported)


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


#: Result tables in reading order: attribute name -> file-system name.
TABLE_ORDER = {
    "summary": "summary",
    "inputs": "inputs",
    "grade_lines": "grade_lines",
    "pressure_checks": "pressure_checks",
    "stretches": "flagged_stretches",
    "loss_breakdown": "loss_breakdown",
    "flow_duration": "flow_duration",
    "power_duration": "power_duration",
    "energy_annual": "energy_by_year",
    "energy_monthly": "energy_by_month",
    "design_flow_study": "design_flow_study",
    "turbine_choice": "turbine_choice",
    "turbine_setting": "turbine_setting",
    "draft_tube": "draft_tube",
    "surge_checks": "water_hammer_checks",
    "wave_speeds": "wave_speeds",
    "transient_envelope": "transient_envelope",
    "valve_history": "turbine_head_history",
    "closure_study": "closure_time_study",
    "design_pressure": "design_pressure_line",
    "diameter_candidates": "diameter_candidates",
    "diameter_sweep": "diameter_sweep",
    "diameter_empirical": "diameter_empirical_checks",
    "diameter_sensitivity": "diameter_sensitivity",
    "diameter_one_at_a_time": "diameter_one_at_a_time",
    "wall_profile": "wall_profile",
    "mc_summary": "uncertainty_summary",
    "mc_samples": "uncertainty_samples",
    "mc_exceedance": "uncertainty_energy_exceedance",
    "mc_cost_histogram": "uncertainty_cost_histogram",
    "warnings": "cautions",
    "methods": "methods",
}


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
    stretches: pd.DataFrame
    loss_breakdown: pd.DataFrame
    profile: pd.DataFrame
    warnings: pd.DataFrame
    methods: pd.DataFrame
    flow_duration: pd.DataFrame | None = None
    power_duration: pd.DataFrame | None = None
    energy_annual: pd.DataFrame | None = None
    energy_monthly: pd.DataFrame | None = None
    design_flow_study: pd.DataFrame | None = None
    turbine_choice: pd.DataFrame | None = None
    turbine_setting: pd.DataFrame | None = None
    draft_tube: pd.DataFrame | None = None
    surge_checks: pd.DataFrame | None = None
    wave_speeds: pd.DataFrame | None = None
    transient_envelope: pd.DataFrame | None = None
    valve_history: pd.DataFrame | None = None
    closure_study: pd.DataFrame | None = None
    design_pressure: pd.DataFrame | None = None
    diameter_candidates: pd.DataFrame | None = None
    diameter_sweep: pd.DataFrame | None = None
    diameter_empirical: pd.DataFrame | None = None
    diameter_sensitivity: pd.DataFrame | None = None
    diameter_one_at_a_time: pd.DataFrame | None = None
    wall_profile: pd.DataFrame | None = None
    mc_summary: pd.DataFrame | None = None
    mc_samples: pd.DataFrame | None = None
    mc_exceedance: pd.DataFrame | None = None
    mc_cost_histogram: pd.DataFrame | None = None
    headline: dict = field(default_factory=dict)

    def tables(self) -> dict[str, pd.DataFrame]:
        """The result tables by file-system name, in reading order."""
        return {fname: getattr(self, attr) for attr, fname in TABLE_ORDER.items()
                if getattr(self, attr) is not None}
