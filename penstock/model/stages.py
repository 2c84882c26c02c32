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

__all__ = ["HammerStage", "Operation", "ProductionStage", "SizingStage", "SteadyStage",
           "UncertaintyStage", "stage_tables"]


@dataclass
class SteadyStage:
    """Grade lines, pressure checks and losses (:mod:`penstock.model.steady`)."""

    route: object                     # penstock.route.Route
    flows: np.ndarray                 # study flows [m^3/s]
    flow_names: list
    gl: object                        # penstock.gradeline.GradeLines at the study flows
    grade_lines: pd.DataFrame
    pressure_checks: pd.DataFrame
    stretches: pd.DataFrame
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
class ProductionStage:
    """Energy over the flow record, turbines and setting (:mod:`penstock.model.production`)."""

    flow_duration: pd.DataFrame
    power_duration: pd.DataFrame
    energy_annual: pd.DataFrame
    energy_monthly: pd.DataFrame
    design_flow_study: pd.DataFrame
    turbine_choice: pd.DataFrame
    turbine_setting: pd.DataFrame
    draft_tube: pd.DataFrame | None
    operation: Operation
    headline: dict


@dataclass
class HammerStage:
    """Water hammer (:mod:`penstock.model.hammer`)."""

    surge_checks: pd.DataFrame
    wave_speeds: pd.DataFrame
    transient_envelope: pd.DataFrame
    valve_history: pd.DataFrame
    closure_study: pd.DataFrame
    design_pressure: pd.DataFrame
    headline: dict


@dataclass
class SizingStage:
    """Diameter study (:mod:`penstock.model.sizing`); tables None when it did not run."""

    diameter_sweep: pd.DataFrame | None = None
    diameter_candidates: pd.DataFrame | None = None
    diameter_empirical: pd.DataFrame | None = None
    diameter_sensitivity: pd.DataFrame | None = None
    diameter_one_at_a_time: pd.DataFrame | None = None
    wall_profile: pd.DataFrame | None = None
    model: object | None = None       # penstock.model.sizing.DiameterModel
    headline: dict = field(default_factory=dict)


@dataclass
class UncertaintyStage:
    """Monte Carlo (:mod:`penstock.model.uncertainty`); tables None without samples."""

    mc_summary: pd.DataFrame | None = None
    mc_samples: pd.DataFrame | None = None
    mc_exceedance: pd.DataFrame | None = None
    mc_cost_histogram: pd.DataFrame | None = None
    headline: dict = field(default_factory=dict)


def stage_tables(*stages) -> dict:
    """The result tables the stages hold, by Results attribute name (None left out)."""
    out = {}
    for stage in stages:
        for f in dataclasses.fields(stage):
            value = getattr(stage, f.name)
            if isinstance(value, pd.DataFrame):
                out[f.name] = value
    return out
