"""Tests of penstock.transients (method of characteristics) against classical results."""

import math

import fluids
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import surge
from penstock import transients as tr
from penstock.constants import GRAVITY


def area(d):
    return math.pi * d * d / 4.0


# One uniform pipe: 1000 m, D = 1 m, a = 1000 m/s (2L/a = 2 s).
L1, D1, A1 = 1000.0, 1.0, 1000.0


def single(flow, head=100.0, friction=0.0, **kw):
    kw.setdefault("min_reaches", 20)
    return tr.simulate([L1], [D1], [A1], [friction], head, 0.0, flow, **kw)


# --------------------------------------------------------------------------- classical checks
@pytest.mark.parametrize("velocity", [0.5, 2.0, 4.0])
def test_instant_closure_gives_joukowsky(velocity):
    # Joukowsky (1900): dH = a dV / g for a closure faster than 2L/a; frictionless, 1 %.
    res = single(velocity * area(D1), law="instant")
    rise = res.valve_head.max() - res.steady_head[-1]
    assert rise == pytest.approx(surge.joukowsky(A1, velocity), rel=0.01)
    assert res.valve_flow[1:].max() == 0.0


@pytest.mark.parametrize("friction", [0.0, 0.015])
def test_period_of_oscillation_is_four_l_over_a(friction):
    # After full closure a reservoir-pipe-valve system oscillates with period 4L/a (Wylie &
    # Streeter 1993 ch. 1; Chaudhry 2014 ch. 1); within 1 %.
    res = single(2.0, head=200.0, friction=friction, law="instant", duration=40.0)
    dev = res.valve_head - res.valve_head[-200:].mean()
    falls = np.nonzero((dev[:-1] > 0) & (dev[1:] <= 0))[0]
    period = np.diff(res.time[falls]).mean()
    assert period == pytest.approx(4 * L1 / A1, rel=0.01)


@pytest.mark.parametrize(("head", "velocity", "closure"), [(100.0, 2.0, 5.0), (500.0, 1.0, 10.0),
                                                       (50.0, 3.0, 20.0), (100.0, 2.0, 1.0)])
def test_frictionless_valve_head_matches_allievi_interlocking(head, velocity, closure):
    # Allievi's interlocking equations (Parmakian 1955) are exact for a frictionless pipe at
    # t = i 2L/a; the MOC with Courant number 1 must reproduce them to rounding.
    res = single(velocity * area(D1), head=head, closure_time=closure)
    rho = surge.allievi_pipeline_constant(A1, velocity, head)
    theta = surge.allievi_time_constant(A1, closure, L1)
    ratios = surge.allievi_interlocking(rho, theta)
    stride = int(round(2 * L1 / A1 / res.time_step))
    sim = res.valve_head[::stride][: ratios.size] / head
    np.testing.assert_allclose(sim, ratios, rtol=1e-9)


def test_slow_closure_against_michaud():
    # Michaud (1878): dH = 2 L V/(g Tc) for a slow closure with the velocity falling
    # linearly. With the orifice law and a small pipeline constant (rho = 0.05) the velocity
    # falls nearly linearly; the rise is lower by about rho, so 5 % tolerance.
    head, velocity, closure = 1020.0, 1.0, 10.0
    res = single(velocity * area(D1), head=head, closure_time=closure)
    rise = res.valve_head.max() - head
    assert rise == pytest.approx(surge.michaud(L1, velocity, closure), rel=0.05)
    assert rise < surge.michaud(L1, velocity, closure)


@pytest.mark.parametrize("rho", [1.5, 3.0])
def test_slow_closure_against_allievi_closed_form(rho):
    # Rigid-column slow-closure formula 1 + k/2 (k + sqrt(k^2 + 4)) (Parmakian 1955,
    # Chaudhry 2014; from memory), valid for rho > 1 and slow closure; theta = 20, 0.1 %.
    head = 100.0
    velocity = rho * 2 * GRAVITY * head / A1
    closure = 20.0 * 2 * L1 / A1
    res = single(velocity * area(D1), head=head, closure_time=closure)
    closed = surge.allievi_max_head(L1, velocity, head, closure)
    assert res.valve_head.max() == pytest.approx(closed, rel=1e-3)


# --------------------------------------------------------------------------- steady state
SERIES = dict(lengths=[600.0, 400.0, 300.0], diameters=[1.4, 1.2, 1.0],
              wave_speeds=[1100.0, 1050.0, 1000.0], friction_factors=[0.012, 0.014, 0.016])


