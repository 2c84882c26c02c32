"""Tests of the client workbook (penstock.report.workbook and the sheet writers).

The live formulas are checked against the tool's own results; no published source. A
spreadsheet engine (headless LibreOffice, through ``../shared/tools/recalc-workbook``)
recalculates every formula of each demo workbook, and the values it finds must equal the
numbers of :func:`penstock.run_case` to 1e-9 relative. Each demo workbook is also printed
through LibreOffice (``../shared/tools/render-workbook``) and every page must hold a drawing.
Those tests skip, with the reason, where LibreOffice or pdftoppm is not installed.

The other tests read the written files only (openpyxl and the chart XML inside the .xlsx):
units in the headers, no Python reprs in the cells, formula-like case text kept as text, a
locked workbook left alone, page setup, document properties, frozen panes and the charts.

Unit conversion factor used below, exact by definition: foot = 0.3048 m (international
yard and pound agreement, 1959; NIST SP 811 (2008), Appendix B.8).
"""

from __future__ import annotations

import json
import math
import numbers
import os
import posixpath
import re
import shutil
import subprocess
import zipfile
from dataclasses import dataclass
from pathlib import Path
from xml.etree import ElementTree as ET

import matplotlib.image
import numpy as np
import openpyxl
import pytest
from conftest import CASES, DEMO_CASES, REPO, copy_demo, edit_file, folder_listing, run_cli
from openpyxl.utils import get_column_letter, range_boundaries
from openpyxl.utils.cell import coordinate_from_string

from penstock.report import write_reports

FOOT = 0.3048   # m; international foot (1959), NIST SP 811 App. B.8
REL = 1e-9      # live formulas restate the tool's own numbers: equal to round-off
TOOLS = REPO.parent / "shared" / "tools"
LO_TIMEOUT = 240   # s per LibreOffice call; a conversion takes a few seconds

#: Numeric columns that are labels or counts, not quantities: no unit expected.
NO_UNIT = {"year", "month", "steps", "units running", "pipe", "sample", "samples"}
#: Sheets holding one long data table, whose header row should stay in view.
DATA_SHEETS = ["Inputs", "Route and grade lines", "Pressure checks", "Loss breakdown",
               "Flow and power duration", "Energy by year and month", "Cautions"]
HEADER_RGB = "2F4858"   # penstock.report.sheets.HEADER_FILL

NS = {"c": "http://schemas.openxmlformats.org/drawingml/2006/chart",
      "a": "http://schemas.openxmlformats.org/drawingml/2006/main",
      "xdr": "http://schemas.openxmlformats.org/drawingml/2006/spreadsheetDrawing",
      "m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main",
      "pr": "http://schemas.openxmlformats.org/package/2006/relationships"}
R_ID = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}id"
AXES = ("valAx", "catAx", "dateAx", "serAx")


# --------------------------------------------------------------------- fixtures
@dataclass
class Demo:
    name: str
    results: object
    book: Path
    wb: openpyxl.Workbook


@pytest.fixture(scope="module")
def demos(tmp_path_factory, demo_run) -> dict[str, Demo]:
    """Each demo case run once and written in its own unit system."""
    base = tmp_path_factory.mktemp("workbooks")
    out = {}
    for name in DEMO_CASES:
        results = demo_run(name)[1]
        book = write_reports(results, base / name / name)["workbook"]
        out[name] = Demo(name, results, book, openpyxl.load_workbook(book))
    return out


def _need_libreoffice(*programs: str) -> None:
    for tool in ("recalc-workbook", "render-workbook"):
        if not (TOOLS / tool).is_file():
            pytest.skip(f"shared tool {TOOLS / tool} not found")
    missing = [p for p in programs if shutil.which(p) is None]
    if "soffice" in missing:
        pytest.skip("LibreOffice (soffice) not installed: the formula and render checks need "
                    "it (apt-get install libreoffice-calc-nogui)")
    if missing:
        pytest.skip(f"{', '.join(missing)} not installed: the render check needs it "
                    "(apt-get install poppler-utils)")


def _run_tool(args, env=None) -> subprocess.CompletedProcess:
    return subprocess.run([str(a) for a in args], capture_output=True, text=True,
                          timeout=LO_TIMEOUT, env={**os.environ, **(env or {})})


def _recalc(book: Path, out: Path):
    proc = _run_tool([TOOLS / "recalc-workbook", book, out])
    assert proc.returncode == 0 and out.is_file(), proc.stderr
    return openpyxl.load_workbook(out, data_only=True)


