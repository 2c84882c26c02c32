"""Tests for penstock.economics against numpy-financial and the interest formulas."""


import numpy as np
import numpy_financial as npf
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock.economics import (
    annualized_cost,
    annuity_present_value,
    capital_recovery_factor,
    civil_cost_per_metre,
    energy_price_per_joule,
    lost_energy_value,
    pipe_capital_cost,
    pipe_cost_breakdown,
    present_value,
    present_worth_factor,
)
from penstock.pipewall import hoop_thickness, minimum_handling_thickness

RATES = [-0.02, 0.0, 0.01, 0.05, 0.08, 0.12, 0.25]
YEARS = [1, 10, 30, 50]


@pytest.mark.parametrize("rate", RATES)
@pytest.mark.parametrize("years", YEARS)
def test_crf_matches_numpy_financial(rate, years):
    # numpy-financial 1.0: pmt(rate, nper, pv=-1) is the payment that repays 1 over nper
    # periods, i.e. the capital recovery factor (exact up to round-off).
    expected = npf.pmt(rate, years, -1.0)
    assert capital_recovery_factor(rate, years) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("rate", "years"), [(0.05, 30), (0.1, 20), (0.08, 40)])
def test_crf_matches_textbook_formula(rate, years):
    # Grant, Ireson & Leavenworth (1990) ch. 4: (A/P) = i(1+i)^n / ((1+i)^n - 1)
    g = (1 + rate) ** years
    assert capital_recovery_factor(rate, years) == pytest.approx(rate * g / (g - 1), rel=1e-13)


def test_crf_published_table_value():
    # Standard compound-interest tables (e.g. the interest-table appendix of Grant, Ireson
    # & Leavenworth 1990): (A/P, 10 %, 20) = 0.11746, printed to 5 decimals.
    assert capital_recovery_factor(0.10, 20) == pytest.approx(0.11746, abs=5e-6)


def test_crf_zero_rate_limit_is_continuous():
    n = 30.0
    assert capital_recovery_factor(0.0, n) == pytest.approx(1.0 / n, rel=1e-15)
    # series i/(1-(1+i)^-n) = 1/n + i (n+1)/(2n) + O(i^2)
    for i in (1e-9, -1e-9, 1e-6):
        assert capital_recovery_factor(i, n) == pytest.approx(
            1.0 / n + i * (n + 1) / (2 * n), rel=1e-9
        )


def test_crf_array_equals_loop_and_series():
    rates = np.array(RATES)
    arr = capital_recovery_factor(rates, 30.0)
    np.testing.assert_array_equal(arr, [capital_recovery_factor(r, 30.0) for r in rates])
    s = pd.Series(rates, index=list("abcdefg"))
    out = capital_recovery_factor(s, 30.0)
    assert isinstance(out, pd.Series) and list(out.index) == list("abcdefg")


@pytest.mark.parametrize("rate", [-1.0, -1.5])
def test_crf_rate_at_or_below_minus_100_percent_raises(rate):
    with pytest.raises(ValueError, match="greater than -100 %"):
        capital_recovery_factor(rate, 30)


@pytest.mark.parametrize("years", [0, -5])
def test_crf_non_positive_life_raises(years):
    with pytest.raises(ValueError, match="economic life"):
        capital_recovery_factor(0.05, years)


# numpy-financial divides by the zero rate before choosing the limit branch: its warning only.
@pytest.mark.filterwarnings("ignore:invalid value encountered in divide:RuntimeWarning")
@pytest.mark.parametrize(("rate", "years"), [(0.05, 10), (0.08, 30), (0.0, 25)])
def test_present_values_match_numpy_financial(rate, years):
    # numpy-financial 1.0: pv(rate, nper, pmt, fv) with cash-flow sign convention.
    assert present_value(1000.0, rate, years) == pytest.approx(
        npf.pv(rate, years, 0.0, -1000.0), rel=1e-12
    )
    assert annuity_present_value(250.0, rate, years) == pytest.approx(
        npf.pv(rate, years, -250.0), rel=1e-12
    )
    assert present_worth_factor(rate, years) * capital_recovery_factor(rate, years) == (
        pytest.approx(1.0, rel=1e-14)
    )