def test_steady_state_matches_darcy_head_loss():
    # Darcy-Weisbach loss computed with the `fluids` reference library (K = f L/D).
    flow = 3.0
    res = tr.simulate(**SERIES, reservoir_head=250.0, tailwater_head=0.0, flow=flow,
                      closure_time=5.0, min_reaches=10)
    loss = sum(fluids.head_from_K(fluids.K_from_f(f, x, d), flow / area(d), g=GRAVITY)
               for f, x, d in zip(SERIES["friction_factors"], SERIES["lengths"],
                                  SERIES["diameters"], strict=True))
    assert res.steady_head[-1] == pytest.approx(250.0 - loss, rel=1e-12)
    # HGL falls linearly inside each segment; at the junctions it equals the losses so far.
    ends = np.searchsorted(res.chainage, res.segment_chainage[1:-1])
    first = fluids.head_from_K(fluids.K_from_f(0.012, 600.0, 1.4), flow / area(1.4))
    assert res.steady_head[ends[0]] == pytest.approx(250.0 - first, rel=1e-12)


def test_open_valve_keeps_steady_state():
    # A valve that never moves must leave the initial state untouched (fixed point).
    res = tr.simulate(**SERIES, reservoir_head=250.0, tailwater_head=0.0, flow=3.0,
                      law="table", opening_table=([0.0, 10.0], [0.8, 0.8]), duration=10.0)
    np.testing.assert_allclose(res.max_head, res.steady_head, rtol=0, atol=1e-9)
    np.testing.assert_allclose(res.min_head, res.steady_head, rtol=0, atol=1e-9)
    np.testing.assert_allclose(res.valve_flow, 3.0, rtol=1e-12)


# --------------------------------------------------------------------------- junctions
def test_series_junction_transmission_coefficient():
    # Wave passing a series junction (Wylie & Streeter 1993 ch. 3): transmitted head
    # s dH with s = 2 (A_i/a_i) / (A_1/a_1 + A_2/a_2), i the pipe the wave comes from.
    # Frictionless; the valve closes instantly in pipe 2; 0.1 %.
    lengths, diam, speeds, flow = [600.0, 400.0], [1.2, 0.8], [1100.0, 1000.0], 1.0
    res = tr.simulate(lengths, diam, speeds, [0.0, 0.0], 100.0, 0.0, flow, law="instant",
                      min_reaches=40, record_chainages=[300.0])
    a1, a2 = res.wave_speeds
    incident = a2 * (flow / area(0.8)) / GRAVITY
    z1, z2 = area(1.2) / a1, area(0.8) / a2
    s = 2 * z2 / (z1 + z2)
    arrival = 400.0 / a2 + (600.0 - res.record_chainage[0]) / a1
    i = np.searchsorted(res.time, arrival + 0.05)
    assert res.record_head[i, 0] - 100.0 == pytest.approx(s * incident, rel=1e-3)


def test_mass_balance_with_junctions():
    # Volume entering minus volume leaving equals the water stored by compressibility and
    # wall stretch, (g A / a^2) dH per metre (Wylie & Streeter 1993 ch. 2 continuity); 0.2 %
    # of the largest net inflow (trapezoid rules in space and time).
    kw = dict(**SERIES, reservoir_head=250.0, tailwater_head=0.0, flow=3.0,
              closure_time=3.0, min_reaches=10, duration=3.0)
    probe = tr.simulate(**kw)
    res = tr.simulate(**kw, record_chainages=probe.chainage)
    assert np.array_equal(res.record_chainage, res.chainage)
    weight = np.zeros(res.chainage.size)
    start = 0
    for seg in range(len(SERIES["lengths"])):
        n = res.reaches[seg]
        dx = SERIES["lengths"][seg] / n
        cap = GRAVITY * area(SERIES["diameters"][seg]) / res.wave_speeds[seg] ** 2
        w = np.full(n + 1, dx * cap)
        w[[0, -1]] *= 0.5
        weight[start:start + n + 1] += w
        start += n + 1      # each segment lists its own end nodes (a junction twice)
    stored = (res.record_head - res.record_head[0]) @ weight
    net_in = np.concatenate(([0.0], np.cumsum(
        0.5 * (res.inlet_flow[1:] + res.inlet_flow[:-1] - res.valve_flow[1:]
               - res.valve_flow[:-1]) * res.time_step)))
    scale = np.abs(net_in).max()
    np.testing.assert_allclose(stored, net_in, rtol=0, atol=0.002 * scale)