@pytest.fixture(scope="module")
def recalculated(demos, tmp_path_factory) -> dict[str, openpyxl.Workbook]:
    """Each demo workbook recalculated by LibreOffice, read back with data_only=True."""
    _need_libreoffice("soffice")
    base = tmp_path_factory.mktemp("recalculated")
    return {name: _recalc(d.book, base / f"{name}.xlsx") for name, d in demos.items()}


@dataclass
class Render:
    proc: subprocess.CompletedProcess
    pdf: Path
    pngs: list[Path]


@pytest.fixture(scope="module")
def rendered(demos, tmp_path_factory) -> dict[str, Render]:
    """Each demo workbook printed by LibreOffice, one page per sheet, as PNG pages."""
    _need_libreoffice("soffice", "pdftoppm")
    base = tmp_path_factory.mktemp("rendered")
    out = {}
    for name, d in demos.items():
        folder = base / name
        proc = _run_tool([TOOLS / "render-workbook", d.book, folder],
                         env={"RENDER_ONE_PAGE": "1"})
        pngs = sorted(folder.glob(f"{d.book.stem}-*.png"),
                      key=lambda p: int(p.stem.rsplit("-", 1)[1]))
        out[name] = Render(proc, folder / f"{d.book.stem}.pdf", pngs)
    return out


# --------------------------------------------------------------------- helpers
def _formula_cells(wb) -> dict[tuple[str, str], str]:
    return {(ws.title, c.coordinate): c.value for ws in wb.worksheets for row in ws.iter_rows()
            for c in row if isinstance(c.value, str) and c.value.startswith("=")
            and c.data_type == "f"}


def _label_row(ws, label: str, start: int = 1, prefix: bool = False) -> int:
    """The first row from ``start`` whose column-A text is ``label`` (or starts with it)."""
    for r in range(start, ws.max_row + 1):
        v = ws.cell(row=r, column=1).value
        if isinstance(v, str) and (v.startswith(label) if prefix else v == label):
            return r
    raise AssertionError(f"{ws.title}: no row labelled {label!r} in column A")


def _header_column(ws, row: int, prefix: str) -> int:
    for c in range(1, ws.max_column + 1):
        v = ws.cell(row=row, column=c).value
        if isinstance(v, str) and v.startswith(prefix):
            return c
    raise AssertionError(f"{ws.title}: no header starting {prefix!r} in row {row}")


def _is_header(cell) -> bool:
    fill = cell.fill
    if fill is not None and fill.fill_type == "solid" and fill.fgColor is not None \
            and str(fill.fgColor.rgb).upper().endswith(HEADER_RGB):
        return True
    font = cell.font   # white bold text on a dark fill (sheets.HEADER)
    return bool(font is not None and font.b and font.color is not None
                and str(font.color.rgb).upper().endswith("FFFFFF"))


def _summary_live(ws, label: str):
    block = _label_row(ws, "Net head and power at the design flow (live formulas", prefix=True)
    return ws.cell(row=_label_row(ws, label, start=block + 1), column=2)


def _loss_live(ws):
    r = _label_row(ws, "sum of the components at the design flow (live formula)")
    head = next(i for i in range(r, 0, -1) if _is_header(ws.cell(row=i, column=1)))
    col = _header_column(ws, head, "design flow: head loss")
    return ws.cell(row=r, column=col), ws.cell(row=head, column=col).value


def _energy_rows(ws) -> tuple[dict[int, int], int, int]:
    """{year: row} of the monthly energy block, the row of the mean, the total column."""
    head = next(r for r in range(1, ws.max_row + 1) if ws.cell(row=r, column=1).value == "year"
                and _is_header(ws.cell(row=r, column=1)))
    col = _header_column(ws, head, "year total")
    mean = _label_row(ws, "mean of complete years", start=head + 1)
    years = {ws.cell(row=r, column=1).value: r for r in range(head + 1, mean)}
    assert all(isinstance(y, int) for y in years), years
    return years, mean, col


def _joukowsky_live(ws):
    return ws.cell(row=_label_row(ws, "Joukowsky rise ΔH", prefix=True), column=2)


def _loss_total(results) -> float:
    lb = results.loss_breakdown
    rows = lb[(lb["component"] == "total") & (lb["flow case"] == "design flow")]
    assert len(rows) == 1
    return float(rows["head loss [m]"].iloc[0])


def _is_number(v) -> bool:
    return isinstance(v, numbers.Real) and not isinstance(v, bool) and math.isfinite(v)


