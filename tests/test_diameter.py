"""Tests for penstock.diameter: empirical formulas, optimum, snapping and sensitivity."""


import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock.constants import GRAVITY, HOURS_PER_YEAR, SECONDS_PER_HOUR
from penstock.diameter import (
    EMPIRICAL_DIAMETER_METHODS,
    annual_cost_model,
    bier_diameter,
    cost_curve,
    economic_velocity_diameter,
    empirical_diameter,
    fahlbusch_diameter,
    one_at_a_time,
    optimum_diameter,
    sarkaria_diameter,
    sensitivity_grid,
    standard_sizes,
)
from penstock.economics import energy_price_per_joule

KW = 1000.0
HP = 745.6998715822702  # W, mechanical horsepower (NIST SP 811, 2008, B.8)
FT = 0.3048


# ---------------------------------------------------------------------------- empirical


def test_empirical_coefficients_at_unit_inputs():
    # At P = 1 (kW or hp) and H = 1 (m or ft) each formula returns its coefficient.
    assert bier_diameter(1.0 * KW, 1.0) == pytest.approx(0.176, rel=1e-12)  # Bier (1945)
    assert fahlbusch_diameter(1.0 * KW, 1.0) == pytest.approx(0.52, rel=1e-12)  # Fahlbusch
    assert sarkaria_diameter(1.0 * HP, FT) == pytest.approx(4.44 * FT, rel=1e-12)  # Sarkaria


@pytest.mark.parametrize(
    ("fn", "power_exp", "head_exp"),
    [
        (bier_diameter, 0.466, -0.466),  # Bier (1945): D ~ (P/H)^0.466
        (fahlbusch_diameter, 0.43, -0.60),  # Fahlbusch (1987): H^-0.17 (P/H)^0.43
        (sarkaria_diameter, 0.43, -0.65),  # Sarkaria (1979): P^0.43 / H^0.65
    ],
)
def test_empirical_exponents(fn, power_exp, head_exp):
    base = fn(10e6, 100.0)
    assert fn(20e6, 100.0) / base == pytest.approx(2.0**power_exp, rel=1e-12)
    assert fn(10e6, 200.0) / base == pytest.approx(2.0**head_exp, rel=1e-12)


@pytest.mark.parametrize("method", ["bier_1945", "sarkaria_1979", "fahlbusch_1987"])
@pytest.mark.parametrize(("power", "head"), [(1e6, 50.0), (1e7, 100.0), (1e8, 300.0), (5e6, 20.0)])
def test_empirical_velocities_are_plausible(method, power, head):
    # Common practice: economic penstock velocities lie roughly between 2 and 8 m/s,
    # rising with head. Flow from P = rho g Q H eta with eta = 0.9.
    flow = power / (1000.0 * GRAVITY * head * 0.9)
    d = empirical_diameter(method, power=power, net_head=head)
    velocity = 4 * flow / (np.pi * d**2)
    assert 1.5 < velocity < 10.0


def test_economic_velocity_rule():
    # Q = pi/4 m^3/s at 1 m/s fills exactly a 1 m pipe.
    assert economic_velocity_diameter(np.pi / 4, 1.0) == pytest.approx(1.0, rel=1e-15)
    assert empirical_diameter("economic_velocity", flow=10.0, velocity=3.0) == pytest.approx(
        np.sqrt(40.0 / (3.0 * np.pi))
    )
    assert EMPIRICAL_DIAMETER_METHODS["economic_velocity"]["velocity_range"] == (2.0, 4.0)


def test_empirical_array_equals_loop_and_errors():
    powers = np.array([1e6, 5e6, 2e7])
    for method in ("bier_1945", "sarkaria_1979", "fahlbusch_1987"):
        arr = empirical_diameter(method, power=powers, net_head=80.0)
        np.testing.assert_allclose(  # 1 ulp: numpy's array and scalar pow may differ
            arr, [empirical_diameter(method, power=p, net_head=80.0) for p in powers],
            rtol=1e-15,
        )
    with pytest.raises(ValueError, match="method="):
        empirical_diameter("rule_of_thumb", power=1e6, net_head=10.0)
    with pytest.raises(ValueError, match="net_head must be positive"):
        bier_diameter(1e6, 0.0)
    with pytest.raises(ValueError, match="takes"):
        empirical_diameter("bier_1945", flow=1.0)
    with pytest.raises(ValueError, match="needs"):
        empirical_diameter("fahlbusch_1987", power=1e6)


