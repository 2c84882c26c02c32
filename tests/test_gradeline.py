"""Grade lines: invariants of the energy equation, and checks against hand formulas.

Sources: the energy (Bernoulli) equation with Darcy–Weisbach losses as in any hydraulics
handbook, e.g. Streeter, Wylie & Bedford, Fluid Mechanics, 9th ed. (1998), ch. 5 and 10
(from memory); the free-outlet condition (pressure head zero at a free jet) is common practice.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import gradeline
from penstock.constants import GRAVITY

NU = 1.0e-6   # kinematic viscosity of water near 20 °C [m^2/s], CRC Handbook (from memory)


def simple_route(n=6, length=100.0, diameter=1.0, roughness=1e-4, k_entrance=0.5, drop=20.0):
    """Reservoir node, an entrance step, then n-1 uniform reaches."""
    x = np.linspace(0.0, length, n)
    z = np.linspace(100.0, 100.0 - drop, n)
    a = math.pi * diameter**2 / 4
    chainage = np.concatenate([[0.0], x])
    elevation = np.concatenate([[z[0]], z])
    node_area = np.concatenate([[np.inf], np.full(n, a)])
    seg_len = np.hypot(np.diff(x), np.diff(z))
    el_len = np.concatenate([[0.0], seg_len])
    el_d = np.full(n, diameter)
    el_r = np.concatenate([[0.0], np.full(n - 1, roughness)])
    el_k = np.concatenate([[k_entrance], np.zeros(n - 1)])
    el_a = np.full(n, a)
    return chainage, elevation, node_area, el_len, el_d, el_r, el_k, el_a


routes = st.builds(
    lambda n, L, D, eps, k, drop: simple_route(n, L, D, eps, k, drop),
    st.integers(2, 30), st.floats(10.0, 5000.0), st.floats(0.2, 5.0),
    st.floats(0.0, 3e-3), st.floats(0.0, 1.0), st.floats(0.0, 80.0),
)


@settings(max_examples=60, deadline=None)
@given(route=routes, q=st.lists(st.one_of(st.just(0.0), st.floats(1e-6, 30.0)), min_size=1,
                                max_size=5),
       hw=st.floats(101.0, 500.0))
def test_energy_equation_invariants(route, q, hw):
    g = gradeline.grade_lines(np.array(q), hw, *route, NU)
    # HGL = EGL − V²/2g at every node
    np.testing.assert_allclose(g.hydraulic, g.energy - g.velocity_head, rtol=0, atol=1e-9)
    # at the reservoir both lines sit at the water surface
    np.testing.assert_allclose(g.energy[:, 0], hw, rtol=0, atol=0)
    np.testing.assert_allclose(g.hydraulic[:, 0], hw, rtol=0, atol=0)
    # the EGL never rises in the direction of flow (no pump on the route)
    assert np.all(np.diff(g.energy, axis=1) <= 1e-12)
    # the EGL's total drop is the sum of the element losses
    np.testing.assert_allclose(hw - g.energy[:, -1],
                               (g.friction_loss + g.local_loss).sum(axis=1), rtol=1e-12,
                               atol=1e-12)


def test_no_flow_gives_static_lines():
    route = simple_route()
    g = gradeline.grade_lines([0.0], 120.0, *route, NU)
    np.testing.assert_array_equal(g.energy, 120.0)
    np.testing.assert_array_equal(g.hydraulic, 120.0)


def test_friction_loss_matches_darcy_weisbach_by_hand():
    # Darcy–Weisbach h = f·L/D·V²/2g with f from the Colebrook–White equation solved here
    # by plain fixed-point iteration (an independent hand computation of the same formula).
    route = simple_route(n=2, length=1000.0, diameter=1.2, roughness=4.5e-5, k_entrance=0.0,
                         drop=0.0)
    q = 2.4
    g = gradeline.grade_lines([q], 200.0, *route, NU)
    v = q / (math.pi * 1.2**2 / 4)
    re = v * 1.2 / NU
    f = 0.02
    for _ in range(100):
        f = (-2 * math.log10(4.5e-5 / 1.2 / 3.7 + 2.51 / (re * math.sqrt(f)))) ** -2
    expected = f * 1000.0 / 1.2 * v**2 / (2 * GRAVITY)
    assert g.friction_loss[0].sum() == pytest.approx(expected, rel=1e-10)


def test_entrance_step_and_velocity_head():
    route = simple_route(k_entrance=0.5)
    q = 3.0
    g = gradeline.grade_lines([q], 150.0, *route, NU)
    hv = (q / (math.pi / 4)) ** 2 / (2 * GRAVITY)
    # the EGL steps down by K·V²/2g at the entrance; the HGL by (1 + K)·V²/2g
    assert 150.0 - g.energy[0, 1] == pytest.approx(0.5 * hv, rel=1e-12)
    assert 150.0 - g.hydraulic[0, 1] == pytest.approx(1.5 * hv, rel=1e-12)


def test_halving_flow_quarters_friction_in_fully_rough_flow():
    # fully rough regime (Moody 1944): f independent of Re, so h ∝ Q²
    route = simple_route(n=2, length=500.0, diameter=0.5, roughness=5e-3, k_entrance=0.0)
    g = gradeline.grade_lines([4.0, 2.0], 150.0, *route, NU)
    ratio = g.friction_loss[0].sum() / g.friction_loss[1].sum()
    assert ratio == pytest.approx(4.0, rel=0.02)


@settings(max_examples=25, deadline=None)
@given(L=st.floats(50.0, 3000.0), D=st.floats(0.3, 3.0), drop=st.floats(5.0, 200.0),
       k=st.floats(0.0, 1.0))
def test_free_outlet_hgl_at_centreline(L, D, drop, k):
    # a pipe discharging a free jet: the HGL meets the pipe centreline at the outlet
    # (common practice), so the outlet pressure head is zero
    route = simple_route(n=5, length=L, diameter=D, roughness=1e-4, k_entrance=k, drop=drop)
    hw = 101.0
    q = gradeline.discharge_to_atmosphere(hw, *route, NU)
    g = gradeline.grade_lines([q], hw, *route, NU)
    assert abs(g.hydraulic[0, -1] - route[1][-1]) < 1e-8
    # and the jet's velocity head is what remains of the head after the losses
    assert g.velocity_head[0, -1] == pytest.approx(
        hw - route[1][-1] - (g.friction_loss + g.local_loss).sum(), rel=1e-8)


def test_free_outlet_refuses_outlet_above_headwater():
    route = simple_route(drop=0.0)
    with pytest.raises(ValueError, match="not below the headwater"):
        gradeline.discharge_to_atmosphere(99.0, *route, NU)


def test_flagged_stretches_interpolate_crossings():
    x = np.array([0.0, 10.0, 20.0, 30.0])
    p = np.array([2.0, -2.0, -1.0, 3.0])
    (s,) = gradeline.flagged_stretches(x, p, 0.0)
    assert s[0] == pytest.approx(5.0)      # linear crossing between 0 and 10
    assert s[1] == pytest.approx(22.5)     # between 20 and 30
    assert s[2] == -2.0 and s[3] == 10.0
    assert gradeline.flagged_stretches(x, p + 10, 0.0) == []


def test_gordon_submergence_coefficients():
    # Gordon (1970), Water Power 22(4): S = C·V·√d with C = 0.3 (symmetric) and 0.4
    # (asymmetric) in ft-s units (from memory); in SI C·√(1/0.3048) = 0.5431 and 0.7245.
    for approach, c_us in (("symmetric", 0.3), ("asymmetric", 0.4)):
        v_ft, d_ft = 10.0, 9.0
        s_ft = c_us * v_ft * math.sqrt(d_ft)
        s_m = gradeline.submergence_gordon(v_ft * 0.3048, d_ft * 0.3048, approach)
        assert s_m / 0.3048 == pytest.approx(s_ft, rel=1e-3)


def test_velocity_head_keeps_kind():
    assert isinstance(gradeline.velocity_head(1.0, 1.0), float)
    out = gradeline.velocity_head(np.array([1.0, 2.0]), 1.0)
    np.testing.assert_allclose(out, np.array([1.0, 4.0]) / (2 * GRAVITY))


def test_crown_pressure_head_is_half_a_diameter_and_the_drawdown_below():
    from penstock.gradeline import crown_pressure_head, mean_velocity

    p = crown_pressure_head(np.array([10.0, 4.0]), np.array([2.0, 1.0]), 1.5)
    np.testing.assert_allclose(p, [10.0 - 1.0 - 1.5, 4.0 - 0.5 - 1.5])
    with pytest.raises(ValueError):
        crown_pressure_head(1.0, np.inf)
    with pytest.raises(ValueError):
        crown_pressure_head(1.0, 1.0, -0.1)
    # continuity: 1 m^3/s through 1 m gives 4/pi m/s
    assert mean_velocity(1.0, 1.0) == pytest.approx(4.0 / np.pi, rel=1e-15)


# ---------------------------------------------------------------- loss interpolant
@settings(max_examples=40, deadline=None)
@given(c=st.floats(1e-3, 1e3), q=st.lists(st.floats(-50.0, 50.0), min_size=1, max_size=20))
def test_quadratic_loss_interpolant_reproduces_a_pure_quadratic_loss(c, q):
    grid = np.geomspace(0.01, 10.0, 30)
    loss = gradeline.quadratic_loss_interpolant(grid, c * grid**2)
    q = np.asarray(q)
    np.testing.assert_allclose(loss(q), c * q * np.abs(q), rtol=1e-12, atol=1e-300)


def test_quadratic_loss_interpolant_follows_darcy_weisbach_off_its_grid():
    # a 2 km, 1 m pipe with 0.1 mm roughness (Darcy-Weisbach with Colebrook-White, the
    # friction module that is checked against fluids): interpolation between 300 flows
    nu = 1.0e-6
    grid = np.geomspace(1e-3, 10.0, 300)
    from penstock import friction

    exact = friction.head_loss(grid, 1.0, 2000.0, 1e-4, nu)
    loss = gradeline.quadratic_loss_interpolant(grid, exact)
    q = np.linspace(0.05, 9.0, 211)
    np.testing.assert_allclose(loss(q), friction.head_loss(q, 1.0, 2000.0, 1e-4, nu),
                               rtol=1e-5)
    assert loss(0.0) == 0.0
    assert loss(-2.0) == pytest.approx(-float(friction.head_loss(2.0, 1.0, 2000.0, 1e-4, nu)),
                                       rel=1e-5)


@pytest.mark.parametrize("flow, head", [([1.0], [1.0]), ([2.0, 1.0], [1.0, 1.0]),
                                        ([0.0, 1.0], [0.0, 1.0]), ([1.0, 2.0], [1.0])])
def test_quadratic_loss_interpolant_refuses_a_bad_table(flow, head):
    with pytest.raises(ValueError, match="rising positive flows"):
        gradeline.quadratic_loss_interpolant(flow, head)
