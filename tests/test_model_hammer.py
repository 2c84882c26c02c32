"""The water-hammer stage on the demo cases, against the steady stage and hand formulas.

References: Joukowsky's rise a·ΔV/g and Michaud's 2LV/(gTc) as in Wylie & Streeter,
Fluid Transients in Systems (1993), ch. 1 (from memory); the method-of-characteristics
solver itself is checked against them in tests/test_transients.py.
"""

import math
import re
from pathlib import Path

import numpy as np
import pytest

from penstock.constants import GRAVITY

CASES = Path(__file__).resolve().parents[1] / "cases"

CROWN = "minimum pressure head at the crown, minimum headwater [m]"


@pytest.fixture(scope="module")
def alder(demo_run):
    return demo_run("alder-gorge-high-head")


def _check(r, name):
    return float(r.water_hammer_checks.set_index("quantity").loc[name, "value"])


def test_steady_state_before_closure_matches_the_steady_stage(alder):
    # the reservoir node carries the entrance losses and the velocity head: the MOC's
    # first head is the steady stage's hydraulic grade line just inside the intake
    case, r = alder
    env = r.transient_envelope[r.transient_envelope["rejection from"] == "design flow"]
    gl = r.grade_lines[r.grade_lines["flow case"] == "design flow"]
    inside = gl[gl["chainage [m]"] == 0.0]["hydraulic grade line [m]"].min()
    assert env["initial steady head [m]"].iloc[0] == pytest.approx(inside, rel=1e-12)
    assert env["initial steady head [m]"].iloc[0] < case.headwater


def test_joukowsky_and_michaud_by_hand(alder):
    case, r = alder
    a, v = r.headline.joukowsky_wave_speed, r.headline.joukowsky_velocity
    seg = case.segments[-1]
    assert v == pytest.approx(case.design_flow / seg.area, rel=1e-12)
    assert _check(r, "Joukowsky rise a·ΔV/g, full instant closure") == pytest.approx(
        a * v / GRAVITY, rel=1e-12)
    wave = r.wave_speeds
    length = _check(r, "pipe length along the route")
    tc = case.surge["closure_time"]
    v_mean = sum(case.design_flow / s.area * L for s, L in zip(
        case.segments, _segment_lengths(r, case))) / length
    assert _check(r, "Michaud rise 2·L·V/(g·Tc)") == pytest.approx(
        2 * length * v_mean / (GRAVITY * tc), rel=1e-9)
    assert _check(r, "wave travel time Σ L/a") == pytest.approx(
        sum(L / a for L, a in zip(_segment_lengths(r, case), wave["wave speed [m/s]"])),
        rel=1e-12)


def _segment_lengths(r, case):
    gl = r.grade_lines[r.grade_lines["flow case"] == "design flow"]
    x = gl["chainage [m]"].to_numpy()
    z = gl["pipe elevation [m]"].to_numpy()
    seg_len = np.hypot(np.diff(x), np.diff(z))
    mid = 0.5 * (x[1:] + x[:-1])
    return [float(seg_len[(mid > s.start) & (mid < s.end)].sum()) for s in case.segments]


def test_slow_closure_rise_is_of_michaud_order(alder):
    # for a slow linear closure the simulated rise lies below Michaud's (which assumes the
    # velocity falls linearly at the valve) and above a tenth of it (common practice)
    _, r = alder
    env = r.transient_envelope
    rise = env[env["rejection from"] == "design flow"]["maximum transient rise [m]"].max()
    michaud = _check(r, "Michaud rise 2·L·V/(g·Tc)")
    assert 0.1 * michaud < rise <= 1.05 * michaud


def test_shortest_closure_meets_the_limit(alder):
    case, r = alder
    t = r.headline.shortest_closure
    assert t is not None
    allowable = _check(r, "allowable rise")
    cs = r.closure_time_study
    rise_at_t = np.interp(t, cs["closure time [s]"], cs["maximum head rise [m]"])
    assert rise_at_t == pytest.approx(allowable, rel=1e-9)
    assert allowable == pytest.approx(case.surge["allowable_rise"] * (
        case.headwater - case.profile["elevation"].iloc[-1]), rel=1e-12)
    # longer closures give smaller rises
    assert np.all(np.diff(cs["maximum head rise [m]"]) < 0)


