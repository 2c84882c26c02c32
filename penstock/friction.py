"""Darcy–Weisbach friction: Reynolds number, friction factor and head loss in full pipes.

The turbulent friction factor is the Colebrook–White equation, solved to machine precision
(:func:`colebrook`), or the explicit Swamee–Jain approximation (:func:`swamee_jain`). Both
sit in :data:`FRICTION_METHODS`, which holds each function with its published range of
validity; :func:`friction_factor` covers laminar, transitional and turbulent flow and
:func:`head_loss` turns it into a head loss. :data:`ROUGHNESS` tabulates absolute
roughness of common penstock materials and :func:`aged_roughness` grows it with age.

Everything is SI: flows in m^3/s, lengths in m, viscosities in m^2/s.
"""

from __future__ import annotations

import difflib
import math
import sys
import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from penstock.constants import GRAVITY

from ._numeric import same_kind as _restore_kind

__all__ = [
    "material_growth_rate",
    "FRICTION_METHODS",
    "GROWTH_RATES",
    "LAMINAR_LIMIT",
    "ROUGHNESS",
    "TURBULENT_LIMIT",
    "ConvergenceError",
    "CorrelationRangeWarning",
    "FrictionMethod",
    "PipeRoughness",
    "aged_roughness",
    "colebrook",
    "flow_regime",
    "friction_factor",
    "head_loss",
    "material_roughness",
    "outside_published_range",
    "reynolds",
    "swamee_jain",
]

#: Reynolds number below which flow is taken as laminar. [-] (common practice)
LAMINAR_LIMIT = 2000.0
#: Reynolds number from which flow is taken as fully turbulent. [-] (common practice)
TURBULENT_LIMIT = 4000.0

#: 2 / ln(10): converts ln to the 2 log10 of the Colebrook–White equation. [-]
_TWO_OVER_LN10 = 2.0 / math.log(10.0)
#: Relative change of 1/sqrt(f) below which the Colebrook–White iteration stops. [-]
_COLEBROOK_TOLERANCE = 1e-12
#: Newton steps allowed before :class:`ConvergenceError` is raised. [-]
_COLEBROOK_MAX_ITERATIONS = 20
#: Newton steps always taken on every element from the Swamee–Jain start. [-]
_COLEBROOK_FIRST_STEPS = 3
#: Elements per block in the Colebrook–White solver (keeps its work arrays in cache). [-]
_COLEBROOK_BLOCK = 16_384
#: Largest finite float: upper bound for checks that only require finite values.
_LARGEST = float(np.finfo(float).max)


class ConvergenceError(ValueError):
    """An iterative solution did not converge for some elements of the input."""


class CorrelationRangeWarning(UserWarning):
    """A correlation is used outside the range in which it was published.

    Besides its message it carries, for the caller's caution, the ``method`` and the
    ranges of Reynolds number and relative roughness met outside the published ones
    (``reynolds_seen``, ``relative_roughness_seen``: (low, high) tuples).
    """

    def __init__(self, message, method=None, reynolds_seen=None,
                 relative_roughness_seen=None):
        super().__init__(message)
        self.method = method
        self.reynolds_seen = reynolds_seen
        self.relative_roughness_seen = relative_roughness_seen


# --- numeric in, same kind out -----------------------------------------------------------
def _series_index(*values):
    """Index of the first pandas Series among ``values``, or None (pandas is not imported)."""
    pandas = sys.modules.get("pandas")
    if pandas is None:
        return None
    for value in values:
        if isinstance(value, pandas.Series):
            return value.index
    return None


def _check(name, values, low, high, low_open=False, what=""):
    """Raise ValueError unless every element of ``values`` is finite and in the interval."""
    if values.size == 0:
        return
    smallest, largest = np.min(values), np.max(values)
    above = smallest > low if low_open else smallest >= low
    if not (above and largest <= high):  # NaN fails both comparisons
        if high >= _LARGEST:
            expected = f"{'>' if low_open else '>='} {low:g}"
        else:
            expected = f"in {'(' if low_open else '['}{low:g}, {high:g}]"
        raise ValueError(
            f"{name} must be finite and {expected}{what}; "
            f"got values from {smallest:g} to {largest:g}"
        )


def _check_finite(name, values, what=""):
    """Raise ValueError unless every element of ``values`` is finite (any sign)."""
    if values.size and not np.isfinite(values).all():
        raise ValueError(f"{name} must be finite{what}; got {values[~np.isfinite(values)][0]}")


