"""One source of truth: the stages, sheets and commands agree with each other.

Cross-stage invariants on the demo cases, and wiring checks that a stage's numbers are
what the tested physics function returns for the same inputs.
"""

from __future__ import annotations

import ast
from pathlib import Path

import numpy as np
import pytest
from conftest import CASES, DEMO_CASES, copy_demo, edit_file, run_cli

import penstock
from penstock import pipewall
from penstock.model import check_case, run_case, sizing

PACKAGE = Path(penstock.__file__).resolve().parent
MARGIN = "minimum steady pressure margin at the crown, minimum headwater [m]"


@pytest.fixture(scope="module")
def demos(demo_run):
    return {name: demo_run(name, samples=0)[1] for name in DEMO_CASES}


def test_recommended_diameter_passes_the_pressure_checks_as_the_case_own_pipe(demos):
    """A recommended design passes every check the tool makes (steady, crown, minimum
    headwater, every study flow, new and aged pipe; wall within the plates)."""
    recommended = 0
    for name, r in demos.items():
        d = r.headline.selected_diameter
        if d is None:
            # then the study says why, and no candidate passed
            cand = r.diameter_candidates
            assert not cand["passes the checks"].any()
            assert (r.cautions["message"].str.contains("no diameter is recommended")).any()
            continue
        recommended += 1
        case = penstock.load_case(CASES / name)
        own = run_case(sizing.uniform_case(case, d), samples=0)
        low = own.pressure_checks["minimum pressure head at the crown, minimum headwater [m]"].min()
        assert low >= case.pressure_margin - 1e-9, name
        row = r.diameter_candidates.set_index("diameter [m]").loc[d]
        assert row[MARGIN] == pytest.approx(low - case.pressure_margin, abs=1e-6)
        assert row["largest vacuum-buckling utilisation [-]"] <= 1.0 + 1e-9
    assert recommended >= 1


def test_alder_gorge_economic_size_fails_and_a_larger_one_is_recommended(demos):
    """The high-head demo's economic size breaks the crown margin at its high point, so
    the recommendation moves up (the old behaviour recommended 1.05 m regardless)."""
    r = demos["alder-gorge-high-head"]
    h = r.headline
    cand = r.diameter_candidates.set_index("diameter [m]")
    assert not cand.loc[h.economic_size, "passes the checks"]
    assert h.selected_diameter > h.economic_size
    assert cand.loc[h.selected_diameter, "passes the checks"]
    smaller = cand[cand.index < h.selected_diameter]
    assert not smaller["passes the checks"].any()


def test_study_buckling_equals_pipewall(demos):
    """The candidates' vacuum utilisation is pipewall.vacuum_check of their own plates:
    plate less the corrosion allowance, on the mean diameter."""
    r = demos["alder-gorge-high-head"]
    case = r.case
    props = penstock.water.water_properties(case.temperature, case.altitude)
    steel = sizing.wall_material(case)
    w = case.wall
    for _, row in r.diameter_candidates.iterrows():
        t = row["thinnest plate [mm]"] / 1e3
        chk = pipewall.vacuum_check(t, row["diameter [m]"], steel.elastic_modulus,
                                    steel.poisson_ratio, props.atmospheric_pressure,
                                    w["buckling_safety"], w["corrosion_allowance"])
        # the thinnest plate is the most utilised one
        assert row["largest vacuum-buckling utilisation [-]"] == pytest.approx(
            float(chk["utilisation"]), rel=1e-9)


def test_net_head_is_the_same_for_the_same_pipe(demos):
    """Summary, energy stage and the diameter study give one net head for one pipe
    (millrace: a single uniform segment, so its own diameter is a study candidate)."""
    r = demos["millrace-flats-low-head"]
    case = r.case
    d = case.segments[0].diameter
    cand = r.diameter_candidates.set_index("diameter [m]")
    assert d in cand.index
    summary = r.summary.set_index("quantity")
    assert summary.loc["net head at design flow", "value"] == pytest.approx(
        r.headline.net_head, rel=1e-12)
    assert cand.loc[d, "net head at design flow [m]"] == pytest.approx(
        r.headline.net_head, rel=1e-5)


