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
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .. import (
    friction,
    gradeline,
    materials,
    pipeclasses,
    pipewall,
    surge,
    transients,
    turbines,
    wavespeed,
)
from ..errors import CaseError
from ..schema import CASE_FILE
from ..turbines import TURBINE_TYPES
from .core import Methods, Warning_
from .stages import HammerHeadline, HammerStage
from .steady import CROWN_MINIMUM


@dataclass
class MocPipes:
    """The route as the MOC's pipes in series (:func:`penstock.transients.series_pipes`),
    with what each simulation of the case needs."""

    series: object                # penstock.transients.SeriesPipes
    diameter: np.ndarray          # per series pipe [m]
    speeds: np.ndarray            # wave speed per series pipe [m/s]
    segment_speeds: np.ndarray    # wave speed per case segment [m/s]
    segment_diameter: np.ndarray  # per case segment [m]
    segment_roughness: np.ndarray  # per case segment [m]
    wave_table: pd.DataFrame
    downstream: float             # level the orifice discharges to [m]
    axis: np.ndarray              # route nodes' positions along the pipe axis [m]
    chainage: np.ndarray          # route nodes' chainage [m]

    def to_x(self, s):
        """Chainage of positions along the pipe axis. [m]"""
        return np.interp(s, self.axis, self.chainage)

    def to_s(self, x):
        """Position along the pipe axis of chainages. [m]"""
        return np.interp(x, self.chainage, self.axis)

    def gridded(self, reaches, speed_factor=1.0):
        """The pipes on the grid of ``reaches`` over the whole pipe, each local loss at
        its nearest node (:func:`penstock.transients.gridded_pipes`)."""
        return transients.gridded_pipes(
            self.series, self.segment_speeds * speed_factor, reaches,
            wave_speed_tolerance=transients.PLANNING_WAVE_SPEED_TOLERANCE)

    def args(self, props, flow, reaches, roughness=None, speed_factor=1.0):
        """Keyword arguments of :func:`penstock.transients.simulate` at ``flow`` on the
        grid of ``reaches``: pipes, friction and the local losses where they stand;
        ``roughness`` per route segment [m] replaces the pipes' own."""
        g = self.gridded(reaches, speed_factor)
        rough = self.segment_roughness if roughness is None else roughness
        d = self.segment_diameter[g.segment]
        v = gradeline.mean_velocity(flow, d)
        re = friction.reynolds(v, d, props.kinematic_viscosity)
        f = np.asarray(friction.friction_factor(re, rough[g.segment] / d), dtype=float)
        return dict(lengths=g.length, diameters=d, wave_speeds=g.wave_speeds,
                    friction_factors=f, inlet_loss=g.inlet_loss,
                    junction_losses=g.junction_loss, outlet_loss=g.outlet_loss,
                    velocity_heads=True, time_step=g.time_step)


def wave_speeds(case, props, warns, methods):
    """Wave speed of each pipe segment [m/s] and its table (one row per ``[[pipe]]``)."""
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
        rigid = t is None and s["wave_speed"] is None
        if rigid:
            # no wall: the wave speed of a rigid pipe, an upper bound, which keeps the
            # Joukowsky rise and the down-surge on the safe side
            a = float(wavespeed.rigid_pipe_wave_speed(props.bulk_modulus, props.density))
            t = float(pipewall.minimum_handling_thickness(seg.diameter))
            note = "no wall_thickness: rigid-pipe wave speed (upper bound)"
            warns.append(Warning_("water hammer", f"pipe {i} has no wall_thickness: its wave "
                                  f"speed is taken as that of a rigid pipe, {a:.0f} m/s, an "
                                  "upper bound; give the wall for a truer value",
                                  chainage=seg.start))
        else:
            if t is None:
                t = float(pipewall.minimum_handling_thickness(seg.diameter))
            nu = s["poisson_ratio"] if s["poisson_ratio"] is not None else \
                materials.pipe_wall_poisson_ratio(seg.material)
            a = float(wavespeed.pipe_wave_speed(props.bulk_modulus, props.density,
                                                seg.diameter, t, e, nu, case=s["restraint"]))
        if s["air_content"] > 0 and not rigid:
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
    """Flows a load rejection is simulated from: the design flow, the maximum plant flow,
    then the listed ones."""
    out = [case.design_flow]
    for q in [case.maximum_flow, *case.surge["rejection_flows"]]:
        if not any(math.isclose(q, p) for p in out):
            out.append(q)
    return out


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


