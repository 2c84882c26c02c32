"""CSV tables of a report: text cells safe in a spreadsheet, numbers unchanged.

Sources: OWASP Foundation, "CSV Injection" (the first characters that make a spreadsheet
read a cell as a formula: = + - @ tab carriage return) and OWASP ASVS 5.0 requirement
1.2.10 (the same, with NUL; neutralise with a leading single quote); RFC 4180 sections
2.6-2.7 (fields with separators, quotes or line breaks in double quotes, inner quotes
doubled).  The spreadsheet check opens the CSV in LibreOffice, with formula evaluation
switched on, as the most hostile reader.
"""

from __future__ import annotations

import csv
import io
import shutil
import subprocess
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

from penstock.report import FORMULA_STARTS, safe_text, write_csv

#: One text per dangerous first character (OWASP: = + - @ tab CR; ASVS 1.2.10: NUL).
DANGEROUS = ['=HYPERLINK("http://example.invalid","x")', "+1+2", "-2+3 ridge", "@SUM(A1:A2)",
             "\t=1+1", "\r=1+1", "\0=1+1"]


@pytest.mark.parametrize("text", DANGEROUS, ids=["equals", "plus", "minus", "at", "tab", "cr",
                                                 "nul"])
def test_dangerous_text_gets_a_leading_quote(text):
    assert text[0] in FORMULA_STARTS
    assert safe_text(text) == "'" + text


@pytest.mark.parametrize("value", ["site A", "1.5 m", "'=already quoted", "", 3.5, -2, None])
def test_everything_else_passes_unchanged(value):
    assert safe_text(value) == value


def _table():
    return pd.DataFrame({
        "label": ["plain", 'say "hi"', "a,b", "two\nlines", "cr\ronly", *DANGEROUS[:2]],
        "value [m]": [1.0, -2.5, np.nan, 1 / 3, 1e-300, 12345678.123456789, -0.0],
        "count": np.arange(7),
        "flag": [True, False] * 3 + [True],
    })


def test_written_csv_reads_back_cell_for_cell(tmp_path):
    df = _table()
    path = tmp_path / "t.csv"
    write_csv(df, path)
    rows = list(csv.reader(io.StringIO(path.read_text(encoding="utf-8"), newline="")))
    assert len(rows) == 1 + len(df)                   # a line break never splits a row
    assert all(len(r) == df.shape[1] for r in rows)
    assert rows[0] == list(df.columns)
    # (the reader turns a carriage return inside a quoted field into a line feed)
    assert [r[0] for r in rows[1:]] == [safe_text(t).replace("\r", "\n") for t in df["label"]]
    back = pd.read_csv(path)
    np.testing.assert_allclose(back["value [m]"], df["value [m]"], rtol=1e-13)
    assert list(back["count"]) == list(range(7))


def test_missing_values_and_other_types(tmp_path):
    path = tmp_path / "t.csv"
    df = pd.DataFrame({"n": pd.array([1, None], dtype="Int64"),
                       "x [m]": [np.inf, -np.inf],
                       "when": pd.to_datetime(["2008-01-01", None]),
                       "step": pd.to_timedelta(["1 h", None])})
    write_csv(df, path)
    lines = path.read_text(encoding="utf-8").splitlines()
    assert lines[1] == '1,inf,"2008-01-01T00:00:00","P0DT1H0M0S"'
    assert lines[2] == ',-inf,,'


def test_numbers_are_bare_and_text_quoted(tmp_path):
    path = tmp_path / "t.csv"
    write_csv(pd.DataFrame({"a": ["x"], "b [m]": [2.5], "n": [3]}), path)
    assert path.read_text(encoding="utf-8") == '"a","b [m]","n"\n"x",2.5,3\n'


def _libreoffice_cells(csv_path: Path, out_dir: Path) -> list[list[tuple]]:
    """Open a CSV in LibreOffice with formula evaluation on; return (value, type) cells."""
    profile = out_dir / "profile"
    # CSV import options: comma, double quote, UTF-8, from line 1, standard columns,
    # language en-US, quoted fields not forced to text, special numbers detected, ...,
    # token 13: evaluate formulas
    options = "44,34,76,1,,1033,false,true,false,false,false,-1,true"
    proc = subprocess.run(["soffice", f"-env:UserInstallation=file://{profile}", "--headless",
                           "--norestore", f"--infilter=CSV:{options}", "--convert-to", "xlsx",
                           "--outdir", str(out_dir), str(csv_path)],
                          capture_output=True, text=True, timeout=180)
    book = out_dir / f"{csv_path.stem}.xlsx"
    assert book.is_file(), proc.stderr
    ws = openpyxl.load_workbook(book).active
    return [[(c.value, c.data_type) for c in row] for row in ws.iter_rows()]


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) not "
                    "installed: apt-get install libreoffice-calc-nogui")
def test_a_spreadsheet_reads_every_dangerous_text_as_text(tmp_path):
    texts = [t.replace("\0", "") if t.startswith("\0") else t for t in DANGEROUS]
    texts = [t for t in texts if t]
    safe = tmp_path / "safe.csv"
    write_csv(pd.DataFrame({"label": texts, "n": range(len(texts))}), safe)
    cells = _libreoffice_cells(safe, tmp_path)
    labels = [row[0] for row in cells[1:]]
    assert len(labels) == len(texts)
    for (value, kind), text in zip(labels, texts, strict=True):
        assert kind == "s", (text, value, kind)       # text, never a formula
        assert value.lstrip("'").strip() == text.strip(), (value, text)
    # the control: the same texts written raw do become formulas, so the check can fail
    raw = tmp_path / "raw.csv"
    raw.write_text('"label"\n"=1+1"\n', encoding="utf-8")
    assert _libreoffice_cells(raw, tmp_path / "raw")[1][0][1] == "f"


def test_every_report_csv_is_safe(tmp_path):
    """A whole run with formula-like text from the case: no CSV cell starts a formula."""
    from conftest import copy_demo, edit_file, run_cli

    case = copy_demo("millrace-flats-low-head", tmp_path / "case")
    edit_file(case / "site.toml", 'name = "Millrace Flats (invented low-head demo)"',
              'name = "=HYPERLINK(\\"http://example.invalid\\")"')
    edit_file(case / "site.toml", 'note = "Invented site with a synthetic flow record, '
              'bundled to demonstrate the tool."', 'note = "line one\\rline two"')
    folder = tmp_path / "out" / "site"
    code, _, err = run_cli(["run", case, "--out", folder, "--quiet"])
    assert code == 0, err
    for path in sorted(folder.glob("*.csv")):
        rows = list(csv.reader(io.StringIO(path.read_text(encoding="utf-8"), newline="")))
        width = len(rows[0])
        assert all(len(r) == width for r in rows), path.name
        for r in rows:
            for cell in r:
                assert not cell.startswith(FORMULA_STARTS) or _is_number(cell), (path.name,
                                                                                  cell)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True
