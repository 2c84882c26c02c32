"""Water-hammer stage of a run: wave speeds, quick checks, MOC load rejections, closure study.

The method-of-characteristics model (:mod:`penstock.transients`) carries the
route as its pipe segments in series.  Local losses are folded into each
segment's friction factor (f_eq = f + ΣK·(A/A_ref)²·D/L), so that its steady state
before the closure matches the steady-hydraulics stage's losses.  Its node
positions are lengths along the pipe; they are mapped back to route chainage
(horizontal) through the route's reach lengths.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd

from .. import friction, gradeline, materials, pipewall, surge, transients, turbines, wavespeed
from ..errors import CaseError
from ..schema import CASE_FILE
from ..turbines import TURBINE_TYPES
from .core import Methods, Warning_
from .stages import HammerHeadline, HammerStage
from .steady import CROWN_MINIMUM


def _segment_geometry(route, case):
    """Per segment: length along the pipe, and the elements it holds."""
    n = len(case.segments)
    lengths = np.zeros(n)
    for i in range(n):
        lengths[i] = route.length[route.element_segment == i].sum()
    return lengths


def _folded_friction(case, route, props, flow, lengths):
    """Darcy friction factor per segment at ``flow``, with the local losses folded in
    (:func:`penstock.transients.fold_local_losses`)."""
    segs = case.segments
    diam = np.array([s.diameter for s in segs])
    v = gradeline.mean_velocity(flow, diam)
    re = friction.reynolds(v, diam, props.kinematic_viscosity)
    f_seg = np.asarray(friction.friction_factor(re, np.array([s.roughness for s in segs])
                                                / diam), dtype=float)
    # local losses: the element before a step tells its segment (the step's upstream pipe)
    seg_of_element = route.element_segment.copy()
    for j in range(len(seg_of_element)):
        if seg_of_element[j] < 0:
            later = seg_of_element[j:][seg_of_element[j:] >= 0]
            seg_of_element[j] = later[0] if len(later) else len(segs) - 1
    local = np.flatnonzero(route.k > 0)
    return transients.fold_local_losses(f_seg, diam, lengths, route.k[local],
                                        route.reference_area[local], seg_of_element[local])


def _wave_speeds(case, props, warns, methods):
    s = case.surge
    rows, speeds = [], []
    for i, seg in enumerate(case.segments, start=1):
        e = s["pipe_modulus"] if s["pipe_modulus"] is not None else \
            materials.pipe_wall_modulus(seg.material)
        t = seg.wall_thickness
        note = ""
        steel = seg.material in materials.STEEL_PIPE_MATERIALS
        if t is None and not steel and s["wave_speed"] is None:
            raise CaseError(CASE_FILE, f"pipe {i}.wall_thickness", f"is missing for a "
                            f"{seg.material.replace('_', ' ')} pipe; the water-hammer wave "
                            "speed needs it (the steel handling minimum does not apply to "
                            "this material); expected the wall thickness, or surge.wave_speed")
        if t is None:
            t = float(pipewall.minimum_handling_thickness(seg.diameter))
            note = "wall: minimum handling thickness (no wall_thickness given)"
            warns.append(Warning_("water hammer", f"pipe {i} has no wall_thickness: the "
                                  f"minimum handling thickness {1e3 * t:.1f} mm is used for its "
                                  "wave speed", chainage=seg.start, severity="note"))
        a = float(wavespeed.pipe_wave_speed(props.bulk_modulus, props.density, seg.diameter, t,
                                            e, s["poisson_ratio"], case=s["restraint"]))
        if s["air_content"] > 0:
            z_mid = float(np.interp(0.5 * (seg.start + seg.end), case.profile["chainage"],
                                    case.profile["elevation"]))
            p_abs = props.atmospheric_pressure + float(props.pressure(max(
                case.headwater - z_mid, 0.0)))
            a = float(wavespeed.air_content_wave_speed(a, s["air_content"], p_abs,
                                                       props.density,
                                                       bulk_modulus=props.bulk_modulus))
        if s["wave_speed"] is not None:
            a = s["wave_speed"]
            note = "given by the user"
        speeds.append(a)
        rows.append({"pipe": i, "from chainage [m]": seg.start, "to chainage [m]": seg.end,
                     "diameter [m]": seg.diameter, "wall thickness [m]": t,
                     "pipe modulus [GPa]": e / 1e9, "D/t [-]": seg.diameter / t,
                     "wave speed [m/s]": a, "note": note})
    methods.add("Wave speed", f"Korteweg's formula with Wylie & Streeter's restraint factor "
                f"({s['restraint'].replace('_', ' ')}); thick-wall form below D/t = 25" +
                ("; free air lowers it (Wood's equation)" if s["air_content"] > 0 else ""),
                "Wylie, E.B. & Streeter, V.L. (1993). Fluid Transients in Systems. "
                "Prentice Hall, §2.5–2.6 (from memory)")
    return np.array(speeds), pd.DataFrame(rows)


def outlet_level(case, z_end):
    """Level the closing orifice discharges to: the tailwater, or for an impulse unit the
    runner (the pipe end when no runner elevation is given) if that is higher. [m]"""
    z_run = case.turbine["runner_elevation"]
    if TURBINE_TYPES[case.turbine["type"]]["impulse"] and z_run is None:
        z_run = z_end   # a free jet discharges at the pipe end at the latest
    return float(turbines.head_datum(case.turbine["type"], case.tailwater, z_run))


def rejection_flows(case) -> list:
    """Flows a load rejection is simulated from: the design flow, then the listed ones."""
    q0 = case.design_flow
    return [q0] + [q for q in case.surge["rejection_flows"] if not math.isclose(q, q0)]


def steady_crown_at(case, props, route, flow, x):
    """Steady crown pressure head at the minimum headwater at chainages ``x`` [m], from the
    steady grade line at ``flow``: the floor under a transient minimum, which starts from
    this state (where two nodes share a chainage, at a local loss, the lower one)."""
    pipe = ~route.is_reservoir
    g = route.grade_lines(np.array([flow]), case.headwater, props.kinematic_viscosity)
    p = gradeline.crown_pressure_head(g.pressure_head[0, pipe], route.node_diameter[pipe],
                                      case.headwater - case.headwater_min)
    xs = route.chainage[pipe]
    ux, inv = np.unique(xs, return_inverse=True)
    low = np.full(ux.size, np.inf)
    np.minimum.at(low, inv, p)
    return np.interp(x, ux, low)


def _refusal(exc) -> CaseError:
    """The one-line error for a rejection the simulation refuses, naming the key."""
    msg = str(exc)
    m = re.match(r"segment (\d+) \(", msg)
    key = (f"pipe {m.group(1)}" if m and "node updates" in msg else
           "surge.closure_time" if "time steps" in msg else "surge")
    return CaseError(CASE_FILE, key, f"the water-hammer simulation cannot run: {msg}")


def _study_law(law):
    """The closure-time study's law: the case's shape without its closure time, linear
    in place of a table or an instant closure."""
    if law["law"] in ("table", "instant"):
        return {"law": "linear"}
    return {k: v for k, v in law.items() if k != "closure_time"}


def _study_times(s, period):
    """Closure times of the closure-time study: the case's, or nine around the period."""
    tc = s["closure_time"]
    times = list(s["study_closure_times"]) or list(
        np.geomspace(0.5 * period, max(8 * period, 2 * tc), 9))
    if s["closure_law"] != "instant":
        times = sorted(set(times) | {tc})
    return times