def _reynolds_and_roughness(reynolds, relative_roughness, turbulent=False):
    """Broadcast, flatten and check Reynolds numbers and relative roughness.

    With ``turbulent=True`` (the turbulent correlations) Reynolds numbers below
    ``LAMINAR_LIMIT`` are refused: the equations do not describe laminar flow, and the
    Colebrook–White equation loses its meaning as Re falls towards 1.
    """
    re, rr = np.broadcast_arrays(
        np.asarray(reynolds, dtype=float), np.asarray(relative_roughness, dtype=float)
    )
    shape = re.shape
    re = np.ascontiguousarray(re).ravel()
    rr = np.ascontiguousarray(rr).ravel()
    if turbulent:
        _check(
            "reynolds", re, LAMINAR_LIMIT, _LARGEST,
            what=" for a turbulent correlation (friction_factor covers laminar flow)",
        )
    else:
        _check("reynolds", re, 0.0, _LARGEST, low_open=True)
    _check("relative_roughness", rr, 0.0, 1.0, what=" (roughness / diameter)")
    return re, rr, shape


# --- Reynolds number ---------------------------------------------------------------------
def reynolds(velocity, diameter, kinematic_viscosity):
    """Reynolds number of flow in a full circular pipe.

    Parameters
    ----------
    velocity : numeric
        Mean flow velocity; its sign (flow direction) is ignored. [m/s]
    diameter : numeric
        Internal diameter of the pipe, > 0. [m]
    kinematic_viscosity : numeric
        Kinematic viscosity of the water, > 0. [m^2/s]

    Returns
    -------
    numeric
        Reynolds number, never negative. [-]

    Raises
    ------
    ValueError
        If a diameter or viscosity is not positive, or a velocity is not finite.

    Notes
    -----
    .. math:: Re = \\frac{|V|\\,D}{\\nu}

    References
    ----------
    .. [1] Reynolds, O., "An experimental investigation of the circumstances which
       determine whether the motion of water shall be direct or sinuous, and of the law of
       resistance in parallel channels", *Phil. Trans. R. Soc. Lond.* 174, 935-982, 1883.
       DOI: 10.1098/rstl.1883.0029
    """
    v, d, nu = (np.asarray(x, dtype=float) for x in (velocity, diameter, kinematic_viscosity))
    _check_finite("velocity", v)
    _check("diameter", d, 0.0, _LARGEST, low_open=True)
    _check("kinematic_viscosity", nu, 0.0, _LARGEST, low_open=True)
    return _restore_kind(np.abs(v) * d / nu, velocity, diameter, kinematic_viscosity)


# --- turbulent correlations --------------------------------------------------------------
def _swamee_jain_into(re, rr, out):
    """Write ln(eps/(3.7 D) + 5.74 / Re^0.9) into ``out`` (flat arrays of equal size)."""
    np.power(re, -0.9, out=out)
    out *= 5.74
    out += rr * (1.0 / 3.7)
    np.log(out, out=out)
    return out


def swamee_jain(reynolds, relative_roughness):
    """Darcy friction factor of turbulent pipe flow, explicit Swamee–Jain approximation.

    Parameters
    ----------
    reynolds : numeric
        Reynolds number, >= 2000; published range 5e3..1e8. [-]
    relative_roughness : numeric
        Absolute roughness over internal diameter, 0 to 1; published range 1e-6..1e-2. [-]

    Returns
    -------
    numeric
        Darcy friction factor. [-]

    Raises
    ------
    ValueError
        If a Reynolds number is below 2000 (laminar: use :func:`friction_factor`) or a
        relative roughness is not in [0, 1].

    Notes
    -----
    .. math::
        f = \\frac{0.25}{\\left[\\log_{10}\\left(\\frac{\\varepsilon/D}{3.7}
        + \\frac{5.74}{Re^{0.9}}\\right)\\right]^2}

    Swamee and Jain state that it stays within 1 % of Colebrook–White for
    :math:`10^{-6} \\le \\varepsilon/D \\le 10^{-2}` and :math:`5000 \\le Re \\le 10^8`.
    Checked here against the exact Colebrook–White solution, that holds in the interior
    (1e4 <= Re <= 2e7 with relative roughness <= 1e-3); towards the corners of the range
    the deviation grows to 2.8 % (Re = 5000, relative roughness 1e-2). See the tests.

    References
    ----------
    .. [1] Swamee, P. K. and Jain, A. K., "Explicit equations for pipe-flow problems",
       *Journal of the Hydraulics Division, ASCE* 102(HY5), 657-664, 1976.

    Examples
    --------
    >>> round(swamee_jain(1e5, 1e-4), 5)
    0.01845
    """
    re, rr, shape = _reynolds_and_roughness(reynolds, relative_roughness, turbulent=True)
    term = _swamee_jain_into(re, rr, np.empty_like(re))
    term *= _TWO_OVER_LN10  # -1/sqrt(f) = 2 log10(...) = (2 / ln 10) ln(...)
    np.square(term, out=term)
    friction = np.divide(1.0, term, out=term)
    return _restore_kind(friction.reshape(shape), reynolds, relative_roughness)


