"""Properties of water and air at the site.

Liquid-water properties (density, viscosities, isentropic bulk modulus) come from the
IAPWS-IF97 region-1 equation and the IAPWS 2008 viscosity correlation at standard
atmospheric pressure; the saturation (vapour) pressure is the IAPWS-IF97 region-4 equation;
the atmospheric pressure at the site is the ISO 2533 standard atmosphere. All of them are
written out here in numpy, so that they vectorize and need no property library at run time
(the ``iapws`` package, IAPWS-95, is the reference the tests compare against).

All temperatures are water temperatures in degrees Celsius; everything else is SI.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from penstock.constants import CELSIUS_TO_KELVIN, GRAVITY, P_ATM_SEA_LEVEL

from ._numeric import same_kind as _restore_kind

__all__ = [
    "WaterProperties",
    "atmospheric_pressure",
    "bulk_modulus",
    "density",
    "dynamic_viscosity",
    "kinematic_viscosity",
    "vapour_pressure",
    "water_properties",
]

# --- ISO 2533:1975 standard atmosphere, troposphere --------------------------------------
#: Sea-level temperature of the standard atmosphere. [K] (ISO 2533:1975, Table 1)
_ISA_T0 = 288.15
#: Temperature lapse rate in the troposphere. [K/m] (ISO 2533:1975, Table 4)
_ISA_LAPSE = 0.0065
#: Specific gas constant of dry air, R*/M. [J/(kg K)] (ISO 2533:1975, Table 1)
_ISA_R_AIR = 287.05287
#: Nominal Earth radius used to convert geometric to geopotential altitude. [m]
#: (ISO 2533:1975, Table 1)
_ISA_EARTH_RADIUS = 6_356_766.0
#: Exponent g0/(R L) of the troposphere pressure law. [-] (= 5.255 879 8)
_ISA_EXPONENT = GRAVITY / (_ISA_R_AIR * _ISA_LAPSE)
#: Altitude range accepted by ``atmospheric_pressure``. [m]
ALTITUDE_RANGE = (-500.0, 11_000.0)

# --- IAPWS-IF97 region 4, coefficients n1..n10 of IAPWS R7-97(2012), Table 34 -------------
_IF97_N = (
    0.11670521452767e04,
    -0.72421316703206e06,
    -0.17073846940092e02,
    0.12020824702470e05,
    -0.32325550322333e07,
    0.14915108613530e02,
    -0.48232657361591e04,
    0.40511340542057e06,
    -0.23855557567849e00,
    0.65017534844798e03,
)
#: Reference pressure p* of IAPWS-IF97 eq. 30. [Pa]
_IF97_P_STAR = 1.0e6
#: Critical temperature of water, upper end of IAPWS-IF97 region 4. [degC] (647.096 K)
_CRITICAL_TEMPERATURE = 647.096 - CELSIUS_TO_KELVIN

# --- IAPWS-IF97 region 1, IAPWS R7-97(2012) section 5.1 ----------------------------------
#: Specific gas constant of water used by IAPWS-IF97, R7-97(2012) eq. 1. [J/(kg K)]
_IF97_R = 461.526
#: Reducing pressure p* of the region-1 equation, R7-97(2012) eq. 7. [Pa]
_IF97_R1_P_STAR = 16.53e6
#: Reducing temperature T* of the region-1 equation, R7-97(2012) eq. 7. [K]
_IF97_R1_T_STAR = 1386.0
#: Rows (I_i, J_i, n_i), i = 1..34, of R7-97(2012) Table 2 (region 1, eq. 7).
_IF97_R1_TABLE = (
    (0, -2, 0.14632971213167),
    (0, -1, -0.84548187169114),
    (0, 0, -0.37563603672040e1),
    (0, 1, 0.33855169168385e1),
    (0, 2, -0.95791963387872),
    (0, 3, 0.15772038513228),
    (0, 4, -0.16616417199501e-1),
    (0, 5, 0.81214629983568e-3),
    (1, -9, 0.28319080123804e-3),
    (1, -7, -0.60706301565874e-3),
    (1, -1, -0.18990068218419e-1),
    (1, 0, -0.32529748770505e-1),
    (1, 1, -0.21841717175414e-1),
    (1, 3, -0.52838357969930e-4),
    (2, -3, -0.47184321073267e-3),
    (2, 0, -0.30001780793026e-3),
    (2, 1, 0.47661393906987e-4),
    (2, 3, -0.44141845330846e-5),
    (2, 17, -0.72694996297594e-15),
    (3, -4, -0.31679644845054e-4),
    (3, 0, -0.28270797985312e-5),
    (3, 6, -0.85205128120103e-9),
    (4, -5, -0.22425281908000e-5),
    (4, -2, -0.65171222895601e-6),
    (4, 10, -0.14341729937924e-12),
    (5, -8, -0.40516996860117e-6),
    (8, -11, -0.12734301741641e-8),
    (8, -6, -0.17424871230634e-9),
    (21, -29, -0.68762131295531e-18),
    (23, -31, 0.14478307828521e-19),
    (29, -38, 0.26335781662795e-22),
    (30, -39, -0.11947622640071e-22),
    (31, -40, 0.18228094581404e-23),
    (32, -41, -0.93537087292458e-25),
)
_R1_I, _R1_J, _R1_N = np.array(_IF97_R1_TABLE, dtype=float).T

# --- IAPWS 2008 viscosity, IAPWS R12-08 ---------------------------------------------------
#: Reference viscosity mu*, temperature T* and density rho* of R12-08. [Pa s], [K], [kg/m^3]
_VISCOSITY_MU_STAR = 1.0e-6
_VISCOSITY_T_STAR = 647.096
_VISCOSITY_RHO_STAR = 322.0
#: Coefficients H_0..H_3 of the dilute-gas term mu0, R12-08 Table 1.
_MU0_TABLE = (1.67752, 2.20462, 0.6366564, -0.241605)
#: Rows (i, j, H_ij) of the finite-density term mu1, the 21 non-zero entries of R12-08
#: Table 2 (i = 0..5 is the power of 1/Tbar - 1, j = 0..6 that of rhobar - 1).
_MU1_TABLE = (
    (0, 0, 5.20094e-1),
    (1, 0, 8.50895e-2),
    (2, 0, -1.08374),
    (3, 0, -2.89555e-1),
    (0, 1, 2.22531e-1),
    (1, 1, 9.99115e-1),
    (2, 1, 1.88797),
    (3, 1, 1.26613),
    (5, 1, 1.20573e-1),
    (0, 2, -2.81378e-1),
    (1, 2, -9.06851e-1),
    (2, 2, -7.72479e-1),
    (3, 2, -4.89837e-1),
    (4, 2, -2.57040e-1),
    (0, 3, 1.61913e-1),
    (1, 3, 2.57399e-1),
    (0, 4, -3.25372e-2),
    (3, 4, 6.98452e-2),
    (4, 5, 8.72102e-3),
    (3, 6, -4.35673e-3),
    (5, 6, -5.93264e-4),
)
_MU0_H = np.array(_MU0_TABLE)
_MU0_I = np.arange(len(_MU0_TABLE), dtype=float)
_MU1_I, _MU1_J, _MU1_H = np.array(_MU1_TABLE, dtype=float).T

#: Water-temperature range accepted by the liquid-property functions. [degC]
TEMPERATURE_RANGE = (0.0, 100.0)


# --- numeric in, same kind out -----------------------------------------------------------
def _check_temperature(temperature, low, high):
    """Float array of ``temperature`` after checking it lies in ``[low, high]`` degC."""
    values = np.asarray(temperature, dtype=float)
    if values.size and not (np.min(values) >= low and np.max(values) <= high):
        raise ValueError(
            f"temperature must lie in {low:g}..{high:g} degC (water temperature); "
            f"got values from {np.min(values):g} to {np.max(values):g}"
        )
    return values


# --- atmosphere --------------------------------------------------------------------------
def atmospheric_pressure(altitude):
    """Atmospheric pressure of the ISO 2533 standard atmosphere at a site elevation.

    Parameters
    ----------
    altitude : numeric
        Geometric elevation above mean sea level, -500 to 11 000. [m]

    Returns
    -------
    numeric
        Static air pressure of the standard atmosphere. [Pa]

    Raises
    ------
    ValueError
        If any altitude lies outside -500..11 000 m (the troposphere layer).

    Notes
    -----
    The geometric elevation :math:`z` is first converted to geopotential altitude
    :math:`H = r z / (r + z)` with :math:`r` = 6 356 766 m. In the troposphere the
    temperature falls linearly, :math:`T = T_0 - L H`, and hydrostatic balance gives

    .. math:: p = p_0 \\left(1 - \\frac{L H}{T_0}\\right)^{g_0 / (R L)}

    with :math:`p_0` = 101 325 Pa, :math:`T_0` = 288.15 K, :math:`L` = 0.0065 K/m,
    :math:`g_0` = 9.806 65 m/s^2 and :math:`R` = 287.052 87 J/(kg K), so the exponent is
    5.255 88. Real weather moves the pressure by a few per cent about this value.

    References
    ----------
    .. [1] ISO 2533:1975, *Standard Atmosphere*. International Organization for
       Standardization, Geneva, 1975; Table 1 (constants), Table 4 (layers), section 2.3
       (geopotential altitude) and the pressure equation for a layer with a non-zero
       temperature gradient.
    .. [2] ICAO, *Manual of the ICAO Standard Atmosphere (extended to 80 kilometres)*,
       Doc 7488/3, 3rd ed., 1993 (identical to ISO 2533 up to 32 km).

    Examples
    --------
    >>> round(atmospheric_pressure(0.0), 1)
    101325.0
    """
    elevation = np.asarray(altitude, dtype=float)
    low, high = ALTITUDE_RANGE
    if elevation.size and not (np.min(elevation) >= low and np.max(elevation) <= high):
        raise ValueError(
            f"altitude must lie in {low:g}..{high:g} m above mean sea level (ISO 2533 "
            f"troposphere); got values from {np.min(elevation):g} to {np.max(elevation):g} m"
        )
    geopotential = _ISA_EARTH_RADIUS * elevation / (_ISA_EARTH_RADIUS + elevation)
    pressure = P_ATM_SEA_LEVEL * (1.0 - _ISA_LAPSE * geopotential / _ISA_T0) ** _ISA_EXPONENT
    return _restore_kind(pressure, altitude)


# --- saturation pressure -----------------------------------------------------------------
def vapour_pressure(temperature):
    """Saturation (vapour) pressure of water, IAPWS-IF97 region-4 equation.

    Parameters
    ----------
    temperature : numeric
        Water temperature, 0 to 373.946 (the critical point). [degC]

    Returns
    -------
    numeric
        Saturation pressure of water at that temperature. [Pa]

    Raises
    ------
    ValueError
        If any temperature lies outside 0..373.946 degC.

    Notes
    -----
    IAPWS-IF97 eq. 30 with :math:`\\vartheta = T + n_9 / (T - n_{10})` (T in kelvin):

    .. math::
        A = \\vartheta^2 + n_1 \\vartheta + n_2, \\quad
        B = n_3 \\vartheta^2 + n_4 \\vartheta + n_5, \\quad
        C = n_6 \\vartheta^2 + n_7 \\vartheta + n_8

    .. math:: p_s = p^* \\left[\\frac{2 C}{-B + (B^2 - 4 A C)^{1/2}}\\right]^4

    with :math:`p^*` = 1 MPa and the coefficients of IF97 Table 34, written out in numpy
    so that it vectorizes.

    References
    ----------
    .. [1] IAPWS R7-97(2012), *Revised Release on the IAPWS Industrial Formulation 1997 for
       the Thermodynamic Properties of Water and Steam*, International Association for the
       Properties of Water and Steam, 2012; section 8.1, eq. 30 and Table 34.
    .. [2] Wagner, W. et al., "The IAPWS Industrial Formulation 1997 for the Thermodynamic
       Properties of Water and Steam", *J. Eng. Gas Turbines Power* 122(1), 150-184, 2000.
       DOI: 10.1115/1.483186

    Examples
    --------
    >>> round(vapour_pressure(100.0), 0)
    101418.0
    """
    celsius = _check_temperature(temperature, 0.0, _CRITICAL_TEMPERATURE)
    pressure = _saturation_pressure(celsius + CELSIUS_TO_KELVIN)
    return _restore_kind(pressure, temperature)



# --- the published models, vectorized ----------------------------------------------------
def _saturation_pressure(kelvin):
    """Saturation pressure [Pa] at ``kelvin`` [K]: IAPWS-IF97 eq. 30, no range check."""
    n1, n2, n3, n4, n5, n6, n7, n8, n9, n10 = _IF97_N
    theta = kelvin + n9 / (kelvin - n10)
    theta2 = theta * theta
    a = theta2 + n1 * theta + n2
    b = n3 * theta2 + n4 * theta + n5
    c = n6 * theta2 + n7 * theta + n8
    return _IF97_P_STAR * (2.0 * c / (-b + np.sqrt(b * b - 4.0 * a * c))) ** 4


def _if97_region1(temperature_K, pressure_Pa):
    """Density and speed of sound of liquid water, IAPWS-IF97 region 1.

    Parameters
    ----------
    temperature_K : numeric
        Temperature, 273.15 to 623.15. [K]
    pressure_Pa : numeric
        Pressure, from the saturation pressure at that temperature up to 100 MPa. [Pa]

    Returns
    -------
    density : ndarray
        Density :math:`\\rho = 1/v`, broadcast over the two inputs. [kg/m^3]
    speed_of_sound : ndarray
        Speed of sound :math:`w`. [m/s]

    Notes
    -----
    The dimensionless Gibbs free energy of region 1 (IF97 eq. 7),

    .. math:: \\gamma(\\pi, \\tau) = \\sum_{i=1}^{34} n_i\\,(7.1 - \\pi)^{I_i}
              \\,(\\tau - 1.222)^{J_i},

    with :math:`\\pi = p / p^*`, :math:`\\tau = T^* / T`, :math:`p^*` = 16.53 MPa,
    :math:`T^*` = 1386 K and the coefficients of IF97 Table 2. With the derivatives of
    IF97 Table 4, the property relations of IF97 Table 3 give

    .. math:: v = \\frac{R T}{p}\\,\\pi\\,\\gamma_\\pi, \\qquad
              w^2 = R T\\,\\frac{\\gamma_\\pi^2}
              {(\\gamma_\\pi - \\tau\\gamma_{\\pi\\tau})^2 / (\\tau^2\\gamma_{\\tau\\tau})
              - \\gamma_{\\pi\\pi}}

    with :math:`R` = 461.526 J/(kg K) (IF97 eq. 1). The range is not checked here; the
    callers stay inside region 1.

    References
    ----------
    .. [1] IAPWS R7-97(2012), *Revised Release on the IAPWS Industrial Formulation 1997 for
       the Thermodynamic Properties of Water and Steam*, International Association for the
       Properties of Water and Steam, 2012; section 5.1, eq. 7, Tables 2, 3 and 4
       (verification values: Table 5).
    .. [2] Wagner, W. et al., "The IAPWS Industrial Formulation 1997 for the Thermodynamic
       Properties of Water and Steam", *J. Eng. Gas Turbines Power* 122(1), 150-184, 2000.
       DOI: 10.1115/1.483186
    """
    kelvin, pressure = np.broadcast_arrays(np.asarray(temperature_K, dtype=float),
                                           np.asarray(pressure_Pa, dtype=float))
    pi = pressure / _IF97_R1_P_STAR
    tau = _IF97_R1_T_STAR / kelvin
    a = (7.1 - pi)[..., np.newaxis]
    b = (tau - 1.222)[..., np.newaxis]
    # term_i = n_i a^I_i b^J_i; each derivative of Table 4 is a weighted sum of the terms
    term = _R1_N * a**_R1_I * b**_R1_J
    g_pi = -np.sum(term * (_R1_I / a), axis=-1)
    g_pipi = np.sum(term * (_R1_I * (_R1_I - 1.0) / (a * a)), axis=-1)
    g_tautau = np.sum(term * (_R1_J * (_R1_J - 1.0) / (b * b)), axis=-1)
    g_pitau = -np.sum(term * (_R1_I * _R1_J / (a * b)), axis=-1)
    rt = _IF97_R * kelvin
    density = pressure / (rt * pi * g_pi)
    # products, not powers: numpy scalars and arrays then round alike
    shift = g_pi - tau * g_pitau
    w2 = rt * g_pi * g_pi / (shift * shift / (tau * tau * g_tautau) - g_pipi)
    return density, np.sqrt(w2)


def _viscosity_2008(temperature_K, density):
    """Dynamic viscosity of water from temperature and density, IAPWS 2008.

    Parameters
    ----------
    temperature_K : numeric
        Temperature. [K]
    density : numeric
        Density of the water at that temperature. [kg/m^3]

    Returns
    -------
    ndarray
        Dynamic viscosity, broadcast over the two inputs. [Pa s]

    Notes
    -----
    IAPWS R12-08 eqs. 10 to 12 with :math:`\\bar T = T / T^*`,
    :math:`\\bar\\rho = \\rho / \\rho^*`, :math:`T^*` = 647.096 K, :math:`\\rho^*` =
    322 kg/m^3 and :math:`\\mu^*` = 1e-6 Pa s:

    .. math:: \\mu = \\mu^*\\,\\bar\\mu_0(\\bar T)\\,\\bar\\mu_1(\\bar T, \\bar\\rho)
              \\,\\bar\\mu_2, \\qquad
              \\bar\\mu_0 = \\frac{100\\,\\sqrt{\\bar T}}{\\sum_{i=0}^{3} H_i / \\bar T^i}

    .. math:: \\bar\\mu_1 = \\exp\\left[\\bar\\rho \\sum_{i=0}^{5}
              \\left(\\frac{1}{\\bar T} - 1\\right)^i \\sum_{j=0}^{6} H_{ij}
              (\\bar\\rho - 1)^j\\right]

    with :math:`H_i` of R12-08 Table 1 and the 21 non-zero :math:`H_{ij}` of Table 2. The
    critical enhancement :math:`\\bar\\mu_2` is set to 1: it is negligible except very
    close to the critical point (374 degC, 322 kg/m^3), far from liquid water at 0..100
    degC, and IAPWS says it should be omitted for industrial use.

    References
    ----------
    .. [1] IAPWS R12-08, *Release on the IAPWS Formulation 2008 for the Viscosity of
       Ordinary Water Substance*, International Association for the Properties of Water
       and Steam, 2008; eqs. 10 to 12, Tables 1 and 2 (verification values: Table 4).
    .. [2] Huber, M. L. et al., "New International Formulation for the Viscosity of H2O",
       *J. Phys. Chem. Ref. Data* 38(2), 101-125, 2009. DOI: 10.1063/1.3088050
    """
    tbar, rhobar = np.broadcast_arrays(np.asarray(temperature_K, dtype=float)
                                       / _VISCOSITY_T_STAR,
                                       np.asarray(density, dtype=float)
                                       / _VISCOSITY_RHO_STAR)
    mu0 = 100.0 * np.sqrt(tbar) / np.sum(_MU0_H / tbar[..., np.newaxis] ** _MU0_I, axis=-1)
    x = (1.0 / tbar - 1.0)[..., np.newaxis]
    y = (rhobar - 1.0)[..., np.newaxis]
    mu1 = np.exp(rhobar * np.sum(_MU1_H * x**_MU1_I * y**_MU1_J, axis=-1))
    return _VISCOSITY_MU_STAR * mu0 * mu1


# --- liquid properties: IAPWS-IF97 region 1 and IAPWS 2008 viscosity ---------------------
def _liquid_state(celsius):
    """(density [kg/m^3], dynamic viscosity [Pa s], speed of sound [m/s]) of liquid water.

    Vectorized over ``celsius`` (already checked to lie in 0..100 degC). IAPWS-IF97 region 1
    at p = max(101 325 Pa, p_s(T)): at standard atmospheric pressure up to the normal
    boiling point (99.97 degC), the saturated liquid above it. The viscosity is IAPWS 2008
    with the region-1 density.
    """
    kelvin = np.asarray(celsius, dtype=float) + CELSIUS_TO_KELVIN
    pressure = np.maximum(P_ATM_SEA_LEVEL, _saturation_pressure(kelvin))
    rho, sound_speed = _if97_region1(kelvin, pressure)
    return rho, _viscosity_2008(kelvin, rho), sound_speed


def _liquid_property(temperature, combine):
    """``combine(density, dynamic_viscosity, speed_of_sound)`` of the water, same kind out."""
    celsius = _check_temperature(temperature, *TEMPERATURE_RANGE)
    return _restore_kind(combine(*_liquid_state(celsius)), temperature)


_LIQUID_NOTE = """
    The equations are written out in numpy and evaluated for the whole input at once (no
    property library is used at run time). The pressure is 101 325 Pa: the pressure in a
    penstock changes liquid properties very little (about 0.05 % in density per 100 m of
    head), so the atmospheric-pressure value is used throughout. Above the normal boiling
    point (99.97 degC), where the saturation pressure exceeds 101 325 Pa, the equations are
    evaluated at the saturation pressure, which gives the saturated liquid (IF97 region 1
    is valid down to the saturation pressure). IF97 is the industrial formulation; over
    0..100 degC at this pressure its density and speed of sound stay within 2e-5 and
    5e-5 (relative) of the scientific formulation IAPWS-95 (measured in the tests against
    the ``iapws`` package).
