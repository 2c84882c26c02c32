"""The orchestrator: takes a validated case through the physics modules.

:func:`run_case` returns a :class:`Results` object of pandas tables.  Column
names carry their SI unit in brackets (``chainage [m]``); the writers convert to
the report's unit system.  Nothing here reads or writes files.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from . import __version__, gradeline, water
from .case import Case
from .constants import GRAVITY
from .route import build_route

#: The standing caution printed on every report.
STANDING_CAUTION = (
    "These are planning-level results. They do not replace a design: the applicable codes "
    "and standards govern the penstock's design, and a licensed professional engineer must "
    "review every result before it is used for design, procurement or construction."
)


@dataclass
class Warning_:
    """One caution raised by a check."""

    topic: str
    message: str
    chainage: float | None = None
    flow: float | None = None
    severity: str = "warning"   # "warning" or "note"


@dataclass
class Results:
    """Everything a run produced, as pandas tables with units in the column names."""

    case: Case
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
    headline: dict = field(default_factory=dict)

    def tables(self) -> dict[str, pd.DataFrame]:
        """The result tables by file-system name, in reading order."""
        return {
            "summary": self.summary,
            "inputs": self.inputs,
            "grade_lines": self.grade_lines,
            "pressure_checks": self.pressure_checks,
            "flagged_stretches": self.stretches,
            "loss_breakdown": self.loss_breakdown,
            "cautions": self.warnings,
            "methods": self.methods,
        }


class _Methods:
    """Collects each method used with its published reference, once."""

    def __init__(self):
        self.rows: list[dict] = []

    def add(self, topic: str, method: str, reference: str):
        row = {"topic": topic, "method": method, "reference": reference}
        if row not in self.rows:
            self.rows.append(row)


def _study_flows(case: Case) -> tuple[np.ndarray, list[str]]:
    """Flows at which grade lines are drawn, with their names, in rising order."""
    named = {}
    q_min = case.minimum_flow
    if q_min is None:
        q_min = min_turbine_fraction(case.turbine["type"]) * case.design_flow / case.turbine["units"]
    named.setdefault(round(q_min, 12), "minimum turbine flow")
    named.setdefault(round(case.design_flow, 12), "design flow")
    named.setdefault(round(case.maximum_flow, 12), "maximum plant flow")
    for q in case.extra_flows:
        named.setdefault(round(q, 12), "listed flow")
    flows = np.array(sorted(named))
    return flows, [named[q] for q in flows]


#: Minimum flow of one unit as a fraction of its design flow, by turbine type.
#: Common practice (from memory), after the usual ranges quoted in small-hydro
#: guides such as ESHA (2004), Guide on How to Develop a Small Hydropower Plant, ch. 6.
MIN_FLOW_FRACTION = {"pelton": 0.10, "turgo": 0.20, "crossflow": 0.15, "francis": 0.40,
                     "kaplan": 0.20, "propeller": 0.75}


def min_turbine_fraction(turbine_type: str) -> float:
    """Minimum flow of one unit as a fraction of its design flow (common practice)."""
    return MIN_FLOW_FRACTION[turbine_type]


def run_case(case: Case, progress=None) -> Results:
    """Run a validated case through the models.

    Parameters
    ----------
    case : Case
        From :func:`penstock.load_case`.
    progress : callable, optional
        Called as ``progress(step_name)`` before each stage, for a progress bar.

    Returns
    -------
    Results
    """
    tick = progress or (lambda name: None)
    warns: list[Warning_] = []
    methods = _Methods()

    tick("water properties")
    props = water.water_properties(case.temperature, case.altitude)
    methods.add("Water properties", "IAPWS-95 density and speed of sound, IAPWS 2008 viscosity, "
                "IAPWS-IF97 saturation pressure, at standard atmospheric pressure",
                "IAPWS R6-95(2018); IAPWS R12-08; IAPWS R7-97(2012), eq. 30 (via the iapws "
                "package and a vectorized region-4 equation)")
    methods.add("Atmospheric pressure", "ISO standard atmosphere, troposphere",
                "ISO 2533:1975 Standard Atmosphere")

    tick("route and grade lines")
    route = build_route(case, warns, methods)
    flows, flow_names = _study_flows(case)
    args = (route.chainage, route.elevation, route.node_area, route.length, route.diameter)
    tail = (route.k, route.reference_area, props.kinematic_viscosity)
    gl = gradeline.grade_lines(flows, case.headwater, *args, route.roughness, *tail)
    methods.add("Pipe friction", "Darcy–Weisbach with the Colebrook–White friction factor "
                "(64/Re below Re 2000; linear blend 2000–4000)",
                "Colebrook, C.F. (1939). J. Inst. Civil Eng. 11(4), 133–156, "
                "doi:10.1680/ijoti.1939.13150")
    rho_g = props.density * GRAVITY
    atm_head = props.atmospheric_pressure / rho_g
    vap_head = props.vapour_pressure / rho_g
    sets = [(gl, flow_names)]
    if any(seg.roughness_growth for seg in case.segments):
        years = case.service_life
        keep = [i for i, n in enumerate(flow_names) if n in ("design flow", "maximum plant flow")]
        aged = gradeline.grade_lines(flows[keep], case.headwater, *args,
                                     route.aged_roughness(case.segments, years), *tail)
        sets.append((aged, [f"{flow_names[i]}, after {years:g} years" for i in keep]))
        methods.add("Roughness ageing", f"linear growth of roughness with age, shown after "
                    f"{years:g} years", "Colebrook, C.F. & White, C.M. (1937). The reduction of "
                    "carrying capacity of pipes with age. J. ICE 7(1), 99–118; rates after "
                    "Lamont, P.A. (1981), J. AWWA 73(5), 274–280")
    grade = pd.concat([_grade_table(route, g, n) for g, n in sets], ignore_index=True)
    parts = [_pressure_checks(case, route, g, n, atm_head, vap_head, warns) for g, n in sets]
    checks = pd.concat([p[0] for p in parts], ignore_index=True)
    stretches = pd.concat([p[1] for p in parts if len(p[1])] or [parts[0][1]],
                          ignore_index=True)
    _submergence(case, route, checks["flow [m^3/s]"].to_numpy(), list(checks["flow case"]),
                 warns, methods, checks)
    breakdown = pd.concat([_loss_breakdown(case, route, g, n) for g, n in sets],
                          ignore_index=True)
    _velocity_checks(case, route, flows, flow_names, warns)
    _siphon_check(case, route, warns)

    tick("net head and power")
    i_design = int(np.flatnonzero(np.isclose(flows, case.design_flow))[0])
    gross = case.headwater - case.tailwater
    total_loss = float(gl.friction_loss[i_design].sum() + gl.local_loss[i_design].sum())
    net_head = float(gl.energy[i_design, -1] - case.tailwater)
    t = case.turbine
    eta = t["peak_efficiency"] * t["generator_efficiency"] * t["transformer_efficiency"]
    power = props.density * GRAVITY * case.design_flow * net_head * eta
    headline = {
        "gross_head": gross, "net_head": net_head, "total_loss": total_loss,
        "design_flow": case.design_flow, "design_power": power,
        "min_pressure_head": float(checks["minimum pressure head [m]"].min()),
        "density": props.density,
    }
    summary = _summary(case, props, headline, route)
    tick("cautions")
    warn_df = pd.DataFrame(
        [{"severity": w.severity, "topic": w.topic, "message": w.message,
          "chainage [m]": w.chainage, "flow [m^3/s]": w.flow} for w in warns],
        columns=["severity", "topic", "message", "chainage [m]", "flow [m^3/s]"])
    return Results(
        case=case, run_date=_dt.date.today().isoformat(), version=__version__,
        summary=summary, inputs=pd.DataFrame(case.echo), grade_lines=grade,
        pressure_checks=checks, stretches=stretches, loss_breakdown=breakdown,
        profile=_profile_table(case, route), warnings=warn_df,
        methods=pd.DataFrame(methods.rows, columns=["topic", "method", "reference"]),
        headline=headline,
    )


# --------------------------------------------------------------------------- tables
def _grade_table(route, gl, flow_names) -> pd.DataFrame:
    n_flow, n_node = gl.energy.shape
    return pd.DataFrame({
        "flow case": np.repeat(flow_names, n_node),
        "flow [m^3/s]": np.repeat(gl.flow, n_node),
        "chainage [m]": np.tile(route.chainage, n_flow),
        "point": np.tile(route.node_label, n_flow),
        "pipe elevation [m]": np.tile(route.elevation, n_flow),
        "energy grade line [m]": gl.energy.ravel(),
        "hydraulic grade line [m]": gl.hydraulic.ravel(),
        "velocity head [m]": gl.velocity_head.ravel(),
        "pressure head [m]": gl.pressure_head.ravel(),
    })


def _profile_table(case: Case, route) -> pd.DataFrame:
    df = pd.DataFrame({"chainage [m]": case.profile["chainage"],
                       "pipe elevation [m]": case.profile["elevation"]})
    if "ground" in case.profile:
        df["ground [m]"] = case.profile["ground"]
    return df


def _pressure_checks(case, route, gl, flow_names, atm_head, vap_head, warns):
    rows, stretch_rows = [], []
    pipe = ~route.is_reservoir
    x = route.chainage[pipe]
    for i, name in enumerate(flow_names):
        q = float(gl.flow[i])
        p = gl.pressure_head[i, pipe]
        j = int(np.argmin(p))
        rows.append({"flow case": name, "flow [m^3/s]": q,
                     "minimum pressure head [m]": float(p[j]),
                     "at chainage [m]": float(x[j]),
                     "minimum absolute pressure head [m]": float(p[j] + atm_head),
                     "vapour pressure head [m]": vap_head})
        checks = [
            ("sub-atmospheric", 0.0, "pressure head below zero (sub-atmospheric)"),
            ("below margin", case.pressure_margin,
             f"pressure head below the {case.pressure_margin:g} m margin"),
            ("vapour pressure", vap_head - atm_head,
             "absolute pressure at or below the vapour pressure: column separation"),
        ]
        for check, limit, text in checks:
            for x0, x1, low, at in gradeline.flagged_stretches(x, p, limit):
                stretch_rows.append({"flow case": name, "flow [m^3/s]": q, "check": check,
                                     "from chainage [m]": x0, "to chainage [m]": x1,
                                     "lowest pressure head [m]": low, "at chainage [m]": at})
                if check == "below margin" and low < 0:
                    continue  # reported as sub-atmospheric already
                warns.append(Warning_("grade line", f"{text} from {x0:.1f} to {x1:.1f} m "
                                      f"(lowest {low:.2f} m at {at:.1f} m) at the {name}",
                                      chainage=at, flow=q))
    stretch_cols = ["flow case", "flow [m^3/s]", "check", "from chainage [m]",
                    "to chainage [m]", "lowest pressure head [m]", "at chainage [m]"]
    return pd.DataFrame(rows), pd.DataFrame(stretch_rows, columns=stretch_cols)


def _siphon_check(case, route, warns):
    """Profile points above the minimum headwater make the pipe a siphon there."""
    pipe = ~route.is_reservoir
    above = route.elevation[pipe] > case.headwater_min
    if above.any():
        x = route.chainage[pipe][above]
        warns.append(Warning_("route", f"the pipe rises above the minimum headwater level "
                              f"({case.headwater_min:g} m) between {x.min():g} and {x.max():g} "
                              "m: it runs as a siphon there, with sub-atmospheric pressure "
                              "even at no flow, and needs priming and air release",
                              chainage=float(x[0])))


def _submergence(case, route, flows, flow_names, warns, methods, checks):
    d0 = route.intake_diameter
    v = flows / (np.pi * d0**2 / 4.0)
    need = gradeline.submergence_gordon(v, d0, case.intake_approach)
    have = case.headwater_min - (route.intake_elevation + d0 / 2.0)
    checks["intake submergence available [m]"] = have
    checks["intake submergence required [m]"] = need
    methods.add("Intake submergence", f"Gordon's criterion S = c·V·√D ({case.intake_approach} "
                "approach), at the minimum headwater level",
                "Gordon, J.L. (1970). Vortices at intakes. Water Power 22(4), 137–138")
    for q, name, s in zip(flows, flow_names, need):
        if have < s and "after" not in name:
            warns.append(Warning_("intake", f"intake crown submergence {have:.2f} m at minimum "
                                  f"headwater is below the {s:.2f} m Gordon requires at the "
                                  f"{name}: vortices may draw air", chainage=route.chainage[0],
                                  flow=float(q)))


def _loss_breakdown(case, route, gl, flow_names) -> pd.DataFrame:
    gross = case.headwater - case.tailwater
    groups = route.element_group
    names = list(dict.fromkeys(groups))
    cols = {}
    for i, fname in enumerate(flow_names):
        total = gl.friction_loss[i] + gl.local_loss[i]
        per = np.array([total[[g == n for g in groups]].sum() for n in names])
        q = gl.flow[i]
        cols[(fname, q)] = per
    rows = []
    for k, n in enumerate(names):
        kind = route.group_kind[n]
        for (fname, q), per in cols.items():
            rows.append({"component": n, "type": kind, "flow case": fname, "flow [m^3/s]": q,
                         "head loss [m]": per[k], "share of gross head [%]": 100 * per[k] / gross})
    for (fname, q), per in cols.items():
        rows.append({"component": "total", "type": "all", "flow case": fname, "flow [m^3/s]": q,
                     "head loss [m]": per.sum(),
                     "share of gross head [%]": 100 * per.sum() / gross})
    return pd.DataFrame(rows)


#: Usual velocity range in steel penstocks at the design flow (common practice).
VELOCITY_RANGE = (2.0, 6.0)


def _velocity_checks(case, route, flows, flow_names, warns):
    q = case.design_flow
    for i, seg in enumerate(case.segments, start=1):
        v = q / seg.area
        lo, hi = VELOCITY_RANGE
        if not lo <= v <= hi:
            warns.append(Warning_("velocity", f"velocity {v:.2f} m/s in pipe {i} at the design "
                                  f"flow is outside the usual {lo:g}–{hi:g} m/s range for "
                                  "penstocks (common practice)", chainage=seg.start, flow=q))


def _summary(case, props, h, route) -> pd.DataFrame:
    rows = [
        ("site", case.name, ""),
        ("note", case.note, ""),
        ("gross head", h["gross_head"], "m"),
        ("design flow", h["design_flow"], "m^3/s"),
        ("penstock losses at design flow", h["total_loss"], "m"),
        ("net head at design flow", h["net_head"], "m"),
        ("power at design flow", h["design_power"] / 1e3, "kW"),
        ("minimum steady pressure head", h["min_pressure_head"], "m"),
        ("penstock length", float(route.length.sum()), "m"),
        ("water temperature", case.temperature, "degC"),
        ("water density", props.density, "kg/m^3"),
        ("atmospheric pressure at site", props.atmospheric_pressure / 1e3, "kPa"),
    ]
    return pd.DataFrame(rows, columns=["quantity", "value", "unit"])
