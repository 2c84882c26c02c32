"""Tests of penstock.water against standards, handbook tables and the iapws package."""

import dataclasses
import doctest

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws.iapws97 import _PSat_T  # reference implementation of IAPWS-IF97 eq. 30

from penstock import water
from penstock.water import (
    WaterProperties,
    atmospheric_pressure,
    bulk_modulus,
    density,
    dynamic_viscosity,
    kinematic_viscosity,
    vapour_pressure,
    water_properties,
)

EARTH_RADIUS = 6_356_766.0  # [m], ISO 2533:1975 Table 1


# --- atmosphere --------------------------------------------------------------------------
@pytest.mark.parametrize(
    "geopotential, pressure",
    [
        # ISO 2533:1975 / ICAO Doc 7488/3 standard-atmosphere table by geopotential
        # altitude H (from memory, 6 significant figures); tolerance 1e-5, tighter than
        # the 0.01 % the figures would need at 4 digits.
        (0.0, 101_325.0),
        (1000.0, 89_874.6),
        (2000.0, 79_495.2),
        (3000.0, 70_108.5),
        (5000.0, 54_019.9),
        (10_000.0, 26_436.3),
    ],
)
def test_atmospheric_pressure_iso2533_geopotential_table(geopotential, pressure):
    geometric = EARTH_RADIUS * geopotential / (EARTH_RADIUS - geopotential)  # ISO 2533, 2.3
    assert atmospheric_pressure(geometric) == pytest.approx(pressure, rel=1e-5)


@pytest.mark.parametrize(
    "geometric, pressure",
    [
        # U.S. Standard Atmosphere, 1976 (NOAA/NASA/USAF), Table I by geometric altitude,
        # identical to ISO 2533 below 32 km (from memory, 5-6 significant figures); 1e-5.
        (-500.0, 107_478.0),
        (1000.0, 89_876.0),
        (2000.0, 79_501.0),
    ],
)
def test_atmospheric_pressure_geometric_table(geometric, pressure):
    assert atmospheric_pressure(geometric) == pytest.approx(pressure, rel=1e-5)


def test_atmospheric_pressure_kinds():
    assert type(atmospheric_pressure(500)) is float
    values = atmospheric_pressure(np.array([0.0, 1000.0]))
    assert isinstance(values, np.ndarray) and values.shape == (2,)
    series = atmospheric_pressure(pd.Series([0.0, 500.0], index=["dam", "powerhouse"]))
    assert list(series.index) == ["dam", "powerhouse"]
    np.testing.assert_array_equal(values, [atmospheric_pressure(0.0), atmospheric_pressure(1e3)])


@pytest.mark.parametrize("altitude", [-501.0, 11_000.5, np.nan])
def test_atmospheric_pressure_out_of_range(altitude):
    with pytest.raises(ValueError, match=r"altitude must lie in -500\.\.11000 m"):
        atmospheric_pressure(altitude)


@settings(max_examples=50, deadline=None)
@given(low=st.floats(-500.0, 10_999.0), rise=st.floats(1.0, 5000.0))
def test_atmospheric_pressure_falls_with_altitude(low, rise):
    high = min(low + rise, 11_000.0)
    assert atmospheric_pressure(high) < atmospheric_pressure(low)


# --- vapour pressure ---------------------------------------------------------------------
def test_vapour_pressure_matches_iapws_package():
    # iapws.iapws97._PSat_T: the same IAPWS-IF97 eq. 30, element by element, in MPa.
    celsius = np.linspace(0.01, 100.0, 301)
    expected = np.array([_PSat_T(t + 273.15) * 1e6 for t in celsius])
    np.testing.assert_allclose(vapour_pressure(celsius), expected, rtol=1e-10, atol=0.0)


@pytest.mark.parametrize(
    "kelvin, megapascal",
    [
        # IAPWS R7-97(2012), Table 35: computer-program verification values of eq. 30
        # (9 significant figures).
        (300.0, 0.353658941e-2),
        (500.0, 0.263889776e1),
        (600.0, 0.123443146e2),
    ],
)
def test_vapour_pressure_if97_verification_table(kelvin, megapascal):
    assert vapour_pressure(kelvin - 273.15) == pytest.approx(megapascal * 1e6, rel=1e-8)


@pytest.mark.parametrize(
    "celsius, kilopascal",
    [
        # CRC Handbook of Chemistry and Physics, 97th ed. (2016), "Vapor pressure of water
        # from 0 to 370 C" (from memory, 5 significant figures); tolerance 0.05 %.
        (10.0, 1.2282),
        (20.0, 2.3393),
        (100.0, 101.42),
    ],
)
def test_vapour_pressure_handbook(celsius, kilopascal):
    assert vapour_pressure(celsius) == pytest.approx(kilopascal * 1e3, rel=5e-4)


def test_vapour_pressure_out_of_range():
    with pytest.raises(ValueError, match="temperature must lie in 0..373.946 degC"):
        vapour_pressure(-1.0)
    with pytest.raises(ValueError, match="temperature"):
        vapour_pressure([20.0, 400.0])


@settings(max_examples=50, deadline=None)
@given(t=st.floats(0.0, 99.0), rise=st.floats(0.01, 50.0))
def test_vapour_pressure_rises_with_temperature(t, rise):
    assert vapour_pressure(t + rise) > vapour_pressure(t)


