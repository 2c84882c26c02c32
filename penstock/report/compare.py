"""Comparison tables and workbook: several diameters of one case, or several cases."""

from __future__ import annotations

import datetime as _dt

import pandas as pd
from openpyxl import Workbook

from ..model import STANDING_CAUTION
from . import sheets as sh
from .units import convert_table

#: Rows of a diameter comparison: candidate-table column -> shown name.
DIAMETER_ROWS = [
    "diameter [m]", "thinnest plate [mm]", "thickest plate [mm]", "steel mass [t]",
    "capital cost [currency]", "head loss at design flow [m]", "net head at design flow [m]",
    "mean annual energy [MWh]", "value of energy lost [currency/year]",
    "annualized cost [currency/year]", "maximum surge rise [m]",
    "minimum steady pressure margin at the crown, minimum headwater [m]",
    "minimum transient pressure head at the crown, minimum headwater [m]",
    "velocity at design flow [m/s]", "water starting time [s]",
    "largest vacuum-buckling utilisation [-]",
    "reaches whose wall is set by full vacuum [-]", "passes the checks", "governing check",
]


def diameter_comparison(results, system: str) -> pd.DataFrame:
    """Candidate diameters side by side: one row per quantity, one column per diameter."""
    cand = results.diameter_candidates[DIAMETER_ROWS]
    cur = results.case.economics["currency"]
    t = convert_table(cand, system)
    t.columns = [c.replace("[currency", f"[{cur}") for c in t.columns]
    names = [f"D = {d:.3f}" for d in t.iloc[:, 0]]
    out = t.T
    out.columns = names
    out.index.name = "quantity"
    return out.reset_index()


#: Rows of a design comparison, shared by the stepped designs and the materials.
DESIGN_ROWS = [
    "capital cost [currency]", "annualized capital [currency/year]",
    "operation and maintenance [currency/year]", "energy lost [MWh/year]",
    "value of energy lost [currency/year]", "annualized cost [currency/year]",
    "maximum surge rise [m]",
    "minimum steady pressure margin at the crown, minimum headwater [m]", "at chainage [m]",
    "minimum transient pressure head at the crown, minimum headwater [m]",
    "passes the checks", "governing check",
]


def design_comparison(results, system: str) -> pd.DataFrame:
    """The designs of one case side by side: the stepped optimum, the best uniform diameter
    and the case's own pipe (welded steel), then each material at its best uniform size;
    one row per quantity, one column per design."""
    cur = results.case.economics["currency"]
    cols = {}
    if results.design_comparison is not None:
        dc = results.design_comparison.rename(columns={
            "capital cost, with the changes of diameter [currency]": "capital cost [currency]"})
        for _, row in dc.iterrows():
            only_steel = all(part.startswith("welded steel")
                             for part in row["pipe along the route"].split("; "))
            cols[f"{'steel' if only_steel else 'materials'}: {row['design']}"] = dict(
                row, pipe=(f"welded steel, {row['first diameter [m]']:.3f} m to "
                           f"{row['last diameter [m]']:.3f} m, "
                           f"{_changes(row['changes of diameter or material [-]'])}"
                           if only_steel else row["pipe along the route"]))
    if results.material_comparison is not None:
        for _, row in results.material_comparison.iterrows():
            cols[f"{row['material']}: best uniform size"] = dict(
                row, pipe=f"{row['size']}, inside {row['inside diameter [m]']:.3f} m; "
                f"{row['classes along the route']}; prices: {row['prices']}")
    if not cols:
        return pd.DataFrame()
    rows = ["pipe", *DESIGN_ROWS]
    table = pd.DataFrame({name: [c.get(q) for q in rows] for name, c in cols.items()})
    table.insert(0, "quantity", rows)
    # each quantity in the report's units: convert column-wise as a one-row table
    out = []
    for q, values in zip(rows, table.drop(columns="quantity").to_numpy(), strict=True):
        if q in ("pipe", "passes the checks", "governing check"):
            out.append((q, list(values)))
            continue
        conv = convert_table(pd.DataFrame({q: pd.to_numeric(values)}), system)
        out.append((conv.columns[0].replace("[currency", f"[{cur}"), conv.iloc[:, 0].tolist()))
    return pd.DataFrame({"quantity": [q for q, _ in out],
                         **{name: [v[k] for _, v in out] for k, name in enumerate(cols)}})