def test_design_pressure_line_is_static_plus_rise(alder):
    case, r = alder
    env = r.transient_envelope[r.transient_envelope["rejection from"] == "design flow"]
    # no flood level given: the normal headwater, at the invert (D/2 below the centreline)
    assert case.headwater_max is None
    d = np.interp(env["chainage [m]"], [0, 1600, 1600 + 1e-9, 3100], [1.2, 1.2, 1.0, 1.0])
    static = case.headwater - (env["pipe elevation [m]"] - d / 2)
    np.testing.assert_allclose(env["design pressure head at the invert [m]"],
                               static + env["maximum transient rise [m]"], rtol=1e-12)
    line = r.design_pressure_line["design pressure head at the invert [m]"]
    assert np.all(line >= static.to_numpy() - 1e-9)


def test_down_surge_at_the_high_point_is_flagged(alder):
    # the steady grade line clears the high point at 1,250 m; the down-surge does not
    _, r = alder
    msgs = [m for m in r.cautions["message"] if "down-surge" in m]
    assert msgs
    start, end = (float(v) for v in re.search(r"from ([\d.]+) to ([\d.]+) m", msgs[0]).groups())
    assert start < 1250.0 < end
    steady_min = r.pressure_checks.set_index("flow case").loc["design flow",
                                                              CROWN]
    assert steady_min > 0 > r.headline.min_transient_pressure_head


def test_mechanical_starting_time_by_hand(alder):
    case, r = alder
    omega = r.headline.speed * 2 * math.pi / 60
    p = r.headline.installed_capacity / case.turbine["units"]
    assert _check(r, "mechanical starting time Tm = J·ω²/P") == pytest.approx(
        case.surge["inertia"] * omega**2 / p, rel=1e-12)


def test_closure_study_contains_the_case_closure(alder):
    # the study runs the case's own closure time too, on the screening grid: its row is
    # the main run's within the grid's convergence (0.5 % a refinement; 1 % here)
    case, r = alder
    cs = r.closure_time_study.set_index("closure time [s]")
    row = cs.loc[case.surge["closure_time"]]
    env = r.transient_envelope[r.transient_envelope["rejection from"] == "design flow"]
    assert row["maximum head rise [m]"] == pytest.approx(
        env["maximum transient rise [m]"].max(), rel=0.01)
    assert row["minimum head along the route [m]"] == pytest.approx(
        env["minimum head [m]"].min(), rel=0.01)


# --------------------------------------------------------------------------- own walls
def test_the_demo_walls_pass_their_own_check(alder):
    _, r = alder
    w = r.own_wall_checks
    assert list(w["verdict"]) == ["passes"] * len(w)
    line = r.design_pressure_line
    for _, row in w.iterrows():
        inside = line["chainage [m]"].between(row["from chainage [m]"] - 1e-9,
                                              row["to chainage [m]"] + 1e-9)
        assert row["highest design pressure head at the invert [m]"] == pytest.approx(
            line.loc[inside, "design pressure head at the invert [m]"].max(), rel=1e-12)


def test_a_thin_plastic_pipe_fails_its_own_check(tmp_path):
    # the high-head demo's lower pipe as PE100 at SDR about 18.7 (ISO 4427: between PN 8
    # and PN 10) under about 390 m of design head: the wall must fail, with a caution
    from conftest import copy_demo, edit_file

    import penstock

    folder = copy_demo("alder-gorge-high-head", tmp_path)
    toml = folder / "site.toml"
    edit_file(toml, 'diameter = "1.0 m"\nmaterial = "welded_steel"\nwall_thickness = "22 mm"',
              'diameter = "1.0 m"\nmaterial = "hdpe"\nwall_thickness = "60 mm"')
    r = penstock.run_case(penstock.load_case(folder), samples=0)
    row = r.own_wall_checks.iloc[1]
    assert row["material"] == "hdpe" and row["verdict"] == "FAILS"
    assert row["lowest class carrying the design head"] == "none: above PN25"
    # PE100 design stress 8 MPa on the mean diameter 1.06 m: 2 * 8 MPa * 0.06 / 1.06;
    # cold water's density within 0.1 % of 1000 kg/m^3
    rating = 2 * 8e6 * 0.06 / 1.06
    assert row["allowable pressure head [m]"] * GRAVITY * 1000 == pytest.approx(
        rating, rel=1e-3)
    msgs = r.cautions[r.cautions["topic"] == "pipe wall"]["message"]
    assert any("pipe 2 (hdpe" in m and "exceeds" in m for m in msgs)
    assert (r.cautions.loc[r.cautions["message"].str.contains("pipe 2 \\(hdpe"),
                           "severity"] == "warning").all()


