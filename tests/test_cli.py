"""Tests of the command line (penstock.cli) and the report files it writes.

Unit conversion factor used below, exact by definition: foot = 0.3048 m (international
yard and pound agreement, 1959; NIST SP 811 (2008), Appendix B.8).
"""

from __future__ import annotations

import json
import os
import re
from dataclasses import dataclass
from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from conftest import CASES, DEMO_CASES, copy_demo, edit_file, folder_listing, run_cli

from penstock.report.publish import MANIFEST, replaceable

FOOT = 0.3048   # m; international foot (1959), NIST SP 811 App. B.8

SHEETS = ["Summary", "Inputs", "Route and grade lines", "Pressure checks", "Loss breakdown",
          "Cautions", "Methods and sources"]
#: CSV tables every run writes (the result tables of penstock.model.Results)
CORE_TABLES = ["summary", "inputs", "grade_lines", "pressure_checks", "loss_breakdown",
               "cautions", "methods"]

#: One run per demo case, each with different flags, to keep the file fast.
RUN_FLAGS = {
    "alder-gorge-high-head": ["--units", "us"],            # SI case reported in US units
    "cedar-fork-us-units": ["--units", "si", "--quiet"],   # US case reported in SI units
    "millrace-flats-low-head": [],                         # the case's own units (SI)
}


@dataclass
class Run:
    code: int | None
    out: str
    err: str
    folder: Path          # the report folder

    @property
    def book(self) -> Path:
        return self.folder / f"{self.folder.name}.xlsx"


@pytest.fixture(scope="module")
def demo_runs(tmp_path_factory) -> dict[str, Run]:
    base = tmp_path_factory.mktemp("demo-runs")
    runs = {}
    for name in DEMO_CASES:
        folder = base / name / "report"
        code, out, err = run_cli(["run", CASES / name, "--out", folder, *RUN_FLAGS[name]])
        runs[name] = Run(code, out, err, folder)
    return runs


@pytest.fixture(scope="module")
def workbooks(demo_runs):
    return {name: openpyxl.load_workbook(r.book) for name, r in demo_runs.items()
            if r.code == 0}


def _texts(ws) -> list[str]:
    return [c.value for row in ws.iter_rows() for c in row if isinstance(c.value, str)]


def _no_hidden_names(folder: Path):
    hidden = [p.name for p in Path(folder).rglob("*") if p.name.startswith(".")]
    assert hidden == [], f"temporary files left behind: {hidden}"


# --------------------------------------------------------------------- demo runs
@pytest.mark.parametrize("name", DEMO_CASES)
def test_demo_case_runs(demo_runs, name):
    r = demo_runs[name]
    assert r.code == 0, r.err
    assert r.err == ""
    assert r.book.is_file() and r.folder.is_dir()
    # the report folder is alone in the output directory: no temporary files, no lock
    assert [p.name for p in r.folder.parent.iterdir()] == [r.folder.name]
    _no_hidden_names(r.folder.parent)
    # the report folder holds the workbook, the tables, the figures and the manifest only
    names = {p.name for p in r.folder.iterdir()}
    assert {r.book.name, MANIFEST} <= names
    assert all(n in (r.book.name, MANIFEST) or n.endswith((".csv", ".png")) for n in names)
    assert replaceable(r.folder) is None       # whole: every file as the manifest lists it


@pytest.mark.parametrize("name", DEMO_CASES)
def test_workbook_has_the_sheets(workbooks, name):
    wb = workbooks[name]
    assert wb.sheetnames[0] == "Summary"
    assert [s for s in wb.sheetnames if s in SHEETS] == SHEETS   # present, in reading order


@pytest.mark.parametrize("name", DEMO_CASES)
@pytest.mark.parametrize("sheet", ["Summary", "Cautions"])
def test_workbook_carries_the_caution(workbooks, name, sheet):
    text = " ".join(_texts(workbooks[name][sheet])).lower()
    assert "planning-level" in text
    assert "licensed" in text


@pytest.mark.parametrize("name", DEMO_CASES)
def test_csv_tables_read_back(demo_runs, name):
    folder = demo_runs[name].folder
    files = sorted(folder.glob("*.csv"))
    assert {f"{t}.csv" for t in CORE_TABLES} <= {f.name for f in files}
    for f in files:
        assert f.stat().st_size > 0, f.name
        df = pd.read_csv(f, encoding="utf-8")
        assert len(df.columns) > 0, f.name
        if f.stem in CORE_TABLES and f.stem != "cautions":
            assert len(df) > 0, f"{f.name} has no rows"
    summary = pd.read_csv(folder / "summary.csv", dtype=str)
    assert summary.columns[:3].tolist() == ["quantity", "value", "unit"]