def _changes(n) -> str:
    n = int(n)
    return "no change of diameter" if n == 0 else \
        f"{n} change{'s' if n > 1 else ''} of diameter"


RECOMMENDED = "recommended uniform pipe diameter (diameter study)"


def case_comparison(results_list, system: str | None = None) -> pd.DataFrame:
    """Headline summaries of several cases side by side, the case's own pipe of each, rows
    matched by quantity, with the diameter study's recommendation of each."""
    cols, order = {}, []
    for r in results_list:
        s = convert_table(r.summary, system or r.case.unit_system)
        s = s[~s["quantity"].isin(["note"])]
        values = {q: (f"{_num(v)} {u}".strip() if isinstance(v, (int, float))
                      and not isinstance(v, bool) and v == v else
                      "" if v is None or (isinstance(v, float) and v != v) else str(v))
                  for q, v, u in zip(s["quantity"], s["value"], s["unit"], strict=True)}
        rec = s.set_index("quantity").get("recommended uniform pipe")
        d = rec.get("inside diameter, largest") if rec is not None else None
        unit = s.set_index("quantity").loc["inside diameter, largest", "unit"]
        values[RECOMMENDED] = (f"{_num(d)} {unit}" if isinstance(d, (int, float)) and d == d
                               else "none passes the checks"
                               if r.headline.optimum_diameter is not None
                               else "not studied")
        for q in values:
            if q not in order:
                order.append(q)
        cols[r.case.slug] = values
    return pd.DataFrame({"quantity": order,
                         **{k: [v.get(q, "") for q in order] for k, v in cols.items()}})


def _num(v: float) -> str:
    return f"{v:,.0f}" if abs(v) >= 1000 else f"{v:.4g}"


def write_comparison_workbook(table: pd.DataFrame, path, title: str, case_name: str,
                              version: str, notes=()) -> None:
    """A one-sheet workbook holding a comparison table, with the standing caution."""
    wb = Workbook()
    ws = wb.active
    ws.title = "Comparison"
    sh.put(ws, 1, 1, title, font=sh.TITLE)
    sh.put(ws, 2, 1, f"penstock {version}, run {_dt.date.today().isoformat()}", font=sh.NOTE)
    c = sh.put(ws, 3, 1, "Caution: " + STANDING_CAUTION, font=sh.CAUTION)
    c.alignment = sh.WRAP
    ws.merge_cells(start_row=3, start_column=1, end_row=3, end_column=max(4, table.shape[1]))
    ws.row_dimensions[3].height = 45
    row = 5
    for note in notes:
        sh.put(ws, row, 1, note, font=sh.NOTE)
        row += 1
    first, _ = sh.write_table(ws, table, row=row + 1, widths={table.columns[0]: 46})
    for j in range(2, table.shape[1] + 1):
        ws.cell(row=row + 1, column=j)
        for i in range(first, first + len(table)):
            ws.cell(row=i, column=j).number_format = "#,##0.000"
    ws.freeze_panes = ws.cell(row=first, column=2)
    sh.page_setup(ws, case_name, version, _dt.date.today().isoformat())
    wb.properties.title = title
    wb.properties.creator = f"penstock {version}"
    wb.properties.lastModifiedBy = "penstock"
    # its own digest goes here once written (report.publish.write_workbook_file), so that
    # a later run replaces it only while nobody changed it
    from openpyxl.packaging.custom import StringProperty

    from .publish import DIGEST_PLACEHOLDER, DIGEST_PROPERTY

    wb.custom_doc_props.append(StringProperty(name=DIGEST_PROPERTY, value=DIGEST_PLACEHOLDER))
    wb.save(path)