# ---- the package parts of a written .xlsx: sheets, their drawings and charts
def _rels(z: zipfile.ZipFile, part: str) -> dict[str, str]:
    """Relationship id -> target part name, for ``part`` (absolute names, no leading /)."""
    folder, base = posixpath.split(part)
    name = posixpath.join(folder, "_rels", base + ".rels")
    if name not in z.namelist():
        return {}
    out = {}
    for rel in ET.fromstring(z.read(name)).findall("pr:Relationship", NS):
        target = rel.get("Target")
        target = target.lstrip("/") if target.startswith("/") else \
            posixpath.normpath(posixpath.join(folder, target))
        out[rel.get("Id")] = target
    return out


def _sheet_parts(z: zipfile.ZipFile) -> list[tuple[str, str]]:
    """(sheet name, worksheet part) in the workbook's order."""
    rels = _rels(z, "xl/workbook.xml")
    root = ET.fromstring(z.read("xl/workbook.xml"))
    return [(s.get("name"), rels[s.get(R_ID)]) for s in root.find("m:sheets", NS)]


def _charts_by_sheet(book: Path) -> dict[str, list[dict]]:
    """Sheet name -> its charts: {"part", "xml" (root element), "col", "row", "cx", "cy"}."""
    out = {}
    with zipfile.ZipFile(book) as z:
        for sheet, part in _sheet_parts(z):
            charts = []
            for drawing in _rels(z, part).values():
                if "/drawings/" not in drawing:
                    continue
                drels = _rels(z, drawing)
                droot = ET.fromstring(z.read(drawing))
                for anchor in list(droot):
                    ref = anchor.find(".//c:chart", NS)
                    if ref is None:
                        continue
                    frm = anchor.find("xdr:from", NS)
                    ext = anchor.find("xdr:ext", NS)
                    chart = drels[ref.get(R_ID)]
                    charts.append({
                        "part": chart, "xml": ET.fromstring(z.read(chart)),
                        "col": int(frm.find("xdr:col", NS).text),
                        "row": int(frm.find("xdr:row", NS).text),
                        "cx": int(ext.get("cx")) if ext is not None else None,
                        "cy": int(ext.get("cy")) if ext is not None else None,
                    })
            out[sheet] = charts
    return out


def _text(element) -> str:
    return "".join(t.text or "" for t in element.iter(f"{{{NS['a']}}}t")).strip() \
        if element is not None else ""


# ===================================================================== 1. live formulas
#: Spreadsheet functions of the classic set, which every engine evaluates (LibreOffice 7.4
#: lacks some newer ones, e.g. XLOOKUP: ../shared/README.md).
CLASSIC_FUNCTIONS = {"SUM", "AVERAGE", "IF", "MIN", "MAX", "SQRT", "ABS", "LN", "EXP", "PI",
                     "ROUND"}


@pytest.mark.parametrize("name", DEMO_CASES)
def test_formula_cells_are_the_writers_own(demos, name):
    """The live formulas checked below are all there, and use classic functions only."""
    d = demos[name]
    formulas = _formula_cells(d.wb)
    n_years = len(d.results.energy_by_year)
    per_sheet = {}
    for sheet, _ in formulas:
        per_sheet[sheet] = per_sheet.get(sheet, 0) + 1
    assert per_sheet["Summary"] == 2                             # net head, capacity
    assert per_sheet["Loss breakdown"] == 1                      # the live sum
    assert per_sheet["Energy by year and month"] == n_years + 13  # totals, monthly means
    assert per_sheet["Water hammer"] == 1                        # Joukowsky
    used = {f for text in formulas.values() for f in re.findall(r"([A-Z][A-Z0-9.]*)\(", text)}
    assert used <= CLASSIC_FUNCTIONS, used - CLASSIC_FUNCTIONS


@pytest.mark.parametrize("name", DEMO_CASES)
def test_every_formula_recalculates_to_a_number(demos, recalculated, name):
    formulas = _formula_cells(demos[name].wb)
    assert formulas
    values = recalculated[name]
    bad = {f"{s}!{c} {f}": values[s][c].value for (s, c), f in formulas.items()
           if not _is_number(values[s][c].value)}
    assert bad == {}   # no '#VALUE!', '#NAME?', '#REF!', None, inf


@pytest.mark.parametrize("name", DEMO_CASES)
@pytest.mark.parametrize("label, key, scale", [("net head", "net_head", 1.0),
                                               ("installed capacity", "installed_capacity",
                                                1e-3)])
def test_summary_live_formulas(demos, recalculated, name, label, key, scale):
    d = demos[name]
    cell = _summary_live(d.wb["Summary"], label)
    assert cell.data_type == "f"
    got = recalculated[name]["Summary"][cell.coordinate].value
    # the live block is in SI whatever the report's units: m, and W / 1000 = kW
    assert got == pytest.approx(getattr(d.results.headline, key) * scale, rel=REL)


