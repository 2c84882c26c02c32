"""Tests of penstock.energy.

Reference values: hand formulas (hydraulic power rho g Q H, energy = power x 8760 h),
numpy's Weibull quantile (Hyndman & Fan 1996, definition 6) for firm power,
IAPWS-95 water density from the `iapws` reference library.
"""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws import IAPWS95

from penstock import energy as en
from penstock import turbines as tu
from penstock.constants import GRAVITY, HOURS_PER_YEAR, SECONDS_PER_HOUR

# IAPWS-95 liquid water density at 10 degC, 0.101325 MPa (reference library iapws).
DENSITY = IAPWS95(T=283.15, P=0.101325).rho
YEAR_2001 = pd.date_range("2001-01-01", "2002-01-01", freq="h", inclusive="left")


def synthetic(index, seed=7):
    rng = np.random.default_rng(seed)
    day = np.asarray(index.day_of_year)
    return np.exp(np.log(3.0) + 0.7 * np.sin(2 * np.pi * day / 365.25)
                  + 0.3 * rng.standard_normal(len(index)))


def loss_table(total_flow):
    grid = np.linspace(0.0, 10.0, 101)
    return np.interp(total_flow, grid, 0.08 * grid ** 2)


# --- power -----------------------------------------------------------------------------------

def test_hydraulic_and_electrical_power_hand_values():
    # hand formula rho g Q H: 1000 * 9.80665 * 2 * 50 = 980 665 W
    assert en.hydraulic_power(2.0, 50.0, 1000.0) == pytest.approx(980_665.0, rel=1e-12)
    expected = 980_665.0 * 0.9 * 0.98 * 0.96 * 0.99 * 0.97
    assert en.electrical_power(2.0, 50.0, 1000.0, 0.9, 0.98, 0.96, 0.99, 0.97) == \
        pytest.approx(expected, rel=1e-12)
    series = pd.Series([1.0, 2.0], index=YEAR_2001[:2])
    out = en.electrical_power(series, 50.0, 1000.0, 0.9)
    assert isinstance(out, pd.Series) and out.index.equals(series.index)


def test_electrical_power_rejects_efficiency_above_one():
    with pytest.raises(ValueError, match="generator_efficiency"):
        en.electrical_power(2.0, 50.0, 1000.0, 0.9, generator_efficiency=1.2)


# --- energy for a constant flow vs hand formula -------------------------------------------------

@pytest.mark.parametrize("freq", ["h", "D"])
def test_constant_flow_energy_is_hand_formula(freq):
    index = pd.date_range("2001-01-01", "2002-01-01", freq=freq, inclusive="left")
    flow, head = 3.0, 60.0
    operation = en.simulate_plant(np.full(len(index), flow), head, flow, density=DENSITY,
                                  turbine_type="francis", generator_efficiency=0.96)
    summary = en.energy_summary(index, operation.power)
    eta = tu.turbine_efficiency(1.0, "francis")
    # hand formula: E = rho g Q H eta_t eta_g x 8760 h x 3600 s/h
    expected = DENSITY * GRAVITY * flow * head * eta * 0.96 * HOURS_PER_YEAR * SECONDS_PER_HOUR
    assert summary.mean_annual_energy == pytest.approx(expected, rel=1e-12)
    assert summary.annual.loc[2001, "complete"]
    assert summary.firm_power == pytest.approx(expected / (HOURS_PER_YEAR * 3600), rel=1e-12)


def test_monthly_sums_equal_annual_total():
    index = pd.date_range("2001-07-01", "2004-01-01", freq="h", inclusive="left")
    operation = en.simulate_plant(synthetic(index), 45.0, 2.5, density=DENSITY, n_units=2,
                                  head_loss=loss_table)
    summary = en.energy_summary(index, operation.power)
    np.testing.assert_allclose(summary.monthly.sum(axis=1), summary.annual["energy"],
                               rtol=1e-12)
    assert summary.mean_monthly_energy.sum() == pytest.approx(summary.mean_annual_energy,
                                                              rel=1e-12)
    # 2001 starts in July -> incomplete, flagged and left out of the mean; 2004 is a leap
    # year absent here; 2002 and 2003 have 8760 hourly steps.
    assert list(summary.annual["complete"]) == [False, True, True]
    assert list(summary.annual["expected_steps"]) == [8760, 8760, 8760]
    assert summary.mean_annual_energy == pytest.approx(
        summary.annual.loc[[2002, 2003], "energy"].mean())
    assert summary.total_energy == pytest.approx(summary.annual["energy"].sum())