"""

_LIQUID_REFERENCES = """
    References
    ----------
    .. [1] IAPWS R7-97(2012), *Revised Release on the IAPWS Industrial Formulation 1997 for
       the Thermodynamic Properties of Water and Steam*, International Association for the
       Properties of Water and Steam, 2012; section 5.1 (region 1), eq. 7 and Tables 2 to 4.
    .. [2] Wagner, W. et al., "The IAPWS Industrial Formulation 1997 for the Thermodynamic
       Properties of Water and Steam", *J. Eng. Gas Turbines Power* 122(1), 150-184, 2000.
       DOI: 10.1115/1.483186
    .. [3] IAPWS R12-08, *Release on the IAPWS Formulation 2008 for the Viscosity of
       Ordinary Water Substance*, International Association for the Properties of Water
       and Steam, 2008; eqs. 10 to 12 and Tables 1 and 2.
    .. [4] Huber, M. L. et al., "New International Formulation for the Viscosity of H2O",
       *J. Phys. Chem. Ref. Data* 38(2), 101-125, 2009. DOI: 10.1063/1.3088050
"""


def density(temperature):
    """Density of liquid water at standard atmospheric pressure (IAPWS-IF97).

    Parameters
    ----------
    temperature : numeric
        Water temperature, 0 to 100. [degC]

    Returns
    -------
    numeric
        Density. [kg/m^3]

    Raises
    ------
    ValueError
        If any temperature lies outside 0..100 degC.

    Notes
    -----
    :math:`\\rho = 1/v` with the specific volume :math:`v = (R T / p)\\,\\pi\\,\\gamma_\\pi`
    of the IAPWS-IF97 region-1 Gibbs free-energy equation, at p = 101 325 Pa.
    """
    return _liquid_property(temperature, lambda rho, mu, w: rho)


def dynamic_viscosity(temperature):
    """Dynamic viscosity of liquid water at standard atmospheric pressure (IAPWS 2008).

    Parameters
    ----------
    temperature : numeric
        Water temperature, 0 to 100. [degC]

    Returns
    -------
    numeric
        Dynamic viscosity. [Pa s]

    Raises
    ------
    ValueError
        If any temperature lies outside 0..100 degC.

    Notes
    -----
    :math:`\\mu = \\mu^*\\,\\bar\\mu_0(\\bar T)\\,\\bar\\mu_1(\\bar T, \\bar\\rho)` (IAPWS 2008)
    with the critical enhancement :math:`\\bar\\mu_2` set to 1, and :math:`\\rho` the
    IAPWS-IF97 region-1 density at p = 101 325 Pa (see :func:`density`).
    """
    return _liquid_property(temperature, lambda rho, mu, w: mu)


def kinematic_viscosity(temperature):
    """Kinematic viscosity of liquid water at standard atmospheric pressure.

    Parameters
    ----------
    temperature : numeric
        Water temperature, 0 to 100. [degC]

    Returns
    -------
    numeric
        Kinematic viscosity. [m^2/s]

    Raises
    ------
    ValueError
        If any temperature lies outside 0..100 degC.

    Notes
    -----
    :math:`\\nu = \\mu / \\rho`, both at p = 101 325 Pa (IAPWS 2008 viscosity over the
    IAPWS-IF97 region-1 density).
    """
    return _liquid_property(temperature, lambda rho, mu, w: mu / rho)


def bulk_modulus(temperature):
    """Isentropic bulk modulus of liquid water at standard atmospheric pressure.

    Parameters
    ----------
    temperature : numeric
        Water temperature, 0 to 100. [degC]

    Returns
    -------
    numeric
        Isentropic (adiabatic) bulk modulus. [Pa]

    Raises
    ------
    ValueError
        If any temperature lies outside 0..100 degC.

    Notes
    -----
    :math:`K_s = \\rho\\,w^2`, with the density :math:`\\rho` and the speed of sound
    :math:`w` of the IAPWS-IF97 region-1 equation at p = 101 325 Pa. The isentropic modulus
    is the one that governs pressure waves (water hammer); it exceeds the isothermal
    modulus by the ratio of specific heats (about 0.7 % at 20 degC).
    """
    return _liquid_property(temperature, lambda rho, mu, w: rho * w * w)


for _function in (density, dynamic_viscosity, kinematic_viscosity, bulk_modulus):
    if _function.__doc__:  # docstrings are stripped under python -OO
        _function.__doc__ += _LIQUID_NOTE + _LIQUID_REFERENCES
del _function


# --- everything at once ------------------------------------------------------------------
@dataclass(frozen=True)
class WaterProperties:
    """Water and air properties for one site (SI units, temperature in degC).

    Attributes
    ----------
    temperature : float
        Water temperature. [degC]
    altitude : float
        Site elevation above mean sea level. [m]
    density : float
        Density of the water. [kg/m^3]
    dynamic_viscosity : float
        Dynamic viscosity of the water. [Pa s]
    kinematic_viscosity : float
        Kinematic viscosity of the water. [m^2/s]
    vapour_pressure : float
        Saturation pressure of the water. [Pa]
    bulk_modulus : float
        Isentropic bulk modulus of the water. [Pa]
    atmospheric_pressure : float
        Standard-atmosphere air pressure at the site elevation. [Pa]
    """

    temperature: float
    altitude: float
    density: float
    dynamic_viscosity: float
    kinematic_viscosity: float
    vapour_pressure: float
    bulk_modulus: float
    atmospheric_pressure: float

    def head(self, pressure):
        """Pressure [Pa] as a head of this water, p/(ρg). [m]"""
        return np.asarray(pressure, dtype=float) / (self.density * GRAVITY)

    def pressure(self, head):
        """Head of this water [m] as a pressure, ρgh. [Pa]"""
        return self.density * GRAVITY * np.asarray(head, dtype=float)

    @property
    def atmospheric_head(self) -> float:
        """The site's atmospheric pressure as a head of this water. [m]"""
        return float(self.head(self.atmospheric_pressure))

    @property
    def vapour_head(self) -> float:
        """The vapour pressure as an absolute head of this water. [m]"""
        return float(self.head(self.vapour_pressure))


