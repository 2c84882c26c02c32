"""The orchestrator on the demo cases: energy bookkeeping, steps, checks and cautions.

References: the energy equation with head losses (any hydraulics handbook, e.g. Streeter,
Wylie & Bedford, Fluid Mechanics, 9th ed., 1998, ch. 5, from memory); loss coefficients from
Crane TP-410 (2009) as implemented in penstock.fittings and tested in test_fittings.py;
the usual 2–6 m/s penstock velocity range is common practice.
"""

import math
import re
import shutil
from pathlib import Path

import numpy as np
import pytest

import penstock
from penstock import fittings, water
from penstock.case import CaseError
from penstock.constants import GRAVITY

CASES = Path(__file__).resolve().parents[1] / "cases"
DEMOS = sorted(p.name for p in CASES.iterdir() if (p / "site.toml").is_file())

CROWN = "minimum pressure head at the crown, minimum headwater [m]"
CENTRE = "pressure head at the centreline, normal headwater [m]"


@pytest.fixture(scope="module", params=DEMOS)
def demo(request, demo_run):
    return demo_run(request.param)


def copy_case(tmp_path, name="alder-gorge-high-head", edit=None, profile=None):
    dst = tmp_path / name
    shutil.copytree(CASES / name, dst)
    if edit:
        text = (dst / "site.toml").read_text()
        for old, new in edit:
            assert old in text, old
            text = text.replace(old, new)
        (dst / "site.toml").write_text(text)
    if profile is not None:
        (dst / "profile.csv").write_text(profile)
    return dst


def test_breakdown_total_equals_energy_line_drop(demo):
    case, r = demo
    gl = r.grade_lines
    lb = r.loss_breakdown
    for name, part in gl.groupby("flow case"):
        drop = case.headwater - part["energy grade line [m]"].iloc[-1]
        total = lb[(lb["flow case"] == name) & (lb["component"] == "total")]["head loss [m]"]
        assert float(total.iloc[0]) == pytest.approx(drop, rel=1e-12)
        parts = lb[(lb["flow case"] == name) & (lb["component"] != "total")]["head loss [m]"]
        assert parts.sum() == pytest.approx(drop, rel=1e-12)
        # shares are of the gross head
        share = lb[(lb["flow case"] == name) & (lb["component"] == "total")][
            "share of gross head [%]"].iloc[0]
        assert share == pytest.approx(100 * drop / (case.headwater - case.tailwater), rel=1e-12)


def test_net_head_is_gross_minus_losses(demo):
    case, r = demo
    h = r.headline
    # gross head: headwater to tailwater, or to the runner of an impulse unit set above it
    z_run = case.turbine["runner_elevation"]
    bottom = case.tailwater
    if case.turbine["type"] in ("pelton", "turgo", "crossflow") and z_run is not None:
        bottom = max(bottom, z_run)
    assert h.gross_head == pytest.approx(case.headwater - bottom, rel=1e-12)
    # one convention (energy.net_head): a draft tube adds the head it recovers
    assert h.net_head == pytest.approx(
        h.gross_head - h.total_loss + h.draft_tube_recovery, rel=1e-12)
    assert (h.draft_tube_recovery > 0) == (case.draft_tube is not None)
    # the steady stage's penstock loss at the design flow, on the energy basis (mid-life
    # roughness when a growth rate is given), is the same loss
    lb = r.loss_breakdown
    years = h.energy_roughness_years
    name = "design flow" if years is None else f"design flow, after {years:g} years"
    pen = lb[(lb["flow case"] == name) & (lb["component"] == "total")]
    assert h.total_loss == pytest.approx(float(pen["head loss [m]"].iloc[0]), rel=1e-5)
    # installed capacity P = ρ g Q Hn η (hand formula)
    t = case.turbine
    rho = water.density(case.temperature)
    eta = (h.eta_rated * t["gearbox_efficiency"] * t["generator_efficiency"]
           * t["transformer_efficiency"])
    assert h.installed_capacity == pytest.approx(
        rho * GRAVITY * case.design_flow * h.net_head * eta, rel=1e-12)


