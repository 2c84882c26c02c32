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

import pandas as pd

from .. import __version__, water
from . import hammer, production, sizing, steady, uncertainty
from .core import STANDING_CAUTION, TABLE_ORDER, Methods, Results, Warning_

__all__ = ["STANDING_CAUTION", "TABLE_ORDER", "Results", "Warning_", "run_case"]


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
    methods.add("Water properties", "IAPWS-95 density and speed of sound, IAPWS 2008 viscosity, "
                "IAPWS-IF97 saturation pressure, at standard atmospheric pressure",
                "IAPWS R6-95(2018); IAPWS R12-08; IAPWS R7-97(2012), eq. 30 (via the iapws "
                "package and a vectorized region-4 equation)")
    methods.add("Atmospheric pressure", "ISO standard atmosphere, troposphere",
                "ISO 2533:1975 Standard Atmosphere")

    st = steady.run(case, props, warns, methods, tick, proceed=proceed)
    prod = production.run(case, props, st, warns, methods, tick)
    ham = hammer.run(case, props, st, prod, warns, methods, tick)
    size = sizing.run(case, props, st, prod, ham, warns, methods, tick)
    mc = uncertainty.run(case, props, st, prod, size, warns, methods, tick, samples)

    headline = {**prod["headline"], **ham["headline"], **size["headline"],
                **mc.get("headline", {}),
                "density": props.density,
                "min_pressure_head": float(
                    st["pressure_checks"]["minimum pressure head at the crown [m]"].min())}
    tick("cautions")
    warn_df = pd.DataFrame(
        [{"severity": w.severity, "topic": w.topic, "message": w.message,
          "chainage [m]": w.chainage, "flow [m^3/s]": w.flow} for w in warns],
        columns=["severity", "topic", "message", "chainage [m]", "flow [m^3/s]"])
    tables = {k: v for k, v in {**st, **prod, **ham, **size, **mc}.items()
              if isinstance(v, pd.DataFrame)}
    return Results(
        case=case, run_date=_dt.date.today().isoformat(), version=__version__,
        summary=_summary(case, props, headline, st["route"]), inputs=pd.DataFrame(case.echo),
        warnings=warn_df, methods=methods.table(), headline=headline, **tables,
    )


def _summary(case, props, h, route) -> pd.DataFrame:
    rows = [
        ("site", case.name, ""),
        ("note", case.note, ""),
        ("recommended penstock diameter (diameter study)", h.get("selected_diameter"), "m"),
        ("its wall, thinnest to thickest plate", _wall_text(h, case.unit_system), ""),
        ("gross head at design flow", h["gross_head"], "m"),
        ("design flow", h["design_flow"], "m^3/s"),
        ("penstock losses at design flow" if case.draft_tube is None else
         "penstock and draft-tube losses at design flow", h["total_loss"], "m"),
        ("net head at design flow", h["net_head"], "m"),
        ("installed capacity", h["installed_capacity"] / 1e3, "kW"),
        ("mean annual energy", h["mean_annual_energy"] / 3.6e9, "MWh"),
        ("capacity factor", 100 * h["capacity_factor"], "%"),
        (f"firm power (exceeded {100 * case.firm_exceedance:g} % of the time)",
         h["firm_power"] / 1e3, "kW"),
        ("energy lost to penstock losses, mean annual" if case.draft_tube is None else
         "energy lost to penstock and draft-tube losses, mean annual",
         h["friction_energy"] / 3.6e9, "MWh"),
        ("minimum steady pressure head at the crown (minimum headwater)",
         h["min_pressure_head"], "m"),
        ("maximum transient rise on load rejection", h["max_surge_rise"], "m"),
        ("minimum transient pressure head at the crown (minimum headwater)",
         h["min_transient_pressure_head"], "m"),
        ("shortest closure keeping the rise within the allowable", h["shortest_closure"], "s"),
        ("water starting time", h["water_starting_time"], "s"),
        ("penstock length", float(route.length.sum()), "m"),
        ("water temperature", case.temperature, "degC"),
        ("water density", props.density, "kg/m^3"),
        ("atmospheric pressure at site", props.atmospheric_pressure / 1e3, "kPa"),
    ]
    return pd.DataFrame(rows, columns=["quantity", "value", "unit"])


def _wall_text(h, system) -> str:
    if h.get("selected_wall_min") is None:
        return "not studied"
    from .core import Say

    say = Say(system)
    return f"{say.mm(h['selected_wall_min'])} to {say.mm(h['selected_wall_max'])}"
