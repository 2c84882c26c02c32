"""Steady hydraulics stage of a run: grade lines, pressure checks, losses.

Called by :func:`penstock.model.run_case`; pure computation, no I/O.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import friction, gradeline
from ..diameter import USUAL_PENSTOCK_VELOCITY
from ..route import build_route
from ..turbines import TURBINE_TYPES
from .core import Say, Warning_
from .stages import SteadyStage

#: The column of the pressure checks: the basis of every steady pressure check.
CROWN_MINIMUM = "minimum pressure head at the crown, minimum headwater [m]"


def _study_flows(case) -> tuple[np.ndarray, list[str]]:
    """Flows at which grade lines are drawn, with their names, in rising order."""
    named = {}
    q_min = minimum_plant_flow(case)
    named.setdefault(round(q_min, 12), "minimum turbine flow")
    named.setdefault(round(case.design_flow, 12), "design flow")
    named.setdefault(round(case.maximum_flow, 12), "maximum plant flow")
    several = len(case.extra_flows) > 1
    for i, q in enumerate(case.extra_flows, start=1):
        # each flow case has its own name: tables and charts are keyed by it
        named.setdefault(round(q, 12), f"listed flow {i}" if several else "listed flow")
    flows = np.array(sorted(named))
    return flows, [named[q] for q in flows]


def minimum_plant_flow(case) -> float:
    """Smallest flow the plant runs at: one unit at its type's minimum fraction of rated flow."""
    if case.minimum_flow is not None:
        return case.minimum_flow
    fraction = TURBINE_TYPES[case.turbine["type"]]["minimum_relative_flow"]
    return fraction * case.design_flow / case.turbine["units"]


def run(case, props, warns, methods, tick, proceed=False) -> dict:
    """Grade lines, pressure checks and the loss breakdown at the study flows.

    A design flow that needs an absolute pressure below the vapour pressure is refused
    (:class:`~penstock.case.CaseError`) unless ``proceed`` is true.

    Returns a :class:`~penstock.model.stages.SteadyStage`.
    """
    tick("route and grade lines")
    route = build_route(case, warns, methods)
    flows, flow_names = _study_flows(case)
    nu = props.kinematic_viscosity
    gl = route.grade_lines(flows, case.headwater, nu)
    methods.add("Pipe friction", "Darcy–Weisbach with the Colebrook–White friction factor "
                "(64/Re below Re 2000; linear blend 2000–4000)",
                "Colebrook, C.F. (1939). J. Inst. Civil Eng. 11(4), 133–156, "
                "doi:10.1680/ijoti.1939.13150")
    atm_head, vap_head = props.atmospheric_head, props.vapour_head
    sets = [(gl, flow_names)]
    roughness_of_sets = [route.roughness]
    if any(seg.roughness_growth for seg in case.segments):
        years = case.service_life
        keep = [i for i, n in enumerate(flow_names) if n in ("design flow", "maximum plant flow")]
        aged_roughness = route.aged_roughness(case.segments, years)
        aged = route.grade_lines(flows[keep], case.headwater, nu, aged_roughness)
        sets.append((aged, [f"{flow_names[i]}, after {years:g} years" for i in keep]))
        roughness_of_sets.append(aged_roughness)
        methods.add("Roughness ageing", f"linear growth of roughness with age, shown after "
                    f"{years:g} years", "Colebrook, C.F. & White, C.M. (1937). The reduction of "
                    "carrying capacity of pipes with age. J. ICE 7(1), 99–118; rates after "
                    "Lamont, P.A. (1981), J. AWWA 73(5), 274–280")
    mid = energy_roughness_years(case)
    energy_set = []
    if mid is not None:   # the energy basis, for the loss breakdown that the Summary cites
        keep = [i for i, n in enumerate(flow_names) if n == "design flow"]
        energy_set = [(route.grade_lines(flows[keep], case.headwater, nu,
                                         route.aged_roughness(case.segments, mid)),
                       [f"design flow, after {mid:g} years"])]
    _design_flow_exists(case, route, gl, flow_names, atm_head, vap_head, warns, proceed)
    for (g, names), rough in zip(sets, roughness_of_sets, strict=True):
        _correlation_ranges(case, route, g.flow, names, rough, nu, warns)
    drawdown = case.headwater - case.headwater_min
    grade = pd.concat([_grade_table(route, g, n, drawdown) for g, n in sets],
                      ignore_index=True)
    parts = [_pressure_checks(case, route, g, n, atm_head, vap_head, warns) for g, n in sets]
    checks = pd.concat([p[0] for p in parts], ignore_index=True)
    stretches = pd.concat([p[1] for p in parts if len(p[1])] or [parts[0][1]],
                          ignore_index=True)
    _submergence(case, route, checks["flow [m^3/s]"].to_numpy(), list(checks["flow case"]),
                 warns, methods, checks)
    breakdown = pd.concat([_loss_breakdown(case, route, g, n) for g, n in sets + energy_set],
                          ignore_index=True)
    _velocity_checks(case, route, flows, flow_names, warns)
    _siphon_check(case, route, warns)
    return SteadyStage(
        route=route, flows=flows, flow_names=flow_names, gl=gl, grade_lines=grade,
        pressure_checks=checks, flagged_stretches=stretches, loss_breakdown=breakdown,
        profile=_profile_table(case, route),
        head_loss=loss_function(case, route, props, energy_roughness(case, route)),
        energy_roughness_years=energy_roughness_years(case))