def test_local_losses_are_drawn_as_steps(demo):
    case, r = demo
    gl = r.grade_lines
    part = gl[gl["flow case"] == "design flow"].reset_index(drop=True)
    for loss in case.losses:
        rows = part.index[part["point"] == loss.label]
        assert len(rows) == 1, loss.label
        i = rows[0]
        # the step sits at one chainage: the node before it has the same chainage
        assert part.loc[i - 1, "chainage [m]"] == part.loc[i, "chainage [m]"]
        assert part.loc[i, "energy grade line [m]"] < part.loc[i - 1, "energy grade line [m]"]


def test_bellmouth_entrance_step_matches_crane():
    # Crane TP-410 (2009), A-30: well-rounded (bell-mouth) entrance K = 0.04 (via fittings)
    case = penstock.load_case(CASES / "alder-gorge-high-head")
    r = penstock.run_case(case)
    part = r.grade_lines[r.grade_lines["flow case"] == "design flow"].reset_index(drop=True)
    i = part.index[part["point"] == "entrance at 0.0 m"][0]
    d = case.segments[0].diameter
    hv = (case.design_flow / (math.pi * d**2 / 4)) ** 2 / (2 * GRAVITY)
    step = part.loc[i - 1, "energy grade line [m]"] - part.loc[i, "energy grade line [m]"]
    assert step == pytest.approx(fittings.entrance("bellmouth") * hv, rel=1e-12)
    assert fittings.entrance("bellmouth") == pytest.approx(0.04)


def test_high_point_is_flagged_at_maximum_flow():
    case = penstock.load_case(CASES / "alder-gorge-high-head")
    r = penstock.run_case(case)
    st = r.flagged_stretches[r.flagged_stretches["flow case"] == "maximum plant flow"]
    assert len(st) == 1
    assert st["from chainage [m]"].iloc[0] < 1250 < st["to chainage [m]"].iloc[0]
    assert any("1250.0 m" in m for m in r.cautions["message"])
    # the aged pipe (roughness growth given) is worse than the new one
    aged = r.pressure_checks.set_index("flow case")[CROWN]
    assert aged["design flow, after 40 years"] < aged["design flow"]


def test_siphon_and_vapour_pressure_are_flagged(tmp_path):
    # a hump 4 m above the headwater: at the design flow and the normal headwater the
    # absolute pressure there stays above the vapour pressure, but at the maximum plant
    # flow with the headwater at its minimum it reaches it: a caution, not bad input
    profile = ("chainage [m],elevation [m]\n0,1405\n600,1404\n1250,1416.0\n1600,1396\n"
               "3100,1083\n")
    folder = copy_case(tmp_path, profile=profile)
    r = penstock.run_case(penstock.load_case(folder))
    text = " ".join(r.cautions["message"])
    assert "siphon" in text
    assert "vapour pressure" in text
    assert "--run-anyway" not in text
    checks = set(r.flagged_stretches["check"])
    assert {"sub-atmospheric", "vapour pressure"} <= checks


def test_a_design_flow_below_vapour_pressure_is_refused_unless_asked(tmp_path):
    # a hump 9.8 m above the headwater: even at the design flow and the normal headwater
    # the absolute pressure at the crown falls below the vapour pressure, so the flow as
    # computed cannot exist (the column parts)
    profile = ("chainage [m],elevation [m]\n0,1405\n600,1404\n1250,1421.8\n1600,1396\n"
               "3100,1083\n")
    folder = copy_case(tmp_path, profile=profile)
    case = penstock.load_case(folder)
    with pytest.raises(CaseError, match=r"profile\.csv: chainage 1250\.0 m: .*vapour pressure"
                                        r".*--run-anyway"):
        penstock.run_case(case)
    r = penstock.run_case(case, proceed=True)
    text = " ".join(r.cautions["message"])
    assert "--run-anyway" in text and "not physical" in text
    st = r.flagged_stretches
    assert "design flow" in set(st[st["check"] == "vapour pressure"]["flow case"])


def test_velocity_outside_usual_range_is_a_caution(tmp_path):
    folder = copy_case(tmp_path, edit=[('diameter = "1.2 m"', 'diameter = "2.0 m"')])
    r = penstock.run_case(penstock.load_case(folder))
    msgs = r.cautions[r.cautions["topic"] == "velocity"]["message"]
    assert any("pipe 1" in m and "0.76 m/s" in m for m in msgs)


