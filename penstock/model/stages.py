"""Typed results of each stage of a run.

Each stage returns one of these instead of a dict of mixed objects.  Their table fields
are named as the :class:`~penstock.model.core.Results` attributes they become, so
:func:`stage_tables` hands them over unchanged; the other fields are what later stages
need (the route, the loss function, the plant's operation, the diameter model).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

__all__ = ["HammerHeadline", "HammerStage", "Headline", "Operation", "ProductionHeadline",
           "ProductionStage", "SizingHeadline", "SizingStage", "SteadyStage",
           "UncertaintyHeadline", "UncertaintyStage", "stage_tables"]


@dataclass(frozen=True, kw_only=True)
class ProductionHeadline:
    """Headline numbers of the case's own pipe at the design flow and over the record.

    Heads in m, flows in m^3/s, powers in W, energies in J a year, speed in rpm.
    """

    gross_head: float
    net_head: float
    total_loss: float                 # penstock loss at the design flow [m]
    draft_tube_recovery: float        # [m], 0 without a draft tube
    energy_roughness_years: float | None   # pipe age of the energy basis [years]
    design_flow: float
    installed_capacity: float
    eta_rated: float                  # turbine efficiency at the design flow [-]
    mean_annual_energy: float
    capacity_factor: float            # [-]
    firm_power: float
    friction_energy: float            # energy lost to penstock losses [J/year]
    spill_energy: float
    residual_energy: float
    speed: float | None               # synchronous speed [rpm]


@dataclass(frozen=True, kw_only=True)
class HammerHeadline:
    """Headline numbers of the water-hammer stage (heads in m, times in s, speeds in m/s)."""

    max_surge_rise: float
    joukowsky: float
    allowable_rise: float
    joukowsky_wave_speed: float       # wave speed of the Joukowsky rise [m/s]
    joukowsky_velocity: float         # velocity of the Joukowsky rise [m/s]
    shortest_closure: float
    water_starting_time: float
    min_transient_pressure_head: float


@dataclass(frozen=True, kw_only=True)
class SizingHeadline:
    """Headline numbers of the diameter study; all None when it did not run."""

    optimum_diameter: float | None = None       # continuous optimum [m]
    selected_diameter: float | None = None      # recommended size [m], None if none passes
    economic_size: float | None = None          # listed size nearest the optimum [m]
    optimum_cost: float | None = None           # [currency/year]
    optimum_relative_derivative: float | None = None
    selected_wall_min: float | None = None      # [m]
    selected_wall_max: float | None = None      # [m]
    selected_row: dict | None = None            # the recommended candidate's row
    crf: float | None = None                    # capital recovery factor [1/year]
    best_design_flow: float | None = None       # design flow x diameter optimum [m^3/s]
    best_flow_diameter: float | None = None     # its diameter [m]
    best_net_value: float | None = None         # its annualized net value [currency/year]


@dataclass(frozen=True, kw_only=True)
class UncertaintyHeadline:
    """Monte Carlo quantiles of the mean annual energy [J/year]; None without samples."""

    p50_energy: float | None = None
    p90_energy: float | None = None
    p99_energy: float | None = None
    p50_standard_error: float | None = None
    probability_negative_margin: float | None = None


_PARTS = (ProductionHeadline, HammerHeadline, SizingHeadline, UncertaintyHeadline)


@dataclass(frozen=True, kw_only=True)
class Headline(ProductionHeadline, HammerHeadline, SizingHeadline, UncertaintyHeadline):
    """Every stage's headline numbers in one flat record, plus the water density
    [kg/m^3] and the minimum steady pressure head at the crown [m]."""

    density: float = float("nan")
    min_pressure_head: float = float("nan")

    @classmethod
    def of(cls, *parts, **extra) -> Headline:
        """Merge the stages' headlines (their field names never overlap)."""
        values = {}
        for part in parts:
            for f in dataclasses.fields(part):
                values[f.name] = getattr(part, f.name)
        return cls(**values, **extra)