@pytest.mark.parametrize("name", DEMO_CASES)
def test_loss_breakdown_live_sum(demos, recalculated, name):
    d = demos[name]
    cell, header = _loss_live(d.wb["Loss breakdown"])
    assert cell.data_type == "f" and cell.value.startswith("=SUM(")
    expected = _loss_total(d.results)   # m
    if header.endswith("[ft]"):
        expected /= FOOT
    else:
        assert header.endswith("[m]"), header
    got = recalculated[name]["Loss breakdown"][cell.coordinate].value
    assert got == pytest.approx(expected, rel=REL)


@pytest.mark.parametrize("name", DEMO_CASES)
def test_energy_year_totals_and_mean(demos, recalculated, name):
    d = demos[name]
    years, mean, col = _energy_rows(d.wb["Energy by year and month"])
    annual = d.results.energy_by_year.set_index("year")
    assert sorted(years) == sorted(int(y) for y in annual.index)
    ws = recalculated[name]["Energy by year and month"]
    for year, row in years.items():
        assert d.wb["Energy by year and month"].cell(row=row, column=col).data_type == "f"
        assert ws.cell(row=row, column=col).value == pytest.approx(
            float(annual.loc[year, "energy [MWh]"]), rel=REL), year
    # J / 3.6e9 = MWh
    assert ws.cell(row=mean, column=col).value == pytest.approx(
        d.results.headline.mean_annual_energy / 3.6e9, rel=REL)


@pytest.mark.parametrize("name", DEMO_CASES)
def test_joukowsky_live_formula(demos, recalculated, name):
    d = demos[name]
    cell = _joukowsky_live(d.wb["Water hammer"])
    assert cell.data_type == "f"
    got = recalculated[name]["Water hammer"][cell.coordinate].value
    assert got == pytest.approx(d.results.headline.joukowsky, rel=REL)   # m


@pytest.mark.parametrize("name", DEMO_CASES)
def test_diameter_study_live_formulas(demos, recalculated, name):
    d = demos[name]
    if d.results.diameter_candidates is None:
        pytest.skip(f"{name}: no diameter study in this case")
    ws = d.wb["Diameter study"]
    calc = recalculated[name]["Diameter study"]
    crf = ws.cell(row=_label_row(ws, "CRF =", prefix=True), column=2)
    assert crf.data_type == "f"
    assert calc[crf.coordinate].value == pytest.approx(d.results.headline.crf, rel=REL)
    head = _label_row(ws, "Candidate diameters", prefix=True) + 1
    col = _header_column(ws, head, "annualized cost [")
    expected = d.results.diameter_candidates["annualized cost [currency/year]"].to_numpy()
    for i, value in enumerate(expected):
        cell = ws.cell(row=head + 1 + i, column=col)
        assert cell.data_type == "f", cell.coordinate
        assert calc[cell.coordinate].value == pytest.approx(float(value), rel=REL), i


# ===================================================================== 2. render
def _page(path: Path) -> np.ndarray:
    img = matplotlib.image.imread(path)   # float in [0, 1] for PNG
    return img[..., :3] if img.ndim == 3 else np.stack([img] * 3, axis=-1)


@pytest.mark.parametrize("name", DEMO_CASES)
def test_render_succeeds(demos, rendered, name):
    r = rendered[name]
    assert r.proc.returncode == 0, r.proc.stderr
    assert r.pdf.is_file() and r.pdf.stat().st_size > 0
    # one page per sheet (RENDER_ONE_PAGE=1): every sheet printed, in order
    assert len(r.pngs) == len(demos[name].wb.sheetnames)
    assert "<c:delete" not in r.proc.stderr, r.proc.stderr   # the tool's chart lint


@pytest.mark.parametrize("name", DEMO_CASES)
def test_rendered_pages_are_not_blank(demos, rendered, name):
    r = rendered[name]
    sheets = demos[name].wb.sheetnames
    assert len(r.pngs) == len(sheets)
    charts = _charts_by_sheet(demos[name].book)
    assert sum(len(v) for v in charts.values()) > 0
    for sheet, png in zip(sheets, r.pngs, strict=True):
        img = _page(png)
        assert img.max() - img.min() > 0.5, f"{sheet}: a uniform page"
        ink = float((img < 0.9).any(axis=-1).mean())
        assert ink > 0.002, f"{sheet}: page nearly blank ({ink:.2%} ink)"
        if charts[sheet]:
            # a drawn chart (frame, grid, series, labels) inks well over 1 % of the page
            assert ink > 0.01, f"{sheet}: holds a chart but only {ink:.2%} of the page is inked"


# ===================================================================== 4. cell text
#: Python/numpy/pandas reprs that must never reach a cell.
REPRS = re.compile(r"(?<![A-Za-z])(nan|NaN|NAN|None|NaT|inf|Inf|-inf|Infinity)(?![A-Za-z])"
                   r"|<NA>|array\(|dtype")
