"""Tests of penstock.hydrology.

Reference values come from numpy/scipy/pandas computations of the same
published definitions (Weibull plotting position, Hyndman & Fan 1996 definition
6) or from hand calculation of the stated formula.
"""

import numpy as np
import pandas as pd
import pytest
import scipy.stats
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import hydrology as hy

RNG = np.random.default_rng(20240601)
FLOWS = np.exp(RNG.normal(1.0, 0.8, 1000))  # synthetic log-normal river flows [m^3/s]


def hourly(n, start="2001-01-01"):
    return pd.date_range(start, periods=n, freq="h")


# --- flow-duration curve ------------------------------------------------------------------

@pytest.mark.parametrize("p", [0.05, 0.10, 0.30, 0.50, 0.80, 0.95])
def test_flow_at_exceedance_matches_numpy_weibull_quantile(p):
    # Reference: numpy.quantile(method="weibull") = Hyndman & Fan (1996) definition 6,
    # p_k = k/(n+1); exceedance p is non-exceedance 1 - p.
    expected = np.quantile(FLOWS, 1.0 - p, method="weibull")
    assert hy.flow_at_exceedance(FLOWS, p) == pytest.approx(expected, rel=1e-12)


def test_exceedance_curve_positions_match_scipy_and_pandas():
    curve = hy.exceedance_curve(FLOWS)
    # Reference: scipy.stats.mstats.plotting_positions with alpha = beta = 0 is the Weibull
    # position i/(n+1) of the ascending order; exceedance is its complement.
    ascending = np.sort(scipy.stats.mstats.plotting_positions(FLOWS, alpha=0, beta=0))
    np.testing.assert_allclose(curve.exceedance, 1.0 - ascending[::-1], rtol=0, atol=1e-12)
    # Reference: pandas descending rank / (n + 1) gives each flow's exceedance.
    rank = pd.Series(FLOWS).rank(ascending=False, method="first") / (FLOWS.size + 1)
    np.testing.assert_allclose(np.sort(rank.to_numpy()), curve.exceedance, atol=1e-12)
    assert np.all(np.diff(curve.flow) <= 0)


def test_q95_is_float_and_array_equals_loop_of_scalars():
    probabilities = np.array([0.1, 0.5, 0.95])
    as_array = hy.flow_at_exceedance(FLOWS, probabilities)
    assert isinstance(hy.flow_at_exceedance(FLOWS, 0.95), float)
    np.testing.assert_array_equal(as_array, [hy.flow_at_exceedance(FLOWS, p)
                                             for p in probabilities])


@pytest.mark.parametrize("bad, match", [(np.array([1.0, np.nan]), "position 1"),
                                        (np.array([1.0, 2.0, -0.5]), "negative value -0.5")])
def test_exceedance_curve_rejects_bad_flows(bad, match):
    with pytest.raises(ValueError, match=match):
        hy.exceedance_curve(bad)


# --- residual flow and allocation ------------------------------------------------------------

def test_residual_flow_rules():
    index = pd.date_range("2001-01-01", "2001-12-31", freq="D")
    monthly = [0.5] * 6 + [0.2] * 6
    residual = hy.residual_flow(index, monthly=monthly)
    assert residual["2001-03-15"] == 0.5 and residual["2001-09-15"] == 0.2
    # "the greater of" 0.3 m^3/s and the monthly table (hand calculation)
    both = hy.residual_flow(index, constant=0.3, monthly=monthly)
    assert both["2001-03-15"] == 0.5 and both["2001-09-15"] == 0.3
    # 10 % of a 4 m^3/s mean flow is 0.4 m^3/s (hand calculation)
    assert hy.residual_flow(index, percent_of_mean=10, mean_flow=4.0).iloc[0] == \
        pytest.approx(0.4)


@pytest.mark.parametrize("kwargs, match", [
    ({}, "at least one"),
    ({"monthly": [1.0] * 11}, "12 values"),
    ({"monthly": {1: 1.0}}, "month"),
    ({"percent_of_mean": 10}, "mean_flow"),
    ({"constant": -1.0}, "negative"),
])
def test_residual_flow_errors(kwargs, match):
    with pytest.raises(ValueError, match=match):
        hy.residual_flow(hourly(10), **kwargs)


