"""The orchestrator: takes a validated case through the physics modules.

:func:`run_case` returns a :class:`Results` object of pandas tables.  Column
names carry their SI unit in brackets (``chainage [m]``); the writers convert to
the report's unit system.  Nothing here reads or writes files.

Stages, each in its own module: :mod:`.steady` (grade lines, pressure checks,
losses) and :mod:`.production` (flow record, turbines, energy, draft tube and
turbine setting).
"""

from __future__ import annotations

import datetime as _dt
import warnings as _warnings

import numpy as np
import pandas as pd

from .. import __version__, water
from ..constants import J_PER_MWH
from ..friction import FRICTION_METHODS, CorrelationRangeWarning
from . import hammer, production, sizing, steady, uncertainty
from .core import STANDING_CAUTION, TABLE_ORDER, Methods, Results, Warning_
from .stages import Headline, stage_tables
from .steady import CROWN_MINIMUM

__all__ = ["STANDING_CAUTION", "TABLE_ORDER", "Results", "Warning_", "run_case",
           "check_case"]


def check_case(case, proceed=False) -> list:
    """Refuse, without the heavy stages, everything :func:`run_case` refuses as bad input.

    Runs the steady hydraulics (the design flow must exist: no absolute pressure below
    the vapour pressure), the design-flow head check, the wave speeds and the bounds on
    the water-hammer simulations (without simulating).  Raises
    :class:`penstock.case.CaseError`; returns the cautions those stages raised.
    """
    warns: list[Warning_] = []
    methods = Methods()
    props = water.water_properties(case.temperature, case.altitude)
    st = steady.run(case, props, warns, methods, lambda name: None, proceed=proceed)
    gross, loss, _, net = production.design_heads(case, st)
    production.check_design_head(case, gross, net, loss)
    hammer.check(case, props, st)
    return warns


def run_case(case, progress=None, samples=None, proceed=False) -> Results:
    """Run a validated case through the models.

    Parameters
    ----------
    case : penstock.case.Case
        From :func:`penstock.load_case`.
    progress : callable, optional
        Called as ``progress(step_name)`` before each stage, for a progress bar.
    samples : int, optional
        Monte Carlo samples; overrides the case's ``uncertainty.samples`` (0: none).
    proceed : bool, default False
        Go on when the tool's own checks find the case physically impossible (for
        instance an absolute pressure below the vapour pressure at the design flow);
        the impossibility is then a caution and the results are marked not physical.
        By default such a case raises :class:`penstock.case.CaseError`.

    Returns
    -------
    Results
    """
    tick = progress or (lambda name: None)
    warns: list[Warning_] = []
    methods = Methods()

    tick("water properties")
    props = water.water_properties(case.temperature, case.altitude)
    methods.add("Water properties", "IAPWS-IF97 region 1 density and speed of sound, IAPWS 2008 "
                "viscosity on that density, IAPWS-IF97 saturation pressure, at standard "
                "atmospheric pressure",
                "IAPWS R7-97(2012), eq. 7 and eq. 30; IAPWS R12-08, eq. 10 (Huber et al. 2009, "
                "J. Phys. Chem. Ref. Data 38(2))")
    methods.add("Atmospheric pressure", "ISO standard atmosphere, troposphere",
                "ISO 2533:1975 Standard Atmosphere")

    stages = []
    for name, stage in (("steady hydraulics", lambda: steady.run(
                            case, props, warns, methods, tick, proceed=proceed)),
                        ("energy", lambda: production.run(case, props, stages[0], warns,
                                                          methods, tick)),
                        ("water hammer", lambda: hammer.run(case, props, stages[0], stages[1],
                                                            warns, methods, tick)),
                        ("diameter study", lambda: sizing.run(case, props, *stages[:3], warns,
                                                              methods, tick)),
                        ("uncertainty", lambda: uncertainty.run(
                            case, props, stages[0], stages[1], stages[3], warns, methods, tick,
                            samples))):
        stages.append(_caught(name, stage, warns))
    st, prod, ham, size, mc = stages

    headline = Headline.of(prod.headline, ham.headline, size.headline, mc.headline,
                           density=props.density,
                           min_pressure_head=float(st.pressure_checks[CROWN_MINIMUM].min()))
    tick("cautions")
    warn_df = pd.DataFrame(
        [{"severity": w.severity, "topic": w.topic, "message": w.message,
          "chainage [m]": w.chainage, "flow [m^3/s]": w.flow} for w in warns],
        columns=["severity", "topic", "message", "chainage [m]", "flow [m^3/s]"])
    tables = stage_tables(st, prod, ham, size, mc)
    return Results(
        case=case, run_date=_dt.date.today().isoformat(), version=__version__,
        summary=_summary(case, props, headline, st.route), inputs=pd.DataFrame(case.echo),
        cautions=warn_df, methods=methods.table(), headline=headline, **tables,
    )


#: Stages whose friction-range warnings the steady stage already reports by chainage and
#: flow: they run the case's own pipe at its study flows, new and aged.
_LOCATED_BY_STEADY = ("steady hydraulics", "water hammer")

#: What the other stages' friction factors concern, for their range cautions.
_RANGE_CONCERNS = {"energy": "the pipe at the flows of the record",
                   "diameter study": "the candidate diameters",
                   "uncertainty": "the sampled roughness and flows"}


