"""Low-level helpers for writing sheets with openpyxl: safe text, tables, styles, charts."""

from __future__ import annotations

import math
import numbers
from copy import copy

import numpy as np
import pandas as pd
from openpyxl.chart import BarChart, Reference, ScatterChart, Series
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.properties import PageSetupProperties

from .units import split_header

FONT = "Calibri"
TITLE = Font(name=FONT, bold=True, size=14)
SUBTITLE = Font(name=FONT, bold=True, size=11)
HEADER = Font(name=FONT, bold=True, size=10, color="FFFFFF")
BODY = Font(name=FONT, size=10)
NOTE = Font(name=FONT, size=10, italic=True)
CAUTION = Font(name=FONT, size=10, bold=True, color="7F1D1D")
HEADER_FILL = PatternFill("solid", fgColor="2F4858")
INPUT_FILL = PatternFill("solid", fgColor="EEF3F6")
THIN = Side(style="thin", color="B0BEC5")
BOX = Border(top=THIN, bottom=THIN, left=THIN, right=THIN)
WRAP = Alignment(wrap_text=True, vertical="top")

#: Number formats by the unit in a column header.
FORMATS = {
    "m": "0.00", "ft": "0.00", "mm": "0.0", "in": "0.00", "m³/s": "0.000", "ft³/s": "0.00",
    "m/s": "0.00", "ft/s": "0.00", "%": "0.0", "kW": "#,##0", "MW": "0.00", "MWh": "#,##0",
    "GWh": "0.000", "kPa": "0.0", "psi": "0.0", "s": "0.00", "-": "0.000", "°C": "0.0",
    "°F": "0.0", "t": "#,##0.0", "kg/m³": "0.0", "kN": "#,##0.0", "kip": "#,##0.0",
    "deg": "0.0", "MPa": "0.0",
}


#: Tables along the route longer than this show selected rows on their sheet (and every
#: row in their CSV), so that a surveyed route of any length gives a readable sheet.
ROUTE_ROWS = 400