def test_leap_year_and_annualised_basis():
    index = pd.date_range("2004-03-01", periods=24 * 30, freq="h")
    summary = en.energy_summary(index, np.full(len(index), 1.0e6))
    assert summary.annual["expected_steps"].iloc[0] == 8784  # 366 days x 24 h
    assert summary.mean_annual_basis == "annualised record"
    # 1 MW held for a year of 8760 h (hand formula)
    assert summary.mean_annual_energy == pytest.approx(1.0e6 * HOURS_PER_YEAR * 3600)


def test_capacity_factor_and_firm_power():
    power = synthetic(YEAR_2001) * 1.0e5
    summary = en.energy_summary(YEAR_2001, power, installed_capacity=power.max())
    assert summary.capacity_factor == pytest.approx(power.mean() / power.max(), rel=1e-12)
    # Reference: numpy Weibull quantile (Hyndman & Fan 1996, definition 6) of the power
    assert summary.firm_power == pytest.approx(np.quantile(power, 0.05, method="weibull"))
    assert np.all(np.diff(summary.power_duration.flow) <= 0)


def test_loss_accounting_hand_values():
    flow, head, loss = 2.0, 50.0, 4.0
    river = np.full(len(YEAR_2001), flow + 1.5)  # 1.0 residual, 0.5 spilled
    operation = en.simulate_plant(river, head, flow, density=DENSITY, turbine_type="pelton",
                                  head_loss=lambda q: loss * (q / flow) ** 2, residual=1.0)
    summary = en.energy_summary(YEAR_2001, operation.power,
                                power_without_friction=operation.power_without_friction,
                                spill_flow=operation.spill_flow,
                                residual_flow=operation.residual_flow, gross_head=head,
                                density=DENSITY)
    seconds = HOURS_PER_YEAR * SECONDS_PER_HOUR
    eta = tu.turbine_efficiency(1.0, "pelton")
    # hand formulas: friction loss rho g Q h_f eta T; spill and residual rho g Q H_g T
    assert summary.mean_annual_friction_loss == pytest.approx(
        DENSITY * GRAVITY * flow * loss * eta * seconds, rel=1e-12)
    assert summary.mean_annual_spill_energy == pytest.approx(
        DENSITY * GRAVITY * 0.5 * head * seconds, rel=1e-12)
    assert summary.mean_annual_residual_energy == pytest.approx(
        DENSITY * GRAVITY * 1.0 * head * seconds, rel=1e-12)


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(0.0, 20.0), min_size=2, max_size=48), st.floats(0.0, 0.3),
       st.floats(0.0, 1.0), st.integers(1, 3))
def test_power_bounded_and_energy_never_falls_when_losses_fall(flows, coefficient, shrink,
                                                               n_units):
    index = YEAR_2001[:len(flows)]
    river = np.array(flows)
    gross = 40.0
    runs = [en.simulate_plant(river, gross, 3.0, density=DENSITY, n_units=n_units,
                              turbine_type="kaplan", head_loss=lambda q, c=c: c * q ** 2)
            for c in (coefficient, coefficient * shrink)]
    assert np.all(runs[0].power <= DENSITY * GRAVITY * river * gross + 1e-6)
    energies = [en.energy_summary(index, r.power).total_energy for r in runs]
    assert energies[1] >= energies[0] - 1e-6 * max(energies[0], 1.0)
    np.testing.assert_allclose(runs[0].turbined_flow + runs[0].spill_flow
                               + runs[0].residual_flow, river, atol=1e-9)


def test_simulate_plant_array_equals_loop_of_scalars():
    river = np.linspace(0.0, 9.0, 25)
    whole = en.simulate_plant(river, 30.0, 2.0, density=DENSITY, n_units=3,
                              turbine_type="crossflow", head_loss=loss_table, residual=0.3)
    loop = [en.simulate_plant(np.array([q]), 30.0, 2.0, density=DENSITY, n_units=3,
                              turbine_type="crossflow", head_loss=loss_table,
                              residual=0.3).power[0] for q in river]
    np.testing.assert_array_equal(whole.power, loop)