def _newton_step(y, a, kb, s, t):
    """One Newton step on g(y) = y + ln(a + kb*y) = 0; leaves the step in ``t``."""
    np.multiply(kb, y, out=s)
    s += a
    np.log(s, out=t)
    t += y
    t *= s
    s += kb
    t /= s
    y -= t
    return t


def _colebrook_y(re, rr):
    """Solve Colebrook–White for y = 1 / (sqrt(f) * 2/ln 10) on flat arrays.

    Works in blocks so that its work arrays stay in cache: the Swamee–Jain start, then
    ``_COLEBROOK_FIRST_STEPS`` Newton steps on every element; the few elements whose last
    relative change is still above the tolerance get further steps on their own.
    """
    size = re.size
    y_all = np.empty(size)
    block = min(_COLEBROOK_BLOCK, max(size, 1))
    buffers = [np.empty(block) for _ in range(4)]
    pending = []
    for start in range(0, size, block):
        stop = min(start + block, size)
        a, kb, s, t = (buffer[: stop - start] for buffer in buffers)
        y = y_all[start:stop]
        np.divide(2.51 * _TWO_OVER_LN10, re[start:stop], out=kb)
        np.multiply(rr[start:stop], 1.0 / 3.7, out=a)
        _swamee_jain_into(re[start:stop], rr[start:stop], y)
        np.negative(y, out=y)
        for _ in range(_COLEBROOK_FIRST_STEPS):
            _newton_step(y, a, kb, s, t)
        t /= y
        np.abs(t, out=t)
        if not t.max() <= _COLEBROOK_TOLERANCE:  # also catches NaN
            pending.append(start + np.flatnonzero(~(t <= _COLEBROOK_TOLERANCE)))
    if pending:
        index = np.concatenate(pending)
        y = y_all[index]
        a = rr[index] * (1.0 / 3.7)
        kb = (2.51 * _TWO_OVER_LN10) / re[index]
        for _ in range(_COLEBROOK_MAX_ITERATIONS - _COLEBROOK_FIRST_STEPS):
            t = _newton_step(y, a, kb, np.empty_like(y), np.empty_like(y))
            y_all[index] = y
            keep = ~(np.abs(t / y) <= _COLEBROOK_TOLERANCE)
            if not keep.any():
                break
            index, y, a, kb = index[keep], y[keep], a[keep], kb[keep]
        else:
            raise ConvergenceError(
                f"colebrook: {index.size} element(s) did not converge to a relative change "
                f"of {_COLEBROOK_TOLERANCE:g} in {_COLEBROOK_MAX_ITERATIONS} Newton steps, "
                f"e.g. reynolds={re[index[0]]:g}, relative_roughness={rr[index[0]]:g}"
            )
    return y_all