@dataclass
class SteadyStage:
    """Grade lines, pressure checks and losses (:mod:`penstock.model.steady`)."""

    route: object                     # penstock.route.Route
    flows: np.ndarray                 # study flows [m^3/s]
    flow_names: list
    gl: object                        # penstock.gradeline.GradeLines at the study flows
    grade_lines: pd.DataFrame
    pressure_checks: pd.DataFrame
    flagged_stretches: pd.DataFrame
    loss_breakdown: pd.DataFrame
    profile: pd.DataFrame
    head_loss: Callable               # penstock loss [m] of the total flow, energy basis
    energy_roughness_years: float | None


@dataclass
class Operation:
    """The plant operated over the flow record, for later stages."""

    index: pd.DatetimeIndex
    river: np.ndarray                 # [m^3/s]
    gross: np.ndarray                 # gross head at each step [m]
    op: object                        # penstock.energy.PlantOperation
    table: object                     # efficiency table used
    drive: dict                       # drive-train efficiencies
    dt_recovery: Callable | None      # draft-tube recovery [m] of the total flow
    total_loss: Callable              # gross less net head [m] of the total flow
    step_seconds: float


@dataclass
class DesignFlows:
    """The design-flow study's flows (the case's own last, when not among them), for the
    design flow x diameter study."""

    table: pd.DataFrame               # energy.design_flow_study's columns (SI)
    grid: np.ndarray                  # uniform flow grid from 0 [m^3/s]
    weights: np.ndarray               # (design flows, grid) dispatch weights [m^3/s/year]
    head_loss: Callable               # the case's penstock loss [m] the study used


@dataclass
class ProductionStage:
    """Energy over the flow record, turbines and setting (:mod:`penstock.model.production`)."""

    flow_duration: pd.DataFrame
    power_duration: pd.DataFrame
    energy_by_year: pd.DataFrame
    energy_by_month: pd.DataFrame
    design_flow_study: pd.DataFrame
    turbine_choice: pd.DataFrame
    turbine_setting: pd.DataFrame
    draft_tube: pd.DataFrame | None
    operation: Operation
    headline: ProductionHeadline
    design_flows: DesignFlows | None = None


@dataclass
class HammerStage:
    """Water hammer (:mod:`penstock.model.hammer`)."""

    water_hammer_checks: pd.DataFrame
    wave_speeds: pd.DataFrame
    transient_envelope: pd.DataFrame
    turbine_head_history: pd.DataFrame
    closure_time_study: pd.DataFrame
    design_pressure_line: pd.DataFrame
    wave_speed_sensitivity: pd.DataFrame
    grid_reaches: int                 # MOC reaches over the whole pipe, converged grid
    screening_reaches: int            # the coarsest grid tried (the diameter study's)
    headline: HammerHeadline
    own_wall_checks: pd.DataFrame | None = None
    fitting_thrusts: pd.DataFrame | None = None


@dataclass
class SizingStage:
    """Diameter study (:mod:`penstock.model.sizing`); tables None when it did not run."""

    diameter_sweep: pd.DataFrame | None = None
    diameter_candidates: pd.DataFrame | None = None
    diameter_empirical_checks: pd.DataFrame | None = None
    diameter_sensitivity: pd.DataFrame | None = None
    diameter_one_at_a_time: pd.DataFrame | None = None
    wall_profile: pd.DataFrame | None = None
    stepped_design: pd.DataFrame | None = None
    design_comparison: pd.DataFrame | None = None
    stepped_thrusts: pd.DataFrame | None = None
    material_comparison: pd.DataFrame | None = None
    flow_diameter_study: pd.DataFrame | None = None
    model: object | None = None       # penstock.model.sizing.DiameterModel
    headline: SizingHeadline = field(default_factory=SizingHeadline)


@dataclass
class UncertaintyStage:
    """Monte Carlo (:mod:`penstock.model.uncertainty`); tables None without samples."""

    uncertainty_summary: pd.DataFrame | None = None
    uncertainty_samples: pd.DataFrame | None = None
    uncertainty_energy_exceedance: pd.DataFrame | None = None
    uncertainty_cost_histogram: pd.DataFrame | None = None
    headline: UncertaintyHeadline = field(default_factory=UncertaintyHeadline)


def stage_tables(*stages) -> dict:
    """The result tables the stages hold, by Results attribute name (None left out)."""
    out = {}
    for stage in stages:
        for f in dataclasses.fields(stage):
            value = getattr(stage, f.name)
            if isinstance(value, pd.DataFrame):
                out[f.name] = value
    return out