# --- tabulated power against the step-by-step operation --------------------------------------

@settings(max_examples=20, deadline=None)
@given(st.integers(1, 3), st.sampled_from(["francis", "pelton", "kaplan", "crossflow"]),
       st.floats(0.0, 0.15), st.floats(0.0, 8.0), st.floats(-0.05, 0.05),
       st.integers(0, 10_000))
def test_tabulated_power_equals_simulate_plant(n_units, kind, coefficient, swing, offset, seed):
    # the table's only error is its interpolation between nodes (penstock's own
    # simulate_plant at every node): energies to 1e-5, each step to 1 % of rated power
    rng = np.random.default_rng(seed)
    steps = 3000
    river = rng.gamma(1.5, 2.0, (2, steps))
    river[:, :50] = 0.0
    river[:, 50:100] = 20.0                     # full load and shut down, both exact
    gross = 60.0 + swing * np.sin(np.arange(steps) / 97.0)
    offsets = np.array([[offset], [-offset]])
    kw = dict(density=DENSITY, n_units=n_units, turbine_type=kind, residual=0.4,
              head_loss=lambda q: coefficient * q ** 2,
              head_gain=lambda q: 0.02 * q, efficiency_offset=offsets)
    exact = en.simulate_plant(river, gross, 2.5, **kw)
    table = en.tabulated_power(river, gross, 2.5, **kw)
    np.testing.assert_array_equal(table.offered_flow == 0.0, exact.turbined_flow == 0.0)
    rated = DENSITY * GRAVITY * 2.5 * n_units * 61.0
    for got, want in ((table.power, exact.power),
                      (table.power_without_friction, exact.power_without_friction)):
        want = np.asarray(want)
        assert np.abs(got - want).max() <= 0.01 * rated
        np.testing.assert_allclose(got.sum(axis=1), want.sum(axis=1), rtol=1e-5, atol=1e-6)
        np.testing.assert_allclose(got[:, 50:100], want[:, 50:100], rtol=1e-12)
        assert np.all(got[:, :50] == 0.0)


def test_tabulated_power_rejects_what_simulate_plant_refuses():
    with pytest.raises(ValueError, match="turbine_type"):
        en.tabulated_power(np.ones(3), 30.0, 2.0, density=DENSITY, turbine_type="steam")
    with pytest.raises(ValueError, match="head_loss"):
        en.tabulated_power(np.ones(3), 30.0, 2.0, density=DENSITY, head_loss=np.ones(3))
    with pytest.raises(ValueError, match="river_flow"):
        en.tabulated_power(np.array([1.0, -1.0]), 30.0, 2.0, density=DENSITY)


def test_efficiency_offset_scales_power_at_the_dispatched_efficiency():
    river = np.linspace(0.0, 6.0, 40)
    base = en.simulate_plant(river, 30.0, 2.0, density=DENSITY, n_units=3,
                             head_loss=loss_table)
    moved = en.simulate_plant(river, 30.0, 2.0, density=DENSITY, n_units=3,
                              head_loss=loss_table, efficiency_offset=0.03)
    eta = np.asarray(base.turbine_efficiency)
    run = eta > 0
    np.testing.assert_array_equal(moved.n_running, base.n_running)
    np.testing.assert_allclose(moved.power[run], base.power[run] * (eta[run] + 0.03) / eta[run],
                               rtol=1e-12)
    assert np.all(moved.power[~run] == 0.0)


# --- bad input -------------------------------------------------------------------------------

def test_energy_summary_rejects_bad_records():
    power = np.ones(len(YEAR_2001))
    with pytest.raises(ValueError, match=r"gap of 3 missing step\(s\)"):
        en.energy_summary(YEAR_2001.delete([10, 11, 12]), power[:-3])
    with pytest.raises(ValueError, match="duplicate timestamp 2001-01-01 05:00:00"):
        en.energy_summary(YEAR_2001[:-1].insert(5, YEAR_2001[5]), power)
    bad = power.copy()
    bad[7] = -1.0
    with pytest.raises(ValueError, match=r"power: negative value -1.0 at row 7"):
        en.energy_summary(YEAR_2001, bad)