def test_no_entrance_given_is_noted(tmp_path):
    folder = copy_case(tmp_path, "millrace-flats-low-head")
    text = (folder / "site.toml").read_text()
    start, end = text.index("[[loss]]"), text.index('[[loss]]\nkind = "bend"')
    (folder / "site.toml").write_text(text[:start] + text[end:])
    r = penstock.run_case(penstock.load_case(folder))
    notes = r.cautions[r.cautions["severity"] == "note"]["message"]
    assert any("no entrance or trashrack loss" in m for m in notes)
    assert "entrance (none given)" in set(r.loss_breakdown["component"])


def test_diameter_change_without_transition_gets_assumed_cone():
    case = penstock.load_case(CASES / "alder-gorge-high-head")
    r = penstock.run_case(case)
    comps = set(r.loss_breakdown["component"])
    assert any(c.startswith("contraction at 1600.0 m (assumed") for c in comps)
    # Crane TP-410 (2009) formula for a 15° conical contraction, via fittings
    k = fittings.contraction_gradual(1.2, 1.0, math.radians(15))
    assert any(f"K = {k:.3f}" in m for m in r.cautions["message"])


def test_results_tables_have_units_and_no_python_reprs(demo):
    _, r = demo
    for name, df in r.tables().items():
        for col in df.columns:
            assert not re.search(r"\b(nan|none)\b", str(col).lower()), col
        text = [str(t) for t in df.to_numpy().ravel()]
        assert not any(t.startswith("array(") for t in text), name
        numeric = df.select_dtypes("number")
        counts = {"year", "month", "steps", "units running", "pipe", "sample", "samples"}
        for col in numeric.columns:
            if col == "value" and "unit" in df.columns:
                continue   # the unit is given per row
            assert "[" in col or col in counts, f"{name}: numeric column {col!r} has no unit"


def test_min_pressure_matches_grade_table(demo):
    case, r = demo
    gl = r.grade_lines
    for _, row in r.pressure_checks.iterrows():
        part = gl[(gl["flow case"] == row["flow case"]) & (gl["point"] != "reservoir")]
        # the checks hold at the crown (D/2 above the centreline) at the minimum headwater
        d = np.array([next(s.diameter for s in case.segments if s.start <= x <= s.end)
                      for x in part["chainage [m]"]])
        crown = part[CENTRE].to_numpy() - d / 2 - (case.headwater
                                                                 - case.headwater_min)
        assert row[CROWN] == pytest.approx(crown.min(),
                                                                              abs=1e-9)
        assert row["minimum pressure head at the centreline, normal headwater [m]"] == \
            pytest.approx(part["pressure head at the centreline, normal headwater [m]"].min())


def test_interpolated_loss_function_matches_direct_evaluation():
    # the energy stage reads penstock losses from a tabulated function; compare it with the
    # grade-line computation at flows off its grid (the direct Darcy–Weisbach evaluation)
    from penstock import gradeline
    from penstock.model import steady
    from penstock.route import build_route

    case = penstock.load_case(CASES / "alder-gorge-high-head")
    props = water.water_properties(case.temperature, case.altitude)
    route = build_route(case)
    loss = steady.loss_function(case, route, props)
    q = np.linspace(0.05, 1.4 * case.maximum_flow, 97)
    g = gradeline.grade_lines(q, case.headwater, route.chainage, route.elevation,
                              route.node_area, route.length, route.diameter, route.roughness,
                              route.k, route.reference_area, props.kinematic_viscosity)
    exact = (g.friction_loss + g.local_loss).sum(axis=1)
    np.testing.assert_allclose(loss(q), exact, rtol=1e-5)
    assert loss(0.0) == 0.0


