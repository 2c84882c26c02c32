"""The stepped-diameter study: the search's bookkeeping, and the design it returns checked
by the rest of the tool.

Invariants rather than outside references: the dynamic programme itself is checked
against a brute-force search in tests/test_diameter.py. Here the reach table must add up
to the uniform study's own capital and energy, the best uniform row must equal its
candidate row, the case's own pipe must lose the energy stage's energy, and the stepped
design, run as a case of its own, must pass the Pressure checks it is said to pass.
"""

from __future__ import annotations

import copy

import numpy as np
import pytest
from conftest import CASES, copy_demo, edit_file

import penstock
from penstock import surge, water
from penstock.model import hammer, production, run_case, sizing, stepped
from penstock.model import steady as steady_stage

HIGH = "alder-gorge-high-head"
MARGIN = "minimum steady pressure margin at the crown, minimum headwater [m]"
LOW = "minimum pressure head at the crown, minimum headwater [m]"


@pytest.fixture(scope="module")
def high(demo_run):
    return demo_run(HIGH, samples=0)


@pytest.fixture(scope="module")
def parts():
    case = penstock.load_case(CASES / HIGH)
    props = water.water_properties(case.temperature, case.altitude)
    warns, methods = [], type("M", (), {"add": lambda *a: None})()
    st_ = steady_stage.run(case, props, warns, methods, lambda n: None)
    prod = production.run(case, props, st_, warns, methods, lambda n: None)
    speeds, table = hammer.wave_speeds(case, props, warns, methods)
    lengths = (table["to chainage [m]"] - table["from chainage [m]"]).to_numpy()
    model = sizing.DiameterModel(case, props, prod, case_loss=st_.head_loss,
                                 roughness_years=st_.energy_roughness_years,
                                 wave_speed=surge.equivalent_wave_speed(lengths, speeds))
    return case, props, model


def _rows(r):
    return r.design_comparison.set_index("design")


def test_reach_table_adds_up_to_the_uniform_study(parts):
    """At one size everywhere, the reaches' capital and energy sum to the uniform
    study's: the split of the plant's lost energy over the reaches is exact for a
    uniform pipe (its loss is the sum of the reaches' and the local losses')."""
    case, props, model = parts
    sizes = np.array([1.1, 1.3, 1.6])
    group, _, _, cost, capital, lost, feasible, annual = stepped.reach_table(
        case, props, model, sizes)
    assert cost.shape == (int(group.max()) + 1, sizes.size)
    plate, _ = model.wall(sizes)
    for k, d in enumerate(sizes):
        whole = model.costs(np.array([d]), thickness=plate[k][None, :], smooth=False)
        assert capital[:, k].sum() == pytest.approx(float(whole["total"][0]), rel=1e-12)
        exact = float(model.lost_to(model.loss_on_grid(d, model.q_grid)))
        assert lost[:, k].sum() == pytest.approx(exact, rel=1e-9)
    assert annual == pytest.approx(model.cost_model().crf + case.costs["om_fraction"])


def test_stations_start_at_every_segment_and_local_loss_and_bound_the_work(parts,
                                                                         monkeypatch):
    case, _, model = parts
    route = model.route
    keep = route.length > 0
    seg = route.element_segment[keep]
    monkeypatch.setattr(stepped, "MAX_STATION_REACHES", 5)
    group, x0, _ = stepped.stations(route, case.segments, case.losses)
    starts = np.flatnonzero(np.diff(group, prepend=-1) > 0)
    assert set(np.flatnonzero(np.diff(seg) != 0) + 1) <= set(starts)
    for ls in case.losses:
        i = int(np.searchsorted(x0, ls.at, side="left"))
        if i < x0.size:
            assert i in set(starts), ls.label    # the reach at or after the loss
    # one group per MAX_STATION_REACHES-th reach, plus those the segments and losses add
    assert int(group.max()) + 1 <= 5 + len(case.segments) + len(case.losses)
    assert np.all(np.diff(group) >= 0)


def test_best_uniform_row_equals_its_candidate_row(high):
    """The same pipe gives the same numbers everywhere: the comparison's uniform row and
    the candidate table's row at that diameter."""
    _, r = high
    d = r.headline.selected_diameter
    uni = _rows(r).loc[stepped.UNIFORM]
    cand = r.diameter_candidates.set_index("diameter [m]").loc[d]
    for col in ("capital cost [currency]", "energy lost [MWh/year]",
                "annualized cost [currency/year]", MARGIN, "maximum surge rise [m]",
                "head loss at design flow [m]", "steel mass [t]"):
        assert uni[col] == pytest.approx(cand[col], rel=1e-9, abs=1e-9), col
    assert uni["passes the checks"] == cand["passes the checks"]


def test_own_row_loses_the_energy_stage_s_energy(high, parts):
    """The case's own pipe in the comparison loses what the energy stage says it does
    (its energy lost is the one the uniform study rebases on)."""
    _, r = high
    _, _, model = parts
    own = _rows(r).loc[stepped.OWN]
    # the energy stage's loss is an interpolant of the exact one (relative error below
    # 1e-5, steady.loss_function); the comparison evaluates the route exactly
    assert own["energy lost [MWh/year]"] * 3.6e9 == pytest.approx(model.case_lost, rel=1e-5)


def test_stepped_design_passes_the_checks_run_as_a_case_of_its_own(high):
    """A recommended design passes every check the tool makes: the stepped design, built
    as a case and run whole, passes the Pressure checks with the margin the comparison
    gives, and its head loss is the comparison's."""
    case, r = high
    row = _rows(r).loc[stepped.STEPPED]
    assert row["passes the checks"]
    runs = r.stepped_design
    assert len(runs) >= 2   # the demo's high head and high point favour a stepped pipe
    bounds = list(runs["from chainage [m]"]) + [float(runs["to chainage [m]"].iloc[-1])]
    variant = stepped.stepped_case(case, bounds, list(runs["diameter [m]"]))
    own = run_case(variant, samples=0)
    low = own.pressure_checks[LOW].min()
    assert low >= case.pressure_margin - 1e-9
    assert row[MARGIN] == pytest.approx(low - case.pressure_margin, abs=1e-6)
    assert row["head loss at design flow [m]"] == pytest.approx(   # the interpolant's 1e-5
        own.headline.total_loss, rel=1e-5)
    # cheaper than the best uniform diameter that passes the same checks
    assert row["annualized cost [currency/year]"] < \
        _rows(r).loc[stepped.UNIFORM, "annualized cost [currency/year]"]


def test_a_transition_cost_above_every_saving_gives_a_uniform_pipe(high):
    case, r = high
    dear = copy.copy(case)
    dear.diameter_study = {**case.diameter_study, "transition_cost": 1e12}
    out = run_case(dear, samples=0)
    assert len(out.stepped_design) == 1
    row = out.design_comparison.set_index("design").loc[stepped.STEPPED]
    assert row["changes of diameter [-]"] == 0
    # never dearer than the best uniform pipe in the search's own terms
    assert row["annualized cost [currency/year]"] <= _rows(r).loc[
        stepped.UNIFORM, "annualized cost [currency/year]"] * (1 + 1e-9)


def test_stepped_keys_read_with_units(tmp_path):
    folder = copy_demo(HIGH, tmp_path)
    edit_file(folder / "site.toml", "[economics]",
              '[diameter_study]\ntransition_cost = 5000\nminimum_reach = "300 ft"\n\n'
              "[economics]")
    case = penstock.load_case(folder)
    assert case.diameter_study["transition_cost"] == 5000.0
    assert case.diameter_study["minimum_reach"] == pytest.approx(91.44)