def _caught(stage_name, stage, warns):
    """Run a stage, turning each warning a physics function raises (a correlation used
    outside its range, for instance) into a caution, once per stage and message.

    Friction-range warnings of the stages in :data:`_LOCATED_BY_STEADY` are left to the
    steady stage's own cautions, which name the chainage and the flow; those of the
    other stages name what they concern and the range met."""
    with _warnings.catch_warnings(record=True) as caught:
        _warnings.simplefilter("always")
        out = stage()
    seen, ranges = set(), {}
    for w in caught:
        if not issubclass(w.category, UserWarning):
            continue
        m = w.message
        if isinstance(m, CorrelationRangeWarning) and m.reynolds_seen is not None:
            if stage_name not in _LOCATED_BY_STEADY:   # one caution per method, ranges merged
                lo_re, hi_re, lo_rr, hi_rr = ranges.get(m.method, (np.inf, -np.inf) * 2)
                ranges[m.method] = (min(lo_re, m.reynolds_seen[0]),
                                    max(hi_re, m.reynolds_seen[1]),
                                    min(lo_rr, m.relative_roughness_seen[0]),
                                    max(hi_rr, m.relative_roughness_seen[1]))
            continue
        text = str(m)
        if text in seen:
            continue
        seen.add(text)
        warns.append(Warning_("range", f"{stage_name}: {text}"))
    for method, (lo_re, hi_re, lo_rr, hi_rr) in ranges.items():
        entry = FRICTION_METHODS[method]
        warns.append(Warning_("range", f"{stage_name}: the {method} friction factor is "
                              f"extrapolated for {_RANGE_CONCERNS.get(stage_name, 'this stage')}"
                              f", at Re {lo_re:.3g}–{hi_re:.3g} and relative roughness "
                              f"{lo_rr:.3g}–{hi_rr:.3g}, outside its published Re "
                              f"{entry.reynolds_range[0]:g}–{entry.reynolds_range[1]:g} and "
                              f"relative roughness {entry.relative_roughness_range[0]:g}–"
                              f"{entry.relative_roughness_range[1]:g}"))
    return out


def _summary(case, props, h, route) -> pd.DataFrame:
    """The headline table: the case's own pipe in ``value``, and beside it, where the
    diameter study ran, the recommended uniform pipe on the same basis."""
    years = h.energy_roughness_years
    basis = "as new" if years is None else f"after {years:g} years (half the service life)"
    rec = h.selected_row
    studied = h.optimum_diameter is not None

    def r(key):
        return rec[key] if rec is not None else None

    rows = [
        ("site", case.name, "", None),
        ("note", case.note, "", None),
        ("penstock", "the case's own pipe", "",
         "recommended uniform pipe" if rec is not None else
         ("none passes the checks" if studied else "not studied")),
        ("inside diameter, largest", max(s.diameter for s in case.segments), "m",
         r("diameter [m]")),
        ("inside diameter, smallest", min(s.diameter for s in case.segments), "m",
         r("diameter [m]")),
        ("wall, thinnest plate", _own_wall(case, min), "mm", r("thinnest plate [mm]")),
        ("wall, thickest plate", _own_wall(case, max), "mm", r("thickest plate [mm]")),
        ("gross head at design flow", h.gross_head, "m", h.gross_head if rec else None),
        ("design flow", h.design_flow, "m^3/s", h.design_flow if rec else None),
        ("pipe roughness of the energy basis", basis, "", basis if rec else None),
        ("penstock losses at design flow", h.total_loss, "m",
         r("head loss at design flow [m]")),
        ("head recovered by the draft tube at design flow", h.draft_tube_recovery, "m",
         h.draft_tube_recovery if rec else None),
        ("net head at design flow", h.net_head, "m", r("net head at design flow [m]")),
        ("installed capacity", h.installed_capacity / 1e3, "kW", None),
        ("mean annual energy", h.mean_annual_energy / J_PER_MWH, "MWh",
         r("mean annual energy [MWh]")),
        ("capacity factor", 100 * h.capacity_factor, "%", None),
        (f"firm power (exceeded {100 * case.firm_exceedance:g} % of the time)",
         h.firm_power / 1e3, "kW", None),
        ("energy lost to penstock losses, mean annual", h.friction_energy / J_PER_MWH, "MWh",
         r("energy lost [MWh/year]")),
        ("minimum steady pressure head at the crown (minimum headwater, new and aged pipe)",
         h.min_pressure_head, "m",
         None if rec is None else
         rec["minimum steady pressure margin at the crown, minimum headwater [m]"]
         + case.pressure_margin),
        ("maximum transient rise on load rejection", h.max_surge_rise, "m",
         r("maximum surge rise [m]")),
        ("minimum transient pressure head at the crown (minimum headwater)",
         h.min_transient_pressure_head, "m",
         r("minimum transient pressure head at the crown, minimum headwater [m]")),
        ("annualized cost per year, diameter study basis, in the case's currency", None, "",
         r("annualized cost [currency/year]")),
        ("shortest closure keeping the rise within the allowable", h.shortest_closure, "s",
         None),
        ("water starting time", h.water_starting_time, "s", r("water starting time [s]")),
        ("penstock length", float(route.length.sum()), "m", None),
        ("water temperature", case.temperature, "degC", None),
        ("water density", props.density, "kg/m^3", None),
        ("atmospheric pressure at site", props.atmospheric_pressure / 1e3, "kPa", None),
    ]
    return pd.DataFrame(rows, columns=["quantity", "value", "unit", "recommended uniform pipe"])


def _own_wall(case, pick):
    """The case's own thinnest or thickest wall [mm], or None where none is given."""
    ts = [s.wall_thickness for s in case.segments if s.wall_thickness is not None]
    return 1e3 * pick(ts) if ts else None