def test_a_draft_tube_never_lowers_the_energy(tmp_path):
    with_dt = copy_demo("millrace-flats-low-head", tmp_path / "a")
    without = copy_demo("millrace-flats-low-head", tmp_path / "b")
    edit_file(without / "site.toml", '[draft_tube]\ninlet_diameter = "1.9 m"\n'
              'area_ratio = 3.2\ncone_angle = "8 deg"\n', "")
    ra = run_case(penstock.load_case(with_dt), samples=0)
    rb = run_case(penstock.load_case(without), samples=0)
    assert rb.headline.draft_tube_recovery == 0.0
    assert ra.headline.draft_tube_recovery > 0.0
    assert ra.headline.mean_annual_energy > rb.headline.mean_annual_energy
    assert ra.headline.net_head == pytest.approx(
        rb.headline.net_head + ra.headline.draft_tube_recovery, rel=1e-12)


def test_an_exit_loss_gives_finite_pressures(tmp_path):
    folder = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(folder / "site.toml", '[flows]', '[[loss]]\nkind = "exit"\nat = "64 m"\n\n'
              '[flows]')
    r = run_case(penstock.load_case(folder), samples=0)
    pc = r.pressure_checks["minimum pressure head at the crown, minimum headwater [m]"]
    assert np.isfinite(pc).all()
    assert np.isfinite(r.grade_lines["pressure head at the centreline, normal headwater [m]"]).all()
    assert not (r.flagged_stretches["check"] == "vapour pressure").any()


def test_roughness_growth_reaches_the_energy(tmp_path):
    """With a growth rate the energy uses the roughness at half the service life, so it
    is below the same case without growth."""
    aged = copy_demo("alder-gorge-high-head", tmp_path / "a")
    new = copy_demo("alder-gorge-high-head", tmp_path / "b")
    edit_file(new / "site.toml", 'roughness_growth = "0.025 mm/year"\n', "", count=2)
    ra = run_case(penstock.load_case(aged), samples=0)
    rb = run_case(penstock.load_case(new), samples=0)
    assert ra.headline.energy_roughness_years == pytest.approx(
        ra.case.service_life / 2)
    assert rb.headline.energy_roughness_years is None
    assert ra.headline.mean_annual_energy < rb.headline.mean_annual_energy
    assert ra.headline.total_loss > rb.headline.total_loss


def test_check_refuses_what_run_refuses(tmp_path):
    """A design flow the pipe cannot carry: run and check give the same one line."""
    folder = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(folder / "site.toml", 'design = "18 m^3/s"\nmaximum = "19 m^3/s"',
              'design = "300 m^3/s"\nmaximum = "300 m^3/s"')
    code_run, _, err_run = run_cli(["run", folder, "--out", tmp_path / "rep", "--quiet"])
    code_chk, _, err_chk = run_cli(["check", folder])
    assert code_run == 2 and code_chk == 2
    assert err_run.strip() == err_chk.strip()
    assert len(err_chk.strip().splitlines()) == 1
    assert not (tmp_path / "rep").exists()


def test_non_steel_pipe_without_wall_thickness_is_one_line(tmp_path):
    folder = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(folder / "site.toml", 'material = "welded_steel"\nwall_thickness = "14 mm"',
              'material = "hdpe"')
    for args in (["check", folder], ["run", folder, "--out", tmp_path / "rep", "--quiet"]):
        code, _, err = run_cli(args)
        assert code == 2, err
        line = err.strip()
        assert len(line.splitlines()) == 1 and "Traceback" not in line
        assert "pipe 1.wall_thickness" in line and "hdpe" in line


def test_range_warnings_reach_the_cautions(monkeypatch, tmp_path):
    """A Python warning from a physics function becomes a caution."""
    import warnings

    from penstock.model import production

    real = production.run

    def noisy(*args, **kwargs):
        warnings.warn("turbine correlation used outside its range (test)", UserWarning,
                      stacklevel=1)
        return real(*args, **kwargs)

    monkeypatch.setattr(production, "run", noisy)
    r = run_case(penstock.load_case(CASES / "millrace-flats-low-head"), samples=0)
    msgs = r.cautions["message"]
    assert msgs.str.contains("energy: turbine correlation used outside its range").sum() == 1