#: Numeric columns that are labels or counts, not quantities: no unit expected.
NO_UNIT = {"year", "month", "steps", "units running", "pipe", "sample", "samples"}
def _unitless_numeric_columns(folder: Path) -> list[str]:
    bad = []
    for f in sorted(folder.glob("*.csv")):
        df = pd.read_csv(f, encoding="utf-8")
        for col in df.columns:
            s = df[col]
            if (pd.api.types.is_numeric_dtype(s) and not pd.api.types.is_bool_dtype(s)
                    and s.notna().any() and col not in NO_UNIT
                    and not (col == "value" and "unit" in df.columns)   # unit given per row
                    and not re.search(r"\[[^\[\]]+\]$", col)):
                bad.append(f"{f.name}: {col}")
    return bad


@pytest.mark.parametrize("name", DEMO_CASES)
def test_csv_numeric_columns_carry_units(demo_runs, name):
    assert _unitless_numeric_columns(demo_runs[name].folder) == []


def test_units_us_on_an_si_case(demo_runs):
    gl = pd.read_csv(demo_runs["alder-gorge-high-head"].folder / "grade_lines.csv")
    assert "chainage [ft]" in gl.columns
    assert not any(c.endswith("[m]") for c in gl.columns)
    # 3100 m / 0.3048 m/ft (international foot, NIST SP 811 App. B.8)
    assert gl["chainage [ft]"].max() == pytest.approx(3100 / FOOT, rel=1e-12)
    assert " ft at the design flow" in demo_runs["alder-gorge-high-head"].out


def test_units_si_on_a_us_case(demo_runs):
    gl = pd.read_csv(demo_runs["cedar-fork-us-units"].folder / "grade_lines.csv")
    assert "chainage [m]" in gl.columns
    assert not any(c.endswith("[ft]") for c in gl.columns)
    # 4900 ft x 0.3048 m/ft (international foot, NIST SP 811 App. B.8)
    assert gl["chainage [m]"].max() == pytest.approx(1493.52, rel=1e-12)


def test_default_units_are_the_cases(demo_runs):
    gl = pd.read_csv(demo_runs["millrace-flats-low-head"].folder / "grade_lines.csv")
    assert "chainage [m]" in gl.columns


def test_quiet_prints_nothing(demo_runs):
    r = demo_runs["cedar-fork-us-units"]
    assert (r.code, r.out, r.err) == (0, "", "")


def test_run_prints_a_summary(demo_runs):
    r = demo_runs["millrace-flats-low-head"]
    assert "net head" in r.out and " m at the design flow" in r.out
    assert f"wrote the report folder {r.folder}/" in r.out and r.book.name in r.out


# --------------------------------------------------------------------- help
@pytest.mark.parametrize("command", ["run", "check", "new"])
def test_help_shows_examples(command):
    code, out, err = run_cli([command, "--help"])
    assert code == 0
    assert "examples:" in out
    assert f"penstock {command}" in out.split("examples:", 1)[1]


def test_top_level_help():
    code, out, _ = run_cli(["--help"])
    assert code == 0 and "examples:" in out and "licensed engineer" in out


# --------------------------------------------------------------------- atomic reports
def test_earlier_report_survives_a_failed_validation(tmp_path):
    case = copy_demo("millrace-flats-low-head", tmp_path / "case")
    out_dir = tmp_path / "reports"
    folder = out_dir / "out"
    code, _, err = run_cli(["run", case, "--out", folder, "--quiet"])
    assert code == 0, err
    old_folder = folder_listing(folder)
    assert (folder / "out.xlsx").is_file()
    assert [p.name for p in out_dir.iterdir()] == ["out"]

    edit_file(case / "site.toml", 'headwater = "112.0 m"', 'headwater = "112 kg"')
    code, out, err = run_cli(["run", case, "--out", folder])
    assert code == 2
    assert out == "" and len(err.splitlines()) == 1 and "levels.headwater" in err
    assert folder_listing(folder) == old_folder
    assert [p.name for p in out_dir.iterdir()] == ["out"]
    _no_hidden_names(out_dir)