def colebrook(reynolds, relative_roughness):
    """Darcy friction factor of turbulent pipe flow, Colebrook–White equation.

    Parameters
    ----------
    reynolds : numeric
        Reynolds number, >= 2000; the equation describes turbulent flow, Re >= 4000. [-]
    relative_roughness : numeric
        Absolute (equivalent sand) roughness over internal diameter, 0 to 1. [-]

    Returns
    -------
    numeric
        Darcy friction factor. [-]

    Raises
    ------
    ValueError
        If a Reynolds number is below 2000 (laminar: use :func:`friction_factor`) or a
        relative roughness is not in [0, 1].
    ConvergenceError
        If any element has not converged within 20 Newton steps (not met in practice).

    Notes
    -----
    The implicit equation

    .. math::
        \\frac{1}{\\sqrt{f}} = -2 \\log_{10}\\left(\\frac{\\varepsilon/D}{3.7}
        + \\frac{2.51}{Re \\sqrt{f}}\\right)

    is solved by Newton's method on :math:`x = 1/\\sqrt{f}` (scaled by ln 10 / 2 so that
    each step costs one natural logarithm), starting from the Swamee–Jain estimate. Every
    element takes three steps; any element whose last relative change in :math:`x` is
    still above 1e-12 is iterated further on its own, so the result is at machine
    precision for every element. Inputs broadcast against each other.

    References
    ----------
    .. [1] Colebrook, C. F., "Turbulent flow in pipes, with particular reference to the
       transition region between the smooth and rough pipe laws", *Journal of the
       Institution of Civil Engineers* 11(4), 133-156, 1939. DOI: 10.1680/ijoti.1939.13150
    .. [2] Swamee, P. K. and Jain, A. K., "Explicit equations for pipe-flow problems",
       *Journal of the Hydraulics Division, ASCE* 102(HY5), 657-664, 1976 (start value).

    Examples
    --------
    >>> round(colebrook(1e5, 1e-4), 6)
    0.018514
    """
    re, rr, shape = _reynolds_and_roughness(reynolds, relative_roughness, turbulent=True)
    y = _colebrook_y(re, rr)
    y *= _TWO_OVER_LN10
    np.square(y, out=y)
    friction = np.divide(1.0, y, out=y)
    return _restore_kind(friction.reshape(shape), reynolds, relative_roughness)


# --- registry ----------------------------------------------------------------------------
@dataclass(frozen=True)
class FrictionMethod:
    """A turbulent friction-factor correlation and the range it was published for.

    Attributes
    ----------
    function : callable
        ``function(reynolds, relative_roughness) -> friction_factor``.
    reynolds_range : tuple of float
        Lowest and highest Reynolds number of the published range. [-]
    relative_roughness_range : tuple of float
        Lowest and highest relative roughness of the published range. [-]
    reference : str
        Where the range comes from.
    """

    function: Callable
    reynolds_range: tuple[float, float]
    relative_roughness_range: tuple[float, float]
    reference: str


#: Turbulent friction-factor methods, each with its range of validity (the only copy).
FRICTION_METHODS: dict[str, FrictionMethod] = {
    "colebrook": FrictionMethod(
        function=colebrook,
        reynolds_range=(4.0e3, 1.0e8),
        relative_roughness_range=(0.0, 0.05),
        reference="Colebrook (1939); range of the Moody (1944) chart, Trans. ASME 66(8)",
    ),
    "swamee_jain": FrictionMethod(
        function=swamee_jain,
        reynolds_range=(5.0e3, 1.0e8),
        relative_roughness_range=(1.0e-6, 1.0e-2),
        reference="Swamee & Jain (1976), J. Hydraulics Div. ASCE 102(HY5), stated range",
    ),
}


def _method(method):
    """Look up ``method`` in FRICTION_METHODS with a helpful error."""
    try:
        return FRICTION_METHODS[method]
    except (KeyError, TypeError):
        raise ValueError(
            f"method must be one of {sorted(FRICTION_METHODS)}; got {method!r}"
        ) from None


def flow_regime(reynolds):
    """Flow regime of pipe flow by Reynolds number.

    Parameters
    ----------
    reynolds : numeric
        Reynolds number, >= 0. [-]

    Returns
    -------
    str or numpy.ndarray of str
        ``"laminar"`` for Re < 2000, ``"transition"`` for 2000 <= Re < 4000,
        ``"turbulent"`` for Re >= 4000 (a Series in gives a Series out).

    Raises
    ------
    ValueError
        If a Reynolds number is negative or not finite.

    Notes
    -----
    The limits 2000 and 4000 (:data:`LAMINAR_LIMIT`, :data:`TURBULENT_LIMIT`) are common
    practice; in real pipes the change is not sharp and depends on the disturbances at the
    inlet.

    References
    ----------
    .. [1] Moody, L. F., "Friction factors for pipe flow", *Transactions of the ASME*
       66(8), 671-684, 1944 (the critical zone of the chart, Fig. 1).
    """
    re = np.asarray(reynolds, dtype=float)
    _check("reynolds", re, 0.0, _LARGEST)
    regime = np.where(
        re < LAMINAR_LIMIT, "laminar", np.where(re < TURBULENT_LIMIT, "transition", "turbulent")
    )
    index = _series_index(reynolds)
    if index is not None:
        return sys.modules["pandas"].Series(regime, index=index)
    return str(regime) if regime.ndim == 0 else regime


