"""Tests of the rows a sheet shows of a table along the route (penstock.report.sheets).

A surveyed route of thousands of points gives tables of thousands of rows; the sheets
show the rows that matter and the CSVs keep them all. Checked against the tables
themselves (no published source): every extreme a reader looks for must be on the sheet.
"""

from __future__ import annotations

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import CASES, copy_demo
from hypothesis import given, settings
from hypothesis import strategies as st

import penstock
from penstock.report import write_reports
from penstock.report.sheets import ROUTE_ROWS, route_rows


@settings(max_examples=60, deadline=None)
@given(st.integers(2, 3000), st.integers(1, 4), st.integers(0, 2**32 - 1))
def test_route_rows_keep_every_stretch_extreme(n, k, seed):
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(0.0, 5000.0, n))
    v = rng.normal(size=(n, k)).cumsum(axis=0)
    v[rng.random((n, k)) < 0.05] = np.nan
    labelled = rng.random(n) < 0.01
    rows = route_rows(x, v, labelled=labelled)
    assert np.all(np.diff(rows) > 0) and rows[0] == 0 and rows[-1] == n - 1
    if n <= ROUTE_ROWS:
        np.testing.assert_array_equal(rows, np.arange(n))
        return
    assert set(np.flatnonzero(labelled)) <= set(rows)
    bins = ROUTE_ROWS // 4
    assert rows.size <= 2 + bins * (1 + 2 * k) + labelled.sum()
    stretch = np.minimum(((x - x[0]) / (x[-1] - x[0]) * bins).astype(int), bins - 1)
    shown = np.zeros(n, bool)
    shown[rows] = True
    for s in np.unique(stretch):
        inside = stretch == s
        assert shown[inside].any()
        for j in range(k):
            col = v[inside, j]
            if np.isfinite(col).any():
                kept = v[inside & shown, j]
                assert np.nanmin(kept) == np.nanmin(col)
                assert np.nanmax(kept) == np.nanmax(col)


def test_route_rows_of_one_point_and_a_flat_chainage():
    np.testing.assert_array_equal(route_rows([0.0], [[1.0]]), [0])
    rows = route_rows(np.zeros(1000), np.arange(1000.0)[:, None])
    assert {0, 999} <= set(rows) and rows.size < 1000


@pytest.fixture(scope="module")
def long_route(tmp_path_factory):
    """The high-head demo on a 1,500-point profile (invented, resampled), run and written."""
    base = tmp_path_factory.mktemp("long")
    folder = copy_demo("alder-gorge-high-head", base)
    profile = pd.read_csv(CASES / "alder-gorge-high-head" / "profile.csv", comment="#")
    x = np.union1d(np.linspace(profile.iloc[0, 0], profile.iloc[-1, 0], 1500),
                   profile.iloc[:, 0])
    table = pd.DataFrame({c: np.interp(x, profile.iloc[:, 0], profile[c])
                          for c in profile.columns[1:]})
    table.insert(0, profile.columns[0], x)
    with open(folder / "profile.csv", "w") as handle:
        handle.write("# INVENTED demo profile resampled to 1,500 points (test)\n")
        table.to_csv(handle, index=False)
    results = penstock.run_case(penstock.load_case(folder), samples=0)
    book = write_reports(results, base / "out" / "long")["workbook"]
    return results, openpyxl.load_workbook(book), book.parent


def _table(ws, header_start):
    """The table whose header row holds a cell starting ``header_start`` -> DataFrame."""
    for row in ws.iter_rows():
        for cell in row:
            if isinstance(cell.value, str) and cell.value.startswith(header_start):
                names, r0, c0 = [], cell.row, cell.column
                c = c0
                while ws.cell(r0, c).value is not None:
                    names.append(ws.cell(r0, c).value)
                    c += 1
                data, r = [], r0 + 1
                while ws.cell(r, c0).value is not None:
                    data.append([ws.cell(r, c0 + j).value for j in range(len(names))])
                    r += 1
                return pd.DataFrame(data, columns=names)
    raise AssertionError(f"no header {header_start!r} on {ws.title}")


def test_long_route_sheets_show_the_governing_rows(long_route):
    results, wb, folder = long_route
    gl = results.grade_lines
    route = _table(wb["Route and grade lines"], "chainage")
    nodes = (gl["flow case"] == gl["flow case"].iloc[0]).sum()
    assert nodes > ROUTE_ROWS and len(route) < nodes
    for case, part in gl.groupby("flow case"):
        col = f"crown pressure head, minimum headwater, {case} [m]"
        lowest = part["pressure head at the crown, minimum headwater [m]"].min()
        assert route[col].min() == pytest.approx(lowest, rel=1e-12)
    assert route["pipe elevation [m]"].max() == pytest.approx(
        gl["pipe elevation [m]"].max(), rel=1e-12)
    named = set(gl.loc[gl["point"] != "profile", "point"])
    assert named <= set(route["point"])
    notes = [c.value for row in wb["Route and grade lines"].iter_rows() for c in row
             if isinstance(c.value, str) and "grade_lines.csv" in c.value]
    assert notes, "the sheet must say where every node is"
    full = pd.read_csv(folder / "grade_lines.csv", comment="#")
    assert len(full) == len(gl)


def test_long_route_envelope_keeps_the_transient_minimum(long_route):
    results, wb, _ = long_route
    env = results.transient_envelope
    env = env[env["rejection from"] == "design flow"]
    sheet = _table(wb["Water hammer"], "initial flow")
    assert len(sheet) < len(env)
    for col in ("minimum head [m]", "maximum head [m]",
                "minimum pressure head at the crown, minimum headwater [m]"):
        assert sheet[col].min() == pytest.approx(env[col].min(), rel=1e-12)
        assert sheet[col].max() == pytest.approx(env[col].max(), rel=1e-12)