def test_energy_tables_add_up(demo):
    case, r = demo
    monthly = r.energy_by_month.groupby("year")["energy [MWh]"].sum()
    annual = r.energy_by_year.set_index("year")["energy [MWh]"]
    np.testing.assert_allclose(monthly.loc[annual.index].to_numpy(), annual.to_numpy(),
                               rtol=1e-12)
    complete = r.energy_by_year[r.energy_by_year["complete year"].astype(bool)]
    assert r.headline.mean_annual_energy / 3.6e9 == pytest.approx(
        complete["energy [MWh]"].mean(), rel=1e-12)
    # the residual flow is honoured: turbined flow never above the flow left after it
    fd = r.flow_duration
    assert np.all(fd["turbined flow [m^3/s]"] <= fd["flow after residual [m^3/s]"] + 1e-12)
    assert np.all(fd["turbined flow [m^3/s]"] <= case.design_flow + 1e-12)
    # capacity factor = mean annual energy / (installed capacity × 8760 h)
    assert r.headline.capacity_factor == pytest.approx(
        r.headline.mean_annual_energy / (r.headline.installed_capacity * 8760 * 3600),
        rel=1e-3)


def test_draft_tube_recovers_part_of_the_exit_velocity_head():
    case = penstock.load_case(CASES / "millrace-flats-low-head")
    r = penstock.run_case(case)
    dt = r.draft_tube
    assert dt is not None
    np.testing.assert_allclose(dt["head recovered over an abrupt exit [m]"]
                               + dt["remaining draft-tube loss [m]"],
                               dt["inlet velocity head [m]"], rtol=1e-12)
    assert np.all(dt["power gained [kW]"] > 0)
    # the recovery cannot exceed the ideal diffuser (Borda–Carnot-free) value V1²/2g·(1 − 1/AR²)
    ideal = dt["inlet velocity head [m]"] * (1 - 1 / case.draft_tube["area_ratio"] ** 2)
    assert np.all(dt["head recovered over an abrupt exit [m]"] <= ideal + 1e-12)


def test_instant_closure_by_name_gives_joukowsky(tmp_path):
    # Joukowsky (1898): a full instant closure raises the head by a·V/g (Wylie & Streeter,
    # Fluid Transients in Systems, 1993, eq. 1-6, from memory); friction and the intake
    # loss make the simulated rise differ by well under 2 % in this short pipe
    folder = copy_case(tmp_path, "millrace-flats-low-head",
                       edit=[('[surge]\nclosure_time = "8 s"',
                              '[surge]\nclosure_time = "8 s"\nclosure_law = "instant"')])
    r = penstock.run_case(penstock.load_case(folder), samples=0)
    a, v = r.headline.joukowsky_wave_speed, r.headline.joukowsky_velocity
    env = r.transient_envelope
    rise = env[env["rejection from"] == "design flow"]["maximum transient rise [m]"].max()
    assert rise == pytest.approx(a * v / GRAVITY, rel=0.02)
    assert r.headline.max_surge_rise >= rise   # the worst rejection (maximum plant flow)


@pytest.mark.parametrize("method, word", [("previous", "previous"),
                                          ("monthly_mean", "mean of the calendar month")])
def test_named_gap_fills_are_echoed_and_cautioned(tmp_path, method, word):
    folder = copy_case(tmp_path, edit=[("[flows]\n", f'[flows]\ngaps = "{method}"\n')])
    lines = (folder / "flows.csv").read_text().splitlines()
    (folder / "flows.csv").write_text("\n".join(lines[:5] + lines[8:]) + "\n")
    case = penstock.load_case(folder)
    echo = {row["key"]: row for row in case.echo}
    assert word in echo["flows.record gaps"]["value (SI)"]
    r = penstock.run_case(case, samples=0)
    assert any("were filled" in m for m in r.cautions["message"])


def test_own_wall_properties_replace_the_grade(tmp_path):
    base = penstock.run_case(penstock.load_case(CASES / "alder-gorge-high-head"), samples=0)
    folder = copy_case(tmp_path, edit=[("[economics]", '[wall]\nallowable_stress = "60 MPa"\n'
                                                      '\n[economics]')])
    weak = penstock.run_case(penstock.load_case(folder), samples=0)
    # a weaker steel needs thicker plates at the bottom of the line
    assert weak.wall_profile["plate thickness [mm]"].max() > \
        base.wall_profile["plate thickness [mm]"].max()
