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
import re

import numpy as np
import pytest
from conftest import copy_demo, edit_file, study_parts

import penstock
from penstock import pipeclasses
from penstock.materials import MATERIALS
from penstock.model import material_study, run_case, sizing, stepped

HIGH = "alder-gorge-high-head"
MARGIN = "minimum steady pressure margin at the crown, minimum headwater [m]"
LOW = "minimum pressure head at the crown, minimum headwater [m]"
RUN = re.compile(r"(\S+) ([\d,.]+)–([\d,.]+) m")


@pytest.fixture(scope="module")
def high(demo_run):
    return demo_run(HIGH, samples=0)


@pytest.fixture(scope="module")
def parts():
    case, props, _, _, model, _, _ = study_parts(HIGH)
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


def test_best_uniform_row_equals_its_candidate_row_where_the_water_hammer_does_not_enter(
        high):
    """The same pipe gives the same numbers everywhere: the comparison's uniform row and
    the candidate table's row at that diameter lose the same energy and head and have the
    same steady margin. (The comparison runs its water hammer on the converged grid with
    the design's own plates as its wall; the candidates on the screening grid.)"""
    _, r = high
    d = r.headline.selected_diameter
    uni = _rows(r).loc[stepped.UNIFORM]
    cand = r.diameter_candidates.set_index("diameter [m]").loc[d]
    for col in ("energy lost [MWh/year]", "value of energy lost [currency/year]", MARGIN,
                "at chainage [m]", "head loss at design flow [m]"):
        assert uni[col] == pytest.approx(cand[col], rel=1e-9, abs=1e-9), col
    assert uni["changes of diameter or material [-]"] == 0


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
    variant = stepped.with_plates(stepped.stepped_case(case, bounds,
                                                       list(runs["diameter [m]"])), runs)
    own = run_case(variant, samples=0)
    # its surge is the one of its own walls on a converged grid (the tool's own 0.5 %)
    assert row["maximum surge rise [m]"] == pytest.approx(own.headline.max_surge_rise,
                                                          rel=0.005)
    low = own.pressure_checks[LOW].min()
    assert low >= case.pressure_margin - 1e-9
    assert row[MARGIN] == pytest.approx(low - case.pressure_margin, abs=1e-6)
    assert row["head loss at design flow [m]"] == pytest.approx(   # the interpolant's 1e-5
        own.headline.total_loss, rel=1e-5)
    # cheaper than the best uniform diameter that passes the same checks
    assert row["annualized cost [currency/year]"] < \
        _rows(r).loc[stepped.UNIFORM, "annualized cost [currency/year]"]
    # the same pipe gives the same thrusts: its reducers, bends and closed ends as the
    # water-hammer stage finds them on the design run as a case of its own (the design
    # pressure line differs by the surge's grid tolerance, 0.5 % of the rise)
    mine, theirs = r.stepped_thrusts, own.fitting_thrusts
    assert list(mine["chainage [m]"]) == pytest.approx(list(theirs["chainage [m]"]))
    assert (mine["fitting"] == "reducer, change of diameter").sum() == len(runs) - 1
    assert list(mine["chainage [m]"][mine["fitting"] == "reducer, change of diameter"]) == \
        pytest.approx(list(runs["from chainage [m]"].iloc[1:]))
    tol = 0.005 * row["maximum surge rise [m]"]
    assert np.allclose(mine["design pressure head at the invert [m]"],
                       theirs["design pressure head at the invert [m]"], rtol=0, atol=tol)
    for col in ("thrust, steady flow with momentum [kN]", "inlet diameter [m]",
                "outlet diameter [m]"):
        assert np.allclose(mine[col], theirs[col], rtol=1e-9), col
    assert np.allclose(mine["governing thrust [kN]"], theirs["governing thrust [kN]"],
                       rtol=tol / mine["design pressure head at the invert [m]"].min())


def test_a_transition_cost_above_every_saving_gives_a_uniform_pipe(high):
    case, r = high
    dear = copy.copy(case)
    dear.diameter_study = {**case.diameter_study, "transition_cost": 1e12}
    assert len(r.stepped_design) >= 2    # at the demo's own transition cost: stepped
    out = run_case(dear, samples=0)
    assert len(out.stepped_design) == 1
    row = out.design_comparison.set_index("design").loc[stepped.STEPPED]
    assert row["changes of diameter or material [-]"] == 0
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


def test_a_route_shorter_than_the_minimum_reach_is_one_run(demo_run):
    case, r = demo_run("millrace-flats-low-head", samples=0)
    assert float(r.route_length if hasattr(r, "route_length") else
                 r.stepped_design["length along the pipe [m]"].sum()) < \
        case.diameter_study["minimum_reach"]
    assert len(r.stepped_design) == 1


def test_stepped_case_keeps_each_segment_and_joins_slivers(parts):
    """Split segments keep material, roughness, its growth and wall; a run boundary a
    metre from a segment's end leaves no one-metre segment (it would set a tiny time step
    for the water hammer)."""
    case, props, _ = parts
    seg_end = case.segments[0].end
    c = stepped.stepped_case(case, [0.0, seg_end - 1.0, case.segments[-1].end], [1.5, 1.2])
    assert all(s.end - s.start >= stepped.SLIVER for s in c.segments)
    assert c.segments[0].start == 0.0 and c.segments[-1].end == case.segments[-1].end
    assert all(a.end == pytest.approx(b.start)
               for a, b in zip(c.segments, c.segments[1:], strict=False))
    for s in c.segments:
        src = next(o for o in case.segments if o.start - 1e-9 <= 0.5 * (s.start + s.end)
                   <= o.end + 1e-9 or o.start - 1e-9 <= s.start + 1.0 <= o.end)
        assert (s.material, s.roughness, s.roughness_growth) == (
            src.material, src.roughness, src.roughness_growth)
    # the sliver joined the piece of its own diameter beside it: 1.2 m still starts a
    # metre before the first segment's end, now as part of the next segment
    small = [s for s in c.segments if s.diameter == 1.2]
    assert small[0].start == pytest.approx(seg_end - 1.0)
    assert all(s.diameter == 1.5 for s in c.segments if s.end <= seg_end - 1.0 + 1e-9)
    # and the case built this way runs whole
    head, rise, _, _ = sizing.moc_design_head(c, props, 20)
    assert np.all(np.isfinite(head)) and rise > 0