# ---------------------------------------------------------------------------- sizes


def test_standard_sizes():
    sizes = standard_sizes(minimum=1.0, maximum=1.2)
    np.testing.assert_allclose(sizes, [1.0, 1.05, 1.1, 1.15, 1.2])
    dn = standard_sizes("iso_dn", maximum=1.0)
    assert dn[-1] == pytest.approx(1.0) and np.all(np.diff(dn) > 0)
    with pytest.raises(ValueError, match="series="):
        standard_sizes("imperial")


# ---------------------------------------------------------------------------- optimum

A, B = 1.0e5, 2.0e4  # synthetic cost C = A D^2 + B / D^5


def synthetic(d):
    return A * d**2 + B / d**5


D_STAR = (5 * B / (2 * A)) ** (1 / 7)  # dC/dD = 2 A D - 5 B / D^6 = 0


def test_optimum_matches_analytic_and_derivative_is_zero():
    res = optimum_diameter(synthetic, (0.2, 5.0))
    assert res.converged and not res.at_bound
    assert res.diameter == pytest.approx(D_STAR, abs=1e-5)
    assert abs(res.relative_derivative) < 1e-5
    assert res.cost == pytest.approx(synthetic(D_STAR), rel=1e-10)
    # bracketing sizes from the 50 mm series, cheaper one selected
    assert res.lower_size <= res.diameter <= res.upper_size
    assert res.upper_size - res.lower_size == pytest.approx(0.05)
    assert res.selected_cost == min(res.lower_cost, res.upper_cost)
    assert res.warning is None


def test_optimum_snaps_to_user_sizes_and_warns():
    res = optimum_diameter(synthetic, (0.2, 5.0), sizes=[0.5, 3.0])
    assert {res.lower_size, res.upper_size} == {0.5, 3.0}
    assert res.warning is not None and "no available size within" in res.warning
    near = optimum_diameter(synthetic, (0.2, 5.0), sizes=[round(D_STAR, 2)])
    assert near.warning is None and near.selected_size == round(D_STAR, 2)


def test_optimum_at_bound_is_flagged():
    res = optimum_diameter(synthetic, (0.2, 0.5))
    assert res.at_bound
    assert res.diameter == pytest.approx(0.5, abs=1e-4)
    assert "bound" in res.warning


@pytest.mark.parametrize("sizes", [[0.0, 1.0], [-1.0, 1.0, 2.0], []])
def test_bad_size_lists_raise(sizes):
    with pytest.raises(ValueError, match="sizes must"):
        optimum_diameter(synthetic, (0.2, 5.0), sizes=sizes)


@pytest.mark.parametrize("bounds", [(0.0, 1.0), (2.0, 1.0), (-1.0, 3.0)])
def test_bad_bounds_raise(bounds):
    with pytest.raises(ValueError, match="bounds must satisfy"):
        optimum_diameter(synthetic, bounds)


# ---------------------------------------------------------------------------- cost model


def synthetic_energy_lost(d, flow=8.0, length=1500.0, friction_factor=0.012):
    """Darcy-Weisbach with constant f: E = rho g Q h_f t, t = 8760 h, plant eta = 0.9."""
    velocity = 4 * flow / (np.pi * d**2)
    head_loss = friction_factor * length / d * velocity**2 / (2 * GRAVITY)
    return 1000.0 * GRAVITY * flow * head_loss * 0.9 * HOURS_PER_YEAR * SECONDS_PER_HOUR * 0.5


def synthetic_capital(d, cost_per_m2=4000.0, length=1500.0):
    return cost_per_m2 * d**2 * length + 300.0 * d * length


def make_model(energy_price=energy_price_per_joule(0.08), discount_rate=0.08, **kw):
    return annual_cost_model(
        synthetic_capital, synthetic_energy_lost, energy_price=energy_price,
        discount_rate=discount_rate, economic_life=40.0, om_fraction=0.01, **kw,
    )


@settings(max_examples=50, deadline=None)
@given(st.floats(0.3, 5.0), st.floats(1.001, 2.0))
def test_lost_energy_value_falls_with_diameter(d, ratio):
    model = make_model()
    low = model.components(d)["lost_energy_value"]
    high = model.components(d * ratio)["lost_energy_value"]
    assert high < low
    assert model.components(d * ratio)["capital"] > model.components(d)["capital"]


