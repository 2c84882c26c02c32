"""Tests of penstock.friction against reference libraries, the Moody chart and physics."""

import doctest
import math
import warnings

import numpy as np
import pandas as pd
import pytest
from fluids.constants import g as fluids_gravity  # reference library, tests only
from fluids.friction import Colebrook as fluids_colebrook  # reference library, tests only
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import friction
from penstock.constants import GRAVITY
from penstock.friction import (
    FRICTION_METHODS,
    GROWTH_RATES,
    ROUGHNESS,
    ConvergenceError,
    CorrelationRangeWarning,
    aged_roughness,
    colebrook,
    flow_regime,
    friction_factor,
    head_loss,
    material_roughness,
    outside_published_range,
    reynolds,
    swamee_jain,
)

FOOT = 0.3048  # [m], international foot (exact)


def _fluids(re, rr):
    """fluids.friction.Colebrook element by element (it warns on overflow, then recovers)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.array([fluids_colebrook(float(a), float(b)) for a, b in zip(re, rr)])


# --- Colebrook–White ---------------------------------------------------------------------
REYNOLDS_GRID = np.logspace(np.log10(4.0e3), 8.0, 41)
ROUGHNESS_GRID = np.concatenate(([0.0], np.logspace(-6.0, np.log10(0.05), 15)))


def test_colebrook_matches_fluids_over_grid():
    # fluids.friction.Colebrook (fluids 1.x, Lambert-W solution, numerical where it
    # overflows) is exact to ~1e-13; the grid spans Re 4e3..1e8 and eps/D 0 (exactly)..0.05.
    re, rr = np.meshgrid(REYNOLDS_GRID, ROUGHNESS_GRID)
    expected = _fluids(re.ravel(), rr.ravel()).reshape(re.shape)
    np.testing.assert_allclose(colebrook(re, rr), expected, rtol=1e-9, atol=0.0)


def test_colebrook_matches_fluids_on_random_pairs():
    # Random pairs exercise the path where a few elements need more than three Newton steps.
    rng = np.random.default_rng(7)
    re = 10.0 ** rng.uniform(np.log10(4.0e3), 8.0, 3000)
    rr = 10.0 ** rng.uniform(-6.0, np.log10(0.05), 3000)
    np.testing.assert_allclose(colebrook(re, rr), _fluids(re, rr), rtol=1e-9, atol=0.0)


@pytest.mark.parametrize(
    "re, rr, chart",
    [
        # Moody (1944), Trans. ASME 66(8), Fig. 1, read from the chart (from memory);
        # two significant figures, so a chart-reading tolerance of +-3 %.
        (1.0e4, 0.0, 0.031),  # smooth pipes
        (1.0e5, 0.0, 0.018),  # smooth pipes
        (1.0e6, 0.0, 0.0116),  # smooth pipes
        (1.0e5, 1.0e-3, 0.022),
        (1.0e6, 1.0e-3, 0.020),
        (1.0e8, 0.01, 0.038),  # complete turbulence, rough pipes
        (1.0e7, 0.05, 0.072),  # complete turbulence, rough pipes
    ],
)
def test_colebrook_against_moody_chart(re, rr, chart):
    assert colebrook(re, rr) == pytest.approx(chart, rel=0.03)


def test_colebrook_satisfies_equation_to_machine_precision():
    # Residual of Colebrook (1939), J. ICE 11(4), eq. for 1/sqrt(f), relative to 1/sqrt(f).
    re, rr = np.meshgrid(REYNOLDS_GRID, ROUGHNESS_GRID)
    x = 1.0 / np.sqrt(colebrook(re, rr))
    residual = x + 2.0 * np.log10(rr / 3.7 + 2.51 * x / re)
    assert np.max(np.abs(residual / x)) < 1e-12


def test_colebrook_raises_when_not_converged(monkeypatch):
    # A tolerance nothing can meet forces the iteration to its step limit.
    monkeypatch.setattr(friction, "_COLEBROOK_TOLERANCE", -1.0)
    with pytest.raises(ConvergenceError, match="did not converge"):
        colebrook(1.0e5, 1.0e-4)


def test_convergence_error_is_a_value_error():
    assert issubclass(ConvergenceError, ValueError)


@pytest.mark.parametrize("function", [colebrook, swamee_jain])
@pytest.mark.parametrize(
    "re, rr, match",
    [
        (1000.0, 1e-4, "reynolds must be finite and >= 2000"),
        (-1.0e5, 1e-4, "reynolds"),
        (np.nan, 1e-4, "reynolds"),
        (np.inf, 1e-4, "reynolds"),
        (1.0e5, -1e-4, "relative_roughness"),
        (1.0e5, 1.5, "relative_roughness"),
    ],
)
def test_turbulent_correlations_reject_bad_input(function, re, rr, match):
    with pytest.raises(ValueError, match=match):
        function(re, rr)


# --- Swamee–Jain -------------------------------------------------------------------------
def test_swamee_jain_matches_fluids_formula():
    # fluids.friction.Swamee_Jain_1976 writes the same equation as (6.97/Re)^0.9, i.e.
    # 5.7399/Re^0.9 instead of 5.74/Re^0.9: agreement to 1e-5 relative.
    from fluids.friction import Swamee_Jain_1976

    for re, rr in [(5e3, 1e-6), (1e5, 1e-4), (1e8, 1e-2)]:
        assert swamee_jain(re, rr) == pytest.approx(Swamee_Jain_1976(re, rr), rel=1e-5)


def test_swamee_jain_within_one_percent_in_interior():
    # Swamee & Jain (1976), J. Hydraulics Div. ASCE 102(HY5): "within 1 %" of Colebrook.
    # That holds in the interior of their range (checked on this grid); see next test.
    re, rr = np.meshgrid(np.logspace(4.0, np.log10(2.0e7), 30), np.logspace(-6.0, -3.0, 13))
    deviation = swamee_jain(re, rr) / colebrook(re, rr) - 1.0
    assert np.max(np.abs(deviation)) <= 0.01


def test_swamee_jain_within_three_percent_over_stated_range():
    # Over their whole stated range, 5e3 <= Re <= 1e8 and 1e-6 <= eps/D <= 1e-2, the
    # deviation from exact Colebrook reaches 2.8 % (Re = 5e3, eps/D = 1e-2), so the claimed
    # 1 % does not hold at the corners; +-3 % does.
    entry = FRICTION_METHODS["swamee_jain"]
    re, rr = np.meshgrid(
        np.logspace(*np.log10(entry.reynolds_range), 40),
        np.logspace(*np.log10(entry.relative_roughness_range), 21),
    )
    deviation = swamee_jain(re, rr) / colebrook(re, rr) - 1.0
    assert np.max(np.abs(deviation)) <= 0.03
    assert np.max(np.abs(deviation)) > 0.01  # the corners really do exceed 1 %


# --- friction_factor over the full range -------------------------------------------------
@pytest.mark.parametrize("re", [1.0, 10.0, 640.0, 1999.0])
@pytest.mark.parametrize("rr", [0.0, 1e-3])
def test_laminar_is_hagen_poiseuille(re, rr):
    # Hagen–Poiseuille, Darcy form: f = 64 / Re, whatever the roughness.
    assert friction_factor(re, rr) == pytest.approx(64.0 / re, rel=1e-15)


@pytest.mark.parametrize("method", sorted(FRICTION_METHODS))
@pytest.mark.parametrize("rr", [0.0, 1e-4, 1e-2])
@pytest.mark.parametrize("limit", [2000.0, 4000.0])
def test_friction_factor_continuous_at_regime_limits(method, rr, limit):
    step = 1e-6
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", CorrelationRangeWarning)
        below, at, above = friction_factor([limit - step, limit, limit + step], rr, method)
    assert below == pytest.approx(at, rel=1e-8)
    assert above == pytest.approx(at, rel=1e-8)


def test_transition_is_linear_between_anchors():
    anchors = friction_factor([2000.0, 4000.0], 1e-3)
    assert friction_factor(3000.0, 1e-3) == pytest.approx(anchors.mean(), rel=1e-14)
    assert anchors[0] == pytest.approx(0.032, rel=1e-15)
    assert anchors[1] == pytest.approx(colebrook(4000.0, 1e-3), rel=1e-15)


def test_friction_factor_methods_agree_in_turbulent_range():
    assert friction_factor(1e6, 1e-4, method="swamee_jain") == pytest.approx(
        friction_factor(1e6, 1e-4), rel=0.01
    )


def test_outside_published_range_follows_the_moody_chart_limits():
    # Colebrook-White's range is that of the Moody (1944) chart, Trans. ASME 66(8), Fig. 1:
    # Re 4e3 to 1e8, relative roughness up to 0.05
    got = outside_published_range([1e3, 3e3, 1e5, 1e5, 2e8, 1e8], [0.1, 0.1, 0.05, 0.051,
                                                                       1e-4, 1e-4])
    assert got.tolist() == [False, False, False, True, True, False]
    assert outside_published_range(1e5, 5e-7, method="swamee_jain")  # below 1e-6
    assert outside_published_range(np.full((2, 3), 1e5), 0.06).shape == (2, 3)


@settings(max_examples=60, deadline=None)
@given(re=st.lists(st.floats(1.0, 1e9), min_size=1, max_size=8),
       rr=st.floats(0.0, 0.2), method=st.sampled_from(sorted(FRICTION_METHODS)))
def test_friction_factor_warns_exactly_where_outside_published_range(re, rr, method):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        friction_factor(re, rr, method=method)
    ranged = [w for w in caught if issubclass(w.category, CorrelationRangeWarning)]
    outside = outside_published_range(re, rr, method)
    assert bool(ranged) == bool(outside.any())
    if ranged:
        w = ranged[0].message
        assert w.method == method
        assert w.reynolds_seen == (min(np.asarray(re)[outside]), max(np.asarray(re)[outside]))


def test_friction_factor_warns_outside_published_range():
    with pytest.warns(CorrelationRangeWarning, match="swamee_jain"):
        friction_factor(1e5, 0.03, method="swamee_jain")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        friction_factor([1e3, 3e3, 1e5], 1e-4)  # inside the ranges: no warning


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"reynolds": 0.0, "relative_roughness": 0.0}, "reynolds must be finite and > 0"),
        ({"reynolds": 1e5, "relative_roughness": 2.0}, "relative_roughness"),
        ({"reynolds": 1e5, "relative_roughness": 0.0, "method": "blasius"}, "method must"),
    ],
)
def test_friction_factor_rejects_bad_input(kwargs, match):
    with pytest.raises(ValueError, match=match):
        friction_factor(**kwargs)


@pytest.mark.parametrize(
    "re, expected",
    [(0.0, "laminar"), (1999.9, "laminar"), (2000.0, "transition"), (3999.0, "transition"),
     (4000.0, "turbulent"), (1e7, "turbulent")],
)
def test_flow_regime(re, expected):
    assert flow_regime(re) == expected


def test_flow_regime_array_and_errors():
    assert flow_regime(np.array([100.0, 3000.0, 1e5])).tolist() == [
        "laminar", "transition", "turbulent"
    ]
    with pytest.raises(ValueError, match="reynolds"):
        flow_regime(-1.0)


# --- shapes and kinds --------------------------------------------------------------------
@pytest.mark.parametrize("function", [colebrook, swamee_jain, friction_factor])
@pytest.mark.parametrize(
    "shape_re, shape_rr, shape_out",
    [((5, 1), (1, 4), (5, 4)), ((3,), (), (3,)), ((2, 3, 4), (3, 1), (2, 3, 4)), ((), (), ())],
)
def test_broadcasting_shapes(function, shape_re, shape_rr, shape_out):
    re = np.full(shape_re, 1.0e5)
    rr = np.full(shape_rr, 1.0e-4)
    result = function(re, rr)
    assert np.shape(result) == shape_out


@pytest.mark.parametrize("function", [colebrook, swamee_jain, friction_factor])
def test_scalar_in_float_out(function):
    assert type(function(1.0e5, 1.0e-4)) is float
    assert type(function(np.float64(1.0e5), 0)) is float


@pytest.mark.parametrize("function", [colebrook, swamee_jain, friction_factor])
def test_series_in_series_out(function):
    re = pd.Series([1e4, 1e5, 1e6], index=["a", "b", "c"])
    result = function(re, 1e-4)
    assert isinstance(result, pd.Series)
    assert list(result.index) == ["a", "b", "c"]
    assert result["b"] == function(1e5, 1e-4)


@pytest.mark.parametrize("function", [colebrook, swamee_jain])
def test_array_equals_loop_of_scalars(function):
    rng = np.random.default_rng(3)
    re = 10.0 ** rng.uniform(np.log10(5e3), 8.0, 50)
    rr = 10.0 ** rng.uniform(-6.0, -2.0, 50)
    loop = [function(float(a), float(b)) for a, b in zip(re, rr)]
    np.testing.assert_array_equal(function(re, rr), loop)


def test_friction_factor_array_equals_loop_of_scalars():
    re = np.array([10.0, 1500.0, 2000.0, 2500.0, 3999.0, 4000.0, 1e5, 1e7])
    loop = [friction_factor(float(a), 1e-4) for a in re]
    np.testing.assert_array_equal(friction_factor(re, 1e-4), loop)


def test_colebrook_blocks_do_not_change_result():
    # The solver works in blocks of _COLEBROOK_BLOCK elements; the answer must not depend
    # on where the blocks fall.
    rng = np.random.default_rng(11)
    re = 10.0 ** rng.uniform(np.log10(4e3), 8.0, 2 * friction._COLEBROOK_BLOCK + 7)
    rr = 10.0 ** rng.uniform(-6.0, np.log10(0.05), re.size)
    whole = colebrook(re, rr)
    np.testing.assert_array_equal(whole[-40:], colebrook(re[-40:], rr[-40:]))


# --- physical invariants (hypothesis) ----------------------------------------------------
turbulent_re = st.floats(min_value=4.0e3, max_value=1.0e8)
rel_rough = st.floats(min_value=0.0, max_value=0.05)


@settings(max_examples=60, deadline=None)
@given(re=turbulent_re, factor=st.floats(min_value=1.001, max_value=100.0), rr=rel_rough)
def test_friction_decreases_with_reynolds(re, factor, rr):
    # Colebrook–White: d f / d Re < 0 at fixed eps/D (tends to 0 in complete turbulence).
    assert colebrook(re * factor, rr) <= colebrook(re, rr)


@settings(max_examples=60, deadline=None)
@given(re=turbulent_re, rr=st.floats(min_value=1e-7, max_value=0.04),
       factor=st.floats(min_value=1.01, max_value=100.0))
def test_friction_increases_with_roughness(re, rr, factor):
    assert colebrook(re, min(rr * factor, 0.05)) > colebrook(re, rr)


@settings(max_examples=40, deadline=None)
@given(flow=st.floats(min_value=5.0, max_value=50.0),
       diameter=st.floats(min_value=1.0, max_value=3.0))
def test_head_loss_quadratic_when_fully_rough(flow, diameter):
    # eps/D = 0.01 and Re ~ 1e6..1e8: complete turbulence, f nearly constant, so
    # halving the flow cuts the loss about four times (within 2 %).
    roughness = 0.01 * diameter
    full = head_loss(flow, diameter, 1000.0, roughness, 1.0e-6)
    half = head_loss(flow / 2.0, diameter, 1000.0, roughness, 1.0e-6)
    assert full / half == pytest.approx(4.0, rel=0.02)


# --- Reynolds number and head loss -------------------------------------------------------
def test_reynolds_number():
    assert reynolds(2.0, 1.5, 1.0e-6) == pytest.approx(3.0e6, rel=1e-15)
    assert reynolds(-2.0, 1.5, 1.0e-6) == pytest.approx(3.0e6, rel=1e-15)
    with pytest.raises(ValueError, match="diameter"):
        reynolds(2.0, 0.0, 1.0e-6)
    with pytest.raises(ValueError, match="kinematic_viscosity"):
        reynolds(2.0, 1.0, -1.0e-6)


def test_head_loss_against_fluids_assembly():
    # Darcy–Weisbach assembled from the reference library: fluids.friction.Colebrook and
    # fluids.constants.g (standard gravity).
    flow, diameter, length, roughness, nu = 3.0, 1.2, 850.0, 0.046e-3, 1.31e-6
    velocity = flow / (math.pi / 4.0 * diameter**2)
    f = fluids_colebrook(velocity * diameter / nu, roughness / diameter)
    expected = f * length / diameter * velocity**2 / (2.0 * fluids_gravity)
    assert head_loss(flow, diameter, length, roughness, nu) == pytest.approx(expected, rel=1e-10)


def test_head_loss_zero_flow_is_zero_without_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert head_loss(0.0, 1.0, 100.0, 1e-4, 1e-6) == 0.0
        losses = head_loss(np.array([0.0, 1.0]), 1.0, 100.0, 1e-4, 1e-6)
    assert losses[0] == 0.0 and losses[1] > 0.0


def test_head_loss_reverse_flow_has_sign_of_flow():
    forward = head_loss(2.0, 1.0, 500.0, 1e-4, 1e-6)
    assert head_loss(-2.0, 1.0, 500.0, 1e-4, 1e-6) == -forward
    assert forward > 0.0


def test_head_loss_laminar_is_hagen_poiseuille():
    # Laminar Darcy–Weisbach equals Hagen–Poiseuille: h = 128 nu L Q / (pi g D^4).
    flow, diameter, length, nu = 1.0e-5, 0.05, 10.0, 1.0e-6
    expected = 128.0 * nu * length * flow / (math.pi * GRAVITY * diameter**4)
    assert head_loss(flow, diameter, length, 0.0, nu) == pytest.approx(expected, rel=1e-13)


def test_head_loss_broadcasts_and_matches_loop():
    flow = np.array([0.0, 0.5, 2.0, -1.0])[:, None]
    diameter = np.array([0.8, 1.0, 1.5])[None, :]
    result = head_loss(flow, diameter, 300.0, 0.1e-3, 1.3e-6)
    assert result.shape == (4, 3)
    loop = [[head_loss(float(q), float(d), 300.0, 0.1e-3, 1.3e-6) for d in diameter[0]]
            for q in flow[:, 0]]
    np.testing.assert_array_equal(result, loop)


def test_head_loss_series_keeps_index():
    flow = pd.Series([1.0, 2.0], index=pd.Index([10, 20], name="case"))
    result = head_loss(flow, 1.0, 100.0, 1e-4, 1e-6)
    assert isinstance(result, pd.Series)
    assert result.index.equals(flow.index)


@pytest.mark.parametrize(
    "args, match",
    [
        ((1.0, 0.0, 100.0, 1e-4, 1e-6), "diameter"),
        ((1.0, 1.0, -1.0, 1e-4, 1e-6), "length"),
        ((1.0, 1.0, 100.0, -1e-4, 1e-6), "roughness"),
        ((1.0, 1.0, 100.0, 2.0, 1e-6), "roughness must be smaller than the diameter"),
        ((1.0, 1.0, 100.0, 1e-4, 0.0), "kinematic_viscosity"),
        ((np.nan, 1.0, 100.0, 1e-4, 1e-6), "flow"),
    ],
)
def test_head_loss_rejects_bad_input(args, match):
    with pytest.raises(ValueError, match=match):
        head_loss(*args)


def test_head_loss_rejects_unknown_method():
    with pytest.raises(ValueError, match="method must be one of"):
        head_loss(1.0, 1.0, 100.0, 1e-4, 1e-6, method="hazen")


# --- roughness tables --------------------------------------------------------------------
@pytest.mark.parametrize(
    "material, condition, feet",
    [
        # Moody (1944), Trans. ASME 66(8), Fig. 2, absolute roughness in feet.
        ("welded_steel", "new", 0.00015),  # commercial steel
        ("riveted_steel", "new", 0.003),  # riveted steel, low end of 0.003-0.03
        ("riveted_steel", "aged", 0.03),  # riveted steel, high end
        ("concrete_smooth", "new", 0.001),  # concrete, low end of 0.001-0.01
        ("concrete_rough", "new", 0.01),  # concrete, high end
        ("pvc", "new", 0.000005),  # drawn tubing
    ],
)
def test_roughness_against_moody_table(material, condition, feet):
    # Moody gives one or two significant figures; the table rounds the conversion to mm.
    assert material_roughness(material, condition) == pytest.approx(feet * FOOT, rel=0.02)


def test_roughness_table_complete_and_sourced():
    required = {"welded_steel", "riveted_steel", "ductile_iron_cement_lined",
                "concrete_smooth", "concrete_rough", "grp", "hdpe", "pvc"}
    assert required <= set(ROUGHNESS)
    for name, entry in ROUGHNESS.items():
        assert 0.0 < entry.new <= entry.aged < 0.05, name
        assert entry.source, name


def test_material_roughness_errors():
    with pytest.raises(ValueError, match=r"Did you mean 'welded_steel'\?"):
        material_roughness("welded steel")
    with pytest.raises(ValueError, match="valid names: concrete_rough"):
        material_roughness("unobtainium")
    with pytest.raises(ValueError, match="condition must be 'new' or 'aged'"):
        material_roughness("pvc", "old")


def test_aged_roughness_linear_growth():
    # Colebrook & White (1937): eps(t) = eps0 + alpha t.
    assert aged_roughness(0.05e-3, 20.0, 0.025e-3) == pytest.approx(0.55e-3, rel=1e-14)
    assert aged_roughness(0.05e-3, 0.0, "severe") == 0.05e-3
    np.testing.assert_allclose(
        aged_roughness(0.05e-3, np.array([0.0, 10.0]), "moderate"),
        [0.05e-3, 0.05e-3 + 10.0 * GROWTH_RATES["moderate"]],
    )


def test_growth_rates_ordered_by_aggressiveness():
    rates = [GROWTH_RATES[k] for k in ("slight", "moderate", "appreciable", "severe")]
    assert rates == sorted(rates)


def test_aged_roughness_errors():
    with pytest.raises(ValueError, match="Did you mean 'moderate'"):
        aged_roughness(1e-4, 10.0, "moderat")
    with pytest.raises(ValueError, match="age"):
        aged_roughness(1e-4, -1.0, 1e-5)
    with pytest.raises(ValueError, match="growth_rate"):
        aged_roughness(1e-4, 1.0, -1e-5)


# --- documentation -----------------------------------------------------------------------
# Docstrings against signatures and units: tests/test_docstrings.py.


def test_docstring_examples_run():
    result = doctest.testmod(friction, optionflags=doctest.ELLIPSIS)
    assert result.attempted >= 5
    assert result.failed == 0


def test_material_growth_rate_reaches_the_aged_roughness():
    """The linear rate takes the table's new roughness to its aged value in the years
    given (the roughness table's two columns)."""
    from penstock.friction import aged_roughness, material_growth_rate, material_roughness

    for m in ("welded_steel", "ductile_iron_en545", "hdpe"):
        rate = material_growth_rate(m, 40.0)
        assert float(aged_roughness(material_roughness(m, "new"), 40.0, rate)) == \
            pytest.approx(material_roughness(m, "aged"), rel=1e-12)
    with pytest.raises(ValueError, match="years"):
        material_growth_rate("hdpe", 0.0)