def test_friction_range_cautions_name_the_chainage_and_the_flow(tmp_path):
    """A pipe rougher than the Moody chart's relative roughness 0.05 (the published range
    of Colebrook-White, Moody 1944): one caution per study flow, new and aged, naming the
    stretch and the flow, and no unlocated copy from the stages that run the same pipe."""
    folder = copy_demo("alder-gorge-high-head", tmp_path)
    edit_file(folder / "site.toml", 'diameter = "1.0 m"\nmaterial = "welded_steel"\n',
              'diameter = "0.96 m"\nmaterial = "welded_steel"\nroughness = "50 mm"\n')
    r = run_case(penstock.load_case(folder), samples=0)
    w = r.cautions[r.cautions["topic"] == "range"]
    located = w[w["message"].str.contains("extrapolated from")]
    cases = r.pressure_checks.drop_duplicates("flow case")
    assert len(located) == len(cases)
    assert (located["chainage [m]"] == 1600.0).all()
    assert sorted(located["flow [m^3/s]"]) == sorted(cases["flow [m^3/s]"])
    assert located["message"].str.contains("from 1600.0 m to 3100.0 m").all()
    assert located["message"].str.contains("after").sum() == 2   # the aged pipe's flows
    assert not w["message"].str.startswith(("steady hydraulics:", "water hammer:")).any()


def test_other_stages_range_warnings_are_one_merged_caution():
    """A stage that is not located by the steady stage (here a stand-in diameter study)
    gives one caution per method with the range met."""
    from penstock.friction import friction_factor
    from penstock.model import _caught

    warns = []

    def stage():
        friction_factor([1e5, 2e5], [0.06, 0.08])
        friction_factor(3e5, 0.07)
        return "done"

    assert _caught("diameter study", stage, warns) == "done"
    assert len(warns) == 1
    msg = warns[0].message
    assert msg.startswith("diameter study: the colebrook friction factor is extrapolated "
                          "for the candidate diameters")
    assert "Re 1e+05–3e+05" in msg and "relative roughness 0.06–0.08" in msg


def test_turbine_flow_outside_its_range_is_cautioned(tmp_path):
    folder = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(folder / "site.toml", 'design = "18 m^3/s"\nmaximum = "19 m^3/s"',
              'design = "0.8 m^3/s"\nmaximum = "0.85 m^3/s"')   # 0.4 m^3/s per Kaplan unit
    r = run_case(penstock.load_case(folder), samples=0)
    msgs = r.cautions.loc[r.cautions["topic"] == "turbine", "message"]
    assert msgs.str.contains("rated flow per unit .* is outside the usual").sum() == 1


def test_check_case_returns_without_heavy_stages():
    for name in DEMO_CASES:
        check_case(penstock.load_case(CASES / name))


# ---------------------------------------------------------------------------- layering
PHYSICS = [p for p in PACKAGE.glob("*.py") if p.stem not in {
    "__init__", "cli", "case", "casetables", "schema", "units", "template", "batch",
    "csvfile", "route"}]


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            out.add(("." * node.level) + (node.module or ""))
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
    return out


@pytest.mark.parametrize("path", PHYSICS, ids=lambda p: p.stem)
def test_physics_modules_do_not_import_the_loader_model_or_report(path):
    bad = {m for m in _imports(path) if any(
        m.startswith(p) for p in (".case", ".model", ".report", ".cli", "penstock.case",
                                  "penstock.model", "penstock.report", "penstock.cli"))}
    assert not bad, f"{path.name} imports {sorted(bad)}"


MODEL = sorted((PACKAGE / "model").glob("*.py"))


