"""Water hammer at the high points: true boundaries, converged grid, envelopes at every
profile vertex, the worst rejection, physical limits, safe defaults.

Sources: the method of characteristics and its boundaries after Wylie & Streeter (1993),
Fluid Transients in Systems, ch. 3, and Chaudhry (2014), Applied Hydraulic Transients,
ch. 3 (reservoir with entrance loss, series junction, local loss as a boundary); the
speed of sound in water from the `iapws` reference library (IAPWS-95).
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import copy_demo, edit_file

import penstock
from penstock import transients, water, wavespeed
from penstock.case import CaseError
from penstock.model import hammer
from penstock.model.core import Methods
from penstock.model.steady import CROWN_MINIMUM
from penstock.route import build_route

DEMOS = ["alder-gorge-high-head", "cedar-fork-us-units", "millrace-flats-low-head"]


@pytest.fixture(scope="module")
def runs(demo_run):
    return {n: demo_run(n, samples=0)[1] for n in DEMOS}


@pytest.mark.parametrize("name", DEMOS)
def test_initial_state_is_the_steady_grade_line_node_by_node(name):
    """At t = 0 the MOC head equals the steady stage's hydraulic grade line at every node,
    at every rejection flow (away from a local loss moved to a pipe end)."""
    from conftest import CASES

    case = penstock.load_case(CASES / name)
    props = water.water_properties(case.temperature, case.altitude)
    route = build_route(case)
    pipes = hammer._pipes(case, props, route, [], Methods())
    law = hammer._law_args(case.surge)
    for q in hammer.rejection_flows(case):
        res = transients.simulate(**pipes.args(props, q, 60), reservoir_head=case.headwater,
                                  tailwater_head=pipes.downstream, flow=q, **law,
                                  duration=1e-3)
        grid = pipes.gridded(60)
        g = route.grade_lines(np.array([q]), case.headwater, props.kinematic_viscosity)
        hgl = g.hydraulic[0]
        s_route = pipes.axis
        # compare strictly inside the MOC pipes (a junction's two sides are checked below)
        moved = [(min(a, b), max(a, b)) for a, b in grid.moved]
        cuts = np.concatenate([[0.0], np.cumsum(grid.length)])
        s = res.chainage
        inner = ~np.any(np.abs(s[:, None] - cuts[None, :]) < 1e-9, axis=1)
        for lo, hi in moved:
            inner &= ~((s >= lo - 1e-9) & (s <= hi + 1e-9))
        # route nodes at one position (a local loss) are never inside a MOC pipe here
        expect = np.interp(s[inner], s_route, hgl)
        np.testing.assert_allclose(res.steady_head[inner], expect, rtol=0,
                                   atol=1e-9 * case.headwater)
        # the first node: one velocity head and the intake losses below the reservoir
        at0 = hgl[(s_route == 0.0) & ~route.is_reservoir].min()
        assert res.steady_head[0] == pytest.approx(at0, abs=1e-9 * case.headwater)


@pytest.mark.parametrize("name", DEMOS)
def test_transient_minimum_never_above_the_steady_state(runs, name):
    """At every node and vertex the minimum envelope is at or below the state it starts
    from, and the Summary's transient minimum is at or below its steady minimum."""
    r = runs[name]
    env = r.transient_envelope
    assert np.all(env["minimum head [m]"] <= env["initial steady head [m]"] + 1e-9)
    assert np.all(env["maximum head [m]"] >= env["initial steady head [m]"] - 1e-9)
    assert r.headline.min_transient_pressure_head <= r.headline.min_pressure_head + 1e-9


@pytest.mark.parametrize("name", DEMOS)
def test_envelope_is_read_at_every_profile_vertex(runs, name):
    r = runs[name]
    x = set(np.round(r.transient_envelope["chainage [m]"], 6))
    assert set(np.round(r.case.profile["chainage"], 6)) <= x


def test_no_head_below_vapour_pressure_is_shown_unmarked(runs):
    """Alder Gorge's down-surge reaches vapour at its high point: those rows are marked as
    column separation and floored at vapour pressure, never below absolute zero."""
    r = runs["alder-gorge-high-head"]
    props = water.water_properties(r.case.temperature, r.case.altitude)
    env = r.transient_envelope
    floor = props.vapour_head - props.atmospheric_head
    cav = env["column separation (vapour pressure reached) [-]"].astype(bool)
    assert cav.any()
    assert np.all(env[CROWN_MINIMUM] >= floor - 1e-12)
    np.testing.assert_allclose(env.loc[cav, CROWN_MINIMUM], floor)
    assert r.cautions["message"].str.contains("column separation is predicted").any()


