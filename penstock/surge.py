"""Quick water hammer and speed-regulation checks (closed forms).

Pure functions of numbers and numpy arrays, SI units. Heads are metres of water column;
``static_head`` in the Allievi forms is the head at the valve above its outlet level (the
head that drives the flow through the valve).

References
----------
.. [1] N. Joukowsky, "Ueber den hydraulischen Stoss in Wasserleitungsroehren", Memoires de
   l'Academie Imperiale des Sciences de St.-Petersbourg, series 8, 9(5), 1900.
.. [2] J. Parmakian, "Waterhammer Analysis", Prentice-Hall, New York, 1955 (Dover reprint
   1963), chapters 2-5 (Allievi's interlocking equations, charts for uniform gate motion,
   slow-closure formulas). Chapter numbers from memory.
.. [3] M. H. Chaudhry, "Applied Hydraulic Transients", 3rd ed., Springer, New York, 2014,
   chapter 1 (Joukowsky, Michaud, closure regimes) and chapter 7 (hydropower plants,
   water and mechanical starting times). DOI 10.1007/978-1-4614-8538-4. Chapter numbers
   from memory.
.. [4] E. B. Wylie and V. L. Streeter, "Fluid Transients in Systems", Prentice Hall, 1993,
   chapter 1 (rigid-column slow closure) and chapter 2.
.. [5] W. W. Krueger, "Selecting Hydraulic Reaction Turbines", USBR Engineering Monograph
   No. 20, US Bureau of Reclamation, Denver, 1976 (water and mechanical starting times,
   ``Tm = WR^2 n^2 / (1.6e6 P)`` in US units; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._numeric import as_float_array as _as_float_array
from ._numeric import require as _require
from ._numeric import same_kind as _same_kind
from .constants import GRAVITY


# --------------------------------------------------------------------------- helpers
def _positive(value, name):
    arr = _as_float_array(value, name)
    _require(np.isfinite(arr) & (arr > 0.0), name, "finite and > 0", value)
    return arr


def _route(lengths, other, other_name):
    length = _positive(lengths, "lengths")
    values = _as_float_array(other, other_name)
    try:
        np.broadcast_shapes(length.shape, values.shape)
    except ValueError as exc:
        raise ValueError(f"lengths {length.shape} and {other_name} {values.shape} must have "
                         "matching shapes (one value per segment)") from exc
    return length, values


# --------------------------------------------------------------------------- pipe period
def travel_time(lengths, wave_speeds):
    """One-way wave travel time along a series route, sum of L_i / a_i.

    Parameters
    ----------
    lengths : array_like
        Segment lengths along the last axis. [m]
    wave_speeds : array_like
        Wave speed of each segment. [m/s]

    Returns
    -------
    numeric
        Travel time from the reservoir to the valve. [s]

    Notes
    -----
    :math:`T = \\sum_i L_i / a_i`
    """
    length, speed = _route(lengths, wave_speeds, "wave_speeds")
    _require(np.isfinite(speed) & (speed > 0.0), "wave_speeds", "finite and > 0", wave_speeds)
    return _same_kind(np.sum(length / speed, axis=-1))


def pipe_period(lengths, wave_speeds):
    """Pipe period (critical closure time) 2 sum(L_i / a_i).

    Parameters
    ----------
    lengths : array_like
        Segment lengths along the last axis. [m]
    wave_speeds : array_like
        Wave speed of each segment. [m/s]

    Returns
    -------
    numeric
        Round-trip time 2L/a of a wave between valve and reservoir. [s]

    Notes
    -----
    :math:`T_r = 2 \\sum_i L_i/a_i = 2L/a_e`; the oscillation period of a
    reservoir-pipe-valve system after full closure is twice this, 4L/a.
    """
    return _same_kind(2.0 * np.asarray(travel_time(lengths, wave_speeds)))


def equivalent_wave_speed(lengths, wave_speeds):
    """Wave speed of one uniform pipe of the total length with the same travel time.

    Parameters
    ----------
    lengths : array_like
        Segment lengths along the last axis. [m]
    wave_speeds : array_like
        Wave speed of each segment. [m/s]

    Returns
    -------
    numeric
        Equivalent wave speed. [m/s]

    Notes
    -----
    :math:`a_e = \\sum_i L_i / \\sum_i (L_i/a_i)` (Wylie and Streeter 1993 [4]_).
    """
    length, _ = _route(lengths, wave_speeds, "wave_speeds")
    total = np.sum(np.broadcast_to(length, np.broadcast_shapes(
        length.shape, np.shape(wave_speeds))), axis=-1)
    return _same_kind(total / np.asarray(travel_time(lengths, wave_speeds)))


def closure_regime(closure_time, period):
    """Classify a valve closure as ``"rapid"`` (Tc <= 2L/a) or ``"slow"``.

    Parameters
    ----------
    closure_time : numeric
        Effective closure time. [s]
    period : numeric
        Pipe period 2L/a from :func:`pipe_period`. [s]

    Returns
    -------
    str or numpy.ndarray of str
        ``"rapid"`` where the closure ends before the first reflection returns (the full
        Joukowsky rise develops), else ``"slow"``.

    Notes
    -----
    Rapid if :math:`T_c \\le 2L/a` (Chaudhry 2014 chapter 1 [3]_).
    """
    tc = _as_float_array(closure_time, "closure_time")
    _require(np.isfinite(tc) & (tc >= 0.0), "closure_time", "finite and >= 0", closure_time)
    tr = _positive(period, "period")
    result = np.where(tc <= tr, "rapid", "slow")
    return str(result) if result.ndim == 0 else result


# --------------------------------------------------------------------------- head rise
def joukowsky(wave_speed, velocity_change):
    """Joukowsky head rise for a sudden change of velocity.

    Parameters
    ----------
    wave_speed : numeric
        Pressure-wave speed. [m/s]
    velocity_change : numeric
        Reduction of velocity, initial minus final (positive for a closure). [m/s]

    Returns
    -------
    numeric
        Head rise (negative for a velocity increase). [m]

    Notes
    -----
    :math:`\\Delta H = a\\,\\Delta V / g` (Joukowsky 1900 [1]_).
    """
    a = _positive(wave_speed, "wave_speed")
    dv = _as_float_array(velocity_change, "velocity_change")
    _require(np.isfinite(dv), "velocity_change", "finite", velocity_change)
    return _same_kind(a * dv / GRAVITY, wave_speed, velocity_change)


def michaud(length, velocity, closure_time):
    """Michaud's head rise for a slow closure with a uniform velocity reduction.

    Parameters
    ----------
    length : numeric
        Pipe length from reservoir to valve. [m]
    velocity : numeric
        Initial velocity. [m/s]
    closure_time : numeric
        Closure time, not shorter than the pipe period 2L/a. [s]

    Returns
    -------
    numeric
        Head rise. [m]

    Notes
    -----
    :math:`\\Delta H = 2 L V / (g T_c)` (Michaud 1878; Chaudhry 2014 chapter 1 [3]_). It is
    the elastic-theory maximum when the velocity falls linearly over :math:`T_c \\ge 2L/a`;
    the rigid-column value is half of it.
    """
    length_ = _positive(length, "length")
    v = _as_float_array(velocity, "velocity")
    _require(np.isfinite(v), "velocity", "finite", velocity)
    tc = _positive(closure_time, "closure_time")
    return _same_kind(2.0 * length_ * v / (GRAVITY * tc), length, velocity, closure_time)


def allievi_pipeline_constant(wave_speed, velocity, static_head):
    """Allievi's pipeline constant rho = a V0 / (2 g H0).

    Parameters
    ----------
    wave_speed : numeric
        Pressure-wave speed. [m/s]
    velocity : numeric
        Initial velocity. [m/s]
    static_head : numeric
        Head at the valve above its outlet before closure. [m]

    Returns
    -------
    numeric
        Pipeline constant. [-]

    Notes
    -----
    :math:`\\rho = a V_0 / (2 g H_0)` (Parmakian 1955 [2]_); half the Joukowsky rise over
    the head.
    """
    a = _positive(wave_speed, "wave_speed")
    v = _positive(velocity, "velocity")
    h = _positive(static_head, "static_head")
    return _same_kind(a * v / (2.0 * GRAVITY * h), wave_speed, velocity, static_head)


def allievi_time_constant(wave_speed, closure_time, length):
    """Allievi's time constant theta = a Tc / (2 L), closure time in pipe periods.

    Parameters
    ----------
    wave_speed : numeric
        Pressure-wave speed. [m/s]
    closure_time : numeric
        Closure time. [s]
    length : numeric
        Pipe length. [m]

    Returns
    -------
    numeric
        Time constant. [-]

    Notes
    -----
    :math:`\\theta = a T_c / (2L)` (Parmakian 1955 [2]_).
    """
    a = _positive(wave_speed, "wave_speed")
    tc = _positive(closure_time, "closure_time")
    length_ = _positive(length, "length")
    return _same_kind(a * tc / (2.0 * length_), wave_speed, closure_time, length)


def _slow_k(length, velocity, static_head, closure_time):
    length_ = _positive(length, "length")
    v = _positive(velocity, "velocity")
    h = _positive(static_head, "static_head")
    tc = _positive(closure_time, "closure_time")
    return length_ * v / (GRAVITY * h * tc), h


def allievi_max_head(length, velocity, static_head, closure_time):
    """Maximum valve head for a slow uniform gate closure, rigid-column closed form.

    Parameters
    ----------
    length : numeric
        Pipe length. [m]
    velocity : numeric
        Initial velocity. [m/s]
    static_head : numeric
        Head at the valve above its outlet before closure, H0. [m]
    closure_time : numeric
        Time of the uniform (linear) closure of the gate opening. [s]

    Returns
    -------
    numeric
        Maximum head at the valve, same reference as ``static_head``. [m]

    Notes
    -----
    With :math:`k = L V_0 / (g H_0 T_c) = \\rho/\\theta`,

    .. math:: H_{max}/H_0 = 1 + \\frac{k}{2}\\left(k + \\sqrt{k^2 + 4}\\right)

    This is the slow-closure formula (Parmakian 1955 [2]_; Chaudhry 2014 [3]_; from memory)
    that follows from the rigid-column equation with the orifice law
    :math:`V = V_0 \\tau \\sqrt{H/H_0}` at the instant of maximum head. It is the limit of
    Allievi's charts for large :math:`\\theta` with :math:`\\rho > 1`; for small
    :math:`\\rho` the elastic maximum occurs at the end of the first pipe period and is
    nearer Michaud's value (De Sparre's rule). Use :func:`allievi_interlocking` for the
    elastic values.
    """
    k, h = _slow_k(length, velocity, static_head, closure_time)
    ratio = 1.0 + 0.5 * k * (k + np.sqrt(k * k + 4.0))
    return _same_kind(h * ratio, length, velocity, static_head, closure_time)


def allievi_rise_capped(length, velocity, static_head, closure_time, wave_speed):
    """Head rise at the valve on a uniform closure: Allievi's slow-closure rise, at most
    Joukowsky's.

    Parameters
    ----------
    length : numeric
        Pipe length. [m]
    velocity : numeric
        Initial velocity. [m/s]
    static_head : numeric
        Head at the valve above its outlet before closure, H0. [m]
    closure_time : numeric
        Time of the uniform closure. [s]
    wave_speed : numeric
        Pressure-wave speed. [m/s]

    Returns
    -------
    numeric
        Rise above the static head. [m]

    Notes
    -----
    :math:`\\min(H_{max} - H_0,\\ a V_0 / g)` with :math:`H_{max}` from
    :func:`allievi_max_head` and the cap from :func:`joukowsky`: no closure, however
    fast, raises the head by more than the instant closure does (the rapid-closure
    limit).
    """
    slow = np.asarray(allievi_max_head(length, velocity, static_head, closure_time)) - \
        np.asarray(static_head, dtype=float)
    return _same_kind(np.minimum(slow, np.asarray(joukowsky(wave_speed, velocity))), length,
                      velocity, static_head, closure_time, wave_speed)


def linear_design_head(static_head, rise, fraction_along):
    r"""Design pressure head for screening: the static head plus the valve's rise, falling
    linearly to nothing at the reservoir.

    Parameters
    ----------
    static_head : array_like
        Static pressure head at each station. [m]
    rise : numeric or array_like
        Largest rise at the valve (e.g. :func:`allievi_rise_capped`); an array of rises
        gives one line per rise (leading axes). [m]
    fraction_along : array_like
        Distance along the pipe from the reservoir as a fraction of its length, 0 to 1,
        one per station. [-]

    Returns
    -------
    numpy.ndarray
        :math:`h_s + \Delta H \, s / L` at each station (and each rise). [m]

    Notes
    -----
    For a closure slower than the pipe period the rise of Allievi's theory falls about
    linearly from the valve to the reservoir, where the level holds it at zero; the
    straight line is the usual screening envelope (common practice). The tool's
    method-of-characteristics envelopes replace it for every design it reports.
    """
    s = np.asarray(fraction_along, dtype=float)
    if np.any((s < -1e-12) | (s > 1 + 1e-12)):
        raise ValueError("fraction_along must lie in [0, 1].")
    return np.asarray(static_head, float) + np.asarray(rise, float)[..., None] * s


def allievi_min_head(length, velocity, static_head, opening_time):
    """Minimum valve head for a slow uniform gate opening, rigid-column closed form.

    Parameters
    ----------
    length : numeric
        Pipe length. [m]
    velocity : numeric
        Final (full-opening) velocity. [m/s]
    static_head : numeric
        Head at the valve above its outlet, H0. [m]
    opening_time : numeric
        Time of the uniform opening from closed to full. [s]

    Returns
    -------
    numeric
        Minimum head at the valve during the down-surge, same reference as
        ``static_head``. [m]

    Notes
    -----
    With :math:`k = L V_0 / (g H_0 T_o)`,

    .. math:: H_{min}/H_0 = 1 + \\frac{k}{2}\\left(k - \\sqrt{k^2 + 4}\\right)

    the companion of :func:`allievi_max_head` for an opening (Parmakian 1955 [2]_; from
    memory).
    """
    k, h = _slow_k(length, velocity, static_head, opening_time)
    ratio = 1.0 + 0.5 * k * (k - np.sqrt(k * k + 4.0))
    return _same_kind(h * ratio, length, velocity, static_head, opening_time)


def allievi_interlocking(pipeline_constant, time_constant, intervals=None, final_opening=0.0):
    """Valve head ratios H_i/H0 from Allievi's interlocking equations, linear closure.

    Parameters
    ----------
    pipeline_constant : numeric
        Allievi's pipeline constant rho. [-]
    time_constant : numeric
        Allievi's time constant theta (closure time in pipe periods 2L/a). [-]
    intervals : int, optional
        Number of pipe periods to step; default covers the closure plus two. [-]
    final_opening : float
        Relative gate opening at the end of the closure, 0 <= tau_f < 1. [-]

    Returns
    -------
    numpy.ndarray
        Head ratios at t = i 2L/a, i = 0..intervals, on the last axis (the leading axes
        broadcast ``pipeline_constant`` with ``time_constant``). [-]

    Notes
    -----
    Frictionless pipe, reservoir upstream, orifice law :math:`v = \\tau \\zeta` with
    :math:`\\zeta^2 = H/H_0`. Between instants one pipe period apart (Parmakian 1955 [2]_):

    .. math:: \\zeta_i^2 + \\zeta_{i-1}^2 - 2 = 2\\rho(\\tau_{i-1}\\zeta_{i-1} - \\tau_i\\zeta_i)

    starting from :math:`\\zeta_0 = 1`; each step solves a quadratic for :math:`\\zeta_i`
    (with the mirrored orifice law where the head falls below the outlet level).
    The gate opening is :math:`\\tau = \\max(\\tau_f, 1 - (1 - \\tau_f) t/T_c)`.
    Values are exact at the instants i 2L/a; between them the head may be higher.
    """
    rho = _positive(pipeline_constant, "pipeline_constant")
    theta = _positive(time_constant, "time_constant")
    tau_f = float(final_opening)
    if not 0.0 <= tau_f < 1.0:
        raise ValueError(f"final_opening must be in [0, 1); got {final_opening!r}")
    rho, theta = np.broadcast_arrays(rho, theta)
    if intervals is None:
        intervals = int(math.ceil(float(np.max(theta)))) + 2
    intervals = int(intervals)
    if intervals < 1:
        raise ValueError(f"intervals must be >= 1; got {intervals}")
    ratios = np.empty(rho.shape + (intervals + 1,))
    ratios[..., 0] = 1.0
    h_prev = np.ones(rho.shape)
    v_prev = np.ones(rho.shape)
    for i in range(1, intervals + 1):       # loop over pipe periods, vectorized over cases
        tau = np.maximum(tau_f, 1.0 - (1.0 - tau_f) * i / theta)
        c = 2.0 - h_prev + 2.0 * rho * v_prev          # h_i + 2 rho v_i = c
        b = rho * tau
        zeta = -b + np.sqrt(b * b + np.abs(c))
        sign = np.where(c >= 0.0, 1.0, -1.0)           # c < 0: flow and head reversed
        h_prev = sign * zeta**2
        v_prev = sign * tau * zeta
        ratios[..., i] = h_prev
    return ratios


# --------------------------------------------------------------------------- regulation
def water_starting_time(lengths, velocities, net_head):
    """Water starting time (water inertia time) Tw = sum(L_i V_i) / (g Hn).

    Parameters
    ----------
    lengths : array_like
        Lengths of the water passages (segments along the last axis). [m]
    velocities : array_like
        Velocity in each passage at the rated flow. [m/s]
    net_head : numeric
        Rated net head. [m]

    Returns
    -------
    numeric
        Water starting time. [s]

    Notes
    -----
    :math:`T_w = \\sum_i L_i V_i / (g H_n)`: the time the net head needs to accelerate the
    water column from rest to the rated velocity (Chaudhry 2014 chapter 7 [3]_; Krueger
    1976 [5]_).
    """
    length, v = _route(lengths, velocities, "velocities")
    _require(np.isfinite(v) & (v >= 0.0), "velocities", "finite and >= 0", velocities)
    hn = _positive(net_head, "net_head")
    return _same_kind(np.sum(length * v, axis=-1) / (GRAVITY * hn), net_head)


def inertia_from_gd2(gd2):
    """Moment of inertia J from the flywheel effect GD^2 = 4 J (mass times diameter^2).

    Parameters
    ----------
    gd2 : numeric
        Flywheel effect GD^2 given with G as a mass. [kg m^2]

    Returns
    -------
    numeric
        Moment of inertia J = GD^2 / 4. [kg m^2]

    Notes
    -----
    :math:`J = m (D/2)^2 = GD^2/4` with G in kg (IEC 60193 and European practice).
    """
    value = _positive(gd2, "gd2")
    return _same_kind(value / 4.0, gd2)


def mechanical_starting_time(inertia, angular_speed, power):
    """Mechanical starting time Tm = J omega^2 / P of the rotating parts.

    Parameters
    ----------
    inertia : numeric
        Moment of inertia J of turbine, shaft and generator (use
        :func:`inertia_from_gd2` for GD^2). [kg m^2]
    angular_speed : numeric
        Rated rotational speed, omega = 2 pi n / 60 for n in rpm. [rad/s]
    power : numeric
        Rated power. [W]

    Returns
    -------
    numeric
        Mechanical starting time. [s]

    Notes
    -----
    :math:`T_m = J\\omega^2/P`: the time rated torque needs to bring the unit from rest to
    rated speed (Krueger 1976 [5]_: :math:`T_m = WR^2 n^2/(1.6\\times10^6\\,P)` in lb ft^2,
    rpm and hp). It is twice the inertia constant :math:`H = J\\omega^2/(2P)` of power-system
    practice.
    """
    j = _positive(inertia, "inertia")
    w = _positive(angular_speed, "angular_speed")
    p = _positive(power, "power")
    return _same_kind(j * w * w / p, inertia, angular_speed, power)


@dataclass(frozen=True)
class GoverningCheck:
    """Result of :func:`governing_stability_check`.

    Attributes
    ----------
    water_starting_time, mechanical_starting_time : float
        The inputs. [s]
    ratio : float
        Tm / Tw^2. [1/s]
    tw_desirable : bool
        Tw <= the desirable limit.
    tw_acceptable : bool
        Tw <= the upper limit.
    ratio_ok : bool
        Tm / Tw^2 >= the ratio limit.
    inertia_ratio_ok : bool
        Tw / Tm <= its limit.
    stable : bool
        All criteria met except ``tw_desirable``.
    messages : tuple of str
        One plain sentence per criterion.
    """

    water_starting_time: float
    mechanical_starting_time: float
    ratio: float
    tw_desirable: bool
    tw_acceptable: bool
    ratio_ok: bool
    inertia_ratio_ok: bool
    stable: bool
    messages: tuple[str, ...]


def governing_stability_check(water_starting_time, mechanical_starting_time,
                              tw_desirable=2.5, tw_limit=3.0, ratio_limit=2.0,
                              inertia_ratio_limit=0.3):
    """Judge speed-regulation (governing) conditions against common-practice limits.

    Parameters
    ----------
    water_starting_time : float
        Water starting time Tw. [s]
    mechanical_starting_time : float
        Mechanical starting time Tm. [s]
    tw_desirable : float
        Tw up to which regulation is easy. [s]
    tw_limit : float
        Tw above which a surge tank or other measure should be studied. [s]
    ratio_limit : float
        Lowest acceptable Tm / Tw^2. [1/s]
    inertia_ratio_limit : float
        Highest acceptable Tw / Tm. [-]

    Returns
    -------
    GoverningCheck
        Flags and messages (scalar inputs only: one unit at a time).

    Notes
    -----
    All limits are common practice, recalled rather than read from a standard: Tw below
    about 2.5-3 s for good regulation; Tm/Tw^2 >= 2 (a rule often attributed to
    Gordon; from memory); Tw/Tm <= 0.3 (common practice). Isolated-grid operation needs
    the stricter end of each range. These screen a layout, they do not replace a
    governor stability study.
    """
    tw = float(water_starting_time)
    tm = float(mechanical_starting_time)
    if not (math.isfinite(tw) and tw > 0.0):
        raise ValueError(f"water_starting_time must be finite and > 0 s; got {tw!r}")
    if not (math.isfinite(tm) and tm > 0.0):
        raise ValueError(f"mechanical_starting_time must be finite and > 0 s; got {tm!r}")
    if not 0.0 < tw_desirable <= tw_limit:
        raise ValueError("tw_desirable must be > 0 and <= tw_limit; got "
                         f"{tw_desirable!r} and {tw_limit!r}")
    ratio = tm / tw**2
    desirable = tw <= tw_desirable
    acceptable = tw <= tw_limit
    ratio_ok = ratio >= ratio_limit
    inertia_ok = tw / tm <= inertia_ratio_limit
    messages = (
        f"Tw = {tw:.2f} s: " + ("desirable" if desirable else
                                "acceptable, governor tuning matters" if acceptable else
                                f"above {tw_limit:g} s, study a surge tank or shorter water "
                                "passages") + " (common practice).",
        f"Tm/Tw^2 = {ratio:.2f} 1/s: " + ("meets" if ratio_ok else "below")
        + f" the limit {ratio_limit:g} (common practice, from memory).",
        f"Tw/Tm = {tw / tm:.3f}: " + ("meets" if inertia_ok else "above")
        + f" the limit {inertia_ratio_limit:g} (common practice).",
    )
    return GoverningCheck(tw, tm, ratio, desirable, acceptable, ratio_ok, inertia_ok,
                          acceptable and ratio_ok and inertia_ok, messages)


@dataclass(frozen=True)
class SurgeProtection:
    """Result of :func:`surge_protection_flag`.

    Attributes
    ----------
    study_needed : bool
        A surge tank, relief valve or slower closure deserves study.
    reasons : tuple of str
        The criteria that raised the flag (empty when none did).
    """

    study_needed: bool
    reasons: tuple[str, ...]


def surge_protection_flag(water_starting_time, max_head_rise=None, allowable_head_rise=None,
                          tw_limit=3.0):
    """Say whether surge protection (surge tank, relief valve) deserves study.

    Parameters
    ----------
    water_starting_time : float
        Water starting time Tw. [s]
    max_head_rise : float, optional
        Largest transient head rise found (simulation or closed form). [m]
    allowable_head_rise : float, optional
        Largest rise the pipe design allows. [m]
    tw_limit : float
        Tw above which protection is studied (common practice 3 s). [s]

    Returns
    -------
    SurgeProtection
        Flag and reasons.

    Notes
    -----
    Criteria: :math:`T_w > T_{w,lim}` (common practice) or rise above the allowable rise.
    """
    tw = float(water_starting_time)
    if not (math.isfinite(tw) and tw >= 0.0):
        raise ValueError(f"water_starting_time must be finite and >= 0 s; got {tw!r}")
    if (max_head_rise is None) != (allowable_head_rise is None):
        raise ValueError("give max_head_rise and allowable_head_rise together, or neither")
    reasons = []
    if tw > tw_limit:
        reasons.append(f"water starting time {tw:.2f} s exceeds {tw_limit:g} s "
                       "(common practice)")
    if max_head_rise is not None:
        rise, allowed = float(max_head_rise), float(allowable_head_rise)
        if not allowed > 0.0:
            raise ValueError(f"allowable_head_rise must be > 0 m; got {allowed!r}")
        if rise > allowed:
            reasons.append(f"head rise {rise:.1f} m exceeds the allowable {allowed:.1f} m")
    return SurgeProtection(bool(reasons), tuple(reasons))
