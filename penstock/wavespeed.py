"""Pressure-wave (water hammer) speed in liquid-filled pipes.

Pure functions of numbers and numpy arrays, SI units throughout. Material moduli and
Poisson ratios are passed in as plain numbers (the project's material registry holds them).

The core model is the Korteweg formula with the pipe-restraint factor of Wylie and
Streeter [1]_ (thin- and thick-walled forms), equivalent wall thickness for reinforced
concrete and for concrete-lined steel pipes after Chaudhry [2]_, an effective modulus for
viscoelastic (HDPE) pipe walls from a creep function [3]_, and the wave speed of a
liquid carrying free gas [1]_.

References
----------
.. [1] E. B. Wylie and V. L. Streeter, "Fluid Transients in Systems", Prentice Hall,
   Englewood Cliffs NJ, 1993, section 2.6 (wave speed; restraint cases a, b, c; thin- and
   thick-walled conduits) and section 2.7 / chapter 9 (free gas in liquid). Section and
   equation numbers from memory.
.. [2] M. H. Chaudhry, "Applied Hydraulic Transients", 3rd ed., Springer, New York, 2014,
   chapter 2 (wave velocity: thick-walled, reinforced-concrete and lined conduits).
   DOI 10.1007/978-1-4614-8538-4. Section numbers from memory.
.. [3] D. Covas, I. Stoianov, H. Ramos, N. Graham and C. Maksimovic, "The dynamic effect of
   pipe-wall viscoelasticity in hydraulic transients. Part I - experimental analysis and
   creep characterization", Journal of Hydraulic Research 42(5), 517-532, 2004.
   DOI 10.1080/00221686.2004.9641221 (DOI from memory).
"""

from __future__ import annotations

import numpy as np

from ._numeric import as_float_array as _as_float_array
from ._numeric import require as _require
from ._numeric import same_kind as _same_kind

#: Accepted range of pressure-wave speed for water in a pipe, gas free. [m/s]
#: The lower bound is the spec's limit for a soft plastic pipe; the upper bound sits above
#: the largest free-field speed of sound in liquid water (about 1555 m/s near 74 degC, from
#: memory), which no pipe can exceed.
WATER_WAVE_SPEED_RANGE = (100.0, 1600.0)

#: Accepted range for water carrying free gas: the isothermal mixture speed at one
#: atmosphere and 50 % void fraction is about 20 m/s, so a few m/s is the physical floor. [m/s]
GAS_WATER_WAVE_SPEED_RANGE = (1.0, 1600.0)

#: Diameter-to-thickness ratio below which the thick-walled forms are used when ``thick``
#: is left to choose itself. Wylie and Streeter [1] call a conduit thin-walled for D/e > 25
#: (from memory). [-]
THIN_WALL_LIMIT = 25.0


# --------------------------------------------------------------------------- helpers
def _positive(value, name):
    arr = _as_float_array(value, name)
    _require(np.isfinite(arr) & (arr > 0.0), name, "finite and > 0", value)
    return arr


def validate_wave_speed(wave_speed, valid_range=WATER_WAVE_SPEED_RANGE, name="wave_speed"):
    """Check that a wave speed lies in a physical range; return it as a float array.

    Parameters
    ----------
    wave_speed : numeric
        Pressure-wave speed. [m/s]
    valid_range : tuple of float
        Inclusive (low, high) bounds. [m/s]
    name : str
        Parameter name quoted in the error message. [-]

    Returns
    -------
    numpy.ndarray
        The wave speed as floats. [m/s]

    Raises
    ------
    ValueError
        If any value is not finite or lies outside ``valid_range``.
    """
    low, high = valid_range
    arr = _as_float_array(wave_speed, name)
    _require(
        np.isfinite(arr) & (arr >= low) & (arr <= high),
        name,
        f"within the physical range {low:g} to {high:g} m/s (lower it only for gas-laden "
        "water or very soft pipes, through valid_range)",
        wave_speed,
    )
    return arr


