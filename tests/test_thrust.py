"""Tests of penstock.thrust against a published worked example and the momentum balance.

Worked example: "Pipe Bends and Thrust Block Forces", The Engineering ToolBox, as
reproduced at https://www.snipperoo.com/essay/pipes: a 45° bend of 114 mm bore,
water at 1000 kg/m^3 and 20 m/s gives R = 3125 N from the momentum alone (Rx 1196 N,
Ry 2887 N); the same bend at 100 kPa gauge gives R = 781 N from the pressure alone
(Rx 299 N, Ry 722 N).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import thrust
from penstock.constants import GRAVITY

BORE = math.pi * 0.114**2 / 4.0
BEND = math.radians(45.0)


def test_momentum_alone_is_the_published_example():
    q = 20.0 * BORE
    f = thrust.fitting_thrust(0.0, BORE, BEND, flow=q, density=1000.0)
    assert f == pytest.approx(3125.0, abs=1.0)           # published, rounded to 1 N
    assert f == pytest.approx(math.hypot(1196.0, 2887.0), abs=1.5)


def test_pressure_alone_is_the_published_example():
    f = thrust.fitting_thrust(100e3, BORE, BEND)
    assert f == pytest.approx(781.0, abs=1.0)
    assert f == pytest.approx(math.hypot(299.0, 722.0), abs=1.0)


@settings(max_examples=80, deadline=None)
@given(st.floats(0.0, 5e6), st.floats(0.01, 10.0), st.floats(0.0, math.pi),
       st.floats(0.0, 50.0), st.floats(0.2, 5.0), st.floats(0.0, 5e6))
def test_thrust_is_the_momentum_balance(p, area, angle, q, ratio, p2):
    rho = 999.0
    one = thrust.fitting_thrust(p, area, angle, flow=q, density=rho)
    # one bore: 2 (pA + rho Q V) sin(theta / 2)
    assert one == pytest.approx(2 * (p * area + rho * q * q / area) * math.sin(angle / 2),
                                rel=1e-9, abs=1e-6)
    # a straight reducer: the difference of the two end forces along the axis
    a2 = area / ratio
    straight = thrust.fitting_thrust(p, area, 0.0, flow=q, density=rho, pressure_out=p2,
                                     area_out=a2)
    assert straight == pytest.approx(abs(p * area + rho * q * q / area
                                         - p2 * a2 - rho * q * q / a2), rel=1e-7, abs=1e-3)
    # the two ends can be swapped
    back = thrust.fitting_thrust(p2, a2, angle, flow=q, density=rho, pressure_out=p,
                                 area_out=area)
    there = thrust.fitting_thrust(p, area, angle, flow=q, density=rho, pressure_out=p2,
                                  area_out=a2)
    assert back == pytest.approx(there, rel=1e-9, abs=1e-6)


def test_heads_are_pressures_of_water():
    f = thrust.fitting_thrust_at_heads(10.0, 1.0, BEND, density=1000.0)
    assert f == pytest.approx(thrust.fitting_thrust(1000.0 * GRAVITY * 10.0, 1.0, BEND))
    a = thrust.fitting_thrust_at_heads(np.array([1.0, 2.0]), 1.0, BEND)
    assert a[1] == pytest.approx(2 * a[0])


def test_thrust_refuses_bad_input():
    with pytest.raises(ValueError, match="angle"):
        thrust.fitting_thrust(1e5, 1.0, 4.0)
    with pytest.raises(ValueError, match="area_in"):
        thrust.fitting_thrust(1e5, 0.0, 1.0)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.0, 5e6), st.floats(0.0, 5e6), st.floats(0.05, 5.0), st.floats(0.05, 5.0),
       st.floats(0.0, math.pi), st.floats(0.0, 30.0))
def test_reducing_bend_is_the_vector_sum_of_its_end_forces(p1, p2, a1, a2, angle, q):
    # control volume between the two ends: the water pushes the fitting with
    # (p1 A1 + rho Q V1) along the inlet axis and takes (p2 A2 + rho Q V2) along the
    # outlet axis turned by theta; the force on the fitting is their vector difference
    rho = 1000.0
    a = p1 * a1 + rho * q * (q / a1)
    b = p2 * a2 + rho * q * (q / a2)
    fx, fy = a - b * math.cos(angle), -b * math.sin(angle)
    got = thrust.fitting_thrust(p1, a1, angle, flow=q, density=rho, pressure_out=p2,
                                area_out=a2)
    assert got == pytest.approx(math.hypot(fx, fy), rel=1e-9, abs=1e-6)