def test_annualized_cost_formula():
    crf = capital_recovery_factor(0.08, 40)
    assert annualized_cost(1.0e6, crf, 0.01, 5.0e4) == pytest.approx(1.0e6 * (crf + 0.01) + 5.0e4)
    assert annualized_cost(1.0e6, crf) == pytest.approx(1.0e6 * crf)
    with pytest.raises(ValueError, match="crf must be positive"):
        annualized_cost(1.0e6, 0.0)


def test_energy_price_conversion_and_value():
    # 1 kWh = 3.6 MJ (SI Brochure, 9th ed. 2019, Table 8, non-SI units accepted).
    price = energy_price_per_joule(0.10)
    assert price == pytest.approx(0.10 / 3.6e6)
    # 1 GWh lost at 0.10 per kWh is worth 100 000.
    assert lost_energy_value(1.0e6 * 3.6e6, price) == pytest.approx(1.0e5)


def test_civil_cost_power_law():
    assert civil_cost_per_metre(2.0, 100.0, 50.0, 1.5) == pytest.approx(100 + 50 * 2**1.5)
    assert civil_cost_per_metre(2.0) == 0.0


def _steel_cost(d, **kw):
    p = 3.0e6
    t = np.maximum(hoop_thickness(p, d, 150e6, 0.9, 1.5e-3), minimum_handling_thickness(d))
    return pipe_capital_cost(
        d, 500.0, thickness=t, density=7850.0, cost_per_tonne=2500.0,
        fabrication_factor=0.4, installation_factor=0.3, installation_cost_per_metre=80.0,
        civil_fixed=200.0, civil_coefficient=400.0, civil_exponent=1.3,
        contingency_factor=0.15, **kw,
    )


@settings(max_examples=50, deadline=None)
@given(st.floats(0.2, 5.0), st.floats(1.001, 2.0))
def test_capital_cost_rises_with_diameter(d, ratio):
    assert _steel_cost(d * ratio) > _steel_cost(d)


def test_breakdown_sums_and_by_length_pricing():
    t = 0.012
    parts = pipe_cost_breakdown(
        1.5, 100.0, thickness=t, density=7850.0, cost_per_tonne=2000.0,
        fabrication_factor=0.5, fabrication_cost_per_metre=10.0, contingency_factor=0.1,
        civil_fixed=100.0,
    )
    mass = 7850.0 * np.pi * (1.5 + t) * t * 100.0
    assert parts["mass"] == pytest.approx(mass)
    assert parts["material"] == pytest.approx(mass * 2.0)
    assert parts["fabrication"] == pytest.approx(0.5 * mass * 2.0 + 1000.0)
    subtotal = parts["material"] + parts["fabrication"] + parts["installation"] + parts["civil"]
    assert parts["total"] == pytest.approx(1.1 * subtotal)
    by_len = pipe_cost_breakdown(0.8, 200.0, cost_per_metre=350.0, installation_factor=0.2)
    assert by_len["total"] == pytest.approx(200.0 * 350.0 * 1.2)
    assert np.isnan(by_len["mass"])


def test_capital_cost_array_equals_loop():
    d = np.array([0.5, 1.0, 2.0])
    arr = pipe_capital_cost(d, 100.0, cost_per_metre=np.array([100.0, 250.0, 700.0]),
                            civil_coefficient=300.0, civil_exponent=1.2)
    loop = [pipe_capital_cost(a, 100.0, cost_per_metre=c, civil_coefficient=300.0,
                              civil_exponent=1.2) for a, c in zip(d, [100.0, 250.0, 700.0],
                                                                  strict=True)]
    np.testing.assert_allclose(arr, loop, rtol=1e-15)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({}, "exactly one of cost_per_tonne"),
        ({"cost_per_tonne": 1.0, "cost_per_metre": 1.0}, "exactly one of cost_per_tonne"),
        ({"cost_per_tonne": 1.0}, "needs thickness"),
        ({"cost_per_metre": -1.0}, "cost_per_metre must be >= 0"),
    ],
)
def test_capital_cost_bad_input(kwargs, match):
    with pytest.raises(ValueError, match=match):
        pipe_capital_cost(1.0, 100.0, **kwargs)


def test_capital_cost_bad_diameter():
    with pytest.raises(ValueError, match="diameter must be positive"):
        pipe_capital_cost(0.0, 100.0, cost_per_metre=100.0)


# Docstring parameters against signatures: tests/test_docstrings.py, for every module.