# --------------------------------------------------------------------------- Korteweg
def rigid_pipe_wave_speed(bulk_modulus, density):
    """Wave speed of water in a rigid pipe, the upper bound of any pipe's.

    Parameters
    ----------
    bulk_modulus : numeric
        Bulk modulus of the water. [Pa]
    density : numeric
        Density of the water. [kg/m^3]

    Returns
    -------
    numeric
        :math:`a = \\sqrt{K/\\rho}`, the speed of sound in the water. [m/s]

    Notes
    -----
    Korteweg's formula with an infinitely stiff wall (Wylie & Streeter 1993, §2.5 [1]_):
    a real wall only lowers it, so it bounds the Joukowsky rise from above.

    References
    ----------
    .. [1] Wylie, E. B. and Streeter, V. L., *Fluid Transients in Systems*, Prentice Hall,
       1993, eq. 2.5 family (from memory).
    """
    k = _positive(bulk_modulus, "bulk_modulus")
    rho = _positive(density, "density")
    out = np.sqrt(k / rho)
    return out if np.ndim(out) else float(out)


def korteweg(bulk_modulus, density, diameter, wall_thickness, pipe_modulus,
             restraint_factor=1.0, valid_range=WATER_WAVE_SPEED_RANGE):
    """Pressure-wave speed in an elastic liquid-filled pipe (Korteweg formula).

    Parameters
    ----------
    bulk_modulus : numeric
        Bulk modulus of elasticity of the liquid. [Pa]
    density : numeric
        Liquid density. [kg/m^3]
    diameter : numeric
        Internal pipe diameter. [m]
    wall_thickness : numeric
        Pipe wall thickness (or equivalent steel thickness). [m]
    pipe_modulus : numeric
        Young's modulus of the wall material (hoop direction). [Pa]
    restraint_factor : numeric
        Pipe-restraint factor ``c`` from :func:`restraint_factor`; 1 for a pipe with
        expansion joints throughout (thin wall). [-]
    valid_range : tuple of float
        Accepted (low, high) wave speed; outside it a ValueError is raised. [m/s]

    Returns
    -------
    numeric
        Wave speed. [m/s]

    Raises
    ------
    ValueError
        If an input is not positive or the result lies outside ``valid_range``.

    Notes
    -----
    .. math:: a = \\sqrt{\\frac{K/\\rho}{1 + c\\,K D/(E e)}}

    Wylie and Streeter (1993) section 2.6 [1]_; Chaudhry (2014) chapter 2 [2]_ writes the
    same with :math:`\\psi = c D/e`.

    Examples
    --------
    >>> round(korteweg(2.2e9, 1000.0, 1.0, 0.01, 2.07e11), 1)
    1032.7
    """
    k = _positive(bulk_modulus, "bulk_modulus")
    rho = _positive(density, "density")
    d = _positive(diameter, "diameter")
    e = _positive(wall_thickness, "wall_thickness")
    pipe_e = _positive(pipe_modulus, "pipe_modulus")
    c = _positive(restraint_factor, "restraint_factor")
    a = np.sqrt((k / rho) / (1.0 + c * k * d / (pipe_e * e)))
    validate_wave_speed(a, valid_range, name="computed wave speed")
    return _same_kind(a, bulk_modulus, density, diameter, wall_thickness, pipe_modulus,
                      restraint_factor)


# --------------------------------------------------------------------------- restraint
def _thin_upstream(nu):
    return 1.0 - 0.5 * nu


def _thin_anchored(nu):
    return 1.0 - nu * nu


def _thin_joints(nu):
    return np.ones_like(nu)


#: Restraint cases of Wylie and Streeter (1993) section 2.6 [1]: each entry holds the
#: thin-walled factor c1(nu) and a description. The thick-walled form of every case is
#: c = 2 (e/D)(1 + nu) + c1 D/(D + e) with the same c1.
RESTRAINT_CASES = {
    "upstream_anchor": (_thin_upstream, "case a: anchored at the upstream end only"),
    "anchored": (_thin_anchored, "case b: anchored throughout against axial movement"),
    "expansion_joints": (_thin_joints, "case c: expansion joints throughout"),
}


