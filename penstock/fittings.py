"""Local (minor) loss coefficients along a penstock.

Every function returns the dimensionless loss coefficient ``K`` such that the head
loss is ``K * V**2 / (2 * GRAVITY)``. Each docstring says which velocity ``V`` the
coefficient refers to: the pipe velocity at the fitting, the velocity in the smaller
pipe for contractions and expansions, the combined (upstream) velocity for a
bifurcation and the approach velocity upstream of a trashrack.
:func:`refer_to_velocity` moves a coefficient from one reference area to another.

Angles are in radians everywhere in this module; unit conversion happens at the
input edge. Inputs are SI floats, numpy arrays or pandas Series; the result has the
same kind (scalar in, float out; array in, array out; Series in, Series out with
the same index).

:data:`LOSS_KINDS` lists every loss kind a case may name, with its parameters,
their dimensions and defaults; :func:`loss_coefficient` dispatches through it.

Sources used throughout (cited again next to each model):

- Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, Technical Paper
  No. 410 (TP-410), 2009 edition, Crane Co., Stamford CT. Appendix A, "Resistance
  coefficient K for valves and fittings" (pp. A-26 to A-30; page numbers from
  memory).
- Rennels, D. C. and Hudson, H. M., *Pipe Flow: A Practical and Comprehensive
  Guide*, 2012, Wiley, Hoboken NJ. ISBN 978-0-470-90102-1. DOI 10.1002/9781118275276.
- Idelchik, I. E., *Handbook of Hydraulic Resistance*, 4th edition (revised and
  augmented), 2007, Begell House, Redding CT. ISBN 978-1-56700-251-5.
- Kirschmer, O., "Untersuchungen über den Gefällsverlust an Rechen", Mitteilungen
  des Hydraulischen Instituts der Technischen Hochschule München, Heft 1, 1926
  (pp. 21-41; page range from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ._numeric import as_float_array as _as_float_array
from ._numeric import require as _require
from ._numeric import same_kind as _same_kind
from .constants import INCH

__all__ = [
    "BEND_METHODS",
    "CRANE_ROUGHNESS",
    "DIMENSIONS",
    "GEOMETRY_PARAMETERS",
    "ENTRANCE_SHAPES",
    "KIRSCHMER_SHAPE_FACTORS",
    "LOSS_KINDS",
    "VALVE_KINDS",
    "BendMethod",
    "EntranceShape",
    "LossKind",
    "ValveKind",
    "bend",
    "bifurcation",
    "bifurcation_symmetric",
    "complete_parameters",
    "contraction_gradual",
    "contraction_sudden",
    "custom",
    "entrance",
    "exit_loss",
    "expansion_gradual",
    "expansion_sudden",
    "fully_turbulent_friction_factor",
    "loss_coefficient",
    "refer_to_velocity",
    "trashrack_kirschmer",
    "valve_open",
]

#: Absolute roughness of clean commercial steel pipe used by Crane TP-410 (2009)
#: to define the fully turbulent friction factor fT: 0.0018 in. [m] (from memory)
CRANE_ROUGHNESS = 0.0018 * INCH

_ANGLE_EPS = 1e-9  # tolerance on angles given in radians (degree conversion round-off)


# --------------------------------------------------------------------------- helpers
def _choice(registry, key, name):
    if not isinstance(key, str) or key not in registry:
        valid = ", ".join(repr(k) for k in registry)
        raise ValueError(f"{name} {key!r} is not known; choose one of: {valid}")
    return registry[key]


def _diameter_ratio(upstream_diameter, downstream_diameter):
    d1 = _as_float_array(upstream_diameter, "upstream_diameter")
    d2 = _as_float_array(downstream_diameter, "downstream_diameter")
    _require(d1 > 0.0, "upstream_diameter", "positive [m]", upstream_diameter)
    _require(d2 > 0.0, "downstream_diameter", "positive [m]", downstream_diameter)
    return d1, d2


def _cone_angle(angle):
    theta = _as_float_array(angle, "angle")
    _require((theta > 0.0) & (theta <= math.pi + _ANGLE_EPS), "angle",
             "the total included cone angle in (0, pi] [rad]", angle)
    return np.minimum(theta, math.pi)


# ----------------------------------------------------------- fully turbulent friction
def fully_turbulent_friction_factor(diameter, roughness=CRANE_ROUGHNESS):
    r"""Darcy friction factor in the zone of complete turbulence, fT (Crane TP-410).

    Crane expresses the loss coefficients of valves and bends as multiples of fT, the
    friction factor of clean commercial steel pipe of the same size at complete
    turbulence. It is a reference scale for those coefficients, not the friction
    factor of the actual penstock.

    Parameters
    ----------
    diameter : numeric
        Pipe inside diameter. [m]
    roughness : numeric, optional
        Absolute wall roughness; Crane uses clean commercial steel, 0.0018 in. [m]

    Returns
    -------
    numeric
        Fully turbulent Darcy friction factor fT. [-]

    Notes
    -----
    .. math:: f_T = \frac{0.25}{\left[\log_{10}\left(\dfrac{\varepsilon}{3.7\,D}\right)
              \right]^2}

    the rough-pipe limit of the Colebrook-White equation. Crane tabulates fT by
    nominal size from 1/2 in (0.027) to 24 in (0.012), rounded to two significant
    digits; this formula reproduces that table within about 5 %.

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Friction factor for clean commercial steel pipe with flow in
    zone of complete turbulence" (p. A-26, from memory).

    Examples
    --------
    >>> round(fully_turbulent_friction_factor(0.1023), 4)  # 4 in schedule 40
    0.0163
    """
    d = _as_float_array(diameter, "diameter")
    e = _as_float_array(roughness, "roughness")
    _require(d > 0.0, "diameter", "positive [m]", diameter)
    _require((e > 0.0) & (e < d), "roughness", "positive and below the diameter [m]",
             roughness)
    result = 0.25 / np.log10(e / (3.7 * d)) ** 2
    return _same_kind(result, diameter, roughness)


def _crane_ft(diameter, roughness, friction_factor):
    _require(_as_float_array(diameter, "diameter") > 0.0, "diameter", "positive [m]",
             diameter)
    if friction_factor is None:
        return fully_turbulent_friction_factor(diameter, roughness)
    ft = _as_float_array(friction_factor, "friction_factor")
    _require((ft > 0.0) & (ft < 0.2), "friction_factor", "a Darcy factor in (0, 0.2)",
             friction_factor)
    return ft


# ------------------------------------------------------------------------- entrance
# Crane TP-410 (2009), App. A "Pipe entrance, flush, rounded": r/d -> K (p. A-30).
_CRANE_ROUNDED_RATIO = np.array([0.0, 0.02, 0.04, 0.06, 0.10, 0.15])
_CRANE_ROUNDED_K = np.array([0.50, 0.28, 0.24, 0.15, 0.09, 0.04])


@dataclass(frozen=True)
class EntranceShape:
    """One intake entrance shape: K as a function of r/D, with its source."""

    function: Callable
    uses_radius: bool
    source: str


ENTRANCE_SHAPES: dict[str, EntranceShape] = {
    "sharp": EntranceShape(
        lambda r: np.full_like(r, 0.50), False,
        "Crane TP-410 (2009) App. A p. A-30, flush sharp-edged K = 0.5; also Idelchik "
        "(2007) Diagram 3-1 at zero wall thickness (from memory)"),
    "reentrant": EntranceShape(
        lambda r: np.full_like(r, 0.78), False,
        "Crane TP-410 (2009) App. A p. A-30, inward projecting K = 0.78"),
    "rounded": EntranceShape(
        lambda r: np.interp(r, _CRANE_ROUNDED_RATIO, _CRANE_ROUNDED_K), True,
        "Crane TP-410 (2009) App. A p. A-30, flush rounded, r/d table, linear "
        "interpolation, K = 0.04 for r/d >= 0.15"),
    "bellmouth": EntranceShape(
        lambda r: np.full_like(r, 0.04), False,
        "Crane TP-410 (2009) App. A p. A-30, well rounded (r/d >= 0.15) K = 0.04"),
}


def entrance(shape="sharp", radius_ratio=0.0):
    r"""Loss coefficient of an intake entrance from a reservoir into the pipe.

    K refers to the pipe velocity just downstream of the entrance.

    Parameters
    ----------
    shape : str
        One of :data:`ENTRANCE_SHAPES`: ``"sharp"`` (square-edged, flush with the
        wall), ``"reentrant"`` (pipe projecting inward into the reservoir),
        ``"rounded"`` (flush, edge rounded to radius r), ``"bellmouth"`` (fully
        rounded, r/D >= 0.15). [-]
    radius_ratio : numeric, optional
        Edge rounding radius over pipe diameter, r/D; used only by ``"rounded"``.
        [-]

    Returns
    -------
    numeric
        Loss coefficient referred to the pipe velocity. [-]

    Notes
    -----
    Crane TP-410 values: sharp 0.5, inward projecting 0.78, rounded by r/d
    (0.02: 0.28, 0.04: 0.24, 0.06: 0.15, 0.10: 0.09, >= 0.15: 0.04), linearly
    interpolated here (r/d = 0 joins the sharp value 0.5). A bellmouth is taken as
    Crane's well-rounded value 0.04; Rennels and Hudson (2012, Diagram 9.2) give
    0.03 as the limit of generous rounding.

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Pipe entrance" (p. A-30, from memory).
    Idelchik, I. E., *Handbook of Hydraulic Resistance*, 4th ed., 2007, Begell
    House, Diagram 3-1 (sharp edge flush with the wall, from memory).

    Examples
    --------
    >>> entrance("rounded", radius_ratio=0.04)
    0.24
    """
    entry = _choice(ENTRANCE_SHAPES, shape, "entrance shape")
    r = _as_float_array(radius_ratio, "radius_ratio")
    _require(r >= 0.0, "radius_ratio", "non-negative (r/D)", radius_ratio)
    if not entry.uses_radius:
        _require(r == 0.0, "radius_ratio",
                 f"0 for entrance shape {shape!r} (only 'rounded' uses it)", radius_ratio)
    return _same_kind(entry.function(r), radius_ratio)


# ------------------------------------------------------------------------ trashrack
#: Kirschmer (1926) bar shape factors beta (from memory, as reproduced in many
#: hydropower design texts). Keys name the bar cross-sections plainly.
KIRSCHMER_SHAPE_FACTORS: dict[str, float] = {
    "rectangular": 2.42,                 # sharp-edged rectangular bar
    "rectangular_rounded_front": 1.83,   # rectangular, semicircular upstream face
    "rounded_both": 1.67,                # semicircular upstream and downstream faces
    "rounded_front_tapered_back": 1.035,  # round nose tapering to a narrow tail
    "tapered_both": 0.92,                # pointed (tapered) upstream and downstream
    "circular": 1.79,                    # round bar
    "airfoil": 0.76,                     # streamlined (airfoil) section
}


def trashrack_kirschmer(bar_shape, bar_thickness, bar_spacing, inclination=math.pi / 2,
                        blockage=0.0):
    r"""Trashrack loss coefficient by Kirschmer (1926), with a blockage allowance.

    K refers to the approach velocity in the flow section just upstream of the rack
    (gross rack area, without the bars).

    Parameters
    ----------
    bar_shape : str
        Bar cross-section, one of :data:`KIRSCHMER_SHAPE_FACTORS`. [-]
    bar_thickness : numeric
        Bar thickness across the flow, s. [m]
    bar_spacing : numeric
        Clear spacing between adjacent bars, b (not the bar pitch). [m]
    inclination : numeric, optional
        Angle of the rack to the horizontal, alpha; pi/2 for a vertical rack. [rad]
    blockage : numeric, optional
        Fraction of the rack area blocked by debris, p, 0 <= p < 1. [-]

    Returns
    -------
    numeric
        Loss coefficient referred to the approach velocity. [-]

    Notes
    -----
    .. math:: K = \frac{\beta\,(s/b)^{4/3}\,\sin\alpha}{(1 - p)^2}

    The numerator is Kirschmer's formula with his shape factor beta. The blockage
    term is common practice: the debris leaves (1 - p) of the rack area open, the
    velocity through the rack rises by 1/(1 - p) and the loss by its square.

    References
    ----------
    Kirschmer, O., "Untersuchungen über den Gefällsverlust an Rechen", Mitteilungen
    des Hydraulischen Instituts der Technischen Hochschule München, Heft 1, 1926.
    Shape factors beta from memory.

    Examples
    --------
    >>> round(trashrack_kirschmer("rectangular", 0.01, 0.05), 3)
    0.283
    """
    beta = _choice(KIRSCHMER_SHAPE_FACTORS, bar_shape, "bar_shape")
    s = _as_float_array(bar_thickness, "bar_thickness")
    b = _as_float_array(bar_spacing, "bar_spacing")
    alpha = _as_float_array(inclination, "inclination")
    p = _as_float_array(blockage, "blockage")
    _require(s > 0.0, "bar_thickness", "positive [m]", bar_thickness)
    _require(b > 0.0, "bar_spacing", "positive (clear spacing between bars) [m]",
             bar_spacing)
    _require((alpha > 0.0) & (alpha <= math.pi / 2 + _ANGLE_EPS), "inclination",
             "in (0, pi/2] from the horizontal [rad]", inclination)
    _require((p >= 0.0) & (p < 1.0), "blockage", "a fraction in [0, 1)", blockage)
    result = beta * (s / b) ** (4.0 / 3.0) * np.sin(np.minimum(alpha, math.pi / 2))
    result = result / (1.0 - p) ** 2
    return _same_kind(result, bar_thickness, bar_spacing, inclination, blockage)


# ----------------------------------------------------------------------------- bends
# Crane TP-410 (2009) App. A "Pipe bends and flanged or butt-welding 90 deg elbows":
# K1 = multiplier x fT for one 90 deg bend, by r/d (p. A-29, from memory).
_CRANE_BEND_RATIO = np.array([1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0, 10.0, 12.0, 14.0, 16.0,
                              20.0])
_CRANE_BEND_MULTIPLIER = np.array([20.0, 14.0, 12.0, 12.0, 14.0, 17.0, 24.0, 30.0, 34.0,
                                   38.0, 42.0, 50.0])


def _bend_crane(angle, radius_ratio, ft):
    k90 = np.interp(radius_ratio, _CRANE_BEND_RATIO, _CRANE_BEND_MULTIPLIER) * ft
    n = angle / (math.pi / 2)
    return (n - 1.0) * (0.25 * math.pi * ft * radius_ratio + 0.5 * k90) + k90


def _bend_rennels(angle, radius_ratio, ft):
    half = np.sin(0.5 * angle)
    return (ft * angle * radius_ratio + (0.10 + 2.4 * ft) * half
            + 6.6 * ft * (np.sqrt(half) + half) / radius_ratio ** (4.0 * angle / math.pi))


@dataclass(frozen=True)
class BendMethod:
    """A published bend correlation with the range of r/D it is used over."""

    function: Callable
    radius_ratio_range: tuple[float, float]
    source: str


BEND_METHODS: dict[str, BendMethod] = {
    "rennels": BendMethod(
        _bend_rennels, (1.0, 20.0),
        "Rennels & Hudson (2012), Pipe Flow, Ch. 15 smooth pipe bends (equation "
        "number from memory); r/D range chosen here"),
    "crane": BendMethod(
        _bend_crane, (1.0, 20.0),
        "Crane TP-410 (2009) App. A p. A-29, 90 deg bend multipliers x fT for "
        "r/d = 1..20 and the rule for n 90 deg bends"),
}


def bend(angle, radius_ratio, diameter, roughness=CRANE_ROUGHNESS, friction_factor=None,
         method="rennels"):
    r"""Loss coefficient of a smooth circular pipe bend of any deflection.

    K refers to the pipe velocity in the bend and includes wall friction along the
    bend arc: do not count that arc length again in the straight-pipe friction.

    Parameters
    ----------
    angle : numeric
        Deflection angle of the bend, 0 < angle <= pi. [rad]
    radius_ratio : numeric
        Bend centreline radius over pipe inside diameter, r/D, 1 to 20. [-]
    diameter : numeric
        Pipe inside diameter, used for the friction factor. [m]
    roughness : numeric, optional
        Roughness for the fully turbulent friction factor (Crane: commercial
        steel). [m]
    friction_factor : numeric, optional
        Darcy friction factor to use instead of the fully turbulent fT. [-]
    method : str, optional
        ``"rennels"`` (default, written for any angle, zero loss at zero
        deflection) or ``"crane"``. See :data:`BEND_METHODS`. [-]

    Returns
    -------
    numeric
        Loss coefficient referred to the pipe velocity. [-]

    Notes
    -----
    Rennels and Hudson (2012), alpha in radians, f the Darcy friction factor:

    .. math:: K = f\,\alpha\,\frac{r}{D} + (0.10 + 2.4 f)\sin\frac{\alpha}{2}
              + \frac{6.6 f\left(\sqrt{\sin(\alpha/2)} + \sin(\alpha/2)\right)}
              {(r/D)^{4\alpha/\pi}}

    Crane TP-410 (2009): one 90 deg bend has :math:`K_1 = m(r/D)\,f_T` with the
    tabulated multiplier m (linearly interpolated here); a bend of n = alpha/(pi/2)
    quarter turns has

    .. math:: K = (n - 1)\left(\frac{\pi}{4} f_T \frac{r}{D} + \frac{K_1}{2}\right) + K_1

    Rennels and Hudson intend f as the Darcy factor of the actual flow; by default
    the fully turbulent fT of the pipe size is used here (pass ``friction_factor``
    to override). Crane states the rule for whole numbers n >= 1; below 90 deg it is extrapolated
    with fractional n and stays above zero as alpha -> 0, so prefer ``"rennels"``
    for the small deflections common along a penstock.

    References
    ----------
    Rennels, D. C. and Hudson, H. M., *Pipe Flow: A Practical and Comprehensive
    Guide*, Wiley, 2012, Chapter 15 "Bends", smooth pipe bends (from memory).
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Pipe bends" (p. A-29, from memory).
    """
    entry = _choice(BEND_METHODS, method, "bend method")
    theta = _as_float_array(angle, "angle")
    ratio = _as_float_array(radius_ratio, "radius_ratio")
    _require((theta > 0.0) & (theta <= math.pi + _ANGLE_EPS), "angle",
             "a deflection in (0, pi] [rad]", angle)
    low, high = entry.radius_ratio_range
    _require((ratio >= low) & (ratio <= high), "radius_ratio",
             f"within [{low:g}, {high:g}] for bend method {method!r}", radius_ratio)
    ft = _crane_ft(diameter, roughness, friction_factor)
    result = entry.function(np.minimum(theta, math.pi), ratio, np.asarray(ft, float))
    return _same_kind(result, angle, radius_ratio, diameter, roughness, friction_factor)


# ---------------------------------------------------------------------------- valves
@dataclass(frozen=True)
class ValveKind:
    """Fully open valve: K = multiplier x fT, multiplier by diameter band."""

    upper_diameters: tuple[float, ...]  # band upper limits [m]; last band unbounded
    multipliers: tuple[float, ...]
    source: str


_INCH = INCH
# Crane butterfly bands 2-8 in, 10-14 in, 16-24 in; split at 9 in and 15 in.
_BUTTERFLY_BANDS = (9.0 * _INCH, 15.0 * _INCH)

VALVE_KINDS: dict[str, ValveKind] = {
    "gate": ValveKind((), (8.0,), "Crane TP-410 (2009) p. A-27: wedge/double disc gate, "
                                  "full bore, K = 8 fT"),
    "ball": ValveKind((), (3.0,), "Crane TP-410 (2009) p. A-28: ball valve, full bore, "
                                  "K = 3 fT"),
    "spherical": ValveKind((), (3.0,), "full-bore spherical (rotary) valve taken as "
                                       "Crane's full-bore ball valve, K = 3 fT "
                                       "(common practice)"),
    "plug": ValveKind((), (18.0,), "Crane TP-410 (2009) p. A-28: plug valve, straight "
                                   "way, full bore, K = 18 fT"),
    "globe": ValveKind((), (340.0,), "Crane TP-410 (2009) p. A-27: globe valve, full "
                                     "bore, K = 340 fT"),
    "butterfly": ValveKind(_BUTTERFLY_BANDS, (45.0, 35.0, 25.0),
                           "Crane TP-410 (2009) p. A-28: centric butterfly, 45/35/25 fT "
                           "for 2-8/10-14/16-24 in"),
    "butterfly_double_offset": ValveKind(_BUTTERFLY_BANDS, (74.0, 52.0, 43.0),
                                         "Crane TP-410 (2009) p. A-28: double offset "
                                         "butterfly, 74/52/43 fT"),
    "butterfly_triple_offset": ValveKind(_BUTTERFLY_BANDS, (218.0, 96.0, 55.0),
                                         "Crane TP-410 (2009) p. A-28: triple offset "
                                         "butterfly, 218/96/55 fT"),
}


def valve_open(valve_type, diameter, roughness=CRANE_ROUGHNESS, friction_factor=None):
    r"""Loss coefficient of a fully open valve with the bore of the pipe.

    K refers to the pipe velocity at the valve.

    Parameters
    ----------
    valve_type : str
        One of :data:`VALVE_KINDS`: ``"gate"``, ``"ball"``, ``"spherical"``,
        ``"plug"``, ``"globe"``, ``"butterfly"``, ``"butterfly_double_offset"``,
        ``"butterfly_triple_offset"``. [-]
    diameter : numeric
        Pipe (and valve bore) inside diameter. [m]
    roughness : numeric, optional
        Roughness for the fully turbulent friction factor (Crane: commercial
        steel). [m]
    friction_factor : numeric, optional
        Darcy friction factor to use instead of the fully turbulent fT. [-]

    Returns
    -------
    numeric
        Loss coefficient referred to the pipe velocity. [-]

    Notes
    -----
    .. math:: K = n\,f_T

    with Crane's multiplier n: gate 8, ball 3, plug 18, globe 340; butterfly
    (centric / double offset / triple offset) 45 / 74 / 218 for 2-8 in, 35 / 52 / 96
    for 10-14 in and 25 / 43 / 55 for 16-24 in, the bands split here at 9 in and
    15 in. Crane tabulates up to 24 in; larger penstock valves keep the largest-band
    multiplier while fT keeps falling with diameter (common practice extrapolation).
    A spherical valve is taken as a full-bore ball valve (common practice).

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, valve K factors (pp. A-27 to A-28, from memory).
    """
    entry = _choice(VALVE_KINDS, valve_type, "valve_type")
    ft = _crane_ft(diameter, roughness, friction_factor)
    d = _as_float_array(diameter, "diameter")
    band = np.searchsorted(np.asarray(entry.upper_diameters), d, side="left")
    result = np.asarray(entry.multipliers)[band] * ft
    return _same_kind(result, diameter, roughness, friction_factor)


# -------------------------------------------------------- contractions and expansions
def contraction_sudden(upstream_diameter, downstream_diameter):
    r"""Loss coefficient of a sudden (square-edged) contraction.

    K refers to the velocity in the smaller, downstream pipe.

    Parameters
    ----------
    upstream_diameter : numeric
        Inside diameter of the larger, upstream pipe, d1. [m]
    downstream_diameter : numeric
        Inside diameter of the smaller, downstream pipe, d2 <= d1. [m]

    Returns
    -------
    numeric
        Loss coefficient referred to the downstream (smaller pipe) velocity. [-]

    Notes
    -----
    .. math:: K = 0.5\,(1 - \beta^2), \qquad \beta = d_2/d_1

    Crane's Formula 2 at a 180 deg included angle.

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Sudden and gradual contraction", Formula 2 (p. A-26, from
    memory).
    """
    return contraction_gradual(upstream_diameter, downstream_diameter, math.pi)


def contraction_gradual(upstream_diameter, downstream_diameter, angle):
    r"""Loss coefficient of a conical (gradual) contraction, Crane TP-410.

    K refers to the velocity in the smaller, downstream pipe. Wall friction in the
    cone is not included.

    Parameters
    ----------
    upstream_diameter : numeric
        Inside diameter of the larger, upstream pipe, d1. [m]
    downstream_diameter : numeric
        Inside diameter of the smaller, downstream pipe, d2 <= d1. [m]
    angle : numeric
        Total included cone angle theta, 0 < theta <= pi (pi: sudden). [rad]

    Returns
    -------
    numeric
        Loss coefficient referred to the downstream (smaller pipe) velocity. [-]

    Notes
    -----
    With beta = d2/d1,

    .. math:: K = 0.8 \sin\frac{\theta}{2}(1 - \beta^2)
              \quad (\theta \le 45^\circ), \qquad
              K = 0.5 \sqrt{\sin\frac{\theta}{2}}(1 - \beta^2)
              \quad (45^\circ < \theta \le 180^\circ)

    Crane writes these for the larger pipe, divided by beta^4; here they are
    referred to the smaller pipe.

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Sudden and gradual contraction", Formulas 1 and 2
    (p. A-26, from memory).
    """
    d1, d2 = _diameter_ratio(upstream_diameter, downstream_diameter)
    _require(d2 <= d1, "downstream_diameter",
             "no larger than upstream_diameter for a contraction", downstream_diameter)
    theta = _cone_angle(angle)
    area_term = 1.0 - (d2 / d1) ** 2
    half = np.sin(0.5 * theta)
    result = np.where(theta <= math.pi / 4 + _ANGLE_EPS, 0.8 * half * area_term,
                      0.5 * np.sqrt(half) * area_term)
    return _same_kind(result, upstream_diameter, downstream_diameter, angle)


def expansion_sudden(upstream_diameter, downstream_diameter):
    r"""Loss coefficient of a sudden expansion (Borda-Carnot).

    K refers to the velocity in the smaller, upstream pipe.

    Parameters
    ----------
    upstream_diameter : numeric
        Inside diameter of the smaller, upstream pipe, d1. [m]
    downstream_diameter : numeric
        Inside diameter of the larger, downstream pipe, d2 >= d1. [m]

    Returns
    -------
    numeric
        Loss coefficient referred to the upstream (smaller pipe) velocity. [-]

    Notes
    -----
    .. math:: K = (1 - \beta^2)^2, \qquad \beta = d_1/d_2

    from momentum and continuity across the expansion (Borda-Carnot); identical to
    Crane's Formula 4.

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Sudden and gradual enlargement", Formula 4 (p. A-26, from
    memory).
    Idelchik, I. E., *Handbook of Hydraulic Resistance*, 4th ed., 2007, Begell
    House, Diagram 4-1 (sudden expansion, from memory).
    """
    return expansion_gradual(upstream_diameter, downstream_diameter, math.pi)


def expansion_gradual(upstream_diameter, downstream_diameter, angle):
    r"""Loss coefficient of a conical (gradual) expansion, Crane TP-410.

    K refers to the velocity in the smaller, upstream pipe. Wall friction in the
    cone is not included.

    Parameters
    ----------
    upstream_diameter : numeric
        Inside diameter of the smaller, upstream pipe, d1. [m]
    downstream_diameter : numeric
        Inside diameter of the larger, downstream pipe, d2 >= d1. [m]
    angle : numeric
        Total included cone angle theta, 0 < theta <= pi (pi: sudden). [rad]

    Returns
    -------
    numeric
        Loss coefficient referred to the upstream (smaller pipe) velocity. [-]

    Notes
    -----
    With beta = d1/d2,

    .. math:: K = 2.6 \sin\frac{\theta}{2}(1 - \beta^2)^2
              \quad (\theta \le 45^\circ), \qquad
              K = (1 - \beta^2)^2 \quad (45^\circ < \theta \le 180^\circ)

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Sudden and gradual enlargement", Formulas 3 and 4
    (p. A-26, from memory).
    """
    d1, d2 = _diameter_ratio(upstream_diameter, downstream_diameter)
    _require(d2 >= d1, "downstream_diameter",
             "no smaller than upstream_diameter for an expansion", downstream_diameter)
    theta = _cone_angle(angle)
    area_term = (1.0 - (d1 / d2) ** 2) ** 2
    result = np.where(theta <= math.pi / 4 + _ANGLE_EPS,
                      2.6 * np.sin(0.5 * theta) * area_term, area_term)
    return _same_kind(result, upstream_diameter, downstream_diameter, angle)


def refer_to_velocity(k, area_from, area_to):
    r"""Convert a loss coefficient from one reference flow area to another.

    Parameters
    ----------
    k : numeric
        Loss coefficient referred to the velocity in ``area_from``. [-]
    area_from : numeric
        Flow area whose velocity ``k`` refers to. [m^2]
    area_to : numeric
        Flow area whose velocity the result refers to. [m^2]

    Returns
    -------
    numeric
        Loss coefficient referred to the velocity in ``area_to``. [-]

    Notes
    -----
    The head loss is the same, :math:`K_f V_f^2 = K_t V_t^2`, and V = Q/A, so

    .. math:: K_t = K_f \left(\frac{A_t}{A_f}\right)^2

    Examples
    --------
    >>> refer_to_velocity(0.5, area_from=1.0, area_to=2.0)
    2.0
    """
    value = _as_float_array(k, "k")
    a_from = _as_float_array(area_from, "area_from")
    a_to = _as_float_array(area_to, "area_to")
    _require(a_from > 0.0, "area_from", "positive [m^2]", area_from)
    _require(a_to > 0.0, "area_to", "positive [m^2]", area_to)
    return _same_kind(value * (a_to / a_from) ** 2, k, area_from, area_to)


# ---------------------------------------------------------------------- bifurcation
def bifurcation(branch_diameter_ratio, flow_ratio, angle):
    r"""Loss coefficient from the combined flow into one branch of a dividing wye or
    tee, Crane TP-410 (2009).

    K refers to the velocity of the combined flow in the upstream pipe.

    Parameters
    ----------
    branch_diameter_ratio : numeric
        Branch inside diameter over upstream (combined flow) inside diameter,
        beta, 0 < beta <= 1. [-]
    flow_ratio : numeric
        Branch flow over combined flow, q, 0 <= q <= 1. [-]
    angle : numeric
        Angle between the branch and the upstream pipe axis: 0 < angle <= pi/3 for a
        wye, exactly pi/2 for a tee. [rad]

    Returns
    -------
    numeric
        Loss coefficient of the branch path referred to the combined (upstream)
        velocity. [-]

    Notes
    -----
    With x = q / beta^2 (branch velocity over combined velocity),

    .. math:: K = G\left[1 + H x^2 - J x \cos\theta\right]

    Wye (theta <= 60 deg): H = 1, J = 2; for beta^2 <= 0.35, G = 1.1 - 0.7 q
    (q <= 0.4) else 0.85; for beta^2 > 0.35, G = 1.0 - 0.6 q (q <= 0.6) else 0.6.
    Tee (theta = 90 deg): beta <= 2/3 gives G = 1, H = 1; Crane gives beta = 1 as
    G = 1 + 0.3 q^2, H = 0.3, J = 0, applied here to all 2/3 < beta <= 1 (common
    practice, no interpolation). Crane gives no data between 60 and 90 deg, so
    those angles are refused.

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, "Branch flow, diverging" (from memory; the method follows Rennels and
    Hudson (2012), Ch. 16, and Idelchik (2007), Ch. 7).

    Examples
    --------
    >>> round(bifurcation(1.0, 0.5, math.pi / 4), 3)  # symmetric split, 45 deg wye
    0.38
    """
    beta = _as_float_array(branch_diameter_ratio, "branch_diameter_ratio")
    q = _as_float_array(flow_ratio, "flow_ratio")
    theta = _as_float_array(angle, "angle")
    _require((beta > 0.0) & (beta <= 1.0), "branch_diameter_ratio",
             "in (0, 1] (branch no larger than the upstream pipe)", branch_diameter_ratio)
    _require((q >= 0.0) & (q <= 1.0), "flow_ratio", "a fraction in [0, 1]", flow_ratio)
    is_wye = (theta > 0.0) & (theta <= math.pi / 3 + _ANGLE_EPS)
    is_tee = np.abs(theta - math.pi / 2) <= _ANGLE_EPS
    _require(is_wye | is_tee, "angle",
             "in (0, pi/3] (wye) or pi/2 (tee); Crane gives no data between", angle)
    beta2 = beta**2
    x = q / beta2
    g_wye = np.where(beta2 <= 0.35, np.where(q <= 0.4, 1.1 - 0.7 * q, 0.85),
                     np.where(q <= 0.6, 1.0 - 0.6 * q, 0.6))
    small_tee = beta <= 2.0 / 3.0
    g = np.where(is_wye, g_wye, np.where(small_tee, 1.0, 1.0 + 0.3 * q**2))
    h = np.where(is_wye | small_tee, 1.0, 0.3)
    j = np.where(is_wye | small_tee, 2.0, 0.0)
    result = g * (1.0 + h * x**2 - j * x * np.cos(theta))
    return _same_kind(result, branch_diameter_ratio, flow_ratio, angle)


def bifurcation_symmetric(branch_diameter_ratio, angle, n_units=2):
    r"""Loss coefficient into one of n equal branches splitting the flow at one node.

    K refers to the velocity of the combined flow in the upstream pipe.

    Parameters
    ----------
    branch_diameter_ratio : numeric
        Branch inside diameter over upstream inside diameter, 0 < beta <= 1. [-]
    angle : numeric
        Angle between each branch and the upstream pipe axis (see
        :func:`bifurcation`). [rad]
    n_units : int, optional
        Number of units sharing the flow equally, n >= 2. [-]

    Returns
    -------
    numeric
        Loss coefficient of each branch path referred to the combined velocity. [-]

    Notes
    -----
    Each branch is treated as Crane's diverging branch with q = 1/n (common
    practice for a symmetric wye or trifurcation; see :func:`bifurcation`).

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, "Branch flow, diverging" (from memory).
    """
    if isinstance(n_units, bool) or not float(n_units).is_integer() or n_units < 2:
        raise ValueError(f"n_units must be an integer of at least 2; got {n_units!r}")
    return bifurcation(branch_diameter_ratio, 1.0 / float(n_units), angle)


# ------------------------------------------------------------------- exit and custom
def exit_loss():
    r"""Loss coefficient of a pipe discharging into a reservoir or tailwater.

    K refers to the pipe velocity at the outlet.

    Returns
    -------
    float
        1.0: the whole velocity head is lost (Borda-Carnot with an infinite
        downstream area). [-]

    References
    ----------
    Crane Co., *Flow of Fluids Through Valves, Fittings, and Pipe*, TP-410, 2009
    edition, Appendix A, "Pipe exit", K = 1.0 (p. A-30, from memory).
    """
    return 1.0


def custom(k):
    """User-given loss coefficient, checked and returned unchanged.

    K refers to the pipe velocity at the fitting.

    Parameters
    ----------
    k : numeric
        Loss coefficient, non-negative. [-]

    Returns
    -------
    numeric
        The same loss coefficient. [-]
    """
    value = _as_float_array(k, "k")
    _require(np.isfinite(value) & (value >= 0.0), "k",
             "a finite non-negative loss coefficient", k)
    return _same_kind(value, k)


# --------------------------------------------------------------------------- registry
#: Dimension strings a parameter may have.
DIMENSIONS = ("length", "angle", "area", "dimensionless", "text")

#: Geometry parameters a loss takes from the pipe route at its chainage rather than
#: from the user: the pipe diameter there, or the diameters just up- and downstream.
GEOMETRY_PARAMETERS = ("diameter", "upstream_diameter", "downstream_diameter")


@dataclass(frozen=True)
class LossKind:
    """One loss kind a case may name.

    ``parameters`` maps each user-given parameter name to (dimension, default or
    None if required, short description); dimensions are those in
    :data:`DIMENSIONS`. ``geometry`` names the parameters taken from the pipe route
    (see :data:`GEOMETRY_PARAMETERS`; all are lengths, all required).
    ``reference_velocity`` names the velocity K refers to: ``"pipe"`` (pipe at the
    fitting), ``"upstream"`` (upstream pipe), ``"downstream"`` (downstream pipe) or
    ``"approach"`` (approach velocity upstream of a rack).
    """

    name: str
    function: Callable
    parameters: dict[str, tuple[str, object, str]]
    geometry: tuple[str, ...] = ()
    reference_velocity: str = "pipe"


_ROUGHNESS_PARAMETER = ("length", CRANE_ROUGHNESS,
                        "roughness for the fully turbulent friction factor fT "
                        "(Crane: clean commercial steel)")

LOSS_KINDS: dict[str, LossKind] = {
    kind.name: kind
    for kind in (
        LossKind("entrance", entrance, {
            "shape": ("text", "sharp", "one of " + ", ".join(ENTRANCE_SHAPES)),
            "radius_ratio": ("dimensionless", 0.0,
                             "edge radius over diameter r/D, for shape 'rounded'"),
        }),
        LossKind("trashrack", trashrack_kirschmer, {
            "bar_shape": ("text", "rectangular",
                          "one of " + ", ".join(KIRSCHMER_SHAPE_FACTORS)),
            "bar_thickness": ("length", None, "bar thickness across the flow"),
            "bar_spacing": ("length", None, "clear spacing between bars"),
            "inclination": ("angle", math.pi / 2, "rack angle from horizontal"),
            "blockage": ("dimensionless", 0.0, "blocked fraction of the rack area"),
        }, reference_velocity="approach"),
        LossKind("bend", bend, {
            "angle": ("angle", None, "deflection angle"),
            "radius_ratio": ("dimensionless", None, "bend radius over diameter r/D"),
            "roughness": _ROUGHNESS_PARAMETER,
            "method": ("text", "rennels", "one of " + ", ".join(BEND_METHODS)),
        }, geometry=("diameter",)),
        LossKind("valve", valve_open, {
            "valve_type": ("text", None, "one of " + ", ".join(VALVE_KINDS)),
            "roughness": _ROUGHNESS_PARAMETER,
        }, geometry=("diameter",)),
        LossKind("contraction", contraction_gradual, {
            "angle": ("angle", math.pi, "total included cone angle; pi for sudden"),
        }, geometry=("upstream_diameter", "downstream_diameter"),
            reference_velocity="downstream"),
        LossKind("expansion", expansion_gradual, {
            "angle": ("angle", math.pi, "total included cone angle; pi for sudden"),
        }, geometry=("upstream_diameter", "downstream_diameter"),
            reference_velocity="upstream"),
        LossKind("bifurcation", bifurcation, {
            "branch_diameter_ratio": ("dimensionless", None,
                                      "branch over upstream inside diameter"),
            "flow_ratio": ("dimensionless", None, "branch flow over combined flow"),
            "angle": ("angle", None, "branch angle: up to 60 deg (wye) or 90 deg (tee)"),
        }, reference_velocity="upstream"),
        LossKind("exit", exit_loss, {}),
        LossKind("custom", custom, {
            "k": ("dimensionless", None, "user-given loss coefficient K"),
        }),
    )
}


def complete_parameters(kind, params, *, diameter=None, upstream_diameter=None,
                        downstream_diameter=None):
    """Full argument set for a loss kind: user parameters, defaults and geometry.

    Parameters
    ----------
    kind : str
        Loss kind, a key of :data:`LOSS_KINDS`. [-]
    params : dict
        User-given parameters of that kind (SI units, angles in radians). [-]
    diameter : numeric, optional
        Pipe inside diameter at the loss, for kinds that need it. [m]
    upstream_diameter : numeric, optional
        Pipe inside diameter just upstream of the loss. [m]
    downstream_diameter : numeric, optional
        Pipe inside diameter just downstream of the loss. [m]

    Returns
    -------
    dict
        Keyword arguments for the kind's function. [-]
    """
    entry = _choice(LOSS_KINDS, kind, "loss kind")
    unknown = sorted(set(params) - set(entry.parameters))
    if unknown:
        accepted = ", ".join(entry.parameters) or "none"
        raise ValueError(f"unknown parameter(s) {', '.join(unknown)} for loss kind "
                         f"{kind!r}; accepted: {accepted}")
    arguments = {}
    for name, (_dimension, default, _text) in entry.parameters.items():
        if name in params:
            arguments[name] = params[name]
        elif default is None:
            raise ValueError(f"parameter {name!r} is required for loss kind {kind!r}")
        else:
            arguments[name] = default
    geometry = {"diameter": diameter, "upstream_diameter": upstream_diameter,
                "downstream_diameter": downstream_diameter}
    for name in entry.geometry:
        if geometry[name] is None:
            raise ValueError(f"{name} is required for loss kind {kind!r} (pipe inside "
                             "diameter from the route) [m]")
        arguments[name] = geometry[name]
    return arguments


def loss_coefficient(kind, /, **params):
    """Loss coefficient of any kind in :data:`LOSS_KINDS`.

    Parameters
    ----------
    kind : str
        Loss kind, a key of :data:`LOSS_KINDS`. [-]
    **params : numeric or str
        The kind's user parameters (those with a default may be left out) and its
        geometry parameters (``diameter``, ``upstream_diameter``,
        ``downstream_diameter`` as the kind needs); SI units, angles in radians. [-]

    Returns
    -------
    numeric
        Loss coefficient, referred to the velocity given by the kind's
        ``reference_velocity``. [-]

    Examples
    --------
    >>> loss_coefficient("expansion", upstream_diameter=1.0, downstream_diameter=2.0)
    0.5625
    """
    entry = _choice(LOSS_KINDS, kind, "loss kind")
    geometry = {name: params.pop(name) for name in GEOMETRY_PARAMETERS
                if name in params and name in entry.geometry}
    return entry.function(**complete_parameters(kind, params, **geometry))