def mid_life(case) -> float:
    """Half the service life: the mean age over the life, whose roughness is the mean of a
    linear growth. [year]"""
    return case.service_life / 2.0


def energy_roughness_years(case) -> float | None:
    """Age of the pipe whose roughness the energy uses: :func:`mid_life` when any pipe's
    roughness grows, else None (the pipe as new)."""
    if any(seg.roughness_growth for seg in case.segments):
        return mid_life(case)
    return None


def energy_roughness(case, route):
    """Element roughness of the energy basis (:func:`energy_roughness_years`), or None for
    the pipe as new."""
    years = energy_roughness_years(case)
    return None if years is None else route.aged_roughness(case.segments, years)


def loss_function(case, route, props, roughness=None, points: int = 400, q_top=None):
    """Penstock head loss as a vectorized function of the total flow [m^3/s] -> [m].

    ``roughness`` replaces the route's element roughness (e.g. at mid-life). [m]

    The losses are computed exactly on a geometric grid of flows from 1e-4 to ``q_top``
    (default 1.5 times the maximum plant flow) and interpolated in between by
    :func:`penstock.gradeline.quadratic_loss_interpolant` (relative error below 1e-5;
    tests/test_model.py checks it against direct evaluation).
    """
    q_top = 1.5 * case.maximum_flow if q_top is None else float(q_top)
    grid = np.geomspace(1e-4 * q_top, q_top, points)
    return gradeline.quadratic_loss_interpolant(
        grid, route.total_head_loss(grid, props.kinematic_viscosity, roughness))


# --------------------------------------------------------------------------- tables
def _grade_table(route, gl, flow_names, drawdown) -> pd.DataFrame:
    n_flow, n_node = gl.energy.shape
    # the reservoir node stands at the intake: its crown is the intake's
    d_node = np.where(np.isnan(route.node_diameter), route.intake_diameter,
                      route.node_diameter)
    return pd.DataFrame({
        "flow case": np.repeat(flow_names, n_node),
        "flow [m^3/s]": np.repeat(gl.flow, n_node),
        "chainage [m]": np.tile(route.chainage, n_flow),
        "point": np.tile(route.node_label, n_flow),
        "pipe elevation [m]": np.tile(route.elevation, n_flow),
        "energy grade line [m]": gl.energy.ravel(),
        "hydraulic grade line [m]": gl.hydraulic.ravel(),
        "velocity head [m]": gl.velocity_head.ravel(),
        "pressure head at the centreline, normal headwater [m]": gl.pressure_head.ravel(),
        CROWN_MINIMUM.replace("minimum pressure", "pressure"): gradeline.crown_pressure_head(
            gl.pressure_head, d_node[None, :], drawdown).ravel(),
    })