def restraint_factor(poisson, case, thick=False, diameter=None, wall_thickness=None):
    """Pipe-restraint factor ``c`` of the Korteweg formula.

    Parameters
    ----------
    poisson : numeric
        Poisson ratio of the wall material, 0 <= nu < 0.5. [-]
    case : str
        ``"upstream_anchor"`` (anchored at the upstream end only, case a),
        ``"anchored"`` (anchored throughout against axial movement, case b) or
        ``"expansion_joints"`` (expansion joints throughout, case c). [-]
    thick : bool
        Use the thick-walled form (needs ``diameter`` and ``wall_thickness``). [-]
    diameter : numeric, optional
        Internal diameter, for the thick-walled form. [m]
    wall_thickness : numeric, optional
        Wall thickness, for the thick-walled form. [m]

    Returns
    -------
    numeric
        Restraint factor ``c``. [-]

    Notes
    -----
    Thin-walled (Wylie and Streeter 1993, section 2.6 [1]_, from memory):

    - case a: :math:`c = 1 - \\nu/2`
    - case b: :math:`c = 1 - \\nu^2`
    - case c: :math:`c = 1`

    Thick-walled (same section, from memory): :math:`c = 2(e/D)(1+\\nu) + c_1 D/(D+e)` with
    :math:`c_1` the thin-walled factor. These equal the Lame thick-cylinder hoop strain at
    the bore (Chaudhry 2014 chapter 2 [2]_ gives them in terms of the radii), which the
    tests check.
    """
    if not isinstance(case, str) or case not in RESTRAINT_CASES:
        valid = ", ".join(repr(k) for k in RESTRAINT_CASES)
        raise ValueError(f"case {case!r} is not known; choose one of: {valid}")
    nu = _as_float_array(poisson, "poisson")
    _require(np.isfinite(nu) & (nu >= 0.0) & (nu < 0.5), "poisson", "in [0, 0.5)", poisson)
    c1 = RESTRAINT_CASES[case][0](nu)
    if not thick:
        return _same_kind(c1, poisson)
    if diameter is None or wall_thickness is None:
        raise ValueError("thick=True needs diameter and wall_thickness; give both in metres")
    d = _positive(diameter, "diameter")
    e = _positive(wall_thickness, "wall_thickness")
    c = 2.0 * (e / d) * (1.0 + nu) + c1 * d / (d + e)
    return _same_kind(c, poisson, diameter, wall_thickness)


def pipe_wave_speed(bulk_modulus, density, diameter, wall_thickness, pipe_modulus, poisson,
                    case="expansion_joints", thick=None, valid_range=WATER_WAVE_SPEED_RANGE):
    """Korteweg wave speed with the restraint factor chosen from the support case.

    Parameters
    ----------
    bulk_modulus : numeric
        Bulk modulus of the liquid. [Pa]
    density : numeric
        Liquid density. [kg/m^3]
    diameter : numeric
        Internal diameter. [m]
    wall_thickness : numeric
        Wall thickness (or equivalent steel thickness). [m]
    pipe_modulus : numeric
        Young's modulus of the wall (hoop direction; short-term for HDPE). [Pa]
    poisson : numeric
        Poisson ratio of the wall. [-]
    case : str
        Restraint case, a key of :data:`RESTRAINT_CASES`. [-]
    thick : bool or None
        Thick-walled form; None chooses it where D/e < :data:`THIN_WALL_LIMIT`. [-]
    valid_range : tuple of float
        Accepted (low, high) wave speed. [m/s]

    Returns
    -------
    numeric
        Wave speed. [m/s]

    Notes
    -----
    :math:`a = \\sqrt{(K/\\rho)/(1 + c K D/(E e))}` with ``c`` from :func:`restraint_factor`.
    The thick-walled form tends to the thin one as D/e grows, so the automatic choice
    changes the result smoothly (by < 1 % at D/e = 25 for nu = 0.3).
    """
    d = _positive(diameter, "diameter")
    e = _positive(wall_thickness, "wall_thickness")
    if thick is None:
        c_thin = _as_float_array(restraint_factor(poisson, case), "restraint factor")
        c_thick = _as_float_array(
            restraint_factor(poisson, case, thick=True, diameter=d, wall_thickness=e),
            "restraint factor")
        c = np.where(d / e < THIN_WALL_LIMIT, c_thick, c_thin)
    else:
        c = restraint_factor(poisson, case, thick=bool(thick), diameter=d, wall_thickness=e)
    a = korteweg(bulk_modulus, density, d, e, pipe_modulus, c, valid_range=valid_range)
    return _same_kind(a, bulk_modulus, density, diameter, wall_thickness, pipe_modulus,
                      poisson)