@pytest.mark.parametrize("path", MODEL, ids=lambda p: p.stem)
def test_model_holds_no_physical_constant_or_formula(path):
    """model/ orchestrates: no gravity, no pi, no square root, no unit factor literal."""
    text = path.read_text(encoding="utf-8")
    tree = ast.parse(text)
    names = {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)}
    attrs = {n.attr for n in ast.walk(tree) if isinstance(n, ast.Attribute)}
    assert "GRAVITY" not in names
    assert not {"pi", "sqrt", "cbrt"} & attrs
    literals = [n.value for n in ast.walk(tree) if isinstance(n, ast.Constant)
                and isinstance(n.value, float)]
    for factor in (3.6e6, 3.6e9, 9.81, 9.80665, 0.3048, 0.0254, 8760.0, 3600.0):
        assert factor not in literals, f"{path.name} holds the literal {factor}"
    # no data table: a module-level tuple, list or dict of numbers (a range of common
    # practice, a coefficient table) belongs in a physics module
    for node in tree.body:
        if isinstance(node, (ast.Assign, ast.AnnAssign)) and isinstance(
                node.value, (ast.Tuple, ast.List, ast.Dict)):
            items = (node.value.values if isinstance(node.value, ast.Dict)
                     else node.value.elts)
            numbers = [v for v in items if isinstance(v, ast.Constant)
                       and isinstance(v.value, (int, float))]
            assert not numbers, f"{path.name}:{node.lineno} holds a table of numbers"


def test_energy_lost_with_a_draft_tube_is_the_penstock_loss_only(demos):
    """The draft tube's recovery is part of the plant, not a penstock loss: the energy lost
    is that of the penstock, as the diameter study counts it for the case's own pipe."""
    r = demos["millrace-flats-low-head"]
    assert r.case.draft_tube is not None
    lost = r.headline.friction_energy
    assert lost > 0
    own = r.diameter_candidates.set_index("diameter [m]").loc[r.case.segments[0].diameter]
    assert lost / 3.6e9 == pytest.approx(own["energy lost [MWh/year]"], rel=1e-3)


def test_transient_minimum_never_above_the_steady_minimum(demos):
    for name, r in demos.items():
        env = r.transient_envelope
        steady_min = r.pressure_checks.set_index("flow case").loc[
            "design flow", "minimum pressure head at the crown, minimum headwater [m]"]
        design = env[env["rejection from"] == "design flow"]
        assert design["minimum pressure head at the crown, minimum headwater [m]"].min() \
            <= steady_min + 1e-9, name


def test_candidate_wall_takes_every_rejection_flow(tmp_path):
    """The study's design head covers the listed rejection flows, as the water-hammer
    stage does (a larger rejection flow raises the wall's design head)."""
    base = copy_demo("millrace-flats-low-head", tmp_path / "a")
    more = copy_demo("millrace-flats-low-head", tmp_path / "b")
    edit_file(more / "site.toml", 'allowable_rise = "30 %"',
              'allowable_rise = "30 %"\nrejection_flows = ["21 m^3/s"]')
    ra = run_case(penstock.load_case(base), samples=0)
    rb = run_case(penstock.load_case(more), samples=0)
    d = ra.case.segments[0].diameter
    wa = ra.diameter_candidates.set_index("diameter [m]").loc[d, "maximum surge rise [m]"]
    wb = rb.diameter_candidates.set_index("diameter [m]").loc[d, "maximum surge rise [m]"]
    assert wb > wa
    # and the water-hammer stage's own rise for the case's pipe is the candidate's, within
    # the grid's convergence (the candidates run on the screening grid)
    stage = rb.headline.max_surge_rise
    assert wb == pytest.approx(stage, rel=0.005)


def test_vacuum_governed_reaches_are_counted(demos):
    """Millrace's large, low-pressure pipe takes its wall from full vacuum, and says so."""
    r = demos["millrace-flats-low-head"]
    rec = r.diameter_candidates.set_index("diameter [m]").loc[r.headline.selected_diameter]
    assert rec["reaches whose wall is set by full vacuum [-]"] > 0
    assert r.cautions["message"].str.contains("take their plate from full vacuum").any()


def test_a_passing_listed_candidate_beyond_the_sizes_is_recommended(tmp_path):
    """A listed candidate that passes is found even when the size list stops below it."""
    folder = copy_demo("alder-gorge-high-head", tmp_path)
    edit_file(folder / "site.toml", "[economics]",
              '[diameter_study]\nmaximum = "1.3 m"\ncandidates = ["1.1 m", "2.0 m"]\n\n'
              '[economics]')
    r = run_case(penstock.load_case(folder), samples=0)
    cand = r.diameter_candidates.set_index("diameter [m]")
    assert cand.loc[2.0, "passes the checks"]
    rec = r.headline.selected_diameter
    assert rec is not None and rec <= 2.0
    assert cand.loc[rec, "passes the checks"]