def test_cost_model_components_add_up():
    model = make_model()
    parts = model.components(1.6)
    assert parts["total"] == pytest.approx(
        parts["capital_annual"] + parts["om"] + parts["lost_energy_value"], rel=1e-14
    )
    assert model(1.6) == parts["total"]
    curve = cost_curve(model, [1.0, 1.6, 2.2])
    assert curve[1] == pytest.approx(model(1.6))


def test_tabulated_energy_lost_matches_callable():
    # A pure power law E ~ D^-5 is a straight line in log-log, reproduced by PCHIP.
    grid = np.linspace(0.5, 4.0, 15)
    table_model = annual_cost_model(
        synthetic_capital, (grid, synthetic_energy_lost(grid)),
        energy_price=energy_price_per_joule(0.08), discount_rate=0.08, economic_life=40.0,
        om_fraction=0.01,
    )
    a = optimum_diameter(make_model(), (0.5, 4.0))
    b = optimum_diameter(table_model, (0.5, 4.0))
    assert b.diameter == pytest.approx(a.diameter, rel=1e-5)
    assert abs(b.relative_derivative) < 1e-4
    with pytest.raises(ValueError, match="outside the energy_lost table range"):
        table_model(5.0)


def test_cost_model_bad_economics_raise():
    with pytest.raises(ValueError, match="greater than -100 %"):
        make_model(discount_rate=-1.0)
    with pytest.raises(ValueError, match="economic life"):
        annual_cost_model(synthetic_capital, synthetic_energy_lost, energy_price=1e-8,
                          discount_rate=0.05, economic_life=0.0)
    with pytest.raises(ValueError, match="energy_lost must be a callable"):
        annual_cost_model(synthetic_capital, 5.0, energy_price=1e-8, discount_rate=0.05,
                          economic_life=30.0)


def test_optimum_of_physical_model_has_zero_derivative():
    res = optimum_diameter(make_model(), (0.3, 6.0))
    assert abs(res.relative_derivative) < 1e-5 and not res.at_bound
    # Economic velocity at the optimum lies in the broad common-practice band 1-7 m/s.
    velocity = 4 * 8.0 / (np.pi * res.diameter**2)
    assert 1.0 < velocity < 7.0


# ---------------------------------------------------------------------------- sensitivity


def test_sensitivity_grid_trends():
    prices = energy_price_per_joule(np.array([0.04, 0.08, 0.16]))
    rates = np.array([0.04, 0.08, 0.12])
    grid = sensitivity_grid(make_model, prices, rates, bounds=(0.3, 6.0))
    assert grid.optimum_diameter.shape == (3, 3)
    # dearer energy -> larger pipe; dearer money -> smaller pipe
    assert np.all(np.diff(grid.optimum_diameter, axis=0) > 0)
    assert np.all(np.diff(grid.optimum_diameter, axis=1) < 0)
    assert grid.results[1][1].diameter == pytest.approx(
        optimum_diameter(make_model(prices[1], rates[1]), (0.3, 6.0)).diameter
    )


def test_one_at_a_time_rows():
    def factory(energy_price, discount_rate, cost_per_m2):
        return annual_cost_model(
            lambda d: synthetic_capital(d, cost_per_m2), synthetic_energy_lost,
            energy_price=energy_price, discount_rate=discount_rate, economic_life=40.0,
        )

    base = {"energy_price": energy_price_per_joule(0.08), "discount_rate": 0.08,
            "cost_per_m2": 4000.0}
    rows = one_at_a_time(factory, base, bounds=(0.3, 6.0), variation=0.2)
    assert rows[0].name == "base" and rows[0].diameter_change == 0.0
    assert len(rows) == 1 + 2 * 3
    by = {(r.name, round(r.factor, 2)): r for r in rows}
    assert by[("energy_price", 1.2)].optimum_diameter > rows[0].optimum_diameter
    assert by[("cost_per_m2", 1.2)].optimum_diameter < rows[0].optimum_diameter
    assert by[("discount_rate", 0.8)].value == pytest.approx(0.064)
    with pytest.raises(ValueError, match="variation must lie"):
        one_at_a_time(factory, base, bounds=(0.3, 6.0), variation=1.5)
    with pytest.raises(ValueError, match="not in base_inputs"):
        one_at_a_time(factory, base, bounds=(0.3, 6.0), names=["steel_price"])


# Docstring parameters against signatures: tests/test_docstrings.py, for every module.