def test_available_flow_hand_cases():
    river = pd.Series([0.2, 1.0, 2.0, 6.0, 20.0], index=hourly(5))
    out = hy.available_flow(river, residual=0.5, plant_max=8.0, plant_min=1.0)
    # hand calculation: 0.2 -> all residual; 1.0 -> 0.5 left < min -> spill; 20 -> 8 turbined
    np.testing.assert_allclose(out.residual, [0.2, 0.5, 0.5, 0.5, 0.5])
    np.testing.assert_allclose(out.turbined, [0.0, 0.0, 1.5, 5.5, 8.0])
    np.testing.assert_allclose(out.spill, [0.0, 0.5, 0.0, 0.0, 11.5])
    assert isinstance(out.turbined, pd.Series) and out.turbined.index.equals(river.index)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(0, 1e3), min_size=1, max_size=30), st.floats(0, 50),
       st.floats(0, 20), st.floats(0, 200))
def test_available_flow_always_honours_residual(river, residual, plant_min, extra):
    plant_max = plant_min + extra
    river = np.array(river)
    out = hy.available_flow(river, residual, plant_max, plant_min)
    np.testing.assert_allclose(out.residual, np.minimum(residual, river))
    np.testing.assert_allclose(out.residual + out.turbined + out.spill, river, rtol=1e-12,
                               atol=1e-9)
    assert np.all(out.spill >= 0) and np.all(out.turbined <= plant_max)
    assert np.all((out.turbined == 0) | (out.turbined >= plant_min))


def test_available_flow_min_above_max_rejected():
    with pytest.raises(ValueError, match="plant_min"):
        hy.available_flow(5.0, 0.0, plant_max=1.0, plant_min=2.0)


# --- gaps and record checks ------------------------------------------------------------------

@pytest.mark.parametrize("freq", ["h", "D"])
def test_record_gaps_finds_missing_steps(freq):
    index = pd.date_range("2001-01-01", periods=100, freq=freq)
    holed = index.delete([5, 6, 7, 50])
    gaps = hy.record_gaps(holed)
    assert list(gaps.missing_steps) == [3, 1]
    assert gaps.start.iloc[0] == index[5] and gaps.end.iloc[0] == index[7]
    assert gaps.start.iloc[1] == index[50] == gaps.end.iloc[1]
    assert hy.record_gaps(index).empty


def test_record_gaps_rejects_duplicates_and_off_grid():
    index = hourly(10)
    with pytest.raises(ValueError, match=r"duplicate timestamp 2001-01-01 03:00:00 at row 4"):
        hy.record_gaps(index.insert(4, index[3]))
    with pytest.raises(ValueError, match="not on the regular"):
        hy.record_gaps(index.insert(4, index[3] + pd.Timedelta("30min")))


@pytest.mark.parametrize("values, match", [
    ([1.0, 2.0, -1.0, 3.0], r"negative value -1.0 at row 2 \(index 2001-01-01 02:00:00\)"),
    ([1.0, np.nan, 2.0, 3.0], r"nan at row 1 \(index 2001-01-01 01:00:00\) is not finite"),
])
def test_check_flow_record_names_bad_values(values, match):
    with pytest.raises(ValueError, match=match):
        hy.check_flow_record(pd.Series(values, index=hourly(4)))


def test_check_flow_record_names_gap_and_duplicate():
    index = hourly(10)
    with pytest.raises(ValueError, match=r"gap of 2 missing step\(s\).*2001-01-01 03:00:00"):
        hy.check_flow_record(np.ones(8), index.delete([3, 4]))
    with pytest.raises(ValueError, match="duplicate timestamp"):
        hy.check_flow_record(np.ones(11), index.insert(2, index[2]))
    assert hy.check_flow_record(np.ones(10), index) == pd.Timedelta("1h")


def holed_series():
    index = pd.date_range("2001-01-01", periods=10, freq="D")
    values = np.arange(10.0)
    values[6] = np.nan
    return pd.Series(values, index=index).drop(index[[2, 3]])