#: The English word at the start of a sentence ("None: the pressure head stays above ...",
#: "none of the times studied") is not a repr.
ENGLISH_NONE = re.compile(r"(^|[.;] )None(?=: | of )")


@pytest.mark.parametrize("name", DEMO_CASES)
def test_no_python_reprs_in_cells(demos, name):
    wb = demos[name].wb
    bad = []
    for ws in wb.worksheets:
        assert not REPRS.search(ws.title)
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and REPRS.search(ENGLISH_NONE.sub("", c.value)):
                    bad.append(f"{ws.title}!{c.coordinate}: {c.value[:80]!r}")
                elif isinstance(c.value, float):
                    assert math.isfinite(c.value), f"{ws.title}!{c.coordinate}"
    assert bad == []


def _tables(ws):
    """Header rows of each sheet: yields (row, first col, last col) of each run of
    adjacent header cells (two tables may sit side by side on one row)."""
    for row in ws.iter_rows():
        cols = [c.column for c in row if c.value is not None and _is_header(c)]
        start = None
        for i, col in enumerate(cols):
            if start is None:
                start = col
            if i + 1 == len(cols) or cols[i + 1] != col + 1:
                yield row[0].row, start, col
                start = None


def _column_below(ws, row: int, col: int, first: int, last: int) -> list:
    """Values under a header down to the table's end (a row empty across the table)."""
    out = []
    for r in range(row + 1, ws.max_row + 1):
        cells = [ws.cell(row=r, column=k) for k in range(first, last + 1)]
        if all(c.value is None for c in cells) or _is_header(cells[0]):
            break
        out.append(ws.cell(row=r, column=col).value)
    return out


@pytest.mark.parametrize("name", DEMO_CASES)
def test_numeric_headers_carry_units(demos, name):
    wb = demos[name].wb
    missing, n_headers = [], 0
    for ws in wb.worksheets:
        for row, first, last in _tables(ws):
            headers = {ws.cell(row=row, column=k).value for k in range(first, last + 1)}
            for col in range(first, last + 1):
                head = ws.cell(row=row, column=col).value
                n_headers += 1
                assert isinstance(head, str) and head.strip(), f"{ws.title} row {row}"
                assert head == head.strip() and "  " not in head, repr(head)
                values = [v for v in _column_below(ws, row, col, first, last) if v is not None]
                numeric = values and all(_is_number(v) or (isinstance(v, str)
                                                           and v.startswith("="))
                                         for v in values)
                if not numeric or head in NO_UNIT:
                    continue
                if head == "value" and "unit" in headers:   # long table: unit column beside
                    continue
                if not re.search(r"\[[^\[\]]+\]$", head):
                    missing.append(f"{ws.title}!{get_column_letter(col)}{row}: {head!r}")
    assert n_headers > 50
    assert missing == []


def test_us_report_headers_carry_no_si_length_or_flow(demos):
    """The US report converts lengths, flows and velocities in every table header."""
    wb = demos["cedar-fork-us-units"].wb
    si = re.compile(r"\[(m|mm|m³/s|m/s|kPa)\]$")
    bad = [f"{ws.title}: {ws.cell(row=r, column=k).value}" for ws in wb.worksheets
           for r, a, b in _tables(ws) for k in range(a, b + 1)
           if si.search(str(ws.cell(row=r, column=k).value))]
    assert bad == []


# ===================================================================== 5. text stays text
INJECTED = {
    "name": ("Alder Gorge (invented high-head demo)", "+Alder Gorge & test"),
    "note": ("Invented site with a synthetic flow record, bundled to demonstrate the tool.",
             "@note: invented site"),
    "valve": ("station inlet valve (spherical)", "=SUM(1,2) inlet valve"),
    "branch": ("manifold to unit 1", "-1+2 manifold to unit 1"),
}


@pytest.fixture(scope="module")
def injected_book(tmp_path_factory) -> Path:
    """The high-head demo with its name, note and loss labels beginning '+', '@', '=', '-'."""
    base = tmp_path_factory.mktemp("injected")
    case = copy_demo("alder-gorge-high-head", base / "case")
    for old, new in INJECTED.values():
        edit_file(case / "site.toml", json.dumps(old), json.dumps(new))
    folder = base / "out" / "book"
    code, _, err = run_cli(["run", case, "--out", folder, "--quiet"])
    assert code == 0, err
    return folder / "book.xlsx"