# --------------------------------------------------------------------------- stepped design
# The dynamic programme against brute force over every stepped design (a check of the
# algorithm itself; no published source is needed for an exhaustive search).
def _brute_force(lengths, cost, trans, min_len, ok):
    import itertools

    n_reach, n_opt = cost.shape
    best = np.inf
    for combo in itertools.product(range(n_opt), repeat=n_reach):
        combo = np.array(combo)
        if not ok[np.arange(n_reach), combo].all():
            continue
        change = np.flatnonzero(combo[1:] != combo[:-1]) + 1
        edges = np.concatenate([[0], change, [n_reach]])
        if any(lengths[a:b].sum() < min_len * (1 - 1e-12) for a, b in zip(edges[:-1],
                                                                           edges[1:],
                                                                           strict=True)):
            continue
        total = cost[np.arange(n_reach), combo].sum() + sum(
            trans[combo[j - 1], combo[j]] for j in change)
        best = min(best, total)
    return best


@settings(max_examples=120, deadline=None)
@given(st.integers(1, 6), st.integers(1, 3), st.integers(0, 2**32 - 1),
       st.floats(0.0, 1.0), st.floats(0.0, 0.6), st.booleans())
def test_stepped_design_equals_brute_force(n_reach, n_opt, seed, min_share, t_scale, gaps):
    from penstock.diameter import stepped_design

    rng = np.random.default_rng(seed)
    lengths = rng.uniform(10.0, 200.0, n_reach)
    cost = rng.uniform(1.0, 100.0, (n_reach, n_opt))
    trans = t_scale * rng.uniform(0.0, 100.0, (n_opt, n_opt))
    ok = rng.random((n_reach, n_opt)) > 0.25 if gaps else np.ones((n_reach, n_opt), bool)
    min_len = min_share * lengths.sum()
    want = _brute_force(lengths, cost, trans, min_len, ok)
    if not np.isfinite(want):
        with pytest.raises(ValueError, match="no stepped design"):
            stepped_design(lengths, cost, transition_cost=trans, minimum_length=min_len,
                           feasible=ok)
        return
    got = stepped_design(lengths, cost, transition_cost=trans, minimum_length=min_len,
                         feasible=ok)
    assert got.cost == pytest.approx(want, rel=1e-12)
    # the design it returns costs what it says, and its runs tile the route
    opt = got.option
    change = np.flatnonzero(opt[1:] != opt[:-1]) + 1
    own = cost[np.arange(n_reach), opt].sum() + sum(trans[opt[j - 1], opt[j]] for j in change)
    assert own == pytest.approx(got.cost, rel=1e-12)
    assert got.runs[0][0] == 0 and got.runs[-1][1] == n_reach - 1
    for (a, b, k), nxt in zip(got.runs, got.runs[1:] + ((n_reach, None, None),), strict=True):
        assert nxt[0] == b + 1 and (opt[a:b + 1] == k).all()
        assert lengths[a:b + 1].sum() >= min_len * (1 - 1e-12)


@settings(max_examples=40, deadline=None)
@given(st.integers(2, 40), st.integers(2, 12), st.integers(0, 2**32 - 1))
def test_a_dear_transition_gives_the_best_uniform_design(n_reach, n_opt, seed):
    from penstock.diameter import stepped_design

    rng = np.random.default_rng(seed)
    lengths = rng.uniform(10.0, 200.0, n_reach)
    cost = rng.uniform(1.0, 100.0, (n_reach, n_opt))
    uniform = cost.sum(axis=0)
    # a change costs more than any stepped design could save
    dear = stepped_design(lengths, cost, transition_cost=uniform.max() - cost.min(axis=1).sum()
                          + 1.0)
    assert len(dear.runs) == 1 and dear.cost == pytest.approx(uniform.min(), rel=1e-12)
    # free changes never cost more than the best uniform design
    free = stepped_design(lengths, cost, minimum_length=0.3 * lengths.sum())
    assert free.cost <= uniform.min() * (1 + 1e-12)


def test_stepped_design_refuses_bad_input():
    from penstock.diameter import stepped_design

    with pytest.raises(ValueError, match="minimum_length"):
        stepped_design([10.0, 20.0], np.ones((2, 2)), minimum_length=40.0)
    with pytest.raises(ValueError, match="reach_cost"):
        stepped_design([10.0, 20.0], np.ones((3, 2)))
    with pytest.raises(ValueError, match="lengths"):
        stepped_design([10.0, -1.0], np.ones((2, 2)))
