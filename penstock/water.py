"""Properties of water and air at the site.

Liquid-water properties (density, viscosities, isentropic bulk modulus) come from the
IAPWS-95 formulation and the IAPWS 2008 viscosity correlation, evaluated through the
``iapws`` package at standard atmospheric pressure. The saturation (vapour) pressure is the
IAPWS-IF97 region-4 equation written out here so that it vectorizes, and the atmospheric
pressure at the site is the ISO 2533 standard atmosphere.

All temperatures are water temperatures in degrees Celsius; everything else is SI.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

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

    with :math:`p^*` = 1 MPa and the coefficients of IF97 Table 34. The equation is
    written out here (rather than called element by element) so that it vectorizes.

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
    n1, n2, n3, n4, n5, n6, n7, n8, n9, n10 = _IF97_N
    kelvin = celsius + CELSIUS_TO_KELVIN
    theta = kelvin + n9 / (kelvin - n10)
    theta2 = theta * theta
    a = theta2 + n1 * theta + n2
    b = n3 * theta2 + n4 * theta + n5
    c = n6 * theta2 + n7 * theta + n8
    pressure = _IF97_P_STAR * (2.0 * c / (-b + np.sqrt(b * b - 4.0 * a * c))) ** 4
    return _restore_kind(pressure, temperature)


# --- liquid properties from IAPWS-95 -----------------------------------------------------
@lru_cache(maxsize=512)
def _liquid_state(celsius: float) -> tuple[float, float, float]:
    """(density [kg/m^3], dynamic viscosity [Pa s], speed of sound [m/s]) of liquid water.

    Evaluated with IAPWS-95 at standard atmospheric pressure; above the normal boiling
    point (99.97 degC), where water at 101 325 Pa would be steam, the saturated liquid is
    used instead.
    """
    from iapws import IAPWS95  # runtime dependency; imported lazily to keep import light

    kelvin = celsius + CELSIUS_TO_KELVIN
    if vapour_pressure(celsius) < P_ATM_SEA_LEVEL:
        state = IAPWS95(T=kelvin, P=P_ATM_SEA_LEVEL * 1e-6)  # iapws takes MPa
    else:
        state = IAPWS95(T=kelvin, x=0.0)
    if "liquid" not in str(state.phase).lower():
        raise ValueError(
            f"temperature {celsius:g} degC: IAPWS-95 returned phase {state.phase!r}, "
            "expected liquid water"
        )
    return float(state.rho), float(state.mu), float(state.w)


def _liquid_property(temperature, combine):
    """Apply ``combine(density, dynamic_viscosity, speed_of_sound)`` per distinct temperature."""
    celsius = _check_temperature(temperature, *TEMPERATURE_RANGE)
    unique, inverse = np.unique(celsius, return_inverse=True)
    values = np.array([combine(*_liquid_state(float(t))) for t in unique], dtype=float)
    return _restore_kind(values[inverse].reshape(celsius.shape), temperature)


_LIQUID_REFERENCES = """
    References
    ----------
    .. [1] IAPWS R6-95(2018), *Revised Release on the IAPWS Formulation 1995 for the
       Thermodynamic Properties of Ordinary Water Substance for General and Scientific Use*,
       International Association for the Properties of Water and Steam, 2018.
    .. [2] Wagner, W. and Pruss, A., "The IAPWS Formulation 1995 for the Thermodynamic
       Properties of Ordinary Water Substance for General and Scientific Use",
       *J. Phys. Chem. Ref. Data* 31(2), 387-535, 2002. DOI: 10.1063/1.1461829
    .. [3] IAPWS R12-08, *Release on the IAPWS Formulation 2008 for the Viscosity of
       Ordinary Water Substance*, 2008; Huber, M. L. et al., *J. Phys. Chem. Ref. Data*
       38(2), 101-125, 2009. DOI: 10.1063/1.3088050
"""

_ELEMENTWISE_NOTE = """
    The value is computed with the ``iapws`` package at 101 325 Pa, element by element
    over the distinct temperatures of the input (scalar results are cached). That is fine
    for its use, once per case, but it is not meant for hot loops. The pressure in a
    penstock changes liquid properties very little (about 0.05 % in density per 100 m of
    head), so the atmospheric-pressure value is used throughout. Above the normal boiling
    point (99.97 degC) the saturated liquid is used.
"""


def density(temperature):
    """Density of liquid water at standard atmospheric pressure (IAPWS-95).

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
    :math:`\\rho(T, p)` from the IAPWS-95 Helmholtz free-energy equation at
    p = 101 325 Pa.
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
    :math:`\\mu = \\mu_0(T)\\,\\mu_1(T, \\rho)` (IAPWS 2008, critical enhancement
    negligible here), with :math:`\\rho` from IAPWS-95 at p = 101 325 Pa.
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
    IAPWS-95 density).
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
    :math:`w` from IAPWS-95 at p = 101 325 Pa. The isentropic modulus is the one that
    governs pressure waves (water hammer); it exceeds the isothermal modulus by the ratio
    of specific heats (about 0.7 % at 20 degC).
    """
    return _liquid_property(temperature, lambda rho, mu, w: rho * w * w)


for _function in (density, dynamic_viscosity, kinematic_viscosity, bulk_modulus):
    if _function.__doc__:  # docstrings are stripped under python -OO
        _function.__doc__ += _ELEMENTWISE_NOTE + _LIQUID_REFERENCES
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