@pytest.mark.parametrize("name", DEMOS)
def test_wave_speed_sensitivity_reads_the_envelope_as_the_envelope_sheet(runs, name):
    """At 100 % of the computed wave speeds the sensitivity row is the design-flow
    rejection of the envelope table: the same rise, crown minimum and its chainage."""
    r = runs[name]
    row = r.wave_speed_sensitivity.set_index("wave speeds [% of computed]").loc[100.0]
    env = r.transient_envelope[r.transient_envelope["rejection from"] == "design flow"]
    assert row[CROWN_MINIMUM] == env[CROWN_MINIMUM].min()
    assert row["at chainage [m]"] == env["chainage [m]"].iloc[env[CROWN_MINIMUM].argmin()]
    assert row["column separation (vapour pressure reached) [-]"] == bool(
        env["column separation (vapour pressure reached) [-]"].any())
    assert row["maximum transient rise [m]"] >= env["maximum transient rise [m]"].max() - 1e-9


def test_rejection_from_the_maximum_plant_flow_by_default(runs):
    r = runs["alder-gorge-high-head"]
    assert r.case.maximum_flow > r.case.design_flow
    flows = set(r.transient_envelope["initial flow [m^3/s]"])
    assert r.case.maximum_flow in flows
    rise = r.transient_envelope.groupby("initial flow [m^3/s]")[
        "maximum transient rise [m]"].max()
    assert rise[r.case.maximum_flow] > rise[r.case.design_flow]


def test_grid_is_converged_under_a_further_refinement():
    """One more doubling of the case's converged grid changes the largest rise and the
    deepest drop (nodes and vertices) by less than the stated tolerance."""
    from conftest import CASES

    case = penstock.load_case(CASES / "alder-gorge-high-head")
    props = water.water_properties(case.temperature, case.altitude)
    route = build_route(case)
    pipes = hammer._pipes(case, props, route, [], Methods())
    reaches, conv = hammer.converged_grid(case, props, pipes, pipes.axis)
    assert conv.converged and conv.change <= transients.CONVERGENCE_TOLERANCE
    kw = dict(reservoir_head=case.headwater, tailwater_head=pipes.downstream,
              flow=case.design_flow, **hammer._law_args(case.surge))
    a = transients.simulate(**pipes.args(props, case.design_flow, reaches), **kw)
    b = transients.simulate(**pipes.args(props, case.design_flow, 2 * reaches), **kw)

    def drop(res):
        return float(np.max(transients.envelope_at(res, pipes.axis, "steady")
                            - transients.envelope_at(res, pipes.axis, "min")))

    assert b.max_head_rise.max() == pytest.approx(a.max_head_rise.max(), rel=0.005)
    assert drop(b) == pytest.approx(drop(a), rel=0.005)


def test_a_ridge_between_grid_nodes_sets_the_minimum(tmp_path):
    """A sharp ridge vertex between nodes: the reported minimum lies at the ridge."""
    d = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(d / "profile.csv", "22,106.0,108.2\n", "22,106.0,108.2\n31,107.9,109.0\n")
    r = penstock.run_case(penstock.load_case(d), samples=0)
    env = r.transient_envelope
    worst = env.loc[env[CROWN_MINIMUM].idxmin()]
    assert worst["chainage [m]"] == pytest.approx(31.0)
    # the ridge is not a grid node of the main run: it is read between two nodes
    reaches = int(r.water_hammer_checks.set_index("quantity").loc[
        "MOC reaches used (all pipes)", "value"])
    assert reaches > 1


def test_local_loss_stands_where_it_is():
    """A junction loss c·Q|Q| drops the steady head there, not along the pipe; an open
    valve keeps that state (an exact fixed point of the boundaries)."""
    c, q = 0.02, 2.0
    kw = dict(lengths=[500.0, 500.0], diameters=[1.0, 1.0], wave_speeds=[1000.0, 1000.0],
              friction_factors=[0.0, 0.0], reservoir_head=100.0, tailwater_head=0.0,
              flow=q, junction_losses=[c], velocity_heads=True, inlet_loss=0.01,
              law="table", opening_table=([0.0, 5.0], [1.0, 1.0]), duration=5.0)
    res = transients.simulate(**kw)
    n0 = res.reaches[0] + 1
    vh = (q / (np.pi / 4)) ** 2 / (2 * 9.80665)
    assert res.steady_head[0] == pytest.approx(100.0 - vh - 0.01 * q * q, rel=1e-12)
    assert res.steady_head[n0 - 1] - res.steady_head[n0] == pytest.approx(c * q * q,
                                                                          rel=1e-12)
    np.testing.assert_allclose(res.min_head, res.steady_head, atol=1e-9)
    np.testing.assert_allclose(res.max_head, res.steady_head, atol=1e-9)