# --------------------------------------------------------------------------- composite walls
def equivalent_thickness_reinforced_concrete(concrete_thickness, concrete_modulus,
                                             steel_modulus, bar_area, bar_spacing,
                                             concrete_effectiveness=1.0):
    """Equivalent steel wall thickness of a reinforced-concrete pipe.

    Parameters
    ----------
    concrete_thickness : numeric
        Thickness of the concrete wall. [m]
    concrete_modulus : numeric
        Young's modulus of the concrete. [Pa]
    steel_modulus : numeric
        Young's modulus of the reinforcing steel. [Pa]
    bar_area : numeric
        Cross-section area of one hoop bar. [m^2]
    bar_spacing : numeric
        Axial spacing of the hoop bars. [m]
    concrete_effectiveness : numeric
        Fraction of the concrete ring taken as carrying hoop stress, 0..1: 1 for sound
        (uncracked) concrete, lower for cracked concrete. [-]

    Returns
    -------
    numeric
        Equivalent steel thickness, to use with ``pipe_modulus = steel_modulus``. [m]

    Notes
    -----
    .. math:: e_e = \\eta\\,\\frac{E_c}{E_s} e_c + \\frac{A_s}{l_s}

    Chaudhry (2014) chapter 2 [2]_ (from memory; Chaudhry notes that a cracked concrete
    ring contributes less, here through :math:`\\eta`). Full effectiveness gives the
    stiffer wall and so the higher wave speed and the larger Joukowsky rise.
    """
    ec = _positive(concrete_thickness, "concrete_thickness")
    mc = _positive(concrete_modulus, "concrete_modulus")
    ms = _positive(steel_modulus, "steel_modulus")
    area = _as_float_array(bar_area, "bar_area")
    _require(np.isfinite(area) & (area >= 0.0), "bar_area", "finite and >= 0", bar_area)
    spacing = _positive(bar_spacing, "bar_spacing")
    eta = _as_float_array(concrete_effectiveness, "concrete_effectiveness")
    _require((eta >= 0.0) & (eta <= 1.0), "concrete_effectiveness", "in [0, 1]",
             concrete_effectiveness)
    result = eta * (mc / ms) * ec + area / spacing
    return _same_kind(result, concrete_thickness, concrete_modulus, steel_modulus, bar_area,
                      bar_spacing, concrete_effectiveness)


def equivalent_thickness_lined(steel_thickness, lining_thickness, lining_modulus,
                               steel_modulus, lining_effectiveness=1.0):
    """Equivalent steel thickness of a steel pipe with a concrete (or mortar) lining.

    Parameters
    ----------
    steel_thickness : numeric
        Steel shell thickness. [m]
    lining_thickness : numeric
        Lining thickness. [m]
    lining_modulus : numeric
        Young's modulus of the lining. [Pa]
    steel_modulus : numeric
        Young's modulus of the steel shell. [Pa]
    lining_effectiveness : numeric
        Fraction of the lining ring taken as carrying hoop stress, 0..1 (0 for a lining
        assumed cracked through). [-]

    Returns
    -------
    numeric
        Equivalent steel thickness, to use with ``pipe_modulus = steel_modulus``. [m]

    Notes
    -----
    .. math:: e_e = e_s + \\eta\\,\\frac{E_l}{E_s} e_l

    The two rings stretch together in the hoop direction, so their stiffnesses add; this is
    the same transformed-section idea as the reinforced-concrete form of Chaudhry (2014)
    chapter 2 [2]_ (from memory). Use the bore inside the lining as the diameter.
    """
    es = _positive(steel_thickness, "steel_thickness")
    el = _as_float_array(lining_thickness, "lining_thickness")
    _require(np.isfinite(el) & (el >= 0.0), "lining_thickness", "finite and >= 0",
             lining_thickness)
    ml = _positive(lining_modulus, "lining_modulus")
    ms = _positive(steel_modulus, "steel_modulus")
    eta = _as_float_array(lining_effectiveness, "lining_effectiveness")
    _require((eta >= 0.0) & (eta <= 1.0), "lining_effectiveness", "in [0, 1]",
             lining_effectiveness)
    result = es + eta * (ml / ms) * el
    return _same_kind(result, steel_thickness, lining_thickness, lining_modulus,
                      steel_modulus, lining_effectiveness)


