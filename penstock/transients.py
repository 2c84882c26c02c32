"""Water hammer in a series penstock by the method of characteristics (MOC).

A constant-head reservoir feeds a chain of pipe segments (each with its own length,
diameter, wave speed and Darcy friction factor) that ends at a valve or a turbine treated as
an orifice discharging to a tailwater level. The valve closes by a named law. The solver
returns head and flow histories and the head envelopes along the route; the orchestrator
turns them into tables.

Everything here is a pure function of numbers and numpy arrays, SI units; heads are
piezometric levels above the project datum (the same datum as the pipe elevations).

Scheme
------
Fixed-grid MOC with the Courant number exactly 1 in every segment (the wave speeds are
nudged within a tolerance so that each segment holds a whole number of reaches), first-order
explicit friction ``R Q_A |Q_A|`` (Chaudhry 2014 section 3.x, Wylie and Streeter 1993
chapter 3 [1]_ [2]_), series junctions with a common head and continuity of flow. The nodes
are updated as numpy arrays; the only Python loop is the time loop. The first-order friction
term is accurate for the modest friction of penstocks (``f dx/(2D)`` small per reach); the
steady state it starts from is an exact fixed point of the scheme.

Column separation (vapour cavities) is not modelled: where :func:`envelope_flags` reports
the minimum head at vapour pressure the results past that instant are not physical there.

References
----------
.. [1] E. B. Wylie and V. L. Streeter, "Fluid Transients in Systems", Prentice Hall,
   Englewood Cliffs NJ, 1993, chapter 3 (characteristics method, boundary conditions,
   series junction, first-order friction). Chapter numbers from memory.
.. [2] M. H. Chaudhry, "Applied Hydraulic Transients", 3rd ed., Springer, New York, 2014,
   chapter 3 (characteristic and compatibility equations, boundary conditions: reservoir,
   valve, series junction; selection of the time step and wave-speed adjustment).
   DOI 10.1007/978-1-4614-8538-4. Chapter numbers from memory.
.. [3] J. Parmakian, "Waterhammer Analysis", Prentice-Hall, New York, 1955, (valve as an
   orifice, relative gate opening tau, ``V = V0 tau sqrt(H/H0)``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._numeric import as_float_array as _as_float_array
from ._numeric import require as _require
from ._numeric import same_kind as _same_kind
from .constants import GRAVITY
from .wavespeed import WATER_WAVE_SPEED_RANGE, validate_wave_speed


# --------------------------------------------------------------------------- helpers
def _segments(value, name, count=None, positive=True):
    arr = np.atleast_1d(_as_float_array(value, name)).astype(float).ravel()
    if count is not None:
        if arr.size == 1:
            arr = np.full(count, arr[0])
        elif arr.size != count:
            raise ValueError(f"{name} must have one value per segment ({count}); got {arr.size}")
    if positive:
        _require(np.isfinite(arr) & (arr > 0.0), name,
                 "finite and > 0 for every segment (zero-length or zero-size segments are "
                 "not allowed: merge or drop them)", value)
    else:
        _require(np.isfinite(arr) & (arr >= 0.0), name, "finite and >= 0", value)
    return arr


# --------------------------------------------------------------------------- closure laws
def _check_final(final_opening):
    tau_f = float(final_opening)
    if not 0.0 <= tau_f < 1.0:
        raise ValueError(f"final_opening must be in [0, 1) of the initial opening; got "
                         f"{final_opening!r}")
    return tau_f


def _check_closure_time(closure_time, law):
    if closure_time is None:
        raise ValueError(f"closure_time is required for law {law!r} (seconds, > 0)")
    tc = float(closure_time)
    if not (math.isfinite(tc) and tc > 0.0):
        raise ValueError(f"closure_time must be > 0 s for law {law!r}; got {closure_time!r}. "
                         "Use law='instant' for an instantaneous closure.")
    return tc


def _law_linear(time, closure_time, final_opening, knee_time, knee_opening, opening_table):
    tc = _check_closure_time(closure_time, "linear")
    tau_f = _check_final(final_opening)
    return np.maximum(tau_f, 1.0 - (1.0 - tau_f) * time / tc), tc


def _law_two_stage(time, closure_time, final_opening, knee_time, knee_opening, opening_table):
    tc = _check_closure_time(closure_time, "two_stage")
    tau_f = _check_final(final_opening)
    if knee_time is None or knee_opening is None:
        raise ValueError("law 'two_stage' needs knee_time [s] and knee_opening [-]")
    tk, ok = float(knee_time), float(knee_opening)
    if not 0.0 < tk < tc:
        raise ValueError(f"knee_time must lie in (0, closure_time = {tc:g} s); got {knee_time!r}")
    if not tau_f < ok < 1.0:
        raise ValueError(f"knee_opening must lie in (final_opening = {tau_f:g}, 1); got "
                         f"{knee_opening!r}")
    return np.interp(time, [0.0, tk, tc], [1.0, ok, tau_f]), tc


def _law_table(time, closure_time, final_opening, knee_time, knee_opening, opening_table):
    if closure_time is not None:
        raise ValueError("law 'table' takes its timing from opening_table; leave "
                         "closure_time as None")
    if opening_table is None:
        raise ValueError("law 'table' needs opening_table = (times [s], openings [-])")
    times, openings = (np.asarray(v, dtype=float).ravel() for v in opening_table)
    if times.size != openings.size or times.size < 2:
        raise ValueError("opening_table needs two equal-length sequences of at least 2 values")
    _require(np.isfinite(times) & np.isfinite(openings), "opening_table", "finite", opening_table)
    if times[0] != 0.0 or np.any(np.diff(times) <= 0.0):
        raise ValueError("opening_table times must start at 0 s and increase strictly")
    if np.any(openings < 0.0) or openings[0] <= 0.0:
        raise ValueError("opening_table openings must be >= 0 with a positive opening at t = 0")
    changes = np.nonzero(np.diff(openings) != 0.0)[0]
    end = float(times[changes[-1] + 1]) if changes.size else 0.0
    return np.interp(time, times, openings) / openings[0], end


def _law_instant(time, closure_time, final_opening, knee_time, knee_opening, opening_table):
    if closure_time not in (None, 0, 0.0):
        raise ValueError("law 'instant' takes no closure_time (or 0); got "
                         f"{closure_time!r}")
    tau_f = _check_final(final_opening)
    return np.where(time > 0.0, tau_f, 1.0), 0.0


#: Valve closure laws: name -> function returning (relative opening tau(t), end of motion).
#: tau is relative to the initial opening (1 at t = 0).
CLOSURE_LAWS = {
    "linear": _law_linear,
    "two_stage": _law_two_stage,
    "table": _law_table,
    "instant": _law_instant,
}


def _closure(time, law, closure_time, final_opening, knee_time, knee_opening, opening_table):
    if not isinstance(law, str) or law not in CLOSURE_LAWS:
        valid = ", ".join(repr(k) for k in CLOSURE_LAWS)
        raise ValueError(f"law {law!r} is not known; choose one of: {valid}")
    t = _as_float_array(time, "time")
    _require(np.isfinite(t) & (t >= 0.0), "time", "finite and >= 0 s (time since the start "
             "of the closure)", time)
    tau, end = CLOSURE_LAWS[law](t, closure_time, final_opening, knee_time, knee_opening,
                                 opening_table)
    return np.asarray(tau, dtype=float), end


def valve_opening(time, law="linear", closure_time=None, final_opening=0.0, knee_time=None,
                  knee_opening=None, opening_table=None):
    """Relative valve opening tau(t) for a closure law.

    Parameters
    ----------
    time : numeric
        Time since the start of the closure, >= 0. [s]
    law : str
        ``"linear"``, ``"two_stage"``, ``"table"`` or ``"instant"`` (see
        :data:`CLOSURE_LAWS`). [-]
    closure_time : float, optional
        Time to reach ``final_opening`` (linear, two_stage; must be > 0). [s]
    final_opening : float
        Opening at the end of the motion, relative to the initial one (instant, linear,
        two_stage). [-]
    knee_time : float, optional
        two_stage: end of the fast first stage. [s]
    knee_opening : float, optional
        two_stage: relative opening at the knee. [-]
    opening_table : tuple of two sequences, optional
        table: (times [s] starting at 0, openings [-]); openings are divided by the
        opening at t = 0, so gate fractions or stroke percentages both work. [-]

    Returns
    -------
    numeric
        Relative opening tau (1 at t = 0). [-]

    Notes
    -----
    linear: :math:`\\tau = \\max(\\tau_f, 1 - (1-\\tau_f) t/T_c)`; two_stage: straight lines
    through (0, 1), (t_k, tau_k), (T_c, tau_f); table: linear interpolation, held constant
    after the last entry; instant: :math:`\\tau = \\tau_f` for t > 0.
    """
    tau, _ = _closure(time, law, closure_time, final_opening, knee_time, knee_opening,
                      opening_table)
    return _same_kind(tau, time)


# --------------------------------------------------------------------------- grid
@dataclass(frozen=True)
class SeriesPipes:
    """A route as MOC pipes in series, with its local losses standing at the boundaries.

    Attributes
    ----------
    length : numpy.ndarray, shape (n,)
        Length of each pipe along its axis. [m]
    start : numpy.ndarray, shape (n,)
        Position of each pipe's upstream end along the route's axis. [m]
    segment : numpy.ndarray of int, shape (n,)
        Index of the route segment (pipe section of the case) each pipe lies in. [-]
    inlet_loss : float
        Loss coefficient at the reservoir, :math:`\\sum K/(2gA_K^2)`. [s^2/m^5]
    junction_loss : numpy.ndarray, shape (n - 1,)
        Loss coefficient at each junction. [s^2/m^5]
    outlet_loss : float
        Loss coefficient just upstream of the orifice. [s^2/m^5]
    """

    length: np.ndarray
    start: np.ndarray
    segment: np.ndarray
    inlet_loss: float
    junction_loss: np.ndarray
    outlet_loss: float


def series_pipes(length, element_segment, k, reference_area):
    """Split a route's chain of elements into MOC pipes at its local losses.

    Parameters
    ----------
    length : array_like, shape (n_element,)
        Axial length of each element, 0 for a local loss. [m]
    element_segment : array_like of int, shape (n_element,)
        Segment of each pipe reach (-1 for a local loss). [-]
    k : array_like, shape (n_element,)
        Local-loss coefficient of each element (0 for a pipe reach). [-]
    reference_area : array_like, shape (n_element,)
        Area whose velocity head ``k`` refers to. [m^2]

    Returns
    -------
    SeriesPipes

    Notes
    -----
    A local loss :math:`h = K V_K^2/(2g)` stands as :math:`c\\,Q|Q|` with
    :math:`c = K/(2gA_K^2)` at a boundary between two pipes, so that it acts where it is
    (Wylie & Streeter 1993 §3.5 treat a local loss as its own boundary [1]_). Losses at
    the same position add; a loss at the reservoir or at the orifice joins that boundary.
    :func:`gridded_pipes` then moves each loss to the nearest node of its grid.
    """
    el = np.asarray(length, dtype=float)
    es = np.asarray(element_segment, dtype=int)
    kk = np.asarray(k, dtype=float)
    ak = np.asarray(reference_area, dtype=float)
    pos = np.concatenate(([0.0], np.cumsum(el)))[:-1]      # upstream end of each element
    total = float(el.sum())
    if total <= 0.0:
        raise ValueError("the route has no pipe length")
    reach = el > 0
    # segment boundaries along the axis: where the segment of consecutive reaches changes
    rs, rp = es[reach], pos[reach]
    bounds = [float(rp[i]) for i in range(1, rs.size) if rs[i] != rs[i - 1]]
    points = {0.0: 0.0, total: 0.0, **{b: 0.0 for b in bounds}}
    for j in np.flatnonzero(~reach & (kk > 0)):
        x = min(max(float(pos[j]), 0.0), total)
        points[x] = points.get(x, 0.0) + float(kk[j]) / (2.0 * GRAVITY * float(ak[j]) ** 2)
    cuts = np.array(sorted(points))
    lengths = np.diff(cuts)
    starts = cuts[:-1]
    mid = starts + 0.5 * lengths
    # each pipe lies in the segment of the reach holding its midpoint
    idx = np.clip(np.searchsorted(rp, mid, side="right") - 1, 0, rs.size - 1)
    return SeriesPipes(length=lengths, start=starts, segment=rs[idx],
                       inlet_loss=points[0.0],
                       junction_loss=np.array([points[c] for c in cuts[1:-1]]),
                       outlet_loss=points[total])


@dataclass(frozen=True)
class GriddedPipes:
    """MOC pipes on one grid: every pipe of a route segment shares its reach length and
    adjusted wave speed, and each local loss stands at the grid node nearest to it.

    Attributes
    ----------
    length : numpy.ndarray, shape (n,)
        Length of each pipe, a whole number of its segment's reaches. [m]
    segment : numpy.ndarray of int, shape (n,)
        Route segment of each pipe. [-]
    wave_speeds : numpy.ndarray, shape (n,)
        Adjusted wave speed of each pipe (its segment's). [m/s]
    time_step : float
        Time step of the grid. [s]
    inlet_loss, outlet_loss : float
        Loss coefficients at the reservoir and at the orifice. [s^2/m^5]
    junction_loss : numpy.ndarray, shape (n - 1,)
        Loss coefficient at each junction. [s^2/m^5]
    moved : tuple of (float, float)
        (position given, position used) of each local loss. [m]
    """

    length: np.ndarray
    segment: np.ndarray
    wave_speeds: np.ndarray
    time_step: float
    inlet_loss: float
    junction_loss: np.ndarray
    outlet_loss: float
    moved: tuple


def gridded_pipes(series, segment_wave_speeds, total_reaches,
                  wave_speed_tolerance=0.05):
    """Put :func:`series_pipes` on one MOC grid, the local losses at their nearest nodes.

    Parameters
    ----------
    series : SeriesPipes
        The route split at its local losses. [-]
    segment_wave_speeds : array_like
        Wave speed of each route segment. [m/s]
    total_reaches : int
        Reaches over the whole pipe, see :func:`characteristic_grid`. [-]
    wave_speed_tolerance : float
        Largest wave-speed adjustment for the Courant condition. [-]

    Returns
    -------
    GriddedPipes

    Notes
    -----
    The grid is chosen on the route segments (:func:`characteristic_grid`), so that one
    physical pipe keeps one wave speed: splitting it into pieces of their own adjusted
    wave speeds would put spurious impedance steps along it, whose reflections add up
    under a sharp front. A local loss then moves to the nearest node, by at most half a
    reach; the grid refinement makes the move vanish (Chaudhry 2014, ch. 3, places
    boundaries at grid nodes [2]_).
    """
    seg_of_pipe = np.asarray(series.segment, dtype=int)
    speeds = np.asarray(segment_wave_speeds, dtype=float)
    segs = np.unique(seg_of_pipe)             # route order: segments appear in sequence
    seg_len = np.array([series.length[seg_of_pipe == i].sum() for i in segs])
    seg_start = np.array([series.start[seg_of_pipe == i][0] for i in segs])
    grid = characteristic_grid(seg_len, speeds[segs], total_reaches=total_reaches,
                               wave_speed_tolerance=wave_speed_tolerance)
    dx = grid.reach_lengths
    # every cut (a junction between two series pipes) and its loss, snapped to a node
    cuts = series.start[1:]
    nodes = {}                                  # (segment position, node index) -> loss
    moved = []
    for x, c in zip(cuts, series.junction_loss, strict=True):
        j = int(np.clip(np.searchsorted(seg_start, x, side="right") - 1, 0, segs.size - 1))
        if j > 0 and abs(x - seg_start[j]) < 1e-9:
            key = (j, 0)
        else:
            key = (j, int(np.rint((x - seg_start[j]) / dx[j])))
            if key[1] >= grid.reaches[j] and j + 1 < segs.size:
                key = (j + 1, 0)
            elif key[1] == 0 and j == 0:
                key = None                        # at the reservoir
        if key is None or (key[1] >= grid.reaches[key[0]]):
            target = 0.0 if key is None else float(seg_start[key[0]] + seg_len[key[0]])
        else:
            target = float(seg_start[key[0]] + key[1] * dx[key[0]])
        if abs(target - x) > 1e-9:
            moved.append((float(x), target))
        nodes[key] = nodes.get(key, 0.0) + float(c)
    inlet = series.inlet_loss + nodes.pop(None, 0.0)
    outlet = series.outlet_loss
    for key in [k for k in nodes if k[1] >= grid.reaches[k[0]]]:
        outlet += nodes.pop(key)                  # the last segment's end: the orifice
    lengths, seg_idx, wave, loss = [], [], [], []
    for j, i in enumerate(segs):
        inner = sorted(k[1] for k in nodes if k[0] == j and k[1] > 0)
        bounds = [0, *inner, int(grid.reaches[j])]
        if j > 0:
            loss.append(nodes.get((j, 0), 0.0))  # the junction at the segment's start
        for a, b in zip(bounds[:-1], bounds[1:], strict=True):
            if lengths and a > 0:
                loss.append(nodes[(j, a)])
            lengths.append((b - a) * dx[j])
            seg_idx.append(int(i))
            wave.append(float(grid.wave_speeds[j]))
    return GriddedPipes(length=np.array(lengths), segment=np.array(seg_idx),
                        wave_speeds=np.array(wave), time_step=grid.time_step,
                        inlet_loss=float(inlet), junction_loss=np.array(loss),
                        outlet_loss=float(outlet), moved=tuple(moved))


@dataclass(frozen=True)
class CharacteristicGrid:
    """Space-time grid of the MOC (Courant number 1 in every segment).

    Attributes
    ----------
    time_step : float
        Time step. [s]
    reaches : numpy.ndarray of int
        Number of reaches in each segment. [-]
    wave_speeds : numpy.ndarray
        Wave speed used in each segment, L / (n dt). [m/s]
    wave_speed_adjustment : numpy.ndarray
        Relative change of each wave speed, (used - given) / given. [-]
    reach_lengths : numpy.ndarray
        Reach length in each segment. [m]
    """

    time_step: float
    reaches: np.ndarray
    wave_speeds: np.ndarray
    wave_speed_adjustment: np.ndarray
    reach_lengths: np.ndarray


def characteristic_grid(lengths, wave_speeds, min_reaches=10, time_step=None,
                        wave_speed_tolerance=0.05, wave_speed_range=WATER_WAVE_SPEED_RANGE,
                        total_reaches=None):
    """Choose the MOC time step and reaches; adjust wave speeds to Courant number 1.

    Parameters
    ----------
    lengths : array_like
        Segment lengths, reservoir to valve. [m]
    wave_speeds : array_like
        Wave speed of each segment. [m/s]
    min_reaches : int
        Reaches in the segment of shortest travel time L/a (ignored if ``time_step``
        is given). [-]
    time_step : float, optional
        Time step to use instead. [s]
    wave_speed_tolerance : float
        Largest allowed relative change of any wave speed. [-]
    wave_speed_range : tuple of float
        Physical range the given wave speeds must lie in. [m/s]
    total_reaches : int, optional
        Instead of ``min_reaches``: the coarsest grid with at least this many reaches over
        all segments whose wave-speed adjustments stay within the tolerance (the segment
        of shortest travel time then holds as few reaches as that allows). [-]

    Returns
    -------
    CharacteristicGrid
        Time step, reaches and adjusted wave speeds.

    Raises
    ------
    ValueError
        If an input is invalid, or some segment would need a wave-speed change above the
        tolerance (the message names the segment and the fixes).

    Notes
    -----
    :math:`\\Delta t = \\min_i(L_i/a_i)/N`, :math:`n_i = \\mathrm{round}(L_i/(a_i\\Delta t))`,
    :math:`a_i' = L_i/(n_i \\Delta t)`; the adjustment is at most :math:`1/(2 n_i)`
    (Chaudhry 2014 chapter 3 [2]_; Wylie and Streeter 1993 chapter 3 [1]_).
    """
    length = _segments(lengths, "lengths")
    speed = _segments(wave_speeds, "wave_speeds", length.size)
    validate_wave_speed(speed, wave_speed_range, name="wave_speeds")
    tol = float(wave_speed_tolerance)
    if not 0.0 <= tol < 1.0:
        raise ValueError(f"wave_speed_tolerance must be in [0, 1); got {wave_speed_tolerance!r}")
    travel = length / speed
    if time_step is None and total_reaches is not None:
        if int(total_reaches) != total_reaches or total_reaches < 1:
            raise ValueError(f"total_reaches must be a whole number >= 1; got "
                             f"{total_reaches!r}")
        target = int(total_reaches)
        m = 1
        while True:   # ends by m = max(target, 1/(2 tol)): then every segment fits
            dt = float(travel.min()) / m
            n = np.maximum(np.rint(travel / dt), 1)
            fits = np.all(np.abs(length / (n * dt) / speed - 1.0) <= tol * (1.0 + 1e-12))
            if (fits and n.sum() >= target) or m > target + 1.0 / max(2.0 * tol, 1e-9):
                break
            m += 1
    elif time_step is None:
        if int(min_reaches) != min_reaches or min_reaches < 1:
            raise ValueError(f"min_reaches must be a whole number >= 1; got {min_reaches!r}")
        dt = float(travel.min()) / int(min_reaches)
    else:
        dt = float(time_step)
        if not (math.isfinite(dt) and dt > 0.0):
            raise ValueError(f"time_step must be > 0 s; got {time_step!r}")
    reaches = np.maximum(np.rint(travel / dt), 1).astype(int)
    used = length / (reaches * dt)
    adjustment = used / speed - 1.0
    bad = np.abs(adjustment) > tol * (1.0 + 1e-12)
    if np.any(bad):
        i = int(np.argmax(np.abs(adjustment)))
        raise ValueError(
            f"Courant condition cannot be met within wave_speed_tolerance = {tol:g}: segment "
            f"{i} (L = {length[i]:g} m, a = {speed[i]:g} m/s) would need a wave-speed change "
            f"of {adjustment[i]:+.2%} with dt = {dt:.4g} s. Fix: more reaches (min_reaches), "
            "a smaller time_step, or a larger wave_speed_tolerance.")
    return CharacteristicGrid(dt, reaches, used, adjustment, length / reaches)


# --------------------------------------------------------------------------- result
@dataclass(frozen=True)
class TransientResult:
    """Output of :func:`simulate` (numpy arrays; SI units; heads above datum).

    Attributes
    ----------
    chainage : numpy.ndarray, shape (nodes,)
        Distance of each node along the pipe from the reservoir. [m]
    time : numpy.ndarray, shape (steps + 1,)
        Time since the start of the closure. [s]
    valve_head : numpy.ndarray, shape (steps + 1,)
        Piezometric head just upstream of the valve. [m]
    valve_flow : numpy.ndarray, shape (steps + 1,)
        Discharge through the valve. [m^3/s]
    valve_opening : numpy.ndarray, shape (steps + 1,)
        Relative valve opening tau. [-]
    inlet_flow : numpy.ndarray, shape (steps + 1,)
        Discharge leaving the reservoir. [m^3/s]
    record_chainage : numpy.ndarray, shape (k,)
        Node chainage nearest each requested chainage. [m]
    record_head : numpy.ndarray, shape (steps + 1, k)
        Head history at those nodes. [m]
    steady_head : numpy.ndarray, shape (nodes,)
        Initial steady head (HGL with friction). [m]
    max_head : numpy.ndarray, shape (nodes,)
        Maximum head envelope over the run. [m]
    min_head : numpy.ndarray, shape (nodes,)
        Minimum head envelope over the run. [m]
    steady_flow : float
        Initial discharge. [m^3/s]
    segment_chainage : numpy.ndarray, shape (segments + 1,)
        Chainage of the segment ends. [m]
    time_step : float
        MOC time step. [s]
    reaches : numpy.ndarray of int, shape (segments,)
        Reaches per segment. [-]
    wave_speeds : numpy.ndarray, shape (segments,)
        Wave speeds used (after the Courant adjustment). [m/s]
    wave_speed_adjustment : numpy.ndarray, shape (segments,)
        Relative wave-speed adjustment, (used - given) / given. [-]
    """

    chainage: np.ndarray
    time: np.ndarray
    valve_head: np.ndarray
    valve_flow: np.ndarray
    valve_opening: np.ndarray
    inlet_flow: np.ndarray
    record_chainage: np.ndarray
    record_head: np.ndarray
    steady_head: np.ndarray
    max_head: np.ndarray
    min_head: np.ndarray
    steady_flow: float
    segment_chainage: np.ndarray
    time_step: float
    reaches: np.ndarray
    wave_speeds: np.ndarray
    wave_speed_adjustment: np.ndarray

    @property
    def max_head_rise(self):
        """Rise of the maximum envelope above the steady head, by node. [m]"""
        return self.max_head - self.steady_head

    @property
    def max_head_drop(self):
        """Drop of the minimum envelope below the steady head, by node. [m]"""
        return self.steady_head - self.min_head


# --------------------------------------------------------------------------- solver
#: Default bound on the time steps of one simulation (about 0.2 GB of histories).
MAX_STEPS = 5_000_000
#: Default bound on the node updates of one simulation (about 10 s at the measured
#: 1.25e7 node updates a second).
MAX_NODE_STEPS = 120_000_000


def simulate(lengths, diameters, wave_speeds, friction_factors, reservoir_head,
             tailwater_head, flow, closure_time=None, law="linear", *, final_opening=0.0,
             knee_time=None, knee_opening=None, opening_table=None, duration=None,
             min_reaches=10, time_step=None, wave_speed_tolerance=0.05, record_chainages=(),
             wave_speed_range=WATER_WAVE_SPEED_RANGE, max_steps=MAX_STEPS,
             max_node_steps=MAX_NODE_STEPS, dry_run=False, inlet_loss=0.0,
             junction_losses=None, outlet_loss=0.0, velocity_heads=False,
             total_reaches=None):
    """Simulate a valve (or turbine-equivalent orifice) closure by the MOC.

    Parameters
    ----------
    lengths : array_like
        Segment lengths, reservoir to valve. [m]
    diameters : array_like
        Internal diameter of each segment. [m]
    wave_speeds : array_like
        Wave speed of each segment. [m/s]
    friction_factors : array_like
        Darcy friction factor of each segment at the initial flow (0 for frictionless). [-]
    reservoir_head : float
        Reservoir water level (constant head at chainage 0). [m]
    tailwater_head : float
        Level the valve discharges to. [m]
    flow : float
        Initial steady discharge, > 0. [m^3/s]
    closure_time : float, optional
        Closure time (linear, two_stage; > 0). [s]
    law : str
        Closure law, a key of :data:`CLOSURE_LAWS`. [-]
    final_opening : float
        Relative opening at the end of the motion. [-]
    knee_time, knee_opening : float, optional
        two_stage knee, see :func:`valve_opening`. [s], [-]
    opening_table : tuple of two sequences, optional
        table law (times [s], openings [-]). [-]
    duration : float, optional
        Simulated time; default end of the valve motion plus 20 travel times
        (five oscillation periods 4L/a). [s]
    min_reaches : int
        Reaches in the segment of shortest travel time. [-]
    time_step : float, optional
        Time step instead of ``min_reaches``. [s]
    wave_speed_tolerance : float
        Largest relative wave-speed adjustment allowed for the Courant condition. [-]
    record_chainages : sequence of float
        Chainages whose head history is wanted (nearest node is used). [m]
    wave_speed_range : tuple of float
        Physical range for the wave speeds. [m/s]
    max_steps : int
        Most time steps allowed, a bound on the work and memory of one run. [-]
    max_node_steps : int
        Most node updates (grid nodes times time steps) allowed, a bound on the work of
        one run; below it, the shortest segment gets fewer than ``min_reaches`` reaches
        (down to one) before the run is refused. [-]
    dry_run : bool, default False
        Only check the inputs and the bounds on the work, raising ``ValueError`` as a run
        would, and return None (for validating a case without running it). [-]
    inlet_loss : float, default 0
        Local-loss coefficient of the intake, :math:`c = \\sum K/(2 g A_K^2)`, charged on
        outflow from the reservoir. [s^2/m^5]
    junction_losses : array_like, shape (segments - 1,), optional
        Local-loss coefficient standing at each junction between segments (a bend, a
        valve, a transition), :math:`c\\,Q|Q|` between the two sides. [s^2/m^5]
    outlet_loss : float, default 0
        Local-loss coefficient standing just upstream of the closing orifice; it acts in
        series with the orifice. [s^2/m^5]
    velocity_heads : bool, default False
        Keep the velocity heads in the boundaries: the reservoir node lies one velocity
        head (plus the inlet loss) below the reservoir level, and a junction between
        two areas keeps the energy, :math:`H_1 + Q^2/(2gA_1^2) = H_2 + Q^2/(2gA_2^2)
        + c\\,Q|Q|`, so that the initial state is the steady hydraulic grade line. False
        gives the classic constant-head reservoir and common-head junctions. [-]
    total_reaches : int, optional
        Reaches over the whole pipe instead of ``min_reaches``, see
        :func:`characteristic_grid`. [-]

    Returns
    -------
    TransientResult
        Histories, envelopes and grid data.

    Raises
    ------
    ValueError
        For bad inputs, a closure time <= 0 (unless ``law="instant"``), an impossible
        Courant adjustment, or a flow the head cannot drive.

    Notes
    -----
    Characteristic equations, with :math:`C_a = gA/a` and :math:`R = f\\Delta t/(2DA)`
    (Chaudhry 2014 chapter 3 [2]_):

    .. math:: C^+:\\ Q_P = C_P - C_a H_P,\\quad C_P = Q_A + C_a H_A - R Q_A|Q_A|

    .. math:: C^-:\\ Q_P = C_n + C_a H_P,\\quad C_n = Q_B - C_a H_B - R Q_B|Q_B|

    Interior node :math:`H_P = (C_P - C_n)/(2C_a)`. Series junction with one flow and a
    head difference :math:`H_1 - H_2 = e\\,Q^2 + c\\,Q|Q|` (:math:`e` the velocity-head
    difference when ``velocity_heads``, else 0): with :math:`B = 1/C_{a1} + 1/C_{a2}` and
    :math:`S = C_{P1}/C_{a1} + C_{n2}/C_{a2}`, :math:`Q = 2S/(B + \\sqrt{B^2 + 4(e \\pm c)S})`,
    which is the common-head junction :math:`Q = S/B` when both vanish. Reservoir on
    outflow :math:`H_P = H_R - b\\,Q^2` (:math:`b` the inlet loss plus, with
    ``velocity_heads``, :math:`1/(2gA^2)`), and :math:`H_P = H_R` on inflow (the entering
    jet's velocity head is lost), Wylie & Streeter 1993 §3.4 [1]_; valve
    :math:`Q_P = C_v\\sqrt{H_P - H_{tw}}` with :math:`1/C_v^2 = (H_{v0} - c_o Q_0^2 -
    H_{tw})/(Q_0\\tau)^2 + c_o` for an outlet loss :math:`c_o` in series (reverse flow uses
    the mirrored law). The steady state has the head falling by the Darcy loss
    :math:`f L Q^2/(2 g D A^2)` along each segment and by these boundary losses; it is an
    exact fixed point of the scheme.

    Node arrays of the result list every node of every segment, so a junction appears
    twice (its upstream side, then its downstream side), at the same chainage.
    """
    length = _segments(lengths, "lengths")
    count = length.size
    diameter = _segments(diameters, "diameters", count)
    friction = _segments(friction_factors, "friction_factors", count, positive=False)
    h_res = float(reservoir_head)
    h_tw = float(tailwater_head)
    c_in, c_out = float(inlet_loss), float(outlet_loss)
    c_j = np.zeros(count - 1) if junction_losses is None else _segments(
        junction_losses, "junction_losses", None, positive=False)
    if c_j.size != count - 1:
        raise ValueError(f"junction_losses must have one value per junction ({count - 1}); "
                         f"got {c_j.size}")
    _require(np.isfinite([c_in, c_out]) & (np.array([c_in, c_out]) >= 0.0),
             "inlet_loss and outlet_loss", "finite and >= 0 (s^2/m^5)", (inlet_loss, outlet_loss))
    q0 = float(flow)
    if not (math.isfinite(q0) and q0 > 0.0):
        raise ValueError(f"flow must be > 0 m^3/s; got {flow!r}")
    if not (math.isfinite(h_res) and math.isfinite(h_tw)):
        raise ValueError("reservoir_head and tailwater_head must be finite (m above datum)")
    grid = characteristic_grid(length, wave_speeds, min_reaches, time_step,
                               wave_speed_tolerance, wave_speed_range, total_reaches)
    if time_step is None and total_reaches is None:
        # a very short segment (a spool, a reducer) would set a tiny time step for the
        # whole pipe: take fewer reaches in it, down to one, while the work is too large
        _, motion = _closure(np.zeros(1), law, closure_time, final_opening, knee_time,
                             knee_opening, opening_table)
        span = duration if duration is not None else motion + 20.0 * float(np.sum(
            length / np.asarray(wave_speeds, dtype=float)))
        n_try = int(min_reaches)
        while n_try > 1 and (int(grid.reaches.sum()) + 1) * span / grid.time_step > \
                max_node_steps:
            n_try = max(1, n_try // 2)
            try:
                grid = characteristic_grid(length, wave_speeds, n_try, None,
                                           wave_speed_tolerance, wave_speed_range)
            except ValueError:
                break   # the finer grid stays; the bound below then names the segment
    dt, reaches, speed = grid.time_step, grid.reaches, grid.wave_speeds
    area = 0.25 * math.pi * diameter**2

    # Steady state: the inlet's loss and velocity head, a Darcy loss per reach and each
    # junction's head difference, heads falling from the reservoir.
    vel_coef = 1.0 / (2.0 * GRAVITY * area**2) if velocity_heads else np.zeros(count)
    b_in = c_in + float(vel_coef[0])                       # H_0 = H_R - b_in Q^2
    e_j = vel_coef[1:] - vel_coef[:-1]                     # velocity-head difference per Q^2
    loss_reach = friction * grid.reach_lengths * q0**2 / (2.0 * GRAVITY * diameter * area**2)
    loss_segment = loss_reach * reaches
    drop_junction = (e_j + c_j) * q0**2
    h_valve0 = h_res - b_in * q0**2 - loss_segment.sum() - drop_junction.sum()
    net0 = h_valve0 - c_out * q0**2 - h_tw
    if net0 <= 0.0:
        raise ValueError(
            f"flow = {q0:g} m^3/s is too large: its losses "
            f"{h_res - h_valve0 + c_out * q0**2:.3g} m leave no head across the valve "
            f"(reservoir {h_res:g} m, tailwater {h_tw:g} m)")

    seg = np.repeat(np.arange(count), reaches + 1)          # segment of each node
    first = np.concatenate(([0], np.cumsum(reaches + 1)[:-1]))
    local = np.arange(seg.size) - first[seg]                 # index within segment
    lost_before = np.concatenate(([0.0], np.cumsum(loss_segment[:-1] + drop_junction)))
    head = h_res - b_in * q0**2 - lost_before[seg] - local * loss_reach[seg]
    discharge = np.full(seg.size, q0)
    ca = GRAVITY * area[seg] / speed[seg]
    r = friction[seg] * dt / (2.0 * diameter[seg] * area[seg])
    half_inv_ca = 0.5 / ca
    left = first[1:] - 1                                     # last node of segments 0..n-2
    right = first[1:]                                        # first node of segments 1..n-1
    inv_ca_left, inv_ca_right = 1.0 / ca[left], 1.0 / ca[right]
    b_j = inv_ca_left + inv_ca_right
    b_j2 = b_j * b_j
    # quadratic coefficient of the junction flow, forward and reverse
    a_fwd, a_rev = e_j + c_j, e_j - c_j
    plain = not (np.any(a_fwd) or np.any(a_rev))
    inv_ca_sum = 1.0 / (ca[left] + ca[right])
    ca_left = ca[left]
    seg_chain = np.concatenate(([0.0], np.cumsum(length)))
    chain_all = seg_chain[seg] + local * grid.reach_lengths[seg]

    # Time axis and valve law.
    _, motion_end = _closure(np.zeros(1), law, closure_time, final_opening,
                                     knee_time, knee_opening, opening_table)
    if duration is None:
        duration = motion_end + 20.0 * float(np.sum(length / speed))
    duration = float(duration)
    if not (math.isfinite(duration) and duration > 0.0):
        raise ValueError(f"duration must be > 0 s; got {duration!r}")
    steps = duration / dt
    if steps > max_steps:
        raise ValueError(f"the run would need {steps:,.0f} time steps of {dt:.3g} s to cover "
                         f"{duration:,.4g} s; expected at most {max_steps:,} (a shorter closure "
                         "time or simulated duration)")
    steps = int(math.ceil(steps - 1e-9))
    work = (int(grid.reaches.sum()) + 1) * steps
    if work > max_node_steps:
        k = int(np.argmin(length / speed))
        raise ValueError(f"segment {k + 1} ({length[k]:.4g} m long) has the shortest wave "
                         f"travel time and sets a time step of {dt:.3g} s, so the run would "
                         f"need {work:,.0f} node updates; expected at most "
                         f"{max_node_steps:,} (merge this very short segment into its "
                         "neighbour)")
    if dry_run:
        return None
    time = np.arange(steps + 1) * dt
    tau, _ = _closure(time, law, closure_time, final_opening, knee_time, knee_opening,
                      opening_table)
    cv = q0 * tau / math.sqrt(net0)
    if c_out > 0.0:   # the outlet loss in series with the orifice
        cv = cv / np.sqrt(1.0 + c_out * cv * cv)

    rec_req = np.atleast_1d(_as_float_array(record_chainages, "record_chainages")).ravel()
    _require(np.isfinite(rec_req) & (rec_req >= 0.0) & (rec_req <= seg_chain[-1] + 1e-9),
             "record_chainages", f"within 0 to {seg_chain[-1]:g} m", record_chainages)
    chain = chain_all
    rec_nodes = np.abs(chain[None, :] - rec_req[:, None]).argmin(axis=1) \
        if rec_req.size else np.zeros(0, dtype=int)

    valve_head = np.empty(steps + 1)
    valve_flow = np.empty(steps + 1)
    inlet_flow = np.empty(steps + 1)
    record_head = np.empty((steps + 1, rec_nodes.size))
    steady_head = head.copy()
    valve_head[0], valve_flow[0], inlet_flow[0] = head[-1], q0, q0
    record_head[0] = head[rec_nodes]
    h_max = head.copy()
    h_min = head.copy()

    fr = np.empty_like(head)
    cah = np.empty_like(head)
    cp = np.zeros_like(head)
    cn = np.zeros_like(head)
    ca_last, ca_first = float(ca[-1]), float(ca[0])
    # The junctions are few (one per change of segment): plain float arithmetic on each
    # costs far less than a dozen numpy calls on arrays of two or three values.
    joints = [(int(i_l), int(i_r), *map(float, rest)) for i_l, i_r, *rest in zip(
        left, right, inv_ca_left, inv_ca_right, b_j, b_j2, a_fwd, a_rev, ca_left,
        inv_ca_sum, strict=True)]
    item_p, item_n = cp.item, cn.item
    cv_k = cv.tolist()
    # views fixed once: every update below writes into these same buffers
    q_up, q_down, cah_up, cah_down = discharge[:-1], discharge[1:], cah[:-1], cah[1:]
    fr_up, fr_down, cp_down, cn_up = fr[:-1], fr[1:], cp[1:], cn[:-1]
    recording = rec_nodes.size > 0
    for k in range(1, steps + 1):                            # the only Python loop
        np.abs(discharge, out=fr)
        fr *= discharge
        fr *= r
        np.multiply(ca, head, out=cah)
        np.add(q_up, cah_up, out=cp_down)
        cp_down -= fr_up
        np.subtract(q_down, cah_down, out=cn_up)
        cn_up -= fr_down
        np.subtract(cp, cn, out=head)
        head *= half_inv_ca
        np.add(cp, cn, out=discharge)
        discharge *= 0.5
        for i_l, i_r, g_l, g_r, b, b2, a_f, a_r, ca_l, g_sum in joints:
            c_p, c_n = item_p(i_l), item_n(i_r)
            if plain:
                hj = (c_p - c_n) * g_sum
                qj = c_p - ca_l * hj
                head[i_l] = hj
                head[i_r] = hj
            else:
                sj = c_p * g_l + c_n * g_r
                disc = b2 + 4.0 * (a_f if sj >= 0.0 else a_r) * sj
                qj = 2.0 * sj / (b + math.sqrt(0.0 if disc < 0.0 else disc))
                head[i_l] = (c_p - qj) * g_l
                head[i_r] = (qj - c_n) * g_r
            discharge[i_l] = qj
            discharge[i_r] = qj
        # Reservoir: H = H_R - b Q^2 on outflow, H_R on inflow.
        s_in = item_n(0) + ca_first * h_res
        if s_in > 0.0 and b_in > 0.0:
            q_in = 2.0 * s_in / (1.0 + math.sqrt(1.0 + 4.0 * ca_first * b_in * s_in))
            head[0] = h_res - b_in * q_in * q_in
        else:
            q_in = s_in
            head[0] = h_res
        discharge[0] = q_in
        # Valve: Q = cv sqrt(H - Htw), mirrored for reverse flow.
        s = item_p(-1) - ca_last * h_tw
        c = cv_k[k]
        if s >= 0.0:
            den = c + math.sqrt(c * c + 4.0 * ca_last * s)
            y = 2.0 * s / den if den > 0.0 else 0.0
            q_v, h_v = c * y, h_tw + y * y
        else:
            z = -2.0 * s / (c + math.sqrt(c * c - 4.0 * ca_last * s))
            q_v, h_v = -c * z, h_tw - z * z
        head[-1] = h_v
        discharge[-1] = q_v
        np.maximum(h_max, head, out=h_max)
        np.minimum(h_min, head, out=h_min)
        valve_head[k] = h_v
        valve_flow[k] = q_v
        inlet_flow[k] = q_in
        if recording:
            record_head[k] = head[rec_nodes]

    return TransientResult(
        chainage=chain, time=time, valve_head=valve_head, valve_flow=valve_flow,
        valve_opening=tau, inlet_flow=inlet_flow, record_chainage=chain_all[rec_nodes],
        record_head=record_head, steady_head=steady_head, max_head=h_max,
        min_head=h_min, steady_flow=q0, segment_chainage=seg_chain, time_step=dt,
        reaches=reaches, wave_speeds=speed, wave_speed_adjustment=grid.wave_speed_adjustment)


@dataclass(frozen=True)
class GridConvergence:
    """How :func:`simulate_converged` chose its grid.

    Attributes
    ----------
    reaches : tuple of int
        Reaches in all of each run's grid, coarsest first. [-]
    largest_rise, deepest_drop : tuple of float
        Largest rise above and deepest drop below the steady head, at the nodes and the
        probe positions, of each run. [m]
    change : float
        Relative change of the two between the last two runs (the larger of them);
        nan after a single run. [-]
    converged : bool
        Whether the last change is within the tolerance. [-]
    """

    reaches: tuple
    largest_rise: tuple
    deepest_drop: tuple
    change: float
    converged: bool


#: Largest wave-speed adjustment for the Courant condition in a planning run (1 %): the
#: adjustment changes the Joukowsky rise in proportion, so it is kept small, not 5 %.
PLANNING_WAVE_SPEED_TOLERANCE = 0.01
#: Relative change between two refinements below which the grid counts as converged.
CONVERGENCE_TOLERANCE = 0.005
#: Absolute change [m] that always counts as converged (a rise or drop near zero).
CONVERGENCE_FLOOR = 0.01


def envelope_at(result, positions, which="min"):
    """An envelope of :func:`simulate` read at positions along the pipe.

    Parameters
    ----------
    result : TransientResult
        A run of :func:`simulate`. [-]
    positions : array_like
        Positions along the pipe axis, from the reservoir (the result's ``chainage``). [m]
    which : {"min", "max", "steady"}
        The minimum or maximum envelope, or the initial steady head. [-]

    Returns
    -------
    numpy.ndarray
        The envelope, linear between the nodes of each segment; at a junction the lower
        (``"min"``) or higher (``"max"``, ``"steady"``) of its two sides. [m]
    """
    x = np.atleast_1d(np.asarray(positions, dtype=float))
    values = {"min": result.min_head, "max": result.max_head,
              "steady": result.steady_head}[which]
    pick = np.minimum if which == "min" else np.maximum
    out = np.full(x.shape, np.inf if which == "min" else -np.inf)
    first = 0
    ends = result.segment_chainage
    for i, n in enumerate(np.asarray(result.reaches, dtype=int)):
        xs = result.chainage[first:first + n + 1]
        inside = (x >= ends[i] - 1e-9) & (x <= ends[i + 1] + 1e-9)
        if inside.any():
            out[inside] = pick(out[inside],
                               np.interp(x[inside], xs, values[first:first + n + 1]))
        first += n + 1
    return out


def simulate_converged(run, total_reaches=20, probe_positions=(), max_refinements=6,
                       tolerance=CONVERGENCE_TOLERANCE, floor=CONVERGENCE_FLOOR):
    """A simulation on a grid refined until its envelopes stop changing.

    The grid doubles its reaches from ``total_reaches`` until the largest rise above and
    the deepest drop below the steady head (over the nodes and ``probe_positions``)
    each change by less than ``tolerance`` of their value, or by less than ``floor``,
    between two refinements.

    Parameters
    ----------
    run : callable
        ``run(n)`` simulates on the grid of ``n`` reaches over the whole pipe and returns
        a :class:`TransientResult` (e.g. :func:`simulate` with ``total_reaches=n``). [-]
    total_reaches : int
        Reaches of the coarsest grid over the whole pipe. [-]
    probe_positions : array_like
        Positions along the pipe where the envelopes are also read (profile vertices, a
        ridge between two nodes), by :func:`envelope_at`. [m]
    max_refinements : int
        Most doublings of the grid. [-]
    tolerance : float
        Relative change that counts as converged. [-]
    floor : float
        Absolute change that counts as converged. [m]

    Returns
    -------
    TransientResult, GridConvergence
        The finest run, and the record of the refinement.

    Notes
    -----
    The scheme's error falls with the reach length (Chaudhry 2014 ch. 3 [2]_): doubling
    until the extremes stop changing is the usual check of grid independence. A
    refinement that adds no reach ends the search, unconverged.
    """
    probe = np.atleast_1d(np.asarray(probe_positions, dtype=float))

    def extremes(res):
        rise = float(np.max(res.max_head - res.steady_head))
        drop = float(np.max(res.steady_head - res.min_head))
        if probe.size:
            rise = max(rise, float(np.max(envelope_at(res, probe, "max")
                                          - envelope_at(res, probe, "steady"))))
            drop = max(drop, float(np.max(envelope_at(res, probe, "steady")
                                          - envelope_at(res, probe, "min"))))
        return max(rise, 0.0), max(drop, 0.0)

    n = int(total_reaches)
    res = run(n)
    runs, rises, drops = [int(res.reaches.sum())], *([v] for v in extremes(res))
    change, converged = math.nan, False
    for _ in range(int(max_refinements)):
        n = 2 * int(res.reaches.sum())
        try:
            finer = run(n)
        except ValueError:
            break   # the bounds on the work allow no finer grid
        if int(finer.reaches.sum()) <= int(res.reaches.sum()):
            break   # the work bound allows no finer grid
        res = finer
        rise, drop = extremes(res)
        d_rise, d_drop = abs(rise - rises[-1]), abs(drop - drops[-1])
        change = max(d_rise / max(rise, 1e-12), d_drop / max(drop, 1e-12))
        runs.append(int(res.reaches.sum()))
        rises.append(rise)
        drops.append(drop)
        if (d_rise <= max(tolerance * rise, floor)) and (d_drop <= max(tolerance * drop, floor)):
            converged = True
            break
    return res, GridConvergence(tuple(runs), tuple(rises), tuple(drops), change, converged)


# --------------------------------------------------------------------------- post-processing
@dataclass(frozen=True)
class EnvelopeFlags:
    """Output of :func:`envelope_flags`.

    Attributes
    ----------
    pressure_head : numpy.ndarray
        Minimum gauge pressure head, min_head - pipe_elevation. [m]
    sub_atmospheric : numpy.ndarray of bool
        Nodes where the minimum pressure falls below atmospheric.
    vapour : numpy.ndarray of bool
        Nodes where the minimum absolute pressure reaches vapour pressure.
    sub_atmospheric_stretches : numpy.ndarray, shape (n, 2)
        (start, end) chainage of each run of flagged nodes. [m]
    vapour_stretches : numpy.ndarray, shape (n, 2)
        (start, end) chainage of each run of vapour nodes. [m]
    """

    pressure_head: np.ndarray
    sub_atmospheric: np.ndarray
    vapour: np.ndarray
    sub_atmospheric_stretches: np.ndarray
    vapour_stretches: np.ndarray


def _stretches(chainage, mask):
    edges = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
    starts = np.nonzero(edges == 1)[0]
    ends = np.nonzero(edges == -1)[0] - 1
    return np.column_stack((chainage[starts], chainage[ends])).reshape(-1, 2)


def envelope_flags(chainage, min_head, pipe_elevation, atmospheric_head, vapour_head):
    """Flag nodes where the minimum head envelope goes sub-atmospheric or to vapour.

    Parameters
    ----------
    chainage : array_like
        Node chainage, increasing. [m]
    min_head : array_like
        Minimum piezometric head envelope at the nodes. [m]
    pipe_elevation : array_like
        Pipe crown (or centreline) elevation at the nodes, same datum as the heads. [m]
    atmospheric_head : float
        Atmospheric pressure head at the site, p_atm / (rho g). [m]
    vapour_head : float
        Vapour pressure head of the water (absolute), p_v / (rho g). [m]

    Returns
    -------
    EnvelopeFlags
        Masks and (start, end) chainage of each flagged stretch (node to node; a lone
        flagged node gives start = end).

    Notes
    -----
    Gauge pressure head :math:`h = H_{min} - z`; sub-atmospheric where :math:`h < 0`;
    vapour where :math:`h + h_{atm} \\le h_v`. Past the instant of vapour pressure an
    elastic MOC without cavity model no longer holds there.
    """
    x = np.atleast_1d(_as_float_array(chainage, "chainage"))
    h = np.atleast_1d(_as_float_array(min_head, "min_head"))
    z = np.broadcast_to(_as_float_array(pipe_elevation, "pipe_elevation"), x.shape)
    if h.shape != x.shape:
        raise ValueError(f"min_head must match chainage in shape; got {h.shape} and {x.shape}")
    if x.size > 1 and np.any(np.diff(x) <= 0.0):
        raise ValueError("chainage must increase strictly")
    h_atm = float(atmospheric_head)
    h_vap = float(vapour_head)
    if not (h_atm > 0.0 and 0.0 <= h_vap < h_atm):
        raise ValueError("atmospheric_head must be > 0 m and vapour_head in [0, "
                         f"atmospheric_head); got {atmospheric_head!r} and {vapour_head!r}")
    pressure = h - z
    sub = pressure < 0.0
    vap = pressure + h_atm <= h_vap
    return EnvelopeFlags(pressure, sub, vap, _stretches(x, sub), _stretches(x, vap))


def design_pressure_line(static_head, max_head, steady_head, margin=0.0):
    """Design piezometric line: static head plus the largest transient rise by chainage.

    Parameters
    ----------
    static_head : numeric
        Static (no-flow) head, usually the maximum reservoir level. [m]
    max_head : array_like
        Maximum head envelope from :func:`simulate`. [m]
    steady_head : array_like
        Steady head of the same run (the rise is measured from it). [m]
    margin : numeric
        Extra head added as an allowance (e.g. for surge-tank upsurge or uncertainty). [m]

    Returns
    -------
    numeric
        Design piezometric head at each node; subtract the pipe elevation for the design
        pressure head. [m]

    Notes
    -----
    :math:`H_d = H_{static} + \\max(H_{max} - H_{steady}, 0) + m`. Adding the rise to the
    static level rather than to the (lower) running HGL errs on the safe side.
    """
    hmax = _as_float_array(max_head, "max_head")
    hs = _as_float_array(steady_head, "steady_head")
    if hmax.shape != hs.shape:
        raise ValueError(f"max_head and steady_head must match in shape; got {hmax.shape} "
                         f"and {hs.shape}")
    stat = _as_float_array(static_head, "static_head")
    m = _as_float_array(margin, "margin")
    _require(np.isfinite(m) & (m >= 0.0), "margin", "finite and >= 0", margin)
    return _same_kind(stat + np.maximum(hmax - hs, 0.0) + m, max_head)


@dataclass(frozen=True)
class ClosureStudy:
    """Output of :func:`closure_time_study` (one entry per closure time, ascending).

    Attributes
    ----------
    closure_time : numpy.ndarray
        Closure times studied. [s]
    valve_max_head : numpy.ndarray
        Maximum head at the valve. [m]
    max_head_rise : numpy.ndarray
        Largest rise of the envelope above the steady head anywhere on the route. [m]
    max_head : numpy.ndarray
        Largest head anywhere on the route. [m]
    min_head : numpy.ndarray
        Lowest head anywhere on the route. [m]
    max_head_drop : numpy.ndarray
        Largest drop of the envelope below the steady head anywhere on the route. [m]
    """

    closure_time: np.ndarray
    valve_max_head: np.ndarray
    max_head_rise: np.ndarray
    max_head: np.ndarray
    min_head: np.ndarray
    max_head_drop: np.ndarray


def closure_time_study(lengths, diameters, wave_speeds, friction_factors, reservoir_head,
                       tailwater_head, flow, closure_times, law="linear", **options):
    """Maximum rise and minimum head against closure time, one MOC run per time.

    Parameters
    ----------
    lengths, diameters, wave_speeds, friction_factors : array_like
        Segment data as for :func:`simulate`. [m], [m], [m/s], [-]
    reservoir_head, tailwater_head : float
        Levels as for :func:`simulate`. [m]
    flow : float
        Initial discharge. [m^3/s]
    closure_times : array_like
        Closure times to study, each > 0. [s]
    law : str
        ``"linear"`` or ``"two_stage"`` (a law with a closure time). [-]
    **options
        Further keyword arguments of :func:`simulate` (e.g. ``min_reaches``,
        ``knee_time``); ``duration`` defaults per run. [-]

    Returns
    -------
    ClosureStudy
        Envelope extremes for each closure time, sorted by closure time.

    Notes
    -----
    Each run is vectorized over the nodes; the runs follow one another.
    """
    if law not in ("linear", "two_stage"):
        raise ValueError(f"closure_time_study needs law 'linear' or 'two_stage'; got {law!r}")
    times = np.sort(np.atleast_1d(_as_float_array(closure_times, "closure_times")).ravel())
    if times.size == 0:
        raise ValueError("closure_times must hold at least one closure time")
    _require(np.isfinite(times) & (times > 0.0), "closure_times", "finite and > 0 s",
             closure_times)
    rows = []
    for tc in times:
        res = simulate(lengths, diameters, wave_speeds, friction_factors, reservoir_head,
                       tailwater_head, flow, float(tc), law, **options)
        rows.append((res.valve_head.max(), res.max_head_rise.max(), res.max_head.max(),
                     res.min_head.min(), res.max_head_drop.max()))
    cols = np.array(rows).T
    return ClosureStudy(times, *cols)


#: Study quantities a limit can apply to: name -> True for an upper limit (value <= limit).
STUDY_LIMITS = {
    "max_head_rise": True,
    "valve_max_head": True,
    "max_head": True,
    "max_head_drop": True,
    "min_head": False,
}


def shortest_closure_within_limit(study, limit, quantity="max_head_rise"):
    """Shortest closure time meeting a limit, by linear interpolation in a study.

    Parameters
    ----------
    study : ClosureStudy
        Result of :func:`closure_time_study`. [-]
    limit : float
        Limit value (upper for rises and heads, lower for ``"min_head"``). [m]
    quantity : str
        A field of the study listed in :data:`STUDY_LIMITS`. [-]

    Returns
    -------
    float
        Shortest closure time from which every longer studied time meets the limit,
        interpolated between the bracketing studied times. When the shortest studied time
        already meets it, that time is returned (a shorter one may also do). [s]

    Raises
    ------
    ValueError
        If no studied closure time meets the limit (study longer times).
    """
    if quantity not in STUDY_LIMITS:
        valid = ", ".join(repr(k) for k in STUDY_LIMITS)
        raise ValueError(f"quantity {quantity!r} is not known; choose one of: {valid}")
    times = np.asarray(study.closure_time, dtype=float)
    values = np.asarray(getattr(study, quantity), dtype=float)
    upper = STUDY_LIMITS[quantity]
    lim = float(limit)
    ok = values <= lim if upper else values >= lim
    if not ok[-1]:
        raise ValueError(f"no studied closure time meets {quantity} {'<=' if upper else '>='} "
                         f"{lim:g}; extend closure_times beyond {times[-1]:g} s")
    failing = np.nonzero(~ok)[0]
    if failing.size == 0:
        return float(times[0])
    i = int(failing[-1])                    # last failing time; i + 1 is within the limit
    v0, v1 = values[i], values[i + 1]
    frac = (v0 - lim) / (v0 - v1) if v0 != v1 else 1.0
    return float(times[i] + frac * (times[i + 1] - times[i]))