def _profile_table(case, route) -> pd.DataFrame:
    df = pd.DataFrame({"chainage [m]": case.profile["chainage"],
                       "pipe elevation [m]": case.profile["elevation"]})
    if "ground" in case.profile:
        df["ground [m]"] = case.profile["ground"]
    return df


def _pressure_checks(case, route, gl, flow_names, atm_head, vap_head, warns):
    """Pressure checks at the pipe crown with the headwater at its minimum level.

    The grade lines are drawn from the normal headwater; the losses do not depend on
    the level, so at the minimum headwater every head falls by the difference.  The
    crown sees D/2 less than the centreline.  Both make the checks conservative.
    """
    say = Say(case.unit_system)
    rows, stretch_rows = [], []
    pipe = ~route.is_reservoir
    x = route.chainage[pipe]
    d_node = route.node_diameter[pipe]
    drawdown = case.headwater - case.headwater_min
    for i, name in enumerate(flow_names):
        q = float(gl.flow[i])
        p_centre = gl.pressure_head[i, pipe]
        p = gradeline.crown_pressure_head(p_centre, d_node, drawdown)
        j = int(np.argmin(p))
        rows.append({"flow case": name, "flow [m^3/s]": q,
                     "minimum pressure head at the crown, minimum headwater [m]": float(p[j]),
                     "at chainage [m]": float(x[j]),
                     "minimum absolute pressure head [m]": float(p[j] + atm_head),
                     "vapour pressure head [m]": vap_head,
                     "minimum pressure head at the centreline, normal headwater [m]":
                         float(p_centre.min())})
        checks = [
            ("sub-atmospheric", 0.0, "pressure head at the crown below zero "
             "(sub-atmospheric)"),
            ("below margin", case.pressure_margin,
             f"pressure head at the crown below the {say.m(case.pressure_margin)} margin"),
            ("vapour pressure", vap_head - atm_head,
             "absolute pressure at or below the vapour pressure: the water column separates "
             "and the flow as computed cannot exist"),
        ]
        for check, limit, text in checks:
            for x0, x1, low, at in gradeline.flagged_stretches(x, p, limit):
                stretch_rows.append({"flow case": name, "flow [m^3/s]": q, "check": check,
                                     "from chainage [m]": x0, "to chainage [m]": x1,
                                     "lowest pressure head [m]": low, "at chainage [m]": at})
                if check == "below margin" and low < 0:
                    continue  # reported as sub-atmospheric already
                warns.append(Warning_("grade line", f"{text} from {say.ch(x0)} to "
                                      f"{say.ch(x1)} (lowest {say.m(low)} at {say.ch(at)}) at "
                                      f"the {name}, minimum headwater", chainage=at, flow=q))
    stretch_cols = ["flow case", "flow [m^3/s]", "check", "from chainage [m]",
                    "to chainage [m]", "lowest pressure head [m]", "at chainage [m]"]
    return pd.DataFrame(rows), pd.DataFrame(stretch_rows, columns=stretch_cols)