def outside_published_range(reynolds, relative_roughness, method="colebrook"):
    """Where a turbulent friction correlation is used outside its published range.

    Parameters
    ----------
    reynolds : array_like
        Reynolds number, >= 0. [-]
    relative_roughness : array_like
        Absolute roughness over internal diameter, 0 to 1. [-]
    method : str, optional
        A key of :data:`FRICTION_METHODS`. [-]

    Returns
    -------
    numpy.ndarray of bool
        True where the flow is turbulent (Re >= :data:`TURBULENT_LIMIT`) and the Reynolds
        number or the relative roughness lies outside the method's
        ``reynolds_range`` or ``relative_roughness_range``; laminar and transitional
        elements are never outside (they do not use the correlation), in the broadcast
        shape of the inputs.

    Notes
    -----
    :func:`friction_factor` warns (:class:`CorrelationRangeWarning`) where this is true
    anywhere; callers that know where their elements lie use it to say where.

    References
    ----------
    .. [1] Moody, L. F., "Friction factors for pipe flow", *Transactions of the ASME*
       66(8), 671-684, 1944 (the range of the chart, Fig. 1); the ranges of each method
       and their sources are in :data:`FRICTION_METHODS`.
    """
    entry = _method(method)
    re, rr, shape = _reynolds_and_roughness(reynolds, relative_roughness)
    return _outside(entry, re, rr).reshape(shape)


def _outside(entry, re, rr):
    (re_low, re_high), (rr_low, rr_high) = entry.reynolds_range, entry.relative_roughness_range
    return (re >= TURBULENT_LIMIT) & ((re < re_low) | (re > re_high) | (rr < rr_low)
                                      | (rr > rr_high))


def _warn_outside(entry, name, re, rr):
    """Warn once if turbulent elements lie outside the method's published range."""
    (re_low, re_high), (rr_low, rr_high) = entry.reynolds_range, entry.relative_roughness_range
    outside = _outside(entry, re, rr)
    if outside.any():
        warnings.warn(CorrelationRangeWarning(
            f"friction_factor: {int(outside.sum())} turbulent element(s) lie outside the "
            f"published range of method {name!r} (Re {re_low:g}..{re_high:g}, "
            f"relative roughness {rr_low:g}..{rr_high:g}); the correlation is extrapolated",
            method=name, reynolds_seen=(float(re[outside].min()), float(re[outside].max())),
            relative_roughness_seen=(float(rr[outside].min()), float(rr[outside].max()))),
            stacklevel=3,
        )


def friction_factor(reynolds, relative_roughness, method="colebrook"):
    """Darcy friction factor over the laminar, transition and turbulent ranges.

    Parameters
    ----------
    reynolds : numeric
        Reynolds number, > 0. [-]
    relative_roughness : numeric
        Absolute roughness over internal diameter, 0 to 1. [-]
    method : str, optional
        Turbulent correlation, a key of :data:`FRICTION_METHODS`: ``"colebrook"``
        (default) or ``"swamee_jain"``. [-]

    Returns
    -------
    numeric
        Darcy friction factor. [-]

    Raises
    ------
    ValueError
        If a Reynolds number is not positive (the friction factor is unbounded as the flow
        stops: use :func:`head_loss`, which is zero at zero flow), a relative roughness is
        not in [0, 1], or the method is unknown.

    Warns
    -----
    CorrelationRangeWarning
        If turbulent elements lie outside the method's published range.

    Notes
    -----
    * Laminar, Re < 2000: Hagen–Poiseuille, :math:`f = 64 / Re`.
    * Turbulent, Re >= 4000: the chosen correlation.
    * Transition, 2000 <= Re < 4000: a planning convention, not a physical law. The
      friction factor is interpolated linearly in Re between the laminar value at
      Re = 2000 (0.032) and the turbulent correlation at Re = 4000 (evaluated there even
      if 4000 is just below the correlation's published range):

      .. math:: f = 0.032 + \\left[f_t(4000, \\varepsilon/D) - 0.032\\right]
                \\frac{Re - 2000}{2000}

      so the result is continuous at both limits. Real flow in this band is intermittent
      and not predictable; use :func:`flow_regime` to detect and report it.

    References
    ----------
    .. [1] Moody, L. F., "Friction factors for pipe flow", *Transactions of the ASME*
       66(8), 671-684, 1944 (laminar line f = 64/Re and critical zone, Fig. 1).
    .. [2] See :func:`colebrook` and :func:`swamee_jain`.

    Examples
    --------
    >>> friction_factor(1000.0, 0.0)
    0.064
    """
    entry = _method(method)
    re, rr, shape = _reynolds_and_roughness(reynolds, relative_roughness)
    turbulent = re >= TURBULENT_LIMIT
    if turbulent.all():
        _warn_outside(entry, method, re, rr)
        friction = np.asarray(entry.function(re, rr), dtype=float)
    else:
        friction = np.empty_like(re)
        if turbulent.any():
            _warn_outside(entry, method, re[turbulent], rr[turbulent])
            friction[turbulent] = entry.function(re[turbulent], rr[turbulent])
        laminar = re < LAMINAR_LIMIT
        friction[laminar] = 64.0 / re[laminar]
        transition = ~(turbulent | laminar)
        if transition.any():
            f_low = 64.0 / LAMINAR_LIMIT
            f_high = np.asarray(entry.function(TURBULENT_LIMIT, rr[transition]), dtype=float)
            weight = (re[transition] - LAMINAR_LIMIT) / (TURBULENT_LIMIT - LAMINAR_LIMIT)
            friction[transition] = f_low + (f_high - f_low) * weight
    return _restore_kind(friction.reshape(shape), reynolds, relative_roughness)