@pytest.mark.parametrize("method, expected", [
    # hand calculation on 0..9 with days 2, 3 dropped and day 6 NaN
    ("linear", [2.0, 3.0, 6.0]),
    ("previous", [1.0, 1.0, 5.0]),
    ("monthly_mean", [np.mean([0, 1, 4, 5, 7, 8, 9])] * 3),
])
def test_fill_gaps_methods(method, expected):
    filled = hy.fill_gaps(holed_series(), method)
    assert len(filled.series) == 10 and not filled.series.isna().any()
    np.testing.assert_allclose(filled.series.iloc[[2, 3, 6]], expected)
    assert list(filled.gaps.missing_steps) == [2, 1]


def test_fill_gaps_refuse_names_first_gap():
    with pytest.raises(ValueError, match=r"gap of 2 missing step\(s\) from 2001-01-03"):
        hy.fill_gaps(holed_series(), "refuse")
    complete = pd.Series(np.ones(5), index=hourly(5))
    assert hy.fill_gaps(complete, "refuse").gaps.empty


def test_fill_gaps_errors():
    with pytest.raises(ValueError, match="unknown gap-filling method"):
        hy.fill_gaps(holed_series(), "spline")
    leading = pd.Series([np.nan, 1.0, 2.0], index=hourly(3))
    with pytest.raises(ValueError, match="previous"):
        hy.fill_gaps(leading, "previous")
    with pytest.raises(ValueError, match="negative"):
        hy.fill_gaps(pd.Series([1.0, -2.0, 2.0], index=hourly(3)), "linear")


# --- duration table -> representative year ------------------------------------------------------

TABLE_P = [0.0, 10.0, 50.0, 95.0, 100.0]
TABLE_Q = [30.0, 12.0, 4.0, 1.0, 0.5]


@pytest.mark.parametrize("freq, n", [("h", 8760), ("D", 365)])
def test_duration_table_to_series_reproduces_table(freq, n):
    series = hy.duration_table_to_series(TABLE_P, TABLE_Q, freq=freq)
    assert len(series) == n and hy.check_flow_record(series) == pd.Timedelta(1, freq)
    # Its own duration curve returns the table at the interior rows. Weibull positions on
    # n samples differ from the mid-points by at most 1/n, times the steepest slope of the
    # table (180 m^3/s per unit exceedance between 0 and 10 %).
    back = hy.flow_at_exceedance(series, np.array([0.10, 0.50, 0.95]))
    np.testing.assert_allclose(back, [12.0, 4.0, 1.0], rtol=0, atol=180.0 / n)
    # Mean flow = area under the piecewise-linear curve (trapezoid rule, hand calculation).
    area = np.trapezoid(TABLE_Q, TABLE_P) / 100.0
    assert series.mean() == pytest.approx(area, rel=1e-4)


@pytest.mark.parametrize("p, q, match", [
    ([0, 50, 40], [3, 2, 1], "does not increase"),
    ([0, 50, 100], [3, 4, 1], "must not increase"),
    ([0, 50, 120], [3, 2, 1], "outside"),
])
def test_duration_table_errors(p, q, match):
    with pytest.raises(ValueError, match=match):
        hy.duration_table_to_series(p, q)


# --- rating curve ---------------------------------------------------------------------------

def test_rating_curve_interpolates_and_keeps_kind():
    level = hy.rating_curve({"level": [100.0, 101.0, 102.5], "flow": [0.0, 10.0, 40.0]})
    assert level(5.0) == pytest.approx(100.5)  # hand interpolation
    flows = pd.Series([0.0, 10.0, 25.0], index=hourly(3))
    out = level(flows)
    assert isinstance(out, pd.Series)
    np.testing.assert_allclose(out, [100.0, 101.0, 101.75])
    np.testing.assert_array_equal(level(flows.to_numpy()), [level(q) for q in flows])


def test_rating_curve_must_be_monotone():
    with pytest.raises(ValueError, match=r"level at row 2 \(100.8\) does not increase"):
        hy.rating_curve([[100.0, 0.0], [101.0, 10.0], [100.8, 20.0]])
    with pytest.raises(ValueError, match="flow at row 1"):
        hy.rating_curve([[100.0, 5.0], [101.0, 5.0]])


def test_rating_curve_range():
    table = [[100.0, 0.0], [101.0, 10.0]]
    with pytest.raises(ValueError, match="outside the rating table"):
        hy.rating_curve(table)(12.0)
    assert hy.rating_curve(table, extrapolate=True)(12.0) == pytest.approx(101.2)