@pytest.mark.parametrize("key", list(INJECTED))
def test_formula_like_case_text_stays_text(demos, injected_book, key):
    text = INJECTED[key][1]
    wb = openpyxl.load_workbook(injected_book)
    exact = [(ws.title, c) for ws in wb.worksheets for row in ws.iter_rows() for c in row
             if c.value == text]
    assert exact, f"{text!r} not found in the workbook"
    assert all(c.data_type == "s" for _, c in exact), [f"{s}!{c.coordinate}" for s, c in exact]
    # any cell holding the text (titles, notes, composed labels) is text, never a formula
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if isinstance(c.value, str) and text in c.value:
                    assert c.data_type == "s", f"{ws.title}!{c.coordinate}"
    where = {s for s, _ in exact}
    if key in ("valve", "branch"):   # loss labels name the route points and the components
        assert {"Route and grade lines", "Loss breakdown"} <= where, where
    if key == "name":
        assert "Summary" in where
    # and the writer's own formulas are unchanged in number
    assert len(_formula_cells(wb)) == len(_formula_cells(demos["alder-gorge-high-head"].wb))


def test_formula_like_text_survives_a_spreadsheet_engine(injected_book, tmp_path):
    _need_libreoffice("soffice")
    wb = _recalc(injected_book, tmp_path / "recalc.xlsx")
    texts = {c.value for ws in wb.worksheets for row in ws.iter_rows() for c in row
             if isinstance(c.value, str)}
    for _, text in INJECTED.values():
        assert text in texts, f"{text!r} lost (evaluated?) after recalculation"


# ===================================================================== 6. locked target
@pytest.fixture
def earlier_report(demos, tmp_path):
    """An earlier report folder, and the case that would replace it."""
    folder = tmp_path / "reports" / "site"
    write_reports(demos["millrace-flats-low-head"].results, folder)
    return CASES / "millrace-flats-low-head", folder


def test_open_workbook_is_left_alone(earlier_report):
    case, folder = earlier_report
    book = folder / "site.xlsx"
    lock = folder / f".~lock.{book.name}#"
    lock.write_text("someone,host,2024-01-01;", encoding="utf-8")
    old = folder_listing(folder)
    code, out, err = run_cli(["run", case, "--out", folder])
    assert code == 2
    assert out == "" and len(err.splitlines()) == 1 and "Traceback" not in err
    assert "lock" in err and book.name in err
    assert folder_listing(folder) == old
    assert [p.name for p in folder.parent.iterdir()] == ["site"]


def test_read_only_folder_is_bad_input(earlier_report):
    if os.geteuid() == 0:
        pytest.skip("running as root: directory permissions do not stop root from writing")
    case, folder = earlier_report
    old = folder_listing(folder)
    os.chmod(folder.parent, 0o555)
    try:
        code, out, err = run_cli(["run", case, "--out", folder])
    finally:
        os.chmod(folder.parent, 0o755)
    assert code == 2, err
    assert out == "" and len(err.splitlines()) == 1 and "Traceback" not in err
    assert str(folder.parent) in err and "writ" in err
    assert folder_listing(folder) == old
    assert [p.name for p in folder.parent.iterdir()] == ["site"]


# ===================================================================== 7. print setup
@pytest.mark.parametrize("name", DEMO_CASES)
def test_page_setup_and_footer(demos, name):
    d = demos[name]
    r = d.results
    for ws in d.wb.worksheets:
        ps = ws.page_setup
        assert ps.orientation == "landscape", ws.title
        assert int(ps.fitToWidth) == 1 and int(ps.fitToHeight) == 0, ws.title
        # fitTo* only takes effect with fitToPage set
        assert ws.sheet_properties.pageSetUpPr.fitToPage, ws.title
        f = ws.oddFooter
        footer = " ".join(p.text or "" for p in (f.left, f.center, f.right))
        assert r.case.name.replace("&", "&&") in footer, ws.title
        assert r.version in footer and str(r.run_date) in footer, (ws.title, footer)


@pytest.mark.parametrize("name", DEMO_CASES)
def test_document_properties(demos, name):
    d = demos[name]
    props = d.wb.properties
    assert d.results.case.name in props.title
    assert props.creator == f"penstock {d.results.version}"
    assert props.description and "licensed" in props.description


@pytest.mark.parametrize("name", DEMO_CASES)
@pytest.mark.parametrize("sheet", DATA_SHEETS)
def test_frozen_panes_below_a_header(demos, name, sheet):
    ws = demos[name].wb[sheet]
    assert ws.freeze_panes, f"{sheet}: no frozen panes"
    col, row = coordinate_from_string(ws.freeze_panes)
    assert row > 1
    assert _is_header(ws.cell(row=row - 1, column=1)), \
        f"{sheet}: frozen at {ws.freeze_panes}, not just below a header row"