# --- head loss ---------------------------------------------------------------------------
def head_loss(flow, diameter, length, roughness, kinematic_viscosity, method="colebrook"):
    """Friction head loss of a full circular pipe, Darcy–Weisbach equation.

    Parameters
    ----------
    flow : numeric
        Volumetric flow rate; negative for reverse flow. [m^3/s]
    diameter : numeric
        Internal diameter, > 0. [m]
    length : numeric
        Pipe length, >= 0. [m]
    roughness : numeric
        Absolute (equivalent sand) roughness of the wall, >= 0 and < diameter. [m]
    kinematic_viscosity : numeric
        Kinematic viscosity of the water, > 0. [m^2/s]
    method : str, optional
        Turbulent friction-factor correlation, a key of :data:`FRICTION_METHODS`. [-]

    Returns
    -------
    numeric
        Friction head loss, with the sign of the flow (positive in the flow direction,
        negative for reverse flow, exactly zero at zero flow). [m]

    Raises
    ------
    ValueError
        If an argument is out of range or the method is unknown.

    Notes
    -----
    .. math::
        h_f = f \\frac{L}{D} \\frac{V |V|}{2 g}, \\quad V = \\frac{4 Q}{\\pi D^2},
        \\quad Re = \\frac{|V| D}{\\nu}

    with :math:`f` from :func:`friction_factor` at :math:`\\varepsilon / D`. At zero flow
    the friction factor is undefined (it grows as 64/Re) but the loss
    :math:`f V^2 \\propto V` tends to zero, so the loss is defined as zero there. All
    arguments broadcast against each other.

    References
    ----------
    .. [1] Weisbach, J., *Lehrbuch der Ingenieur- und Maschinen-Mechanik*, Vol. 1,
       Vieweg, Braunschweig, 1845.
    .. [2] Brown, G. O., "The history of the Darcy-Weisbach equation for pipe flow
       resistance", in *Environmental and Water Resources History*, ASCE, 34-43, 2003.
    .. [3] See :func:`friction_factor`.

    Examples
    --------
    >>> round(head_loss(0.0, 1.0, 100.0, 4.6e-5, 1.0e-6), 3)
    0.0
    """
    _method(method)  # fail early on an unknown method
    q, d, length_, eps, nu = np.broadcast_arrays(
        *(np.asarray(x, dtype=float) for x in (flow, diameter, length, roughness,
                                                 kinematic_viscosity))
    )
    shape = q.shape
    q, d, length_, eps, nu = (np.ascontiguousarray(x).ravel() for x in (q, d, length_, eps, nu))
    _check_finite("flow", q, what=" (negative for reverse flow)")
    _check("diameter", d, 0.0, _LARGEST, low_open=True)
    _check("length", length_, 0.0, _LARGEST)
    _check("kinematic_viscosity", nu, 0.0, _LARGEST, low_open=True)
    _check("roughness", eps, 0.0, _LARGEST)
    if eps.size and not np.all(eps < d):
        raise ValueError("roughness must be smaller than the diameter (both in m)")
    loss = np.zeros_like(q)
    moving = q != 0.0
    if moving.any():
        qm, dm = q[moving], d[moving]
        velocity = qm / (0.25 * np.pi * dm * dm)
        friction = friction_factor(
            np.abs(velocity) * dm / nu[moving], eps[moving] / dm, method=method
        )
        loss[moving] = friction * length_[moving] / dm * velocity * np.abs(velocity) / (
            2.0 * GRAVITY
        )
    return _restore_kind(
        loss.reshape(shape), flow, diameter, length, roughness, kinematic_viscosity
    )