def _design_flow_exists(case, route, gl, flow_names, atm_head, vap_head, warns, proceed):
    """Refuse a design flow whose grade line needs a pressure below the vapour pressure.

    At the design flow and the normal headwater, the absolute pressure head at the pipe
    crown is the pressure head plus the atmospheric head; where it would fall below the
    vapour pressure head the water column parts, so the flow as computed (and every
    result built on it: net head, power, energy) cannot exist.  This is bad input,
    unlike a merely sub-atmospheric stretch, which stays a caution.
    """
    from ..errors import CaseError

    i = int(np.argmin(np.abs(gl.flow - case.design_flow)))
    pipe = ~route.is_reservoir
    x = route.chainage[pipe]
    p = gradeline.crown_pressure_head(gl.pressure_head[i, pipe], route.node_diameter[pipe])
    limit = vap_head - atm_head
    if not (p < limit).any():
        return
    say = Say(case.unit_system)
    x0, x1, low, at = next(iter(gradeline.flagged_stretches(x, p, limit)))
    text = (f"at the design flow and the normal headwater, the absolute pressure at the pipe "
            f"crown falls below the vapour pressure from {say.ch(x0)} to {say.ch(x1)} "
            f"(pressure head {say.m(low)} at {say.ch(at)}; vapour pressure is at "
            f"{say.m(limit)}): the water column parts there and the flow as computed cannot "
            "exist")
    if not proceed:
        raise CaseError(case.profile_file, f"chainage {say.ch(at)}", text + "; expected a "
                        "route below the hydraulic grade line (lower the pipe, raise the "
                        "headwater or enlarge the pipe), or run with --run-anyway to go on")
    warns.append(Warning_("grade line", text + "; the run went on at the user's request "
                          "(--run-anyway), so every result that depends on the design flow is "
                          "not physical", chainage=at, flow=float(gl.flow[i])))


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
    v = gradeline.mean_velocity(flows, d0)
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


def _correlation_ranges(case, route, flows, flow_names, roughness, nu, warns,
                        method="colebrook"):
    """One caution per flow and stretch of pipe where the friction correlation is used
    outside its published range (:func:`penstock.friction.outside_published_range`).

    The study flows span the plant's flows and the pipe new and aged, so these stand for
    the range warnings of every stage that runs the case's own pipe at them."""
    say = Say(case.unit_system)
    reach = route.length > 0
    d = route.diameter[reach]
    x0, x1 = route.chainage[:-1][reach], route.chainage[1:][reach]
    re = friction.reynolds(gradeline.mean_velocity(np.asarray(flows)[:, None], d[None, :]),
                           d[None, :], nu)
    rr = np.broadcast_to(np.asarray(roughness)[reach] / d, re.shape)
    out = friction.outside_published_range(re, rr, method)
    entry = friction.FRICTION_METHODS[method]
    (re_lo, re_hi), (rr_lo, rr_hi) = entry.reynolds_range, entry.relative_roughness_range
    for q, name, hit, re_q, rr_q in zip(flows, flow_names, out, re, rr, strict=True):
        idx = np.flatnonzero(hit)
        if idx.size == 0:
            continue
        # consecutive flagged reaches (a local loss between them has no length) join
        breaks = np.flatnonzero(x0[idx[1:]] > x1[idx[:-1]] + 1e-9) + 1
        for run in np.split(idx, breaks):
            a, b = float(x0[run[0]]), float(x1[run[-1]])
            warns.append(Warning_(
                "range", f"{name} ({say.q(q)}): the Colebrook–White friction factor is "
                f"extrapolated from {say.ch(a)} to {say.ch(b)}, at Re "
                f"{re_q[run].min():.3g}–{re_q[run].max():.3g} and relative roughness "
                f"{rr_q[run].min():.3g}–{rr_q[run].max():.3g}, outside its published "
                f"Re {re_lo:g}–{re_hi:g} and relative roughness {rr_lo:g}–{rr_hi:g}",
                chainage=a, flow=float(q)))


def _velocity_checks(case, route, flows, flow_names, warns):
    q = case.design_flow
    for i, seg in enumerate(case.segments, start=1):
        v = q / seg.area
        lo, hi = USUAL_PENSTOCK_VELOCITY
        if not lo <= v <= hi:
            warns.append(Warning_("velocity", f"velocity {v:.2f} m/s in pipe {i} at the design "
                                  f"flow is outside the usual {lo:g}–{hi:g} m/s range for "
                                  "penstocks (common practice)", chainage=seg.start, flow=q))
