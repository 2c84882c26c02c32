"""Tests of penstock.surge closed forms."""

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import surge
from penstock.constants import GRAVITY

FT = 0.3048              # m per ft (exact)
LB = 0.45359237          # kg per lb (exact)
HP = 745.6998715822702   # W per mechanical horsepower (550 ft lbf/s)


# --------------------------------------------------------------------------- period
def test_travel_time_and_period_of_series_route():
    lengths = [300.0, 500.0, 200.0]
    speeds = [1200.0, 1000.0, 800.0]
    t = 300 / 1200 + 500 / 1000 + 200 / 800
    assert surge.travel_time(lengths, speeds) == pytest.approx(t, rel=1e-14)
    assert surge.pipe_period(lengths, speeds) == pytest.approx(2 * t, rel=1e-14)
    # Equivalent uniform pipe (Wylie & Streeter 1993): sum L / sum(L/a).
    assert surge.equivalent_wave_speed(lengths, speeds) == pytest.approx(1000.0 / t)


def test_period_broadcasts_over_alternatives():
    lengths = np.array([[400.0, 600.0], [400.0, 600.0]])
    speeds = np.array([[1000.0, 1000.0], [800.0, 1200.0]])
    np.testing.assert_allclose(surge.pipe_period(lengths, speeds),
                               [2.0, 2 * (0.5 + 0.5)], rtol=1e-14)


@pytest.mark.parametrize(("tc", "expected"), [(1.0, "rapid"), (2.0, "rapid"), (2.5, "slow")])
def test_closure_regime(tc, expected):
    # Chaudhry (2014) ch. 1: rapid if Tc <= 2L/a.
    assert surge.closure_regime(tc, 2.0) == expected
    assert list(surge.closure_regime(np.array([1.0, 3.0]), 2.0)) == ["rapid", "slow"]


# --------------------------------------------------------------------------- head rise
def test_joukowsky_equals_rho_a_dv():
    # Joukowsky (1900): dp = rho a dV, i.e. dH = a dV / g.
    rise = surge.joukowsky(1000.0, 1.0)
    assert rise * 1000.0 * GRAVITY == pytest.approx(1000.0 * 1000.0 * 1.0, rel=1e-14)
    # Rule of thumb: about 100 m head per m/s at a ~ 1000 m/s (common practice).
    assert rise == pytest.approx(100.0, rel=0.03)


def test_michaud_is_twice_rigid_column_linear_deceleration():
    # Rigid column with uniform deceleration V/Tc: dH = L V/(g Tc); Michaud's elastic maximum
    # is twice that (Chaudhry 2014 ch. 1).
    length, v, tc = 800.0, 3.0, 6.0
    assert surge.michaud(length, v, tc) == pytest.approx(2 * length * v / (GRAVITY * tc))


def test_allievi_constants():
    assert surge.allievi_pipeline_constant(1000.0, 2.0, 100.0) == pytest.approx(
        1000 * 2 / (2 * GRAVITY * 100))
    assert surge.allievi_time_constant(1000.0, 5.0, 1000.0) == pytest.approx(2.5)


def test_interlocking_rapid_closure_gives_joukowsky():
    # Closure within one pipe period: full Joukowsky rise, H/H0 = 1 + 2 rho (Parmakian 1955).
    rho = np.array([0.5, 1.0, 3.0])
    ratios = surge.allievi_interlocking(rho, 1.0)
    np.testing.assert_allclose(ratios.max(axis=-1), 1 + 2 * rho, rtol=1e-12)


@pytest.mark.parametrize("rho", [1.5, 3.0, 6.0])
def test_rigid_column_formula_is_limit_of_allievi_for_slow_closure(rho):
    # Parmakian (1955) / De Sparre: for rho > 1 the maximum comes at the end of closure and,
    # for slow closure, tends to the rigid-column form 1 + k/2 (k + sqrt(k^2 + 4)) with
    # k = rho/theta (from memory). At theta = 20 the two agree to better than 1e-4 (for
    # rho = 0.3 they differ by 0.8 %, the regime where the maximum comes earlier).
    theta = 20.0
    h0, a, length = 100.0, 1000.0, 1000.0
    velocity = rho * 2 * GRAVITY * h0 / a
    tc = theta * 2 * length / a
    closed = surge.allievi_max_head(length, velocity, h0, tc) / h0
    elastic = surge.allievi_interlocking(rho, theta).max()
    assert closed == pytest.approx(elastic, rel=1e-4)


def test_rigid_column_small_k_limit_and_opening_companion():
    # k -> 0: Hmax/H0 -> 1 + k, Hmin/H0 -> 1 - k (first order of the closed forms).
    length, v, h0, tc = 100.0, 1.0, 100.0, 100.0
    k = length * v / (GRAVITY * h0 * tc)
    assert surge.allievi_max_head(length, v, h0, tc) / h0 == pytest.approx(1 + k, rel=1e-5)
    assert surge.allievi_min_head(length, v, h0, tc) / h0 == pytest.approx(1 - k, rel=1e-5)
    # The two ratios are roots zeta^2 of zeta^2 -+ k zeta - 1 = 0: product of zetas is 1.
    zmax = math.sqrt(surge.allievi_max_head(length, 5 * v, h0, tc) / h0)
    zmin = math.sqrt(surge.allievi_min_head(length, 5 * v, h0, tc) / h0)
    assert zmax * zmin == pytest.approx(1.0, rel=1e-12)