@pytest.fixture(scope="module")
def mixed(high):
    """The high-head demo with its stepped search free to use ductile iron and PE100 reach
    by reach beside welded steel."""
    case = copy.copy(high[0])
    case.diameter_study = {**case.diameter_study,
                           "stepped_materials": ["welded_steel", "hdpe", "ductile_iron"]}
    return case, run_case(case, samples=0)


def _as_a_case(case, runs):
    """The runs table's pipe as a case: each run's diameter and material, steel at its
    thickest plate, a class run at the wall of its heaviest class."""
    family = {f["name"]: k for k, f in material_study.FAMILIES.items()}
    bounds = list(runs["from chainage [m]"]) + [float(runs["to chainage [m]"].iloc[-1])]
    mats = [None if m == stepped.STEEL else (family[m], w / 1e3)
            for m, w in zip(runs["material"], runs["thickest wall [mm]"], strict=True)]
    return stepped.with_plates(stepped.stepped_case(case, bounds, list(runs["diameter [m]"]),
                                                    materials=mats), runs)


def test_a_stepped_design_of_mixed_materials_passes_the_tools_checks_as_its_own_case(mixed):
    """A recommended design passes every check the tool makes, whatever its materials: the
    demo's mixed design (ductile iron above, steel below), run as a case of its own, passes
    the Pressure checks with the margin given, its surge is its own walls', every class
    carries the water-hammer stage's design pressure line, the case's own wall check
    passes, and its thrusts are the stage's."""
    case, r = mixed
    runs = r.stepped_design
    row = _rows(r).loc[stepped.STEPPED]
    assert runs["material"].nunique() > 1   # ductile iron above, steel below, at the
    assert row["passes the checks"]         # demo's illustrative prices
    assert row["annualized cost [currency/year]"] <= \
        _rows(r).loc[stepped.UNIFORM, "annualized cost [currency/year]"]
    assert row["changes of diameter or material [-]"] == len(runs) - 1
    assert row["capital cost, with the changes of diameter [currency]"] == pytest.approx(
        runs["capital cost [currency]"].sum()
        + (len(runs) - 1) * case.diameter_study["transition_cost"], rel=1e-12)
    own = run_case(_as_a_case(case, runs), samples=0)
    low = own.pressure_checks[LOW].min()
    assert low >= case.pressure_margin - 1e-9
    assert row[MARGIN] == pytest.approx(low - case.pressure_margin, abs=1e-6)
    assert row["head loss at design flow [m]"] == pytest.approx(own.headline.total_loss,
                                                                rel=1e-5)
    # the comparison ran each class run at its heaviest class's wall, as built here
    assert row["maximum surge rise [m]"] == pytest.approx(own.headline.max_surge_rise,
                                                          rel=0.005)
    line = own.design_pressure_line
    x = line["chainage [m]"].to_numpy()
    h = line["design pressure head at the invert [m]"].to_numpy()
    checked = 0
    for _, run in runs[runs["material"] != stepped.STEEL].iterrows():
        family = next(k for k, f in material_study.FAMILIES.items()
                      if f["name"] == run["material"])
        mat = MATERIALS[material_study.FAMILIES[family]["material"]]
        labels = list(mat.pressure_class_labels)
        for label, a, b in RUN.findall(run["classes or plates"]):
            a, b = float(a.replace(",", "")), float(b.replace(",", ""))
            rated = float(pipeclasses.rated_head(mat.pressure_classes[labels.index(label)],
                                                 _density(case)))
            inside = (x >= a - 1e-6) & (x <= b + 1e-6)
            assert h[inside].max() <= rated * (1 + 1e-3), (label, a, b)
            checked += 1
    assert checked >= 1
    assert (own.own_wall_checks["verdict"] == "passes").all()
    mine, theirs = r.stepped_thrusts, own.fitting_thrusts
    assert list(mine["chainage [m]"]) == pytest.approx(list(theirs["chainage [m]"]))
    assert np.allclose(mine["thrust, steady flow with momentum [kN]"],
                       theirs["thrust, steady flow with momentum [kN]"], rtol=1e-9)


def test_the_mixed_search_is_the_steel_search_when_only_steel_is_allowed(high, mixed):
    """The materials are options beside the steel sizes: allowing them can only lower the
    search's own estimate (its options are a superset), and the steel-only default is the
    search of steel sizes alone."""
    steel_only = _rows(high[1]).loc[stepped.STEPPED]
    assert set(high[1].stepped_design["material"]) == {stepped.STEEL}
    found = [w for w in mixed[1].cautions["message"] if "search's own additive" in w]
    before = [w for w in high[1].cautions["message"] if "search's own additive" in w]
    estimate = [float(re.search(r"estimate was ([\d,]+)", w).group(1).replace(",", ""))
                for w in (found[0], before[0])]
    assert estimate[0] <= estimate[1] + 1.0
    assert steel_only["pipe along the route"].startswith("welded steel")


def _density(case):
    from penstock import water
    return water.water_properties(case.temperature, case.altitude).density
