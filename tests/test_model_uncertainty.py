"""The Monte Carlo stage against deterministic runs of the same case.

Checked against the project's own deterministic results (a zero spread must reproduce the
deterministic run; a sample must equal a deterministic run of its sampled inputs) and
against the 1/√N law of the standard error of a quantile (any statistics text, e.g.
Efron & Tibshirani, An Introduction to the Bootstrap, 1993, ch. 6, from memory).
"""

import copy
from pathlib import Path

import numpy as np
import pytest

import penstock

CASES = Path(__file__).resolve().parents[1] / "cases"
SPREADS = dict(roughness_factor=0.0, roughness_growth=0.0, efficiency_offset=0.0,
               flow_scale=0.0, energy_price=0.0, capital_cost=0.0, flow_method="scale")


@pytest.fixture(scope="module")
def base(demo_run):
    return demo_run("alder-gorge-high-head", samples=0)


def _case(base, **kw):
    case = copy.copy(base[0])
    case.uncertainty = {**base[0].uncertainty, **SPREADS, **kw}
    return case


def test_zero_spread_equals_the_deterministic_run(base):
    _, det = base
    r = penstock.run_case(_case(base), samples=50)
    e = r.uncertainty_samples["mean annual energy [MWh]"].to_numpy()
    # a daily record shorter than the power table runs step by step: exact
    np.testing.assert_allclose(e, det.headline.mean_annual_energy / 3.6e9, rtol=1e-9)
    m = r.uncertainty_samples["minimum pressure margin [m]"].to_numpy()
    crown = det.headline.min_pressure_head - base[0].pressure_margin
    assert m.min() <= crown + 1e-9   # the margin checks all flows incl. the aged pipe


def test_a_sample_equals_a_deterministic_run_of_its_inputs(base):
    r = penstock.run_case(_case(base, flow_scale=0.2), samples=3)
    factors = r.uncertainty_samples["flow factor [-]"].to_numpy()
    for i, k in enumerate(factors):
        case = copy.copy(base[0])
        case.flow_record = base[0].flow_record * k
        det = penstock.run_case(case, samples=0)
        assert r.uncertainty_samples["mean annual energy [MWh]"].iloc[i] == pytest.approx(
            det.headline.mean_annual_energy / 3.6e9, rel=1e-9)


def test_seeded_and_reproducible(base):
    a = penstock.run_case(_case(base, flow_scale=0.1, roughness_factor=0.3), samples=40)
    b = penstock.run_case(_case(base, flow_scale=0.1, roughness_factor=0.3), samples=40)
    assert a.uncertainty_samples.equals(b.uncertainty_samples)
    c = penstock.run_case(_case(base, flow_scale=0.1, roughness_factor=0.3, seed=99),
                          samples=40)
    assert not a.uncertainty_samples["mean annual energy [MWh]"].equals(
        c.uncertainty_samples["mean annual energy [MWh]"])


def test_p50_standard_error_falls_as_one_over_root_n(base):
    se = []
    for n in (100, 400):
        r = penstock.run_case(_case(base, flow_scale=0.1), samples=n)
        se.append(r.headline.p50_standard_error)
    assert 1.3 < se[0] / se[1] < 3.2     # 1/√N predicts 2


def test_quantiles_are_ordered_and_losses_matter(base):
    r = penstock.run_case(_case(base, roughness_factor=0.5, efficiency_offset=0.02,
                                flow_scale=0.1, energy_price=0.2, capital_cost=0.2),
                          samples=200)
    h = r.headline
    assert h.p99_energy <= h.p90_energy <= h.p50_energy
    assert r.uncertainty_samples["annualized cost [currency/year]"].notna().all()


def test_energy_falls_with_roughness_and_rises_with_efficiency(base):
    r = penstock.run_case(_case(base, roughness_factor=0.5), samples=60)
    s = r.uncertainty_samples.sort_values("roughness factor [-]")
    assert np.all(np.diff(s["mean annual energy [MWh]"]) < 0)   # rougher, less energy
    r = penstock.run_case(_case(base, efficiency_offset=0.02), samples=60)
    s = r.uncertainty_samples.sort_values("efficiency offset [-]")
    assert np.all(np.diff(s["mean annual energy [MWh]"]) > 0)


def test_bootstrap_of_years_centres_on_the_record_mean(base):
    _, det = base
    r = penstock.run_case(_case(base, flow_method="bootstrap"), samples=300)
    e = r.uncertainty_samples["mean annual energy [MWh]"]
    years = det.energy_by_year[det.energy_by_year["complete year"].astype(bool)]
    sd_of_mean = years["energy [MWh]"].std(ddof=1) / np.sqrt(len(years))
    assert abs(e.mean() - det.headline.mean_annual_energy / 3.6e9) < 4 * sd_of_mean / \
        np.sqrt(300) + 1e-6
    assert e.std(ddof=1) == pytest.approx(sd_of_mean, rel=0.25)