# --------------------------------------------------------------------------- regulation
def test_mechanical_starting_time_against_usbr_us_units_form():
    # USBR Engineering Monograph No. 20 (Krueger 1976): Tm = WR^2 n^2 / (1.6e6 P) with WR^2
    # in lb ft^2, n in rpm, P in hp (from memory; constant given to 2 figures, +-1.5 %).
    wr2, n, p_hp = 2.0e6, 300.0, 20_000.0
    published = wr2 * n**2 / (1.6e6 * p_hp)
    inertia = wr2 * LB * FT**2
    tm = surge.mechanical_starting_time(inertia, 2 * math.pi * n / 60, p_hp * HP)
    assert tm == pytest.approx(published, rel=0.015)


def test_gd2_convention():
    assert surge.inertia_from_gd2(4.0e6) == pytest.approx(1.0e6)


def test_water_starting_time():
    # Tw = sum(L V)/(g Hn) (Chaudhry 2014 ch. 7).
    tw = surge.water_starting_time([200.0, 300.0], [3.0, 4.0], 120.0)
    assert tw == pytest.approx((600 + 1200) / (GRAVITY * 120), rel=1e-14)
    s = pd.Series([100.0, 200.0], index=["u1", "u2"])
    out = surge.water_starting_time([200.0, 300.0], [3.0, 4.0], s)
    assert list(out.index) == ["u1", "u2"]


@pytest.mark.parametrize(
    ("tw", "tm", "stable", "desirable"),
    [(1.5, 9.0, True, True), (2.8, 16.0, True, False), (3.5, 30.0, False, False),
     (2.0, 6.0, False, True)],
)
def test_governing_stability_check(tw, tm, stable, desirable):
    # Common-practice limits: Tw <= 2.5 s desirable, <= 3 s acceptable, Tm/Tw^2 >= 2,
    # Tw/Tm <= 0.3.
    check = surge.governing_stability_check(tw, tm)
    assert check.stable is stable
    assert check.tw_desirable is desirable
    assert check.ratio == pytest.approx(tm / tw**2)
    assert len(check.messages) == 3


def test_surge_protection_flag():
    assert not surge.surge_protection_flag(2.0).study_needed
    flag = surge.surge_protection_flag(4.0, max_head_rise=80.0, allowable_head_rise=60.0)
    assert flag.study_needed
    assert len(flag.reasons) == 2
    assert surge.surge_protection_flag(2.0, 50.0, 60.0).reasons == ()


# --------------------------------------------------------------------------- kinds, errors
def test_array_equals_loop_of_scalars():
    lengths = np.array([300.0, 800.0, 1500.0])
    velocities = np.array([2.0, 3.5, 5.0])
    arr = surge.allievi_max_head(lengths, velocities, 150.0, 8.0)
    loop = [surge.allievi_max_head(x, v, 150.0, 8.0) for x, v in
            zip(lengths, velocities, strict=True)]
    assert isinstance(loop[0], float)
    np.testing.assert_allclose(arr, loop, rtol=1e-14)


@settings(max_examples=40, deadline=None)
@given(st.floats(0.05, 5.0), st.floats(1.0, 30.0))
def test_interlocking_never_exceeds_joukowsky(rho, theta):
    # Physical invariant: a gradual closure cannot exceed the instantaneous (Joukowsky) rise.
    assert surge.allievi_interlocking(rho, theta).max() <= 1 + 2 * rho + 1e-12


def test_errors():
    with pytest.raises(ValueError, match="closure_time must be finite and > 0"):
        surge.michaud(100.0, 2.0, 0.0)
    with pytest.raises(ValueError, match="wave_speed must be finite and > 0"):
        surge.joukowsky(-1.0, 1.0)
    with pytest.raises(ValueError, match="matching shapes"):
        surge.travel_time([1.0, 2.0, 3.0], [1000.0, 1000.0])
    with pytest.raises(ValueError, match=r"final_opening must be in \[0, 1\)"):
        surge.allievi_interlocking(1.0, 2.0, final_opening=1.0)
    with pytest.raises(ValueError, match="together"):
        surge.surge_protection_flag(2.0, max_head_rise=10.0)
    with pytest.raises(ValueError, match="water_starting_time must be finite and > 0"):
        surge.governing_stability_check(0.0, 5.0)


# Docstrings against signatures and units: tests/test_docstrings.py.


def test_allievi_rise_capped_by_joukowsky():
    """Slow closure: Allievi's rise; a closure far faster than 2L/a: Joukowsky's a·V/g."""
    slow = surge.allievi_rise_capped(1000.0, 3.0, 200.0, 60.0, 1000.0)
    assert slow == pytest.approx(surge.allievi_max_head(1000.0, 3.0, 200.0, 60.0) - 200.0)
    fast = surge.allievi_rise_capped(1000.0, 3.0, 200.0, 0.01, 1000.0)
    assert fast == pytest.approx(1000.0 * 3.0 / GRAVITY, rel=1e-12)


def test_linear_design_head_is_static_at_the_reservoir_and_full_rise_at_the_valve():
    from penstock.surge import linear_design_head

    static = np.array([5.0, 50.0, 120.0])
    s = np.array([0.0, 0.4, 1.0])
    h = linear_design_head(static, 30.0, s)
    assert h == pytest.approx([5.0, 62.0, 150.0])
    both = linear_design_head(static[None, :], np.array([30.0, 10.0]), s)
    assert both.shape == (2, 3) and both[1] == pytest.approx([5.0, 54.0, 130.0])
    with pytest.raises(ValueError, match="fraction_along"):
        linear_design_head(static, 1.0, np.array([0.0, 0.5, 1.2]))