def _pipes(case, props, route, warns, methods) -> MocPipes:
    """The MOC's pipes, wave speeds (and their table) and the level the closing orifice
    discharges to: what every simulation of the case needs."""
    series = transients.series_pipes(route.length, route.element_segment, route.k,
                                     route.reference_area)
    segs = case.segments
    speeds, wave_table = wave_speeds(case, props, warns, methods)
    axis = np.concatenate([[0.0], np.cumsum(route.length)])
    return MocPipes(
        series=series, diameter=np.array([segs[i].diameter for i in series.segment]),
        speeds=speeds[series.segment], segment_speeds=speeds,
        segment_diameter=np.array([seg.diameter for seg in segs]),
        segment_roughness=np.array([seg.roughness for seg in segs]), wave_table=wave_table,
        downstream=outlet_level(case, float(route.elevation[-1])), axis=axis,
        chainage=route.chainage)


def aged_roughness(case, route, pipes):
    """Roughness of each route segment at the end of the service life [m], or None when
    no roughness grows."""
    if not any(seg.roughness_growth for seg in case.segments):
        return None
    rough = route.aged_roughness(case.segments, case.service_life)
    return np.array([rough[route.element_segment == i][0] for i in range(len(case.segments))])


def grid_reaches(case, pipes=None):
    """The grid the case fixes (surge.reaches, reaches over the whole pipe), or None to
    refine until converged; at least one reach per pipe segment."""
    fixed = case.surge.get("reaches")
    if fixed is not None and fixed < len(case.segments):
        raise CaseError(CASE_FILE, "surge.reaches", f"{fixed} is fewer than the "
                        f"{len(case.segments)} pipe segments of the case; expected at least "
                        "one reach per pipe segment")
    return fixed


def rejections(case, props, pipes, reaches=None, aged=None, **options):
    """Load rejections from each of :func:`rejection_flows`, by the case's closure law ->
    list of (flow, :class:`~penstock.transients.TransientResult`, label); the grid has
    ``reaches`` over the whole pipe (20 when None); ``aged`` adds one
    rejection from the maximum plant flow with that roughness per MOC pipe [m];
    ``options`` go to :func:`penstock.transients.simulate`."""
    law = _law_args(case.surge)
    n = reaches if reaches is not None else 20
    sets = [(q, None, "") for q in rejection_flows(case)]
    if aged is not None:
        sets.append((case.maximum_flow, aged, f", after {case.service_life:g} years"))
    return [(q, transients.simulate(**pipes.args(props, q, n, rough),
                                    reservoir_head=case.headwater,
                                    tailwater_head=pipes.downstream, flow=q, **law, **options),
             label)
            for q, rough, label in sets]


def converged_grid(case, props, pipes, probe_positions):
    """The grid of the case: the design-flow rejection refined until converged
    (:func:`penstock.transients.simulate_converged`), or the one the case fixes."""
    law = _law_args(case.surge)
    fixed = grid_reaches(case, pipes)
    if fixed is not None:
        return fixed, None

    def run(n):
        return transients.simulate(**pipes.args(props, case.design_flow, n),
                                   reservoir_head=case.headwater,
                                   tailwater_head=pipes.downstream, flow=case.design_flow,
                                   **law)

    res, conv = transients.simulate_converged(run, probe_positions=probe_positions)
    return conv.reaches[-1], conv