def water_properties(temperature, altitude):
    """Collect the water and air properties of a site.

    Parameters
    ----------
    temperature : numeric
        Water temperature, 0 to 100. [degC]
    altitude : numeric
        Geometric elevation of the site above mean sea level, -500 to 11 000. [m]

    Returns
    -------
    WaterProperties
        Frozen record of the properties (floats for scalar input, arrays for arrays).

    Raises
    ------
    ValueError
        If the temperature or the altitude is out of range.

    Notes
    -----
    Liquid properties are at 101 325 Pa (see :func:`density`); the atmospheric pressure is
    that of the ISO 2533 standard atmosphere at the site elevation.

    References
    ----------
    .. [1] See :func:`density`, :func:`vapour_pressure` and :func:`atmospheric_pressure`.

    Examples
    --------
    >>> site = water_properties(10.0, 0.0)
    >>> round(site.density, 1)
    999.7
    """
    return WaterProperties(
        temperature=_restore_kind(np.asarray(temperature, dtype=float), temperature),
        altitude=_restore_kind(np.asarray(altitude, dtype=float), altitude),
        density=density(temperature),
        dynamic_viscosity=dynamic_viscosity(temperature),
        kinematic_viscosity=kinematic_viscosity(temperature),
        vapour_pressure=vapour_pressure(temperature),
        bulk_modulus=bulk_modulus(temperature),
        atmospheric_pressure=atmospheric_pressure(altitude),
    )