# --- wall roughness ----------------------------------------------------------------------
@dataclass(frozen=True)
class PipeRoughness:
    """Absolute roughness of a pipe material when new and after service.

    Attributes
    ----------
    new : float
        Equivalent sand roughness of new pipe. [m]
    aged : float
        Equivalent sand roughness after years of service, for planning. [m]
    source : str
        Where the values come from, with "from memory" where they were recalled.
    """

    new: float
    aged: float
    source: str


_MOODY = "Moody (1944), Trans. ASME 66(8), Fig. 2"

#: Absolute roughness of common penstock materials. [m]
#: Values marked "from memory" were recalled, not read from the source: check them against
#: the named table before relying on them.
ROUGHNESS: dict[str, PipeRoughness] = {
    "welded_steel": PipeRoughness(
        new=0.046e-3,
        aged=1.0e-3,
        source=(
            f"new: {_MOODY}, commercial steel 0.00015 ft; aged (moderately tuberculated, "
            "unlined): common practice order 0.5-1.5 mm, from memory"
        ),
    ),
    "riveted_steel": PipeRoughness(
        new=0.9e-3,
        aged=9.0e-3,
        source=f"{_MOODY}, riveted steel 0.003-0.03 ft: new = low end, aged = high end",
    ),
    "ductile_iron_cement_lined": PipeRoughness(
        new=0.03e-3,
        aged=0.15e-3,
        source=(
            "HR Wallingford & Barr, Tables for the hydraulic design of pipes, sewers and "
            "channels, 8th ed. (2006), cement-mortar lined iron: from memory"
        ),
    ),
    "ductile_iron_en545": PipeRoughness(
        new=0.03e-3,
        aged=0.15e-3,
        source=(
            "cement-mortar lined ductile iron to EN 545, as ductile_iron_cement_lined: "
            "HR Wallingford & Barr, Tables for the hydraulic design of pipes, sewers and "
            "channels, 8th ed. (2006), cement-mortar lined iron: from memory"
        ),
    ),
    "concrete_smooth": PipeRoughness(
        new=0.3e-3,
        aged=0.6e-3,
        source=f"new: {_MOODY}, concrete 0.001 ft (low end); aged: from memory",
    ),
    "concrete_rough": PipeRoughness(
        new=3.0e-3,
        aged=3.0e-3,
        source=f"{_MOODY}, concrete 0.01 ft (high end); no separate aged value, kept equal",
    ),
    "grp": PipeRoughness(
        new=0.01e-3,
        aged=0.03e-3,
        source="AWWA Manual M45, Fiberglass Pipe Design: from memory",
    ),
    "hdpe": PipeRoughness(
        new=0.007e-3,
        aged=0.03e-3,
        source="common practice for polyethylene pipe: from memory",
    ),
    "pvc": PipeRoughness(
        new=0.0015e-3,
        aged=0.03e-3,
        source=(
            f"new: {_MOODY}, drawn tubing 0.000005 ft (hydraulically smooth plastic, common "
            "practice); aged: from memory"
        ),
    ),
}


def material_roughness(material, condition="new"):
    """Absolute roughness of a tabulated pipe material.

    Parameters
    ----------
    material : str
        Key of :data:`ROUGHNESS`, e.g. ``"welded_steel"``. [-]
    condition : str, optional
        ``"new"`` (default) or ``"aged"``. [-]

    Returns
    -------
    float
        Equivalent sand roughness. [m]

    Raises
    ------
    ValueError
        If the material or condition is not known (the message lists the valid names and
        suggests the closest one).

    Notes
    -----
    The sources of each value are in ``ROUGHNESS[material].source``.

    References
    ----------
    .. [1] Moody, L. F., "Friction factors for pipe flow", *Transactions of the ASME*
       66(8), 671-684, 1944; Fig. 2.

    Examples
    --------
    >>> material_roughness("welded_steel")
    4.6e-05
    """
    if material not in ROUGHNESS:
        hint = difflib.get_close_matches(str(material), ROUGHNESS, n=1)
        suggestion = f" Did you mean {hint[0]!r}?" if hint else ""
        raise ValueError(
            f"material {material!r} is not in the roughness table; valid names: "
            f"{', '.join(sorted(ROUGHNESS))}.{suggestion}"
        )
    if condition not in ("new", "aged"):
        raise ValueError(f"condition must be 'new' or 'aged'; got {condition!r}")
    return float(getattr(ROUGHNESS[material], condition))