def test_fitting_thrusts_of_the_demo(alder):
    # by hand: 2 p A sin(theta/2) for a bend of one bore, p (A1 - A2) for a reducer with
    # no flow (the momentum balance, tests/test_thrust.py)
    _, r = alder
    t = r.fitting_thrusts
    assert list(t["chainage [m]"]) == [1600.0, 1650.0, 2900.0, 3080.0, 3100.0]
    rho = float(r.summary.loc[r.summary["quantity"] == "water density", "value"].iloc[0])
    bend = t.iloc[1]
    p = rho * GRAVITY * bend["design pressure head at the invert [m]"]
    assert bend["deflection [deg]"] == pytest.approx(35.0)
    assert bend["thrust, design pressure, no flow [kN]"] * 1e3 == pytest.approx(
        2 * p * math.pi * 0.25 * 1.0**2 * math.sin(math.radians(17.5)), rel=1e-9)
    red = t.iloc[0]
    p = rho * GRAVITY * red["design pressure head at the invert [m]"]
    assert red["thrust, design pressure, no flow [kN]"] * 1e3 == pytest.approx(
        p * math.pi * 0.25 * (1.2**2 - 1.0**2), rel=1e-9)
    for k in (3, 4):   # the closed valve and the closed end: p A, nothing beyond
        p = rho * GRAVITY * t.iloc[k]["design pressure head at the invert [m]"]
        assert t.iloc[k]["thrust, design pressure, no flow [kN]"] * 1e3 == pytest.approx(
            p * math.pi * 0.25 * 1.0**2, rel=1e-9)
        # open in steady flow: straight, one bore, only the valve's own loss presses on it
        assert t.iloc[k]["thrust, steady flow with momentum [kN]"] < 1e-3 * t.iloc[k][
            "thrust, design pressure, no flow [kN]"]
    assert t.iloc[4]["thrust, steady flow with momentum [kN]"] == 0.0
    # the contraction in steady flow: the grade line's pressures on its two sides
    gl = r.grade_lines[r.grade_lines["flow case"] == "maximum plant flow"]
    at = gl[gl["chainage [m]"] == 1600.0]["pressure head at the centreline, normal headwater [m]"]
    q = red["flow of the steady case [m^3/s]"]
    a1, a2 = math.pi * 0.25 * 1.2**2, math.pi * 0.25 * 1.0**2
    by_hand = abs(rho * GRAVITY * (at.iloc[0] * a1 - at.iloc[-1] * a2)
                  + rho * q * q * (1 / a1 - 1 / a2))
    assert red["thrust, steady flow with momentum [kN]"] * 1e3 == pytest.approx(by_hand,
                                                                                 rel=1e-9)
    assert (t["governing thrust [kN]"] >= t["thrust, design pressure, no flow [kN]"]).all()
    assert (t["governing thrust [kN]"] >= t["thrust, steady flow with momentum [kN]"]).all()