def check(case, props, steady):
    """Refuse, as :func:`run` would, a case whose simulations cannot run, without running
    them (:func:`penstock.transients.simulate` with ``dry_run``)."""
    s = case.surge
    route = steady.route
    pipes = _pipes(case, props, route, [], Methods())
    law = _law_args(s)
    try:
        rejections(case, props, pipes, grid_reaches(case, pipes), dry_run=True)
    except ValueError as exc:
        raise _refusal(exc) from None
    times = _study_times(s, 2 * float(surge.travel_time(pipes.series.length, pipes.speeds)))
    study_law = _study_law(law)
    if study_law["law"] == "two_stage":
        study_law["knee_time"] = s["knee_time"] / s["closure_time"] * max(times)
    try:
        transients.simulate(**pipes.args(props, case.design_flow,
                                         grid_reaches(case) or 20),
                            reservoir_head=case.headwater, tailwater_head=pipes.downstream,
                            flow=case.design_flow, closure_time=max(times), dry_run=True,
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
    pipes = _pipes(case, props, route, warns, methods)
    lengths, speeds, wave_table = pipes.series.length, pipes.speeds, pipes.wave_table
    if not s["section_given"]:
        warns.append(Warning_("water hammer", f"the case has no [surge] section: a "
                              f"{s['closure_law'].replace('_', '-')} closure in "
                              f"{s['closure_time']:g} s and the pipe material's modulus are "
                              "assumed; give the machine's real closure"))
    z_end = float(route.elevation[-1])
    q0 = case.design_flow
    static_head = case.headwater - z_end            # pressure head at the turbine at no flow
    hw_top = case.headwater_max if case.headwater_max is not None else case.headwater
    if case.headwater_max is None:
        warns.append(Warning_("water hammer", "no levels.headwater_max (flood level) is given: "
                              "the design pressure line starts from the normal headwater "
                              f"{case.headwater:g} m; give the flood level"))
    allowable = s["allowable_rise"] * static_head

    # ---- quick checks
    vel = gradeline.mean_velocity(q0, pipes.diameter)
    l_total = float(lengths.sum())
    t_travel = float(surge.travel_time(lengths, speeds))
    period = 2 * t_travel
    tc = s["closure_time"]
    regime = surge.closure_regime(tc, period)
    v_mean = float((lengths * vel).sum() / l_total)
    dh_jouk = float(surge.joukowsky(speeds[-1], vel[-1]))
    dh_mich = float(surge.michaud(l_total, v_mean, tc))
    h0 = case.headwater - pipes.downstream
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
    route_s = pipes.axis                          # every route node: vertices, losses, ends
    rec = [float(pipes.to_s(x)) for x in s["record_at"]]
    aged = aged_roughness(case, route, pipes)
    try:
        reaches, conv = converged_grid(case, props, pipes, route_s)
        results = rejections(case, props, pipes, reaches, aged, record_chainages=rec)
    except ValueError as exc:   # e.g. no Courant grid within the wave-speed tolerance
        raise _refusal(exc) from None
    q_d, main, _ = results[0]
    grid = pipes.gridded(reaches)
    adj = float(np.max(np.abs(grid.wave_speeds / pipes.segment_speeds[grid.segment] - 1.0)))
    shift = max((abs(a - b) for a, b in grid.moved), default=0.0)
    if shift > 0.0:
        warns.append(Warning_("water hammer", f"{len(grid.moved)} local loss(es) stand at the "
                              f"nearest node of the water-hammer grid, moved by at most "
                              f"{shift:.2f} m along the pipe", severity="note"))
    methods.add("Water hammer, simulation", "method of characteristics, series pipes; "
                "reservoir with its entrance loss and velocity head; each local loss a "
                "boundary where it stands; energy kept at changes of area; downstream orifice "
                "closing by the given law with the outlet losses in series; Darcy friction; "
                f"Courant number 1 by adjusting wave speeds (largest adjustment "
                f"{100 * adj:.2f} %); grid refined until the largest rise and the deepest "
                f"drop change by less than {100 * transients.CONVERGENCE_TOLERANCE:g} % (or "
                f"{100 * transients.CONVERGENCE_FLOOR:g} cm); envelopes read at every node and "
                "profile vertex",
                "Wylie, E.B. & Streeter, V.L. (1993), Fluid Transients in Systems, ch. 3; "
                "Chaudhry, M.H. (2014), Applied Hydraulic Transients, 3rd ed., Springer, ch. 3")
    if conv is not None and not conv.converged:
        last = ("no finer grid fits the work bound" if math.isnan(conv.change) else
                f"last change {100 * conv.change:.2f} %")
        warns.append(Warning_("water hammer", f"the water-hammer grid did not converge within "
                              f"{100 * transients.CONVERGENCE_TOLERANCE:g} % ({last} at "
                              f"{conv.reaches[-1]} reaches); the "
                              "envelopes may be under-resolved: set surge.reaches or shorten "
                              "the run"))
    atm_head, vap_head = props.atmospheric_head, props.vapour_head
    floor = vap_head - atm_head                   # gauge head at vapour pressure
    env_rows = []
    design_head = None
    separated = []
    for q, res, label in results:
        name = ("design flow" if q is q_d and not label else f"{q:.4g} m^3/s{label}")
        e = _crown_envelope(case, pipes, res, route_s, floor)
        x, z, d_node, h_min, h_max, h_0 = e.x, e.z, e.d_node, e.h_min, e.h_max, e.h_0
        cavity, pmin = e.cavity, e.crown_min
        if cavity.any():
            separated.append(q)
        rise = np.maximum(h_max - h_0, 0.0)
        # design line: the flood level's static head at the invert plus the rise
        dp = transients.design_pressure_line(hw_top - (z - 0.5 * d_node), h_max, h_0)
        # the design line is the envelope over every rejection, the aged pipe's included
        # (its rise above its lower steady line is the larger)
        if design_head is None:
            design_head, design_x = dp, x
        else:
            design_head = np.maximum(design_head, np.interp(design_x, x, dp))
        env_rows.append(pd.DataFrame({
            "rejection from": name, "initial flow [m^3/s]": q, "chainage [m]": x,
            "pipe elevation [m]": z, "static line [m]": case.headwater,
            "initial steady head [m]": h_0,
            "maximum head [m]": h_max, "minimum head [m]": h_min,
            "maximum transient rise [m]": rise,
            CROWN_MINIMUM: pmin,
            "column separation (vapour pressure reached) [-]": cavity,
            "design pressure head at the invert [m]": dp,
        }))
        for check, limit, text in (("sub-atmospheric", 0.0, "the down-surge takes the pressure "
                                    "below atmospheric"),
                                   ("vapour pressure", floor + 1e-9,
                                    "the down-surge reaches vapour pressure: the water column "
                                    "separates (the model does not simulate the cavity; the "
                                    "heads shown there are floored at vapour pressure)")):
            for x0, x1, low, at in gradeline.flagged_stretches(x, pmin, limit):
                warns.append(Warning_("water hammer", f"{text} from {x0:.1f} to {x1:.1f} m "
                                      f"(lowest pressure head {low:.2f} m at {at:.1f} m) on "
                                      f"rejection from {name}", chainage=at, flow=q))
    if separated:
        warns.append(Warning_("water hammer", "column separation is predicted on rejection "
                              f"from {', '.join(f'{q:.4g}' for q in separated)} m^3/s: the "
                              "maximum envelope and the design pressure line are those of a "
                              "model without cavities, and the pressure when a cavity "
                              "collapses can exceed them; protect the high points (air "
                              "valves, a slower closure, a surge tank) and re-check"))
    envelope = pd.concat(env_rows, ignore_index=True)
    sensitivity = _wave_speed_sensitivity(case, props, pipes, reaches, law, route_s, main,
                                          floor)
    # the worst of every rejection (the design flow, the maximum plant flow, aged, listed)
    rise_valve = max(float(res.max_head_rise.max()) for _, res, _ in results)
    rows += [("simulated maximum transient rise (largest at any node, any rejection)",
              rise_valve, "m"),
             ("simulated maximum head at the turbine (any rejection)",
              max(float(res.max_head[-1]) for _, res, _ in results), "m"),
             ("simulated minimum head along the route (any rejection)",
              min(float(res.min_head.min()) for _, res, _ in results), "m"),
             ("largest wave-speed adjustment for Courant = 1", 100 * adj, "%"),
             ("MOC time step", main.time_step, "s"),
             ("MOC reaches used (all pipes)", int(main.reaches.sum()), "-"),
             ("grid" if conv is None else "grid refinements (reaches of each run)",
              "set by surge.reaches" if conv is None else
              ", ".join(str(n) for n in conv.reaches), ""),
             ("change of the extremes at the last refinement",
              "none (grid set)" if conv is None else "none (no finer grid fits)"
              if math.isnan(conv.change) else 100 * conv.change,
              "" if conv is None or math.isnan(conv.change) else "%"),
             ("maximum headwater of the design pressure line", hw_top, "m")]
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
    # on the screening grid: the largest rise, which the study ranks by, converges first
    screening = reaches if conv is None else conv.reaches[0]
    try:
        if study_law.get("law") == "two_stage":
            frac = s["knee_time"] / tc
            study = _two_stage_study(case, props, pipes, screening, q0, times, frac,
                                     s["knee_opening"])
        else:
            kw = pipes.args(props, q0, screening)
            study = transients.closure_time_study(
                kw.pop("lengths"), kw.pop("diameters"), kw.pop("wave_speeds"),
                kw.pop("friction_factors"), case.headwater, pipes.downstream, q0, times,
                **kw, **study_law)
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
    own_walls = own_wall_checks(case, props, design_x, design_head, warns, methods)
    thrusts = fitting_thrusts(case, props, steady, design_x, design_head, methods)
    return HammerStage(
        water_hammer_checks=quick, wave_speeds=wave_table, transient_envelope=envelope,
        turbine_head_history=history, closure_time_study=study_table,
        wave_speed_sensitivity=sensitivity, grid_reaches=reaches,
        screening_reaches=screening,
        design_pressure_line=pd.DataFrame({"chainage [m]": design_x,
                                           "design pressure head at the invert [m]":
                                           design_head}),
        own_wall_checks=own_walls, fitting_thrusts=thrusts,
        headline=HammerHeadline(
            max_surge_rise=rise_valve, joukowsky=dh_jouk, allowable_rise=allowable,
            joukowsky_wave_speed=float(speeds[-1]), joukowsky_velocity=float(vel[-1]),
            shortest_closure=shortest, water_starting_time=tw,
            # the lowest pressure the pipe sees: a rejection can start from any steady
            # state of the study, and the grid's node-placed losses may lift the envelope
            # by up to half a reach's friction where a loss stands between nodes
            min_transient_pressure_head=min(float(envelope[CROWN_MINIMUM].min()),
                                            float(steady.pressure_checks[CROWN_MINIMUM].min()))))


def _positions(nodes, vertices):
    """Where the envelopes are read: every MOC node and route vertex along the pipe axis,
    positions closer than a micrometre taken once. [m]"""
    pos = np.unique(np.concatenate([nodes, vertices]))
    return pos[np.concatenate([[True], np.diff(pos) > 1e-6])]


@dataclass(frozen=True)
class CrownEnvelope:
    """One rejection's envelopes read at every node and route vertex, and the pressure
    head at the crown with the headwater at its minimum (arrays along the route)."""

    x: np.ndarray          # chainage [m]
    z: np.ndarray          # pipe centreline elevation [m]
    d_node: np.ndarray     # inside diameter; the larger pipe at a step [m]
    h_min: np.ndarray      # minimum head [m]
    h_max: np.ndarray      # maximum head [m]
    h_0: np.ndarray        # initial steady head [m]
    cavity: np.ndarray     # the crown reaches vapour pressure [-]
    crown_min: np.ndarray  # minimum gauge head at the crown, floored at vapour [m]


def _crown_envelope(case, pipes, res, route_s, floor) -> CrownEnvelope:
    """The envelopes of ``res`` at every node and vertex, and the crown's minimum pressure
    head at the minimum headwater (the basis of the steady checks), floored at the vapour
    pressure head ``floor`` (gauge) [m]."""
    pos = _positions(res.chainage, route_s)
    x = pipes.to_x(pos)
    z = np.interp(x, case.profile["chainage"], case.profile["elevation"])
    starts = np.array([seg.start for seg in case.segments[1:]])
    d_seg = np.array([seg.diameter for seg in case.segments])
    # a node at a diameter step takes the larger pipe, whose crown is higher
    tol = 1e-6 * max(1.0, float(np.max(np.abs(x))))
    d_node = np.maximum(d_seg[np.searchsorted(starts, x - tol, side="left")],
                        d_seg[np.searchsorted(starts, x + tol, side="right")])
    h_min = transients.envelope_at(res, pos, "min")
    computed = gradeline.crown_pressure_head(h_min - z, d_node,
                                             case.headwater - case.headwater_min)
    return CrownEnvelope(x=x, z=z, d_node=d_node, h_min=h_min,
                         h_max=transients.envelope_at(res, pos, "max"),
                         h_0=transients.envelope_at(res, pos, "steady"),
                         cavity=computed <= floor, crown_min=np.maximum(computed, floor))


def _wave_speed_sensitivity(case, props, pipes, reaches, law, route_s, main, floor):
    """The design-flow rejection with every wave speed 15 % lower and higher (at most that
    of a rigid pipe): the largest rise and the lowest crown pressure head (floored at
    vapour pressure, as on the envelope)."""
    rigid = float(wavespeed.rigid_pipe_wave_speed(props.bulk_modulus, props.density))
    rows = []
    for factor in (0.85, 1.0, 1.15):
        if factor == 1.0:
            res = main
        else:
            scale = min(factor, rigid / float(pipes.segment_speeds.max()))
            res = transients.simulate(**pipes.args(props, case.design_flow, reaches,
                                                   speed_factor=scale),
                                      reservoir_head=case.headwater,
                                      tailwater_head=pipes.downstream, flow=case.design_flow,
                                      **law)
        e = _crown_envelope(case, pipes, res, route_s, floor)
        rows.append({"wave speeds [% of computed]": 100 * factor,
                     "wave speed at the turbine [m/s]": float(res.wave_speeds[-1]),
                     "maximum transient rise [m]": float(res.max_head_rise.max()),
                     CROWN_MINIMUM: float(e.crown_min.min()),
                     "column separation (vapour pressure reached) [-]": bool(e.cavity.any()),
                     "at chainage [m]": float(e.x[np.argmin(e.crown_min)])})
    return pd.DataFrame(rows)


def _two_stage_study(case, props, pipes, reaches, q0, times, frac, knee_opening):
    """Closure study keeping the two-stage shape: knee at the same fraction of the time."""
    out = {k: [] for k in ("valve_max_head", "max_head_rise", "max_head", "min_head",
                           "max_head_drop")}
    for t in times:
        r = transients.simulate(**pipes.args(props, q0, reaches),
                                reservoir_head=case.headwater,
                                tailwater_head=pipes.downstream, flow=q0, law="two_stage",
                                closure_time=t, knee_time=frac * t, knee_opening=knee_opening)
        out["valve_max_head"].append(float(r.valve_head.max()))
        out["max_head_rise"].append(float(r.max_head_rise.max()))
        out["max_head"].append(float(r.max_head.max()))
        out["min_head"].append(float(r.min_head.min()))
        out["max_head_drop"].append(float(r.max_head_drop.max()))
    return transients.ClosureStudy(closure_time=np.array(times),
                                   **{k: np.array(v) for k, v in out.items()})


def _segment_peak(x, head, start, end):
    """Highest design head on [start, end] and where: the points inside and the line
    interpolated at both ends (a segment may hold no point of the line)."""
    inside = (x >= start - 1e-9) & (x <= end + 1e-9)
    xs = np.concatenate([[start, end], x[inside]])
    hs = np.concatenate([np.interp([start, end], x, head), head[inside]])
    k = int(np.argmax(hs))
    return float(hs[k]), float(xs[k])


#: What the wall check assumes of each family beyond its allowable stress.
_WALL_NOTES = {
    "hdpe": "PE100 (MRS 10 MPa, C 1.25), rated at 20 °C",
    "ductile_iron": "wall as given, to be the net wall (less service allowance and casting "
                    "tolerance), no lining counted",
}


def own_wall_checks(case, props, design_x, design_head, warns, methods):
    """The case's own walls against the design pressure line: one row per pipe segment.

    A wall fails, with a caution, where the highest design pressure head of its segment
    exceeds what it carries: its hoop rating (:func:`penstock.pipewall.wall_head_rating`
    on the material family's own basis) and, for a material sold in pressure classes,
    no more than its highest class. A pipe with no wall thickness or no strength data is
    a note."""
    from ..materials import pipe_wall_material
    from .sizing import wall_material

    w = case.wall
    steel = wall_material(case)
    x = np.asarray(design_x, float)
    head = np.asarray(design_head, float)
    rows = []
    for i, seg in enumerate(case.segments, start=1):
        need, at = _segment_peak(x, head, seg.start, seg.end)
        mat = pipe_wall_material(seg.material)
        kind = None if mat is None else mat.kind
        row = {"pipe": i, "from chainage [m]": seg.start, "to chainage [m]": seg.end,
               "material": seg.material, "inside diameter [m]": seg.diameter,
               "wall thickness [mm]": (np.nan if seg.wall_thickness is None
                                       else 1e3 * seg.wall_thickness),
               "allowable stress [MPa]": np.nan, "rating basis": "",
               "allowable pressure head [m]": np.nan,
               "highest design pressure head at the invert [m]": need,
               "at chainage [m]": at, "utilisation [%]": np.nan, "verdict": "",
               "lowest class carrying the design head": ""}
        top_class = None
        # PE100 is rated at 20 degC: its classes and stress re-rated for the water's
        factor = (float(pipeclasses.pe100_temperature_factor(case.temperature))
                  if kind == "hdpe" else 1.0)
        if mat is not None and mat.pressure_classes:
            classes = tuple(factor * p for p in mat.pressure_classes)
            label = pipewall.class_for_head(need, classes, mat.pressure_class_labels,
                                            props.density)
            top = int(np.argmax(classes))
            top_class = (mat.pressure_class_labels[top], float(pipewall.class_head(
                classes[top], props.density)))
            row["lowest class carrying the design head"] = (
                label if label is not None else f"none: above {top_class[0]}")
        is_steel = kind == "steel"
        sigma = (steel.allowable_stress if is_steel else
                 None if mat is None or mat.allowable_stress is None
                 else factor * mat.allowable_stress)
        if seg.wall_thickness is None or kind not in pipewall.WALL_RATING_BASIS or \
                sigma is None:
            row["verdict"] = ("not checked: no wall thickness" if seg.wall_thickness is None
                              else f"not checked: no strength data for {seg.material}")
            warns.append(Warning_("pipe wall", f"pipe {i} ({seg.material}): {row['verdict']}; "
                                  f"its design pressure head reaches {need:.1f} m at "
                                  f"chainage {at:.0f} m", chainage=at, severity="note"))
            rows.append(row)
            continue
        basis = pipewall.WALL_RATING_BASIS[kind]
        hoop = float(pipewall.wall_head_rating(
            seg.wall_thickness, seg.diameter, float(sigma), basis,
            joint_efficiency=w["joint_efficiency"] if is_steel else 1.0,
            corrosion_allowance=w["corrosion_allowance"] if is_steel else 0.0,
            water_density=props.density))
        capped = top_class is not None and top_class[1] < hoop
        allow_head = top_class[1] if capped else hoop
        use = 100.0 * need / allow_head if allow_head > 0 else np.nan   # allowance eats all
        basis_text = f"{basis} diameter" + (f", at most {top_class[0]}" if capped else "")
        if kind in _WALL_NOTES:
            basis_text += f"; {_WALL_NOTES[kind]}"
        if factor != 1.0:
            basis_text += f", re-rated ×{factor:.3g} for {case.temperature:g} °C water"
        row.update({"allowable stress [MPa]": float(sigma) / 1e6, "rating basis": basis_text,
                    "allowable pressure head [m]": allow_head, "utilisation [%]": use,
                    "verdict": "passes" if need <= allow_head else "FAILS"})
        if need > allow_head:
            limit = (f"the {allow_head:.1f} m of its highest class {top_class[0]}" if capped
                     else f"the {allow_head:.1f} m the wall carries at its allowable hoop "
                     "stress")
            warns.append(Warning_(
                "pipe wall", f"pipe {i} ({seg.material}, {1e3 * seg.wall_thickness:.1f} mm "
                f"wall): the design pressure head {need:.1f} m at chainage {at:.0f} m exceeds "
                f"{limit} "
                + (f"({use:.0f} %)" if allow_head > 0 else "(none: the corrosion allowance takes "
                   "the whole wall)") + "; a thicker wall, a higher pressure class or another "
                "material is needed", chainage=at))
        rows.append(row)
    methods.add("Own wall check", "each pipe's given wall against the highest design "
                "pressure head (static at the flood level plus the transient rise) of its "
                "segment: p = 2·σ_allow·E_j·(t − c)/D_b, D_b the inside diameter for steel "
                "(the tool's own design rule, with the case's grade, joint efficiency and "
                "corrosion allowance), the mean diameter for PE (ISO 4427-2's "
                "p = 2σ/(SDR − 1), PE100, its stress and classes re-rated above 25 °C by a "
                "published PE100 temperature table) and the outside diameter for ductile iron "
                "(the wall as given, taken as net of allowances); a material sold in "
                "pressure classes carries no more than its highest class; GRP, PVC and "
                "concrete are not checked (no strength data)",
                "ASCE MOP 79 (2012) ch. 3; ISO 4427-2:2019; AWWA C150 / EN 545 (basis from "
                "memory)")
    return pd.DataFrame(rows)


def _value_at(x, values, at):
    """The largest of ``values`` at chainage ``at`` (both sides of a step), else linear."""
    here = np.abs(x - at) <= 1e-6
    return float(values[here].max()) if here.any() else float(np.interp(at, x, values))


def _sides_at(x, values, at):
    """``values`` just upstream and just downstream of chainage ``at``: the first and the
    last node there (a step's two sides, in route order), else linear at ``at``."""
    here = np.flatnonzero(np.abs(x - at) <= 1e-6)
    if here.size:
        return float(values[here[0]]), float(values[here[-1]])
    v = float(np.interp(at, x, values))
    return v, v


def fitting_thrusts(case, props, steady, design_x, design_head, methods=None):
    """Thrust on each bend and each change of diameter, for anchor-block design: the
    design pressure (static at the flood level plus the surge) with no flow, and the
    steady state at the largest study flow with its momentum; the larger governs.

    ``steady`` needs ``route``, ``flows`` and ``gl`` (the grade lines of ``case``'s own
    pipe at normal headwater, :func:`penstock.model.steady.run`); ``design_x`` and
    ``design_head`` are the design pressure line [m], [m]. The method is recorded when
    ``methods`` is given."""
    from .. import thrust

    segs = case.segments

    def upstream_of(at):     # the pipe reaching ``at`` from upstream
        return next((s for s in segs if s.start + 1e-9 < at <= s.end + 1e-9), segs[0])

    def downstream_of(at):   # the pipe leaving ``at`` downstream
        return next((s for s in segs if s.start - 1e-9 <= at < s.end - 1e-9), segs[-1])

    # (label, chainage, deflection, inlet pipe, outlet pipe, closed: the outlet unloaded)
    fittings = [(loss.label, loss.at, float(loss.params["angle"]), upstream_of(loss.at),
                 downstream_of(loss.at), False) for loss in case.losses if loss.kind == "bend"]
    fittings += [(f"change of diameter, pipe {i} to pipe {i + 1}", b.start, 0.0, a, b, False)
                 for i, (a, b) in enumerate(zip(segs[:-1], segs[1:], strict=True), start=1)
                 if a.diameter != b.diameter]
    # a closed valve, and the closed end of the penstock, carry p·A on the water side
    fittings += [(f"{loss.label}, closed", loss.at, 0.0, upstream_of(loss.at),
                  upstream_of(loss.at), True) for loss in case.losses if loss.kind == "valve"]
    fittings.append(("end of the penstock, closed", segs[-1].end, 0.0, segs[-1], segs[-1],
                     True))
    route = steady.route
    k = int(np.argmax(steady.flows))
    q = float(steady.flows[k])
    x_d, h_d = np.asarray(design_x, float), np.asarray(design_head, float)
    x_s, h_s = np.asarray(route.chainage, float), np.asarray(steady.gl.pressure_head[k], float)
    rows = []
    for label, at, angle, up, down, closed in sorted(fittings, key=lambda f: f[1]):
        h_design = _value_at(x_d, h_d, at)
        # steady: the grade line's own pressure on each side (a contraction's outlet is
        # lower by the velocity head gained and the loss, which adds to the thrust)
        h_steady, h_steady_out = _sides_at(x_s, h_s, at)
        shape = dict(area_in=up.area, angle=angle, density=props.density, area_out=down.area)
        # closed (after the closure): nothing presses on its far side; in steady flow it
        # is open and straight, and takes what any straight fitting of one bore takes
        f_design = float(thrust.fitting_thrust_at_heads(
            h_design, head_out=0.0 if closed else None, **shape))
        f_steady = float(thrust.fitting_thrust_at_heads(h_steady, flow=q,
                                                        head_out=h_steady_out, **shape))
        rows.append({"fitting": label, "chainage [m]": at, "deflection [deg]": np.degrees(angle),
                     "inlet diameter [m]": up.diameter, "outlet diameter [m]": down.diameter,
                     "design pressure head at the invert [m]": h_design,
                     "thrust, design pressure, no flow [kN]": f_design / 1e3,
                     "flow of the steady case [m^3/s]": q,
                     "steady pressure head at the centreline, inlet [m]": h_steady,
                     "thrust, steady flow with momentum [kN]": f_steady / 1e3,
                     "governing thrust [kN]": max(f_design, f_steady) / 1e3})
    if methods is not None:
        methods.add("Thrust at bends, changes of diameter and closed ends", "resultant of "
                    "p·A and ρ·Q·V at both ends, R = √(a² + b² − 2ab·cos θ) (2·(pA + ρQV)·"
                    "sin(θ/2) for one bore, p·A on a closed valve or end), in the plane of the "
                    "bend; the design pressure line with no flow, and the steady state at the "
                    "largest study flow with the grade line's pressure on each side; the "
                    "weight of water and pipe in a vertical bend, bifurcations and the field "
                    "test pressure are not included", "linear-momentum balance of a control "
                    "volume; AWWA M11 thrust restraint T = 2pA·sin(Δ/2) (from memory)")
    columns = ["fitting", "chainage [m]", "deflection [deg]", "inlet diameter [m]",
               "outlet diameter [m]", "design pressure head at the invert [m]",
               "thrust, design pressure, no flow [kN]", "flow of the steady case [m^3/s]",
               "steady pressure head at the centreline, inlet [m]",
               "thrust, steady flow with momentum [kN]", "governing thrust [kN]"]
    return pd.DataFrame(rows, columns=columns)