def test_convergence_under_reach_refinement():
    # With friction the first-order friction term converges as the reaches are refined:
    # successive differences of the valve maximum shrink (about halving) and the finest
    # two runs agree within 0.1 %.
    lengths, diam, speeds, f = [600.0, 400.0], [1.2, 1.0], [1200.0, 1000.0], [0.03, 0.03]
    peaks = []
    for n in (4, 8, 16, 32):
        res = tr.simulate(lengths, diam, speeds, f, 150.0, 0.0, 4.0, closure_time=4.0,
                          min_reaches=n, wave_speed_tolerance=0.0)
        peaks.append(res.valve_head.max())
    diffs = np.abs(np.diff(peaks))
    assert np.all(diffs[1:] < diffs[:-1])
    assert peaks[-1] == pytest.approx(peaks[-2], rel=1e-3)


def test_partial_closure_reverse_flow_follows_mirrored_orifice_law():
    # Where the valve head falls below tailwater the flow reverses through the opening:
    # Q = -Q0 tau sqrt((Htw - H)/H0) (orifice law, Parmakian 1955), else Q = Q0 tau sqrt(...).
    flow, head = 3.0, 30.0
    # Close in 0.05 s, reopen to 30 % while the first down-surge (t = 2..4 s) holds the
    # valve head far below tailwater.
    table = ([0.0, 0.05, 2.5, 2.55, 10.0], [1.0, 0.0, 0.0, 0.3, 0.3])
    res = single(flow, head=head, friction=0.01, law="table", opening_table=table)
    net0 = res.steady_head[-1]
    expected = flow * res.valve_opening * np.sign(res.valve_head) * np.sqrt(
        np.abs(res.valve_head) / net0)
    assert res.valve_flow.min() < 0.0
    np.testing.assert_allclose(res.valve_flow, expected, rtol=1e-9, atol=1e-12)


# --------------------------------------------------------------------------- grid
def test_grid_adjusts_wave_speeds_within_tolerance():
    grid = tr.characteristic_grid([1000.0, 333.0], [1000.0, 990.0], min_reaches=10)
    assert grid.time_step == pytest.approx(333.0 / 990.0 / 10)
    np.testing.assert_allclose(grid.wave_speeds * grid.reaches * grid.time_step,
                               [1000.0, 333.0], rtol=1e-12)
    assert np.all(np.abs(grid.wave_speed_adjustment) <= 0.05)
    assert grid.wave_speed_adjustment[1] == 0.0


def test_grid_impossible_raises_with_fix():
    with pytest.raises(ValueError, match="Courant condition cannot be met.*more reaches"):
        tr.characteristic_grid([1000.0, 130.0], [1000.0, 1000.0], min_reaches=1,
                               wave_speed_tolerance=0.01)


# --------------------------------------------------------------------------- laws
def test_closure_laws():
    t = np.array([0.0, 1.0, 2.0, 4.0, 8.0])
    np.testing.assert_allclose(tr.valve_opening(t, "linear", 4.0), [1, 0.75, 0.5, 0, 0])
    np.testing.assert_allclose(
        tr.valve_opening(t, "two_stage", 8.0, knee_time=1.0, knee_opening=0.3),
        [1.0, 0.3, 0.3 * 6 / 7, 0.3 * 4 / 7, 0.0])
    np.testing.assert_allclose(
        tr.valve_opening(t, "table", opening_table=([0, 2, 4], [80, 40, 0])),
        [1.0, 0.75, 0.5, 0.0, 0.0])
    np.testing.assert_allclose(tr.valve_opening(t, "instant"), [1, 0, 0, 0, 0])
    s = pd.Series([0.0, 2.0], index=["a", "b"])
    assert list(tr.valve_opening(s, "linear", 4.0).index) == ["a", "b"]


def test_table_law_reproduces_linear_law():
    a = single(2.0, closure_time=6.0)
    b = single(2.0, law="table", opening_table=([0.0, 6.0], [1.0, 0.0]),
               duration=a.time[-1])
    np.testing.assert_allclose(a.valve_head, b.valve_head, rtol=1e-13)


def test_two_stage_lowers_rise_against_fast_linear():
    fast = single(3.0, closure_time=3.0)
    staged = single(3.0, closure_time=12.0, law="two_stage", knee_time=3.0, knee_opening=0.4)
    assert staged.valve_head.max() < fast.valve_head.max()


# --------------------------------------------------------------------------- post-processing
def test_envelope_flags_and_stretches():
    x = np.linspace(0.0, 100.0, 11)
    hmin = np.full(11, 50.0)
    z = np.array([0, 10, 52, 55, 40, 30, 58, 70, 20, 10, 0], dtype=float)
    flags = tr.envelope_flags(x, hmin, z, atmospheric_head=10.3, vapour_head=0.24)
    np.testing.assert_array_equal(flags.sub_atmospheric, z > 50.0)
    np.testing.assert_array_equal(flags.vapour, z - 50.0 >= 10.3 - 0.24)
    np.testing.assert_allclose(flags.sub_atmospheric_stretches, [[20, 30], [60, 70]])
    np.testing.assert_allclose(flags.vapour_stretches, [[70, 70]])
    clear = tr.envelope_flags(x, hmin, np.zeros(11), 10.3, 0.24)
    assert clear.vapour_stretches.shape == (0, 2)