#: Growth rate of absolute roughness by water aggressiveness, after Lamont (1981). [m/year]
#: From memory (Lamont's four zones; mean rates of ranges about 0.012-0.038, 0.038-0.10,
#: 0.10-0.30 and 0.30-1.0 mm/year): check against the paper before relying on them.
GROWTH_RATES: dict[str, float] = {
    "slight": 0.025e-3,
    "moderate": 0.07e-3,
    "appreciable": 0.2e-3,
    "severe": 0.6e-3,
}


def material_growth_rate(material, years):
    r"""Linear roughness growth rate that takes a pipe material from its new to its aged
    roughness of the table (:func:`material_roughness`) in ``years``.

    Parameters
    ----------
    material : str
        A material of the roughness table. [-]
    years : float
        Years to reach the aged value (a service life), > 0. [year]

    Returns
    -------
    float
        Growth rate for :func:`aged_roughness`. [m/year]

    Notes
    -----
    .. math:: \alpha = (\varepsilon_{aged} - \varepsilon_{new}) / t

    the straight line of :func:`aged_roughness` through the table's two values.

    References
    ----------
    .. [1] Colebrook, C. F. and White, C. M., "The reduction of carrying capacity of pipes
       with age", *Journal of the Institution of Civil Engineers* 7(1), 99-118, 1937
       (roughness growing linearly with age).
    """
    if not years > 0:
        raise ValueError(f"years must be > 0, got {years!r}.")
    return (material_roughness(material, "aged") - material_roughness(material, "new")) \
        / float(years)


def aged_roughness(roughness, age, growth_rate):
    """Absolute roughness after years of service, linear growth law.

    Parameters
    ----------
    roughness : numeric
        Absolute roughness when new, >= 0. [m]
    age : numeric
        Age of the pipe, >= 0. [year]
    growth_rate : numeric or str
        Rate of roughness growth, >= 0, or a key of :data:`GROWTH_RATES` (``"slight"``,
        ``"moderate"``, ``"appreciable"``, ``"severe"``). [m/year]

    Returns
    -------
    numeric
        Absolute roughness at that age. [m]

    Raises
    ------
    ValueError
        If an argument is negative or the aggressiveness name is unknown.

    Notes
    -----
    .. math:: \\varepsilon(t) = \\varepsilon_0 + \\alpha\\, t

    Colebrook and White found roughness of unlined iron and steel mains growing about
    linearly with age; the rate depends on the water. It does not apply to linings and
    plastics, which roughen little.

    References
    ----------
    .. [1] Colebrook, C. F. and White, C. M., "The reduction of carrying capacity of pipes
       with age", *Journal of the Institution of Civil Engineers* 7(1), 99-118, 1937.
    .. [2] Lamont, P. A., "Common pipe flow formulas compared with the theory of
       roughness", *Journal AWWA* 73(5), 274-280, 1981 (growth rates by water zone).

    Examples
    --------
    >>> round(aged_roughness(0.05e-3, 20.0, 0.025e-3) * 1e3, 3)
    0.55
    """
    if isinstance(growth_rate, str):
        if growth_rate not in GROWTH_RATES:
            hint = difflib.get_close_matches(growth_rate, GROWTH_RATES, n=1)
            suggestion = f" Did you mean {hint[0]!r}?" if hint else ""
            raise ValueError(
                f"growth_rate {growth_rate!r} is not a known water aggressiveness; valid "
                f"names: {', '.join(GROWTH_RATES)}, or a rate in m/year.{suggestion}"
            )
        rate = GROWTH_RATES[growth_rate]
    else:
        rate = growth_rate
    eps0, years, alpha = (np.asarray(x, dtype=float) for x in (roughness, age, rate))
    _check("roughness", eps0, 0.0, _LARGEST)
    _check("age", years, 0.0, _LARGEST, what=" years")
    _check("growth_rate", alpha, 0.0, _LARGEST, what=" m/year")
    inputs = (roughness, age) if isinstance(growth_rate, str) else (roughness, age, growth_rate)
    return _restore_kind(eps0 + alpha * years, *inputs)