# the lock file LibreOffice keeps beside an open workbook, and the owner files of the most
# common desktop spreadsheet ("~$" before the name, or in place of its first letters)
@pytest.mark.parametrize("lock_name", [".~lock.site.xlsx#", "~$site.xlsx",
                                       "~$long-site-name.xlsx"])
def test_locked_workbook_is_not_touched(tmp_path, lock_name):
    case = copy_demo("millrace-flats-low-head", tmp_path / "case")
    name = "site" if "long" not in lock_name else "a-long-site-name"
    folder = tmp_path / "reports" / name
    assert run_cli(["run", case, "--out", folder, "--quiet"])[0] == 0
    lock = folder / lock_name
    lock.write_text("someone,host,2024-01-01;", encoding="utf-8")
    old_folder = folder_listing(folder)

    code, out, err = run_cli(["run", case, "--out", folder])
    assert code == 2
    assert out == "" and len(err.splitlines()) == 1 and "Traceback" not in err
    assert f"{name}.xlsx" in err and "lock" in err and "close it" in err
    assert folder_listing(folder) == old_folder
    assert [p.name for p in folder.parent.iterdir()] == [name]


def test_out_names_a_folder_not_a_workbook(tmp_path):
    case = CASES / "millrace-flats-low-head"
    code, out, err = run_cli(["run", case, "--out", tmp_path / "report.xlsx"])
    assert code == 2 and out == ""
    assert "--out" in err and "report.xlsx" in err and len(err.splitlines()) == 1
    assert "report folder" in err
    assert list(tmp_path.iterdir()) == []


def test_internal_error_exits_1_without_traceback(tmp_path, monkeypatch):
    import penstock.model

    def broken(case, progress=None, samples=None, proceed=False):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(penstock.model, "run_case", broken)
    code, out, err = run_cli(["run", CASES / "millrace-flats-low-head", "--out",
                              tmp_path / "out"])
    assert code == 1
    assert "internal error" in err and "simulated failure" in err and "PENSTOCK_DEBUG" in err
    assert "Traceback" not in err and len(err.splitlines()) == 1
    assert list(tmp_path.iterdir()) == []


def test_reports_have_ordinary_permissions(demo_runs):
    r = demo_runs["millrace-flats-low-head"]
    umask = os.umask(0)
    os.umask(umask)
    assert r.book.stat().st_mode & 0o777 == 0o666 & ~umask
    assert r.folder.stat().st_mode & 0o777 == 0o777 & ~umask


# --------------------------------------------------------------------- text stays text
INJECTIONS = [
    # (site name, site note): each begins with a character a spreadsheet reads as a formula
    ("=SUM(1,2)", "+1+2 planning note"),
    ("-2+3 ridge site", "@SUM(A1:A2)"),
]


@pytest.mark.parametrize("name, note", INJECTIONS, ids=["equals-plus", "minus-at"])
def test_formula_like_text_stays_text(tmp_path, name, note):
    case = copy_demo("millrace-flats-low-head", tmp_path / "case")
    edit_file(case / "site.toml", 'name = "Millrace Flats (invented low-head demo)"',
              f"name = {json.dumps(name)}")
    edit_file(case / "site.toml", 'note = "Invented site with a synthetic flow record, '
              'bundled to demonstrate the tool."', f"note = {json.dumps(note)}")
    folder = tmp_path / "out" / "book"
    book = folder / "book.xlsx"
    code, _, err = run_cli(["run", case, "--out", folder, "--quiet"])
    assert code == 0, err

    ws = openpyxl.load_workbook(book)["Summary"]
    for text in (name, note):
        cells = [c for row in ws.iter_rows() for c in row if c.value == text]
        assert cells, f"{text!r} not found on the Summary sheet"
        assert all(c.data_type == "s" for c in cells), [c.coordinate for c in cells]
    # every cell on any sheet that holds the name (titles, headers) is text too
    wb = openpyxl.load_workbook(book)
    for sheet in wb.worksheets:
        for row in sheet.iter_rows():
            for c in row:
                if isinstance(c.value, str) and name in c.value:
                    assert c.data_type == "s", f"{sheet.title}!{c.coordinate}"

    summary = pd.read_csv(folder / "summary.csv", dtype=str, keep_default_na=False)
    values = dict(zip(summary["quantity"], summary["value"], strict=True))
    # in the CSV a leading quote keeps the text from being read as a formula (OWASP)
    assert values["site"] == "'" + name
    assert values["note"] == "'" + note