def test_simulate_plant_rejects_nan_flow():
    river = pd.Series([1.0, np.nan, 2.0], index=YEAR_2001[:3])
    with pytest.raises(ValueError,
                       match=r"river_flow: value nan at row 1 \(index 2001-01-01 01:00:00\)"):
        en.simulate_plant(river, 30.0, 2.0, density=DENSITY)


# --- design flow study -----------------------------------------------------------------------

def test_design_flow_study_trends():
    river = synthetic(YEAR_2001)
    study = en.design_flow_study(YEAR_2001, river, 50.0, density=DENSITY, head_loss=loss_table,
                                 residual=0.5, n_units=2, turbine_type="francis",
                                 generator_efficiency=0.96)
    assert len(study) == 11
    np.testing.assert_allclose(study.design_exceedance, np.arange(0.10, 0.601, 0.05))
    # Larger design flow (lower exceedance) -> more capacity, lower capacity factor.
    assert np.all(np.diff(study.design_flow) < 0)
    assert np.all(np.diff(study.installed_capacity) < 0)
    assert np.all(np.diff(study.capacity_factor) > 0)
    assert np.all((study.capacity_factor > 0) & (study.capacity_factor <= 1))


def test_design_flow_study_given_flows_constant_river():
    river = np.full(len(YEAR_2001), 4.0)
    study = en.design_flow_study(YEAR_2001, river, 50.0, density=DENSITY, design_flows=[4.0],
                                 turbine_type="kaplan")
    # constant river at the design flow: capacity factor 1, energy = capacity x 8760 h
    assert study.capacity_factor.iloc[0] == pytest.approx(1.0, rel=1e-12)
    assert study.mean_annual_energy.iloc[0] == pytest.approx(
        study.installed_capacity.iloc[0] * HOURS_PER_YEAR * SECONDS_PER_HOUR, rel=1e-12)


def test_design_flow_study_needs_callable_head_loss():
    with pytest.raises(ValueError, match="head_loss: expected a callable"):
        en.design_flow_study(YEAR_2001, np.ones(len(YEAR_2001)), 50.0, density=DENSITY,
                             head_loss=np.zeros(len(YEAR_2001)))


@pytest.mark.parametrize("periods,freq", [(24 * 366 * 2 + 500, "h"), (24 * 200, "h"),
                                          (3 * 365 + 40, "D")])
def test_mean_annual_weights_give_the_summary_mean(periods, freq):
    """One definition of a year: the weights reproduce energy_summary's mean annual
    energy, on complete calendar years or on the annualised record."""
    idx = pd.date_range("2019-01-01", periods=periods, freq=freq)
    power = 1e6 * (1.5 + np.sin(np.arange(periods) / 300.0))
    summ = en.energy_summary(idx, power)
    w = en.mean_annual_weights(idx)
    step = (idx[1] - idx[0]).total_seconds()
    assert np.sum(w * power * step) == pytest.approx(summ.mean_annual_energy, rel=1e-12)


def test_net_head_convention():
    assert en.net_head(100.0, 7.0) == 93.0
    assert en.net_head(100.0, 7.0, 0.4) == pytest.approx(93.4)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(0.0, 10.0), min_size=1, max_size=50),
       st.lists(st.floats(-5.0, 5.0), min_size=4, max_size=4))
def test_flow_grid_weights_integrate_any_function_of_the_flow(flows, coef):
    """W @ f(grid) is the weighted sum of f's linear interpolant at the flows, for any f:
    checked against numpy's own interpolation of a cubic."""
    q = np.asarray(flows)
    w = np.linspace(0.5, 2.0, q.size)
    grid = np.linspace(0.0, 10.0, 37)
    f = np.polyval(coef, grid)
    weights = en.flow_grid_weights(q, w, grid)
    assert weights @ f == pytest.approx(np.sum(w * np.interp(q, grid, f)), rel=1e-9,
                                        abs=1e-9)
    assert weights.sum() == pytest.approx(w.sum())


def test_flow_grid_weights_refuse_a_bad_grid_or_flow():
    with pytest.raises(ValueError, match="uniform"):
        en.flow_grid_weights([1.0], [1.0], [0.0, 1.0, 3.0])
    with pytest.raises(ValueError, match="within"):
        en.flow_grid_weights([4.0], [1.0], np.linspace(0, 3, 4))