def _pipes(case, props, route, warns, methods):
    """Segment lengths along the pipe, diameters, wave speeds (and their table) and the
    level the closing orifice discharges to: what every simulation of the case needs."""
    lengths = _segment_geometry(route, case)
    diam = np.array([seg.diameter for seg in case.segments])
    speeds, wave_table = _wave_speeds(case, props, warns, methods)
    return lengths, diam, speeds, wave_table, outlet_level(case, float(route.elevation[-1]))


def rejections(case, props, route, lengths, diam, speeds, downstream, **options):
    """Load rejections from each of :func:`rejection_flows`, by the case's closure law ->
    list of (flow, :class:`~penstock.transients.TransientResult`); ``options`` go to
    :func:`penstock.transients.simulate` (``record_chainages``, ``dry_run``)."""
    law = _law_args(case.surge)
    return [(q, transients.simulate(lengths, diam, speeds,
                                    _folded_friction(case, route, props, q, lengths),
                                    case.headwater, downstream, q, **law, **options))
            for q in rejection_flows(case)]


def check(case, props, steady):
    """Refuse, as :func:`run` would, a case whose simulations cannot run, without running
    them (:func:`penstock.transients.simulate` with ``dry_run``)."""
    s = case.surge
    route = steady.route
    lengths, diam, speeds, _, downstream = _pipes(case, props, route, [], Methods())
    law = _law_args(s)
    try:
        rejections(case, props, route, lengths, diam, speeds, downstream, dry_run=True)
    except ValueError as exc:
        raise _refusal(exc) from None
    times = _study_times(s, 2 * float(surge.travel_time(lengths, speeds)))
    f = _folded_friction(case, route, props, case.design_flow, lengths)
    study_law = _study_law(law)
    if study_law["law"] == "two_stage":
        study_law["knee_time"] = s["knee_time"] / s["closure_time"] * max(times)
    try:
        transients.simulate(lengths, diam, speeds, f, case.headwater, downstream,
                            case.design_flow, closure_time=max(times), dry_run=True,
                            **study_law)
    except ValueError as exc:
        raise CaseError(CASE_FILE, "surge.study_closure_times", f"the closure-time study "
                        f"cannot run: {exc}") from None