#: Common practice: the frozen block must leave most of a screen to scroll; a laptop screen
#: at 100 % zoom shows about 30-40 rows, so more than 20 frozen rows leaves little or nothing.
MAX_FROZEN_ROWS = 20
@pytest.mark.parametrize("name", DEMO_CASES)
@pytest.mark.parametrize("sheet", DATA_SHEETS)
def test_frozen_block_fits_a_screen(demos, name, sheet):
    ws = demos[name].wb[sheet]
    _, row = coordinate_from_string(ws.freeze_panes)
    assert row - 1 <= MAX_FROZEN_ROWS, f"{sheet}: {row - 1} rows frozen"


# ===================================================================== 8. charts
@pytest.mark.parametrize("name", DEMO_CASES)
def test_charts_have_titles_and_visible_titled_axes(demos, name):
    charts = _charts_by_sheet(demos[name].book)
    found = [c for v in charts.values() for c in v]
    with zipfile.ZipFile(demos[name].book) as z:
        parts = [n for n in z.namelist() if re.fullmatch(r"xl/charts/chart\d+\.xml", n)]
    assert found and sorted(c["part"] for c in found) == sorted(parts)   # none orphaned
    for sheet, items in charts.items():
        for ch in items:
            where = f"{sheet} ({ch['part']})"
            chart = ch["xml"].find("c:chart", NS)
            assert _text(chart.find("c:title", NS)), f"{where}: no chart title"
            axes = [ax for tag in AXES for ax in chart.find("c:plotArea", NS).findall(
                f"c:{tag}", NS)]
            assert len(axes) >= 2, where
            for ax in axes:
                delete = ax.find("c:delete", NS)
                assert delete is not None and delete.get("val") in ("0", "false"), \
                    f"{where}: an axis may be hidden (<c:delete val=\"0\"/> missing)"
                assert _text(ax.find("c:title", NS)), f"{where}: an axis has no title"


@pytest.mark.parametrize("name", DEMO_CASES)
def test_chart_series_point_at_numbers(demos, name):
    """Every series reads an existing sheet range holding numbers (no blank chart)."""
    wb = demos[name].wb
    n = 0
    for sheet, items in _charts_by_sheet(demos[name].book).items():
        for ch in items:
            for ser in ch["xml"].iter(f"{{{NS['c']}}}ser"):
                for tag in ("yVal", "val"):
                    ref = ser.find(f"c:{tag}/c:numRef/c:f", NS)
                    if ref is None:
                        continue
                    target, rng = ref.text.rsplit("!", 1)
                    target = target.strip("'").replace("''", "'")
                    assert target in wb.sheetnames, f"{sheet}: series on unknown {target!r}"
                    c1, r1, c2, r2 = range_boundaries(rng.replace("$", ""))
                    ws = wb[target]
                    vals = [ws.cell(row=r, column=c).value for r in range(r1, r2 + 1)
                            for c in range(c1, c2 + 1)]
                    nums = [v for v in vals if _is_number(v) or (isinstance(v, str)
                                                                 and v.startswith("="))]
                    title = ser.find("c:tx/c:v", NS)
                    if title is not None and title.text == "pressure below margin":
                        # the flag series is empty by design when nothing is flagged
                        assert bool(nums) == bool(len(demos[name].results.flagged_stretches)), sheet
                        continue
                    assert nums, f"{sheet} ({ch['part']}): series {ref.text} has no numbers"
                    n += 1
    assert n > 10


def _col_px(ws, col: int) -> float:
    """Column width in pixels (Calibri 11: 7 px a character, plus 5 px padding)."""
    dim = ws.column_dimensions.get(get_column_letter(col))
    width = dim.width if dim is not None and dim.customWidth and dim.width else 8.43
    return width * 7 + 5


def _row_px(ws, row: int) -> float:
    dim = ws.row_dimensions.get(row)
    points = dim.height if dim is not None and dim.height else 15.0
    return points * 96 / 72


EMU_PER_PX = 9525   # 914400 EMU per inch, 96 px per inch


def _chart_box(ws, ch) -> tuple[int, int, int, int]:
    """The cells a chart covers: (first col, first row, last col, last row), 1-based."""
    c0, r0 = ch["col"] + 1, ch["row"] + 1
    width, height = ch["cx"] / EMU_PER_PX, ch["cy"] / EMU_PER_PX
    c1, used = c0, _col_px(ws, c0)
    while used < width - 1:    # 1 px slack for rounding
        c1 += 1
        used += _col_px(ws, c1)
    r1, used = r0, _row_px(ws, r0)
    while used < height - 1:
        r1 += 1
        used += _row_px(ws, r1)
    return c0, r0, c1, r1