def route_rows(chainage, values, labelled=None, limit: int = ROUTE_ROWS) -> np.ndarray:
    """Positions of the rows of a table along the route to show on a sheet.

    Parameters
    ----------
    chainage : array_like
        Chainage of each row, non-decreasing. [m]
    values : array_like of shape (rows, k)
        Columns whose highs and lows must stay visible (elevations, heads, pressure
        heads); NaN is ignored. [-]
    labelled : array_like of bool, optional
        Rows that are always shown (named points: fittings, diameter changes). [-]
    limit : int
        Tables of at most this many rows are shown whole. [-]

    Returns
    -------
    numpy.ndarray
        Sorted row positions: every row of a short table; otherwise the first and
        last rows, the labelled rows, and in each of ``limit // 4`` stretches of equal
        chainage its first row and the rows of the smallest and largest value of each
        column, so that every extreme of the table (the lowest pressure head of each
        stretch, the high points) and the shape of a chart of it survive. [-]
    """
    x = np.asarray(chainage, dtype=float)
    n = x.size
    if n <= limit:
        return np.arange(n)
    v = np.asarray(values, dtype=float).reshape(n, -1)
    bins = max(1, limit // 4)
    span = x[-1] - x[0]
    stretch = (np.zeros(n, np.intp) if span <= 0 else
               np.minimum(((x - x[0]) / span * bins).astype(np.intp), bins - 1))
    keep = [np.array([0, n - 1]), np.unique(stretch, return_index=True)[1]]
    if labelled is not None:
        keep.append(np.flatnonzero(np.asarray(labelled, dtype=bool)))
    for column in v.T:
        for signed in (column, -column):
            key = np.where(np.isnan(signed), np.inf, signed)
            order = np.lexsort((key, stretch))       # by stretch, then value
            first = np.unique(stretch[order], return_index=True)[1]
            keep.append(order[first])
    return np.unique(np.concatenate(keep))


def rows_note(shown: int, total: int, csv: str, named: bool = False) -> str:
    """The note beside a table along the route: how many rows it shows, and where all are."""
    if shown >= total:
        return ""
    return (f" (showing {shown:,} of {total:,} rows: the ends, "
            + ("the named points, " if named else "")
            + f"and the highest and lowest values of each stretch of the route; every row is "
            f"in {csv})")


def _set_value(cell, value) -> str:
    """Give ``cell`` the value; text always lands as text, never as a formula.

    Returns the kind of value written: ``"number"``, ``"text"`` or ``"empty"``.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        cell.value = None
        return "empty"
    if isinstance(value, (bool, np.bool_)):
        cell.value = "yes" if value else "no"
        cell.data_type = "s"
        return "text"
    if isinstance(value, numbers.Number):
        cell.value = float(value) if isinstance(value, (np.floating, float)) else int(value)
        return "number"
    cell.value = str(value)
    cell.data_type = "s"   # text beginning with '=', '+', '-' or '@' stays text
    return "text"


def put(ws, row: int, col: int, value, font=BODY, fmt: str | None = None):
    """Write one value; text always lands as text, never as a formula."""
    cell = ws.cell(row=row, column=col)
    if _set_value(cell, value) == "number" and fmt:
        cell.number_format = fmt
    cell.font = font
    return cell


def formula(ws, row: int, col: int, text: str, fmt: str | None = None, font=BODY):
    """Write a live formula (our own, never text taken from a case)."""
    cell = ws.cell(row=row, column=col)
    cell.value = text
    cell.font = font
    if fmt:
        cell.number_format = fmt
    return cell


def write_table(ws, df: pd.DataFrame, row: int = 1, col: int = 1, widths=None,
                wrap_cols=()) -> tuple[int, int]:
    """Write a table with a styled header row. Returns (first data row, last data row)."""
    for j, name in enumerate(df.columns):
        c = put(ws, row, col + j, name, font=HEADER)
        c.fill = HEADER_FILL
        c.alignment = Alignment(wrap_text=True, vertical="center")
        c.border = BOX
    fmts = [_format_for(name) for name in df.columns]
    wrapped = [name in wrap_cols for name in df.columns]
    values = df.to_numpy(dtype=object)
    styles = {}   # one style per (column, kind of value), registered once, then copied
    for i, rec in enumerate(values):
        for j, v in enumerate(rec):
            cell = ws.cell(row=row + 1 + i, column=col + j)
            key = (j, _set_value(cell, v))
            style = styles.get(key)
            if style is None:
                if key[1] == "number" and fmts[j]:
                    cell.number_format = fmts[j]
                cell.font = BODY
                if wrapped[j]:
                    cell.alignment = WRAP
                styles[key] = copy(cell._style)
            else:
                cell._style = copy(style)
    for j, name in enumerate(df.columns):
        letter = get_column_letter(col + j)
        if widths and name in widths:
            w = widths[name]
        else:
            longest = max([len(str(name)) * 0.8] + [len(_shown(v)) for v in values[:200, j]]
                          if len(values) else [len(str(name))])
            w = min(max(10, longest + 2), 60)
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or 0, w)
    ws.row_dimensions[row].height = 30
    if wrap_cols:   # wrapped text: give each row the lines it needs (spreadsheets do not)
        for i, rec in enumerate(values):
            lines = 1
            for j, name in enumerate(df.columns):
                if name in wrap_cols:
                    w = ws.column_dimensions[get_column_letter(col + j)].width or 10
                    lines = max(lines, math.ceil(len(_shown(rec[j])) / max(w * 1.1, 1)))
            if lines > 1:
                ws.row_dimensions[row + 1 + i].height = 13.5 * lines
    return row + 1, row + len(df)


def _shown(v) -> str:
    if isinstance(v, float):
        return f"{v:.3f}"
    return "" if v is None else str(v)


def _format_for(header: str) -> str | None:
    _, unit = split_header(header)
    if not unit:
        return None
    if unit in FORMATS:
        return FORMATS[unit]
    if unit[:3].isalpha() and unit[:3].isupper():   # a currency, e.g. USD or USD/year
        return "#,##0"
    return "0.000"


def page_setup(ws, case_name: str, version: str, run_date: str, title_rows: str | None = None):
    """Landscape, one page wide, repeated header rows, footer with case, version and date."""
    ws.sheet_properties.pageSetUpPr = PageSetupProperties(fitToPage=True)
    ws.page_setup.orientation = "landscape"
    ws.page_setup.paperSize = ws.PAPERSIZE_A4
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    if title_rows:
        ws.print_title_rows = title_rows
    safe = case_name.replace("&", "&&")
    ws.oddFooter.left.text = safe
    ws.oddFooter.center.text = f"penstock {version} - planning-level results"
    ws.oddFooter.right.text = f"run {run_date} - page &P of &N"
    ws.page_margins.left = ws.page_margins.right = 0.5


def scatter_chart(title: str, x_title: str, y_title: str, x_format="0", y_format="0",
                  x_major=None, y_major=None, width=24, height=12) -> ScatterChart:
    ch = ScatterChart()
    ch.title = title
    ch.style = 13
    ch.height, ch.width = height, width
    ch.x_axis.title = x_title
    ch.y_axis.title = y_title
    ch.x_axis.number_format = x_format
    ch.y_axis.number_format = y_format
    if x_major:
        ch.x_axis.majorUnit = x_major
    if y_major:
        ch.y_axis.majorUnit = y_major
    ch.x_axis.delete = False
    ch.y_axis.delete = False
    ch.legend.position = "b"
    return ch


def add_line(chart, ws, x_col: int, y_col: int, first: int, last: int, name: str,
             color: str, dash: str | None = None, width: int = 19050, markers=False):
    xs = Reference(ws, min_col=x_col, min_row=first, max_row=last)
    ys = Reference(ws, min_col=y_col, min_row=first, max_row=last)
    s = Series(ys, xs, title=name)
    s.smooth = False
    if markers:
        s.marker.symbol = "circle"
        s.marker.size = 6
        s.marker.graphicalProperties.solidFill = color
        s.marker.graphicalProperties.line.solidFill = color
        s.graphicalProperties.line.noFill = True
    else:
        s.marker.symbol = "none"
        s.graphicalProperties.line.solidFill = color
        s.graphicalProperties.line.width = width
        if dash:
            s.graphicalProperties.line.dashStyle = dash
    chart.series.append(s)
    return s


def bar_chart(title: str, x_title: str, y_title: str, y_format="0.00", width=24,
              height=12) -> BarChart:
    ch = BarChart()
    ch.type = "bar"
    ch.title = title
    ch.height, ch.width = height, width
    ch.x_axis.title = x_title
    ch.y_axis.title = y_title
    ch.y_axis.number_format = y_format
    ch.x_axis.delete = False
    ch.y_axis.delete = False
    ch.legend = None
    return ch


def nice_step(span: float, target: int = 8) -> float:
    """A round axis step giving about ``target`` ticks over ``span``."""
    if not span > 0:
        return 1.0
    raw = span / target
    mag = 10 ** math.floor(math.log10(raw))
    for m in (1, 2, 2.5, 5, 10):
        if raw <= m * mag:
            return m * mag
    return 10 * mag