# --- liquid properties -------------------------------------------------------------------
@pytest.mark.parametrize(
    "celsius, expected, tolerance",
    [
        # CRC Handbook of Chemistry and Physics, 97th ed. (2016), "Properties of water in
        # the range 0-100 C" (from memory); tolerance half a unit of the last digit.
        (4.0, 999.97, 0.005),
        (10.0, 999.70, 0.005),
        (20.0, 998.21, 0.005),
        (100.0, 958.35, 0.005),  # saturated liquid at 101.42 kPa
        # Rounded value widely quoted in handbooks (e.g. the brief's 998.2)
        (20.0, 998.2, 0.05),
    ],
)
def test_density_handbook(celsius, expected, tolerance):
    assert density(celsius) == pytest.approx(expected, abs=tolerance)


def test_density_maximum_near_four_degrees():
    # Maximum density of air-free water at 3.98 C (Kell, J. Chem. Eng. Data 20(1), 1975,
    # from memory); resolution of the scan 0.01 C.
    celsius = np.arange(3.0, 5.0, 0.01)
    assert celsius[np.argmax(density(celsius))] == pytest.approx(3.98, abs=0.02)


@pytest.mark.parametrize(
    "celsius, millipascal_second, tolerance",
    [
        # CRC Handbook of Chemistry and Physics, 97th ed. (2016), "Viscosity of water"
        # (from memory, 5 significant figures); tolerance half a unit of the last digit.
        (10.0, 1.3059, 0.00005),
        (20.0, 1.0016, 0.00005),
        # Classic 20 C value 1.002 mPa s (Swindells, Coe & Godfrey, J. Res. NBS 48(1),
        # 1952, from memory); four digits, so +-0.0005.
        (20.0, 1.002, 0.0005),
    ],
)
def test_dynamic_viscosity_handbook(celsius, millipascal_second, tolerance):
    assert dynamic_viscosity(celsius) * 1e3 == pytest.approx(millipascal_second, abs=tolerance)


def test_kinematic_viscosity_handbook_ratio():
    # CRC values at 20 C (above): 1.0016e-3 Pa s / 998.21 kg/m^3 = 1.00340e-6 m^2/s; each
    # factor is good to 5e-5 relative, so 1e-4.
    assert kinematic_viscosity(20.0) == pytest.approx(1.0016e-3 / 998.21, rel=1e-4)
    np.testing.assert_allclose(
        kinematic_viscosity([5.0, 15.0]),
        dynamic_viscosity([5.0, 15.0]) / density([5.0, 15.0]),
        rtol=1e-15,
    )


def test_bulk_modulus_from_speed_of_sound():
    # Speed of sound in pure water at 20 C: 1482.3 m/s (Del Grosso & Mader, J. Acoust.
    # Soc. Am. 52(5B), 1972, from memory), times CRC density 998.21 kg/m^3; K = rho c^2,
    # tolerance 0.02 % (1e-4 on c doubles in c^2).
    assert bulk_modulus(20.0) == pytest.approx(998.21 * 1482.3**2, rel=2e-4)


@pytest.mark.parametrize("function", [density, dynamic_viscosity, kinematic_viscosity,
                                      bulk_modulus])
def test_liquid_property_kinds_and_loop(function):
    celsius = np.array([[0.0, 4.0, 20.0], [20.0, 55.5, 100.0]])
    result = function(celsius)
    assert result.shape == celsius.shape
    np.testing.assert_array_equal(result, [[function(float(t)) for t in row] for row in celsius])
    assert type(function(20)) is float
    series = function(pd.Series([10.0, 20.0], index=["winter", "summer"]))
    assert list(series.index) == ["winter", "summer"]


@pytest.mark.parametrize("function", [density, dynamic_viscosity, kinematic_viscosity,
                                      bulk_modulus])
@pytest.mark.parametrize("celsius", [-0.5, 100.5, np.nan])
def test_liquid_property_out_of_range(function, celsius):
    with pytest.raises(ValueError, match=r"temperature must lie in 0\.\.100 degC"):
        function(celsius)


def test_scalar_calls_are_cached():
    water._liquid_state.cache_clear()
    density(17.25)
    dynamic_viscosity(17.25)
    bulk_modulus(17.25)
    info = water._liquid_state.cache_info()
    assert info.misses == 1 and info.hits == 2


@settings(max_examples=30, deadline=None)
@given(t=st.floats(5.0, 95.0), rise=st.floats(0.5, 5.0))
def test_viscosity_and_density_fall_above_four_degrees(t, rise):
    assert dynamic_viscosity(t + rise) < dynamic_viscosity(t)
    assert density(t + rise) < density(t)


# --- WaterProperties ---------------------------------------------------------------------
def test_water_properties_collects_the_functions():
    site = water_properties(12.0, 850.0)
    assert isinstance(site, WaterProperties)
    assert site.temperature == 12.0 and site.altitude == 850.0
    assert site.density == density(12.0)
    assert site.dynamic_viscosity == dynamic_viscosity(12.0)
    assert site.kinematic_viscosity == kinematic_viscosity(12.0)
    assert site.vapour_pressure == vapour_pressure(12.0)
    assert site.bulk_modulus == bulk_modulus(12.0)
    assert site.atmospheric_pressure == atmospheric_pressure(850.0)


def test_water_properties_is_frozen():
    site = water_properties(12.0, 0.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        site.density = 1000.0


def test_water_properties_rejects_bad_input():
    with pytest.raises(ValueError, match="temperature"):
        water_properties(120.0, 0.0)
    with pytest.raises(ValueError, match="altitude"):
        water_properties(10.0, 12_000.0)


# --- documentation -----------------------------------------------------------------------
# Docstrings against signatures and units: tests/test_docstrings.py.


def test_docstring_examples_run():
    result = doctest.testmod(water)
    assert result.attempted >= 3
    assert result.failed == 0