def test_design_pressure_line():
    line = tr.design_pressure_line(120.0, np.array([150.0, 140.0]), np.array([110.0, 115.0]),
                                   margin=5.0)
    np.testing.assert_allclose(line, [165.0, 150.0])


def test_closure_study_and_shortest_closure():
    # The rise falls with closure time; for a small pipeline constant it follows Michaud,
    # so the shortest closure meeting a limit is near 2 L V/(g dH_lim) (5 %).
    velocity, head = 1.0, 1020.0
    study = tr.closure_time_study([L1], [D1], [A1], [0.0], head, 0.0, velocity * area(D1),
                                  [4.0, 6.0, 8.0, 12.0, 16.0], min_reaches=10)
    assert np.all(np.diff(study.max_head_rise) < 0.0)
    limit = 15.0
    tc = tr.shortest_closure_within_limit(study, limit)
    assert tc == pytest.approx(2 * L1 * velocity / (GRAVITY * limit), rel=0.05)


def test_shortest_closure_interpolation_and_errors():
    study = tr.ClosureStudy(np.array([2.0, 4.0, 8.0]), *(np.array(v) for v in (
        [90.0, 50.0, 30.0], [80.0, 40.0, 20.0], [0, 0, 0], [10.0, 30.0, 40.0], [0, 0, 0])))
    assert tr.shortest_closure_within_limit(study, 60.0) == pytest.approx(3.0)
    assert tr.shortest_closure_within_limit(study, 100.0) == 2.0
    assert tr.shortest_closure_within_limit(study, 35.0, "min_head") == pytest.approx(6.0)
    with pytest.raises(ValueError, match="extend closure_times"):
        tr.shortest_closure_within_limit(study, 10.0)
    with pytest.raises(ValueError, match="quantity 'rise' is not known"):
        tr.shortest_closure_within_limit(study, 10.0, "rise")


# --------------------------------------------------------------------------- invariants
@settings(max_examples=15, deadline=None)
@given(st.floats(1.5, 30.0), st.floats(0.5, 4.0), st.floats(0.0, 0.03))
def test_gradual_closure_never_exceeds_joukowsky(closure, velocity, friction):
    # Physical invariant: no closure law exceeds the instantaneous (Joukowsky) rise above
    # the reservoir level.
    res = single(velocity * area(D1), head=300.0, friction=friction, closure_time=closure,
                 min_reaches=8)
    assert res.max_head.max() <= 300.0 + surge.joukowsky(A1, velocity) * (1 + 1e-9)


# --------------------------------------------------------------------------- errors
def test_bad_inputs():
    with pytest.raises(ValueError, match="closure_time must be > 0 s"):
        single(2.0, closure_time=0.0)
    with pytest.raises(ValueError, match="closure_time must be > 0 s"):
        single(2.0, closure_time=-1.0, law="two_stage", knee_time=0.5, knee_opening=0.5)
    with pytest.raises(ValueError, match="closure_time is required"):
        single(2.0)
    with pytest.raises(ValueError, match="physical range"):
        tr.simulate([L1], [D1], [50.0], [0.0], 100.0, 0.0, 1.0, 5.0)
    with pytest.raises(ValueError, match="zero-length"):
        tr.simulate([L1, 0.0], [D1, D1], [A1, A1], [0.0, 0.0], 100.0, 0.0, 1.0, 5.0)
    with pytest.raises(ValueError, match="Courant condition cannot be met"):
        tr.simulate([1000.0, 130.0], [D1, D1], [A1, A1], [0.0, 0.0], 100.0, 0.0, 1.0, 5.0,
                    min_reaches=1, wave_speed_tolerance=0.01)
    with pytest.raises(ValueError, match="law 'slam' is not known"):
        single(2.0, closure_time=5.0, law="slam")
    with pytest.raises(ValueError, match="too large"):
        single(50.0, friction=0.02, closure_time=5.0)
    with pytest.raises(ValueError, match="one value per segment"):
        tr.simulate([L1, L1], [D1, D1, D1], [A1], [0.0], 100.0, 0.0, 1.0, 5.0)


# Docstrings against signatures and units: tests/test_docstrings.py.