def viscoelastic_effective_modulus(instantaneous_modulus, creep_compliances,
                                   retardation_times, load_duration):
    """Effective Young's modulus of a viscoelastic (HDPE, PVC) wall for a load duration.

    Parameters
    ----------
    instantaneous_modulus : float
        Instantaneous (short-term) modulus, 1/J0. [Pa]
    creep_compliances : sequence of float
        Creep compliances J_k of the Kelvin-Voigt elements. [1/Pa]
    retardation_times : sequence of float
        Retardation times tau_k of the same elements. [s]
    load_duration : numeric
        Duration of the loading, e.g. the pipe period 2L/a or the closure time. [s]

    Returns
    -------
    numeric
        Effective modulus 1/J(t). [Pa]

    Notes
    -----
    Generalised Kelvin-Voigt creep function (Covas et al. 2004 [3]_):

    .. math:: J(t) = J_0 + \\sum_k J_k (1 - e^{-t/\\tau_k}),\\qquad E_{eff} = 1/J(t)

    Convention used in this package: the elastic wave speed of a plastic pipe takes the
    short-term (instantaneous) modulus, which sets the speed of the wave front and so the
    first Joukowsky rise. Creep then damps and spreads later peaks, which an elastic
    method-of-characteristics run does not model; evaluating this function at the
    closure time gives a lower modulus for a sensitivity run. Creep coefficients depend on
    the resin and on temperature and must come from tests of the pipe in question.
    """
    e0 = float(_positive(instantaneous_modulus, "instantaneous_modulus"))
    jk = _as_float_array(creep_compliances, "creep_compliances").ravel()
    tk = _as_float_array(retardation_times, "retardation_times").ravel()
    if jk.shape != tk.shape:
        raise ValueError("creep_compliances and retardation_times must have the same length; "
                         f"got {jk.size} and {tk.size}")
    _require(np.isfinite(jk) & (jk >= 0.0), "creep_compliances", "finite and >= 0",
             creep_compliances)
    _require(np.isfinite(tk) & (tk > 0.0), "retardation_times", "finite and > 0",
             retardation_times)
    t = _as_float_array(load_duration, "load_duration")
    _require(np.isfinite(t) & (t >= 0.0), "load_duration", "finite and >= 0", load_duration)
    creep = np.sum(jk * (1.0 - np.exp(-t[..., None] / tk)), axis=-1)
    return _same_kind(1.0 / (1.0 / e0 + creep), load_duration)


# --------------------------------------------------------------------------- free gas
def air_content_wave_speed(wave_speed, void_fraction, pressure, density,
                           polytropic_index=1.0, bulk_modulus=None,
                           valid_range=GAS_WATER_WAVE_SPEED_RANGE):
    """Wave speed of a liquid carrying a small fraction of free gas (air).

    Parameters
    ----------
    wave_speed : numeric
        Wave speed of the gas-free liquid in the same pipe (Korteweg). [m/s]
    void_fraction : numeric
        Volume fraction of free gas at ``pressure``, 0 <= alpha < 1. [-]
    pressure : numeric
        Absolute pressure at which ``void_fraction`` holds. [Pa]
    density : numeric
        Liquid density. [kg/m^3]
    polytropic_index : numeric
        Polytropic exponent of the gas: 1 isothermal (default), 1.4 adiabatic air. [-]
    bulk_modulus : numeric, optional
        Liquid bulk modulus; when given, the liquid displaced by gas no longer counts
        as liquid compressibility (a term of relative size ``n p / K``). [Pa]
    valid_range : tuple of float
        Accepted (low, high) wave speed of the mixture. [m/s]

    Returns
    -------
    numeric
        Mixture wave speed. [m/s]

    Notes
    -----
    The mixture compressibility adds the gas compressibility :math:`\\alpha/(n p)` to that of
    liquid and wall, :math:`1/(\\rho a_0^2)`; the mass of the gas is neglected so that
    :math:`\\rho_m = (1-\\alpha)\\rho`:

    .. math:: a = \\frac{a_0}{\\sqrt{(1-\\alpha)\\left[1 + \\alpha\\,\\rho a_0^2
              \\left(\\frac{1}{n p} - \\frac{1}{K}\\right)\\right]}}

    This is the homogeneous gas-liquid mixture of Wylie and Streeter (1993) [1]_ (their
    equation for free gas in a liquid, from memory), and for a rigid pipe it is Wood's
    equation with negligible gas density.
    """
    a0 = validate_wave_speed(wave_speed, WATER_WAVE_SPEED_RANGE)
    alpha = _as_float_array(void_fraction, "void_fraction")
    _require(np.isfinite(alpha) & (alpha >= 0.0) & (alpha < 1.0), "void_fraction",
             "in [0, 1)", void_fraction)
    p = _positive(pressure, "pressure (absolute)")
    rho = _positive(density, "density")
    n = _positive(polytropic_index, "polytropic_index")
    inv_k = 0.0 if bulk_modulus is None else 1.0 / _positive(bulk_modulus, "bulk_modulus")
    stiffness = 1.0 + alpha * rho * a0 * a0 * (1.0 / (n * p) - inv_k)
    a = a0 / np.sqrt((1.0 - alpha) * stiffness)
    validate_wave_speed(a, valid_range, name="computed mixture wave speed")
    return _same_kind(a, wave_speed, void_fraction, pressure, density)