@pytest.mark.parametrize("material, wall, verdict, why", [
    # PE100: the hoop rating of a 400 mm wall on a 1.0 m bore, 2·8 MPa·0.4/1.4 = 466 m,
    # exceeds the 388 m, but no PN class of ISO 4427 (highest PN25, 255 m) carries it
    ("hdpe", "400 mm", "FAILS", "at most PN25"),
    # ductile iron to EN 545 (classes to C100, 1,020 m): a 10 mm wall on DE 1.02 m is
    # rated 2·140 MPa·0.01/1.02 = 280 m by the hoop rule, below the 388 m
    ("ductile_iron_en545", "10 mm", "FAILS", "outside diameter"),
    # and a 30 mm wall carries it (the hoop rule on DE 1.06 m gives about 810 m)
    ("ductile_iron_en545", "30 mm", "passes", "outside diameter"),
    # the same wall of an AWWA pipe (ANSI/AWWA C150, highest class PC350, 2.41 MPa, about
    # 246 m) carries no more than its highest class
    ("ductile_iron_cement_lined", "30 mm", "FAILS", "at most PC350"),
    # GRP: no allowable stress in the registry, so the wall is not rated (a note)
    ("grp", "30 mm", "not checked: no strength data for grp", ""),
])
def test_own_wall_check_of_other_materials(tmp_path, material, wall, verdict, why):
    from conftest import copy_demo, edit_file

    import penstock

    folder = copy_demo("alder-gorge-high-head", tmp_path)
    edit_file(folder / "site.toml",
              'diameter = "1.0 m"\nmaterial = "welded_steel"\nwall_thickness = "22 mm"',
              f'diameter = "1.0 m"\nmaterial = "{material}"\nwall_thickness = "{wall}"')
    r = penstock.run_case(penstock.load_case(folder), samples=0)
    row = r.own_wall_checks.iloc[1]
    assert row["verdict"] == verdict
    assert why in row["rating basis"]
    if verdict == "FAILS":
        assert row["allowable pressure head [m]"] < row[
            "highest design pressure head at the invert [m]"]
        if "at most" in why:
            assert row["lowest class carrying the design head"].startswith("none: above")


@pytest.mark.parametrize(("material", "given", "nu"), [
    ("hdpe", None, 0.45), ("ductile_iron_cement_lined", None, 0.28), ("welded_steel", None, 0.3),
    ("hdpe", 0.35, 0.35)])
def test_each_pipe_takes_its_own_poisson_ratio_for_the_wave_speed(material, given, nu):
    """An anchored PE pipe at steel's Poisson ratio had its wave speed, and so its rise,
    understated: without surge.poisson_ratio each pipe takes its material's (PE100 0.45 as
    the registry holds it), with it the value given. The wave speed is Korteweg's with
    Wylie & Streeter's anchored factor 1 - nu^2, from penstock.wavespeed (its own tests
    check it against published values)."""
    import copy
    import dataclasses

    import penstock
    from penstock import water, wavespeed
    from penstock.model import hammer

    case = copy.copy(penstock.load_case(CASES / "alder-gorge-high-head"))
    case.segments = [dataclasses.replace(s, material=material, wall_thickness=0.06)
                     for s in case.segments]
    case.surge = dict(case.surge, restraint="anchored", poisson_ratio=given,
                      wave_speed=None, pipe_modulus=None)
    props = water.water_properties(case.temperature, case.altitude)
    from penstock.materials import pipe_wall_modulus
    from penstock.model.core import Methods
    speeds, _ = hammer.wave_speeds(case, props, [], Methods())
    for a, seg in zip(speeds, case.segments, strict=True):
        assert a == pytest.approx(float(wavespeed.pipe_wave_speed(
            props.bulk_modulus, props.density, seg.diameter, 0.06,
            pipe_wall_modulus(material), nu, case="anchored")), rel=1e-12)


def test_a_pe_pipe_in_warm_water_carries_less(tmp_path):
    """The own wall check re-rates PE100 for the water's temperature, as the material
    study does: at 38 degC the allowable head of the same wall is 0.86 of its 20 degC
    rating (pipeclasses.pe100_temperature_factor, checked against a published table)."""
    import copy

    from conftest import copy_demo, edit_file

    import penstock

    folder = copy_demo("alder-gorge-high-head", tmp_path)
    edit_file(folder / "site.toml",
              'diameter = "1.0 m"\nmaterial = "welded_steel"\nwall_thickness = "22 mm"',
              'diameter = "1.0 m"\nmaterial = "hdpe"\nwall_thickness = "60 mm"')
    case = penstock.load_case(folder)
    warm = copy.copy(case)
    warm.temperature = 38.0
    rows = [penstock.run_case(c, samples=0).own_wall_checks.iloc[1] for c in (case, warm)]
    assert "re-rated" not in rows[0]["rating basis"]
    assert "re-rated ×0.86 for 38 °C" in rows[1]["rating basis"]
    # the hoop rating on the mean diameter, in heads of each case's own water
    from penstock import water
    rho = [water.water_properties(c.temperature, c.altitude).density for c in (case, warm)]
    assert rows[1]["allowable pressure head [m]"] * rho[1] == pytest.approx(
        0.86 * rows[0]["allowable pressure head [m]"] * rho[0], rel=1e-9)