def test_rigid_pipe_wave_speed_is_the_speed_of_sound_in_water():
    """sqrt(K/rho) with the tool's water properties against IAPWS-95's speed of sound
    (0.5 %)."""
    from iapws import IAPWS95

    for t_c in (5.0, 15.0, 30.0):
        props = water.water_properties(t_c, 0.0)
        ref = IAPWS95(T=273.15 + t_c, P=0.101325).w
        a = wavespeed.rigid_pipe_wave_speed(props.bulk_modulus, props.density)
        assert a == pytest.approx(ref, rel=0.005)


def test_missing_wall_takes_the_rigid_pipe_upper_bound(tmp_path):
    d = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(d / "site.toml", 'wall_thickness = "14 mm"\n', "")
    r = penstock.run_case(penstock.load_case(d), samples=0)
    props = water.water_properties(r.case.temperature, r.case.altitude)
    a = r.wave_speeds["wave speed [m/s]"].iloc[0]
    assert a == pytest.approx(wavespeed.rigid_pipe_wave_speed(props.bulk_modulus,
                                                              props.density))
    assert r.cautions["message"].str.contains("rigid pipe").any()


def test_flood_level_sets_the_design_line(tmp_path):
    base = copy_demo("millrace-flats-low-head", tmp_path / "a")
    flood = copy_demo("millrace-flats-low-head", tmp_path / "b")
    edit_file(flood / "site.toml", 'headwater = "112.0 m"\n',
              'headwater = "112.0 m"\nheadwater_max = "113.5 m"\n')
    ra = penstock.run_case(penstock.load_case(base), samples=0)
    rb = penstock.run_case(penstock.load_case(flood), samples=0)
    col = "design pressure head at the invert [m]"
    np.testing.assert_allclose(rb.design_pressure_line[col] - ra.design_pressure_line[col],
                               1.5, atol=1e-6)
    assert ra.cautions["message"].str.contains("headwater_max").any()
    assert not rb.cautions["message"].str.contains("no levels.headwater_max").any()


@pytest.mark.parametrize("old, new, key", [
    ('headwater = "112.0 m"\n', 'headwater = "112.0 m"\nheadwater_max = "111 m"\n',
     "levels.headwater_max"),
    ('allowable_rise = "30 %"', 'allowable_rise = "30 %"\nreaches = 0', "surge.reaches"),
])
def test_bad_grid_and_flood_level_are_refused(tmp_path, old, new, key):
    d = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(d / "site.toml", old, new)
    with pytest.raises(CaseError) as err:
        penstock.run_case(penstock.load_case(d), samples=0)
    assert key in str(err.value)


def test_fewer_reaches_than_pipes_is_refused(tmp_path):
    d = copy_demo("alder-gorge-high-head", tmp_path)
    edit_file(d / "site.toml", 'allowable_rise = "25 %"', 'allowable_rise = "25 %"\nreaches = 1')
    from penstock.model import check_case

    with pytest.raises(CaseError, match="surge.reaches"):
        check_case(penstock.load_case(d))


def test_missing_surge_section_is_cautioned(tmp_path):
    d = copy_demo("millrace-flats-low-head", tmp_path)
    text = (d / "site.toml").read_text(encoding="utf-8")
    start = text.index("[surge]")
    end = text.find("\n[", start + 1)
    (d / "site.toml").write_text(text[:start] + (text[end + 1:] if end > 0 else ""),
                                 encoding="utf-8")
    r = penstock.run_case(penstock.load_case(d), samples=0)
    assert r.cautions["message"].str.contains("no \\[surge\\] section").any()


def test_losses_on_one_grid_keep_one_wave_speed_per_pipe():
    """A segment split by local losses keeps one adjusted wave speed, so an instant,
    frictionless closure gives Joukowsky's a·V/g (Joukowsky 1898; Wylie & Streeter 1993
    ch. 1) to 1 %, as the unsplit pipe does; uneven adjustments would add reflections."""
    length = np.array([22.02, 0.0, 36.5, 0.0, 6.05])
    seg = np.array([0, -1, 0, -1, 0])
    k = np.array([0.0, 1e-9, 0.0, 1e-9, 0.0])      # two negligible losses split the pipe
    area = np.full(5, np.pi / 4 * 3.2**2)
    series = transients.series_pipes(length, seg, k, area)
    assert series.length.size == 3
    g = transients.gridded_pipes(series, [796.35], 40)
    assert np.ptp(g.wave_speeds) == 0.0
    q = 18.0
    res = transients.simulate(g.length, [3.2] * g.length.size, g.wave_speeds,
                              [0.0] * g.length.size, 112.0, 100.0, q, law="instant",
                              time_step=g.time_step, junction_losses=g.junction_loss)
    jouk = g.wave_speeds[0] * q / (np.pi / 4 * 3.2**2) / 9.80665
    assert res.max_head_rise.max() == pytest.approx(jouk, rel=0.01)