def _overlap(a, b) -> bool:
    return a[0] <= b[2] and b[0] <= a[2] and a[1] <= b[3] and b[1] <= a[3]


def _charts_layout(demos, name):
    wb = demos[name].wb
    for sheet, items in _charts_by_sheet(demos[name].book).items():
        yield wb[sheet], [(ch, _chart_box(wb[sheet], ch)) for ch in items]


@pytest.mark.parametrize("name", DEMO_CASES)
def test_charts_cover_no_filled_cell(demos, name):
    bad = []
    for ws, boxes in _charts_layout(demos, name):
        for ch, (c0, r0, c1, r1) in boxes:
            for r in range(r0, r1 + 1):
                for c in range(c0, c1 + 1):
                    if ws.cell(row=r, column=c).value is not None:
                        bad.append(f"{ws.title}: {ch['part']} covers "
                                   f"{get_column_letter(c)}{r}")
    assert bad == []


@pytest.mark.parametrize("name", DEMO_CASES)
def test_charts_do_not_overlap(demos, name):
    bad = []
    for ws, boxes in _charts_layout(demos, name):
        for i, (a, box_a) in enumerate(boxes):
            for b, box_b in boxes[i + 1:]:
                if _overlap(box_a, box_b):
                    bad.append(f"{ws.title}: {a['part']} {box_a} and {b['part']} {box_b}")
    assert bad == []


def test_box_arithmetic():
    """The layout helpers: default widths, and a chart one column wide covers one column."""
    wb = openpyxl.Workbook()
    ws = wb.active
    assert _col_px(ws, 1) == pytest.approx(8.43 * 7 + 5)
    assert _row_px(ws, 1) == pytest.approx(20.0)
    ch = {"col": 2, "row": 3, "cx": int(60 * EMU_PER_PX), "cy": int(39 * EMU_PER_PX)}
    assert _chart_box(ws, ch) == (3, 4, 3, 5)
    assert _overlap((1, 1, 3, 3), (3, 3, 4, 4)) and not _overlap((1, 1, 3, 3), (4, 1, 5, 3))


def test_diameter_sheet_shows_the_stepped_design_beside_the_uniform_and_own_pipe(demos):
    """The stepped study in the workbook: one column per design, with the results' numbers
    in the report's units, the runs, the chart and the PNG."""
    checked = 0
    for d in demos.values():
        r = d.results
        if r.stepped_design is None:
            continue
        checked += 1
        ws = d.wb["Diameter study"]
        top = _label_row(ws, "Stepped diameters along the route")
        head = _label_row(ws, "quantity", top)
        designs = [ws.cell(row=head, column=c).value for c in (2, 3, 4)]
        assert designs == list(r.design_comparison["design"])
        cost = _label_row(ws, "annualized cost [", head, prefix=True)
        assert ws.cell(row=_label_row(ws, "capital cost, with the changes of diameter [",
                                      head, prefix=True), column=2).number_format == "#,##0"
        for j in range(3):
            assert ws.cell(row=cost, column=2 + j).value == pytest.approx(
                r.design_comparison["annualized cost [currency/year]"].iloc[j], rel=1e-12)
        dia = _label_row(ws, "first diameter [", head, prefix=True)
        si = r.design_comparison["first diameter [m]"].iloc[0]
        shown = ws.cell(row=dia, column=2).value
        assert shown == pytest.approx(si / 0.3048 if r.case.unit_system == "us" else si)
        runs = _label_row(ws, "Runs of the stepped design", cost)
        assert ws.cell(row=runs + 1 + len(r.stepped_design), column=4).value is not None
        assert any("Stepped design" in str(ch.title.tx.rich.p[0].r[0].t)
                   for ch in ws._charts if ch.title is not None)
        assert (d.book.parent / "stepped_design.png").is_file()
        # the thrust at its reducers, bends and closed ends, in the report's units
        forces = _label_row(ws, "Thrust at the stepped design's reducers", runs, prefix=True)
        heads = [ws.cell(row=forces + 2, column=c).value for c in range(1, 10)]
        assert heads[0] == "fitting"
        col = 1 + next(i for i, h in enumerate(heads) if h.startswith("governing thrust ["))
        kn = r.stepped_thrusts["governing thrust [kN]"].to_numpy()
        got = [ws.cell(row=forces + 3 + i, column=col).value for i in range(len(kn))]
        assert got == pytest.approx(kn / 4.4482216152605 if r.case.unit_system == "us"
                                    else kn, rel=1e-9)
        assert (d.book.parent / "stepped_thrusts.csv").is_file()
    assert checked >= 2   # the high-head demo (SI) and the US-units demo