def _law_args(s):
    law = s["closure_law"]
    args = {"law": law, "closure_time": s["closure_time"]}
    if law == "two_stage":
        args.update(knee_time=s["knee_time"], knee_opening=s["knee_opening"])
    if law == "table":
        args = {"law": "table", "closure_time": None, "opening_table": s["closure_table"]}
    if law == "instant":
        args = {"law": "instant", "closure_time": None}
    return args


def run(case, props, steady, prod, warns, methods, tick) -> dict:
    """Quick checks, MOC load rejections, closure-time study and the design pressure line."""
    tick("water hammer")
    s = case.surge
    route = steady.route
    lengths, diam, speeds, wave_table, downstream = _pipes(case, props, route, warns, methods)
    areas = np.array([seg.area for seg in case.segments])
    z_end = float(route.elevation[-1])
    q0 = case.design_flow
    static_head = case.headwater - z_end            # pressure head at the turbine at no flow
    allowable = s["allowable_rise"] * static_head

    # ---- quick checks
    vel = q0 / areas
    l_total = float(lengths.sum())
    t_travel = float(surge.travel_time(lengths, speeds))
    period = 2 * t_travel
    tc = s["closure_time"]
    regime = surge.closure_regime(tc, period)
    v_mean = float((lengths * vel).sum() / l_total)
    dh_jouk = float(surge.joukowsky(speeds[-1], vel[-1]))
    dh_mich = float(surge.michaud(l_total, v_mean, tc))
    h0 = case.headwater - downstream
    rise_allievi = float(surge.allievi_max_head(l_total, v_mean, h0, tc)) - h0
    hn = prod.headline.net_head
    tw = float(surge.water_starting_time(lengths, vel, hn))
    rows = [
        ("pipe length along the route", l_total, "m"),
        ("wave travel time Σ L/a", t_travel, "s"),
        ("pipe period 2L/a", period, "s"),
        ("closure time", tc, "s"),
        ("closure regime", "rapid (Tc ≤ 2L/a)" if regime == "rapid" else "slow (Tc > 2L/a)", ""),
        ("Joukowsky rise a·ΔV/g, full instant closure", dh_jouk, "m"),
        ("Michaud rise 2·L·V/(g·Tc)", dh_mich, "m"),
        ("Allievi maximum rise above the static level, uniform closure", rise_allievi, "m"),
        ("static head at the turbine", static_head, "m"),
        ("allowable rise", allowable, "m"),
        ("water starting time Tw = Σ L·V/(g·Hn)", tw, "s"),
    ]
    methods.add("Water hammer, quick checks", "Joukowsky rise for rapid closure; Michaud and "
                "Allievi for slow uniform closure; water starting time",
                "Joukowsky, N. (1898/1904), Proc. AWWA 24; Allievi, L. (1913), Theory of Water "
                "Hammer (trans. Halmos, 1925); Parmakian, J. (1955), Waterhammer Analysis, "
                "Prentice Hall (from memory)")
    tm = None
    if s["inertia"] is not None:
        speed = prod.headline.speed
        p_unit = prod.headline.installed_capacity / case.turbine["units"]
        tm = float(surge.mechanical_starting_time(s["inertia"], turbines.angular_speed(speed),
                                                  p_unit))
        rows.append(("mechanical starting time Tm = J·ω²/P", tm, "s"))
        gov = surge.governing_stability_check(tw, tm)
        rows.append(("Tm / Tw²", gov.ratio, "1/s"))
        for msg in gov.messages:
            warns.append(Warning_("governing", msg, severity="warning" if not gov.stable
                                  else "note"))

    # ---- MOC load rejections
    tick("method of characteristics")
    law = _law_args(s)
    s_nodes_x = np.concatenate([[0.0], np.cumsum(route.length)])
    x_nodes = route.chainage
    to_x = lambda sl: np.interp(sl, s_nodes_x, x_nodes)  # noqa: E731
    to_s = lambda x: np.interp(x, x_nodes, s_nodes_x)  # noqa: E731
    rec = [float(to_s(x)) for x in s["record_at"]]
    try:
        results = rejections(case, props, route, lengths, diam, speeds, downstream,
                             record_chainages=rec)
    except ValueError as exc:   # e.g. no Courant grid within the wave-speed tolerance
        raise _refusal(exc) from None
    q_d, main = results[0]
    adj = float(np.max(np.abs(main.wave_speed_adjustment)))
    methods.add("Water hammer, simulation", "method of characteristics, series segments, "
                "upstream reservoir, downstream orifice closing by the given law, Darcy "
                "friction (local losses folded in), Courant number 1 by adjusting wave speeds "
                f"(largest adjustment {100 * adj:.2f} %)",
                "Wylie, E.B. & Streeter, V.L. (1993), Fluid Transients in Systems, ch. 3; "
                "Chaudhry, M.H. (2014), Applied Hydraulic Transients, 3rd ed., Springer, ch. 3")
    atm_head, vap_head = props.atmospheric_head, props.vapour_head
    env_rows = []
    design_head = None
    for q, res in results:
        x = to_x(res.chainage)
        z = np.interp(x, case.profile["chainage"], case.profile["elevation"])
        name = "design flow" if q is q_d else f"{q:.4g} m^3/s"
        # the crown at the minimum headwater: conservative as in the steady checks
        starts = np.array([seg.start for seg in case.segments[1:]])
        d_seg = np.array([seg.diameter for seg in case.segments])
        # a node at a diameter step takes the larger pipe, whose crown is higher
        tol = 1e-6 * max(1.0, float(np.max(np.abs(x))))
        d_node = np.maximum(d_seg[np.searchsorted(starts, x - tol, side="left")],
                            d_seg[np.searchsorted(starts, x + tol, side="right")])
        pmin = gradeline.crown_pressure_head(res.min_head - z, d_node,
                                             case.headwater - case.headwater_min)
        # a transient minimum is never above the steady state it starts from: the MOC's
        # reservoir boundary and its folded local losses lift its heads by up to a velocity
        # head (issue 13 replaces them); until then the steady crown is the floor
        pmin = np.minimum(pmin, steady_crown_at(case, props, route, q, x))
        rise = np.maximum(res.max_head - res.steady_head, 0.0)
        dp = transients.design_pressure_line(case.headwater - z, res.max_head, res.steady_head)
        design_head = dp if design_head is None else np.maximum(design_head, dp)
        env_rows.append(pd.DataFrame({
            "rejection from": name, "initial flow [m^3/s]": q, "chainage [m]": x,
            "pipe elevation [m]": z, "static line [m]": case.headwater,
            "initial steady head [m]": res.steady_head,
            "maximum head [m]": res.max_head, "minimum head [m]": res.min_head,
            "maximum transient rise [m]": rise,
            "minimum pressure head at the crown, minimum headwater [m]": pmin,
            "design pressure head [m]": dp,
        }))
        for check, limit, text in (("sub-atmospheric", 0.0, "the down-surge takes the pressure "
                                    "below atmospheric"),
                                   ("vapour pressure", vap_head - atm_head,
                                    "the down-surge reaches vapour pressure: column separation "
                                    "is possible (the model does not simulate it beyond that)")):
            for x0, x1, low, at in gradeline.flagged_stretches(x, pmin, limit):
                warns.append(Warning_("water hammer", f"{text} from {x0:.1f} to {x1:.1f} m "
                                      f"(lowest pressure head {low:.2f} m at {at:.1f} m) on "
                                      f"rejection from {q:.4g} m^3/s", chainage=at, flow=q))
    envelope = pd.concat(env_rows, ignore_index=True)
    rise_valve = float(main.max_head_rise.max())   # largest rise above steady, any node
    rows += [("simulated maximum transient rise (largest at any node)", rise_valve, "m"),
             ("simulated maximum head at the turbine", float(main.max_head[-1]), "m"),
             ("simulated minimum head along the route", float(main.min_head.min()), "m"),
             ("largest wave-speed adjustment for Courant = 1", 100 * adj, "%"),
             ("MOC time step", main.time_step, "s")]
    if rise_valve > allowable:
        warns.append(Warning_("water hammer", f"the simulated rise {rise_valve:.1f} m "
                              f"exceeds the allowable {allowable:.1f} m "
                              f"({100 * s['allowable_rise']:g} % of the static head)", flow=q0))
    prot = surge.surge_protection_flag(tw, rise_valve, allowable)
    if prot.study_needed:
        for reason in prot.reasons:
            warns.append(Warning_("water hammer", f"surge protection (surge tank, relief valve "
                                  f"or slower closure) deserves study: {reason}"))

    history = pd.DataFrame({"time [s]": main.time, "opening [-]": main.valve_opening,
                            "head at the turbine [m]": main.valve_head,
                            "flow at the turbine [m^3/s]": main.valve_flow})
    for k, x in enumerate(s["record_at"]):
        history[f"head at chainage {x:g} m [m]"] = main.record_head[:, k]
    step = max(1, len(history) // 1500)
    history = history.iloc[::step].reset_index(drop=True)

    # ---- closure-time study (the case's law shape, linear when a table is given)
    tick("closure-time study")
    times = _study_times(s, period)
    study_law = _study_law(law)
    try:
        if study_law.get("law") == "two_stage":
            frac = s["knee_time"] / tc
            study = _two_stage_study(lengths, diam, speeds, case, props, route, downstream, q0,
                                     times, frac, s["knee_opening"])
        else:
            f = _folded_friction(case, route, props, q0, lengths)
            study = transients.closure_time_study(lengths, diam, speeds, f, case.headwater,
                                                  downstream, q0, times, **study_law)
    except ValueError as exc:   # e.g. a closure time needing too many time steps
        raise CaseError(CASE_FILE, "surge.study_closure_times", f"the closure-time study "
                        f"cannot run: {exc}") from None
    study_table = pd.DataFrame({
        "closure time [s]": study.closure_time,
        "closure time / pipe period [-]": study.closure_time / period,
        "maximum head rise [m]": study.max_head_rise,
        "maximum head at the turbine [m]": study.valve_max_head,
        "minimum head along the route [m]": study.min_head,
        "rise as share of static head [%]": 100 * study.max_head_rise / static_head,
    })
    try:
        shortest = float(transients.shortest_closure_within_limit(study, allowable))
    except ValueError:
        shortest = None
        warns.append(Warning_("water hammer", f"none of the studied closure times keeps the "
                              f"rise within {allowable:.1f} m; study longer closures or "
                              "surge protection"))
    rows.append(("shortest closure keeping the rise within the allowable (study)",
                 shortest, "s"))
    if shortest is not None and tc < shortest - 1e-9:
        warns.append(Warning_("water hammer", f"the closure time {tc:g} s is shorter than the "
                              f"{shortest:.1f} s that keeps the rise within the allowable"))
    quick = pd.DataFrame(rows, columns=["quantity", "value", "unit"])
    return HammerStage(
        water_hammer_checks=quick, wave_speeds=wave_table, transient_envelope=envelope,
        turbine_head_history=history, closure_time_study=study_table,
        design_pressure_line=pd.DataFrame({"chainage [m]": to_x(main.chainage),
                                      "design pressure head [m]": design_head}),
        headline=HammerHeadline(
            max_surge_rise=rise_valve, joukowsky=dh_jouk, allowable_rise=allowable,
            joukowsky_wave_speed=float(speeds[-1]), joukowsky_velocity=float(vel[-1]),
            shortest_closure=shortest, water_starting_time=tw,
            min_transient_pressure_head=float(envelope[CROWN_MINIMUM].min())))


def _two_stage_study(lengths, diam, speeds, case, props, route, downstream, q0, times, frac,
                     knee_opening):
    """Closure study keeping the two-stage shape: knee at the same fraction of the time."""
    f = _folded_friction(case, route, props, q0, lengths)
    out = {k: [] for k in ("valve_max_head", "max_head_rise", "max_head", "min_head",
                           "max_head_drop")}
    for t in times:
        r = transients.simulate(lengths, diam, speeds, f, case.headwater, downstream, q0,
                                law="two_stage", closure_time=t, knee_time=frac * t,
                                knee_opening=knee_opening)
        out["valve_max_head"].append(float(r.valve_head.max()))
        out["max_head_rise"].append(float(r.max_head_rise.max()))
        out["max_head"].append(float(r.max_head.max()))
        out["min_head"].append(float(r.min_head.min()))
        out["max_head_drop"].append(float(r.max_head_drop.max()))
    return transients.ClosureStudy(closure_time=np.array(times),
                                   **{k: np.array(v) for k, v in out.items()})