def test_check_refuses_a_simulation_run_would_refuse(tmp_path):
    """A very short last segment and a one-hour closure: the MOC would need millions of
    steps; check says so without simulating, in the same line as run."""
    folder = copy_demo("millrace-flats-low-head", tmp_path)
    edit_file(folder / "site.toml", 'to = "64 m"\ndiameter = "3.2 m"',
              'to = "63.5 m"\ndiameter = "3.2 m"\nmaterial = "welded_steel"\n'
              'wall_thickness = "14 mm"\n\n[[pipe]]\nfrom = "63.5 m"\nto = "64 m"\n'
              'diameter = "3.2 m"')
    edit_file(folder / "site.toml", 'closure_time = "8 s"', 'closure_time = "3600 s"')
    code_run, _, err_run = run_cli(["run", folder, "--out", tmp_path / "rep", "--quiet"])
    code_chk, _, err_chk = run_cli(["check", folder])
    assert code_run == 2 and code_chk == 2, (err_run, err_chk)
    assert err_run.strip() == err_chk.strip()
    assert "water-hammer" in err_chk or "closure-time study" in err_chk


def test_case_comparison_matches_rows_and_shows_the_recommendation(demos):
    from penstock.report.compare import RECOMMENDED, case_comparison

    table = case_comparison(list(demos.values()))
    q = table["quantity"].tolist()
    assert len(q) == len(set(q))              # one row per quantity, whatever the case
    row = table.set_index("quantity").loc[RECOMMENDED]
    assert row["cedar-fork-us-units"] == "none passes the checks"
    assert row["millrace-flats-low-head"].endswith(" m")


def test_design_comparison_sets_every_design_side_by_side(demos):
    """penstock compare --designs: the stepped, uniform and own steel designs and each
    material, with the numbers of their own tables (converted for a US report)."""
    from penstock.report.compare import design_comparison

    r = demos["alder-gorge-high-head"]
    table = design_comparison(r, "si").set_index("quantity")
    assert list(table.columns) == (
        [f"steel: {d}" for d in r.design_comparison["design"]]
        + [f"{m}: best uniform size" for m in r.material_comparison["material"]])
    cost = "annualized cost [USD/year]"
    for _, row in r.material_comparison.iterrows():
        assert table.loc[cost, f"{row['material']}: best uniform size"] == \
            row["annualized cost [currency/year]"]
    stepped = r.design_comparison.set_index("design").iloc[0]
    assert table.loc["capital cost [USD]", table.columns[0]] == \
        stepped["capital cost, with the changes of diameter [currency]"]
    us = design_comparison(r, "us").set_index("quantity")
    rise = "maximum surge rise [ft]"
    assert us.loc[rise, table.columns[0]] == pytest.approx(
        table.loc["maximum surge rise [m]", table.columns[0]] / 0.3048)


def test_compare_designs_writes_a_workbook(tmp_path):
    out = tmp_path / "designs.xlsx"
    code, _, err = run_cli(["compare", CASES / "millrace-flats-low-head", "--designs",
                            "--out", out, "--quiet"])
    assert code == 0, err
    from openpyxl import load_workbook
    ws = load_workbook(out).active
    heads = [c.value for c in next(r for r in ws.iter_rows() if r[0].value == "quantity")]
    assert "PE100: best uniform size" in heads and "steel: stepped optimum" in heads
    code, _, err = run_cli(["compare", CASES / "millrace-flats-low-head", "--designs",
                            "--diameters", "2.5"])
    assert code == 2 and "--designs" in err and len(err.strip().splitlines()) == 1


def test_stage_tables_are_results_tables():
    """Each stage's table fields are Results attributes of the same name."""
    import dataclasses

    from penstock.model import stages
    from penstock.model.core import TABLE_ORDER

    for cls in (stages.SteadyStage, stages.ProductionStage, stages.HammerStage,
                stages.SizingStage, stages.UncertaintyStage):
        for f in dataclasses.fields(cls):
            if "DataFrame" in str(f.type):
                assert f.name in TABLE_ORDER or f.name == "profile", (cls.__name__, f.name)
