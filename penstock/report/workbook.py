"""The client workbook: sheets in reading order, native charts, live formulas for audit.

Writers only read a :class:`penstock.model.Results`; they compute nothing the
results do not hold, except unit conversion and the spreadsheet's own formulas
(which restate the tool's numbers so a reviewer can retrace them).
"""

from __future__ import annotations

import datetime as _dt

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.chart import Reference

from .. import units as _units
from ..constants import GRAVITY
from ..model import STANDING_CAUTION
from . import energy_sheets as es
from . import sheets as sh
from .diameter_sheet import diameter_sheet
from .hammer_sheet import hammer_sheet
from .uncertainty_sheet import uncertainty_sheet
from .units import convert_table, convert_value, report_unit

#: Sheet names, in reading order (plain trade terms).
SHEET_NAMES = {
    "summary": "Summary",
    "inputs": "Inputs",
    "route": "Route and grade lines",
    "pressure": "Pressure checks",
    "losses": "Loss breakdown",
    "duration": "Flow and power duration",
    "energy": "Energy by year and month",
    "design_flow": "Design-flow study",
    "turbine": "Turbine setting",
    "hammer": "Water hammer",
    "diameter": "Diameter study",
    "uncertainty": "Uncertainty",
    "cautions": "Cautions",
    "methods": "Methods and sources",
}

COLORS = ["1F77B4", "D62728", "2CA02C", "9467BD", "FF7F0E", "8C564B", "17BECF"]


def write_workbook(results, path, system: str | None = None) -> None:
    """Write the client workbook to ``path`` (the caller makes it atomic).

    Parameters
    ----------
    results : penstock.model.Results
    path : path-like
        Target ``.xlsx`` file.
    system : {"si", "us"}, optional
        Unit system of the report; defaults to the case's own.
    """
    system = system or results.case.unit_system
    wb = Workbook()
    ctx = _Context(results, system)
    _summary_sheet(wb.active, ctx)
    _inputs_sheet(wb.create_sheet(SHEET_NAMES["inputs"]), ctx)
    _route_sheet(wb.create_sheet(SHEET_NAMES["route"]), ctx)
    _pressure_sheet(wb.create_sheet(SHEET_NAMES["pressure"]), ctx)
    _losses_sheet(wb.create_sheet(SHEET_NAMES["losses"]), ctx)
    if es.has_energy(results):
        es.duration_sheet(wb.create_sheet(SHEET_NAMES["duration"]), ctx, _title)
        es.energy_sheet(wb.create_sheet(SHEET_NAMES["energy"]), ctx, _title)
        es.design_flow_sheet(wb.create_sheet(SHEET_NAMES["design_flow"]), ctx, _title)
    if results.diameter_candidates is not None:
        diameter_sheet(wb.create_sheet(SHEET_NAMES["diameter"]), ctx, _title)
    if results.water_hammer_checks is not None:
        hammer_sheet(wb.create_sheet(SHEET_NAMES["hammer"]), ctx, _title)
    if es.has_energy(results):
        es.turbine_sheet(wb.create_sheet(SHEET_NAMES["turbine"]), ctx, _title)
    if results.uncertainty_summary is not None:
        uncertainty_sheet(wb.create_sheet(SHEET_NAMES["uncertainty"]), ctx, _title)
    _cautions_sheet(wb.create_sheet(SHEET_NAMES["cautions"]), ctx)
    _methods_sheet(wb.create_sheet(SHEET_NAMES["methods"]), ctx)
    props = wb.properties
    props.title = f"Penstock study - {results.case.name}"
    props.subject = "Planning-level penstock hydraulics and energy"
    props.creator = f"penstock {results.version}"
    props.lastModifiedBy = "penstock"   # an edit saved by anyone else changes it
    props.description = STANDING_CAUTION
    props.keywords = "penstock, hydropower, grade line, head loss"
    props.created = _dt.datetime.now(_dt.UTC).replace(tzinfo=None)
    wb.save(path)


class _Context:
    def __init__(self, results, system):
        self.r = results
        self.system = system
        self.case = results.case

    def page(self, ws, title_rows=None):
        sh.page_setup(ws, self.case.name, self.r.version, self.r.run_date, title_rows)

    def u(self, si_unit):
        return _units.label(report_unit(si_unit, self.system))

    def v(self, value, si_unit):
        return convert_value(value, si_unit, self.system)


def _title(ws, ctx, text: str, row: int = 1) -> int:
    sh.put(ws, row, 1, text, font=sh.TITLE)
    sh.put(ws, row + 1, 1, f"{ctx.case.name} - penstock {ctx.r.version}, run {ctx.r.run_date}",
           font=sh.NOTE)
    return row + 3


# --------------------------------------------------------------------------- sheets
def _summary_sheet(ws, ctx):
    ws.title = SHEET_NAMES["summary"]
    r = ctx.r
    row = _title(ws, ctx, "Penstock study: summary")
    c = sh.put(ws, row, 1, "Caution: " + STANDING_CAUTION, font=sh.CAUTION)
    c.alignment = sh.WRAP
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=6)
    ws.row_dimensions[row].height = 48
    row += 2
    table = convert_table(r.summary, ctx.system)
    table = table.rename(columns={"value": "case's own pipe"})
    first, last = sh.write_table(ws, table, row=row, widths={
        "quantity": 58, "case's own pipe": 22, "unit": 10, "recommended uniform pipe": 22})
    for i in range(first, last + 1):
        for j in (2, 4):
            ws.cell(row=i, column=j).number_format = "#,##0.00"
    row = last + 2
    row = _net_head_block(ws, ctx, row)
    n_warn = int((r.cautions["severity"] == "warning").sum()) if len(r.cautions) else 0
    sh.put(ws, row, 1, f"Cautions raised: {n_warn} warnings and "
           f"{len(r.cautions) - n_warn} notes; see the '{SHEET_NAMES['cautions']}' sheet.",
           font=sh.SUBTITLE)
    ws.column_dimensions["E"].width = 4
    # headline chart: the route at the design flow, drawn from the route sheet's columns
    ctx.headline_anchor = f"F{first - 1}"
    ctx.summary_ws = ws
    ctx.page(ws)


def _net_head_block(ws, ctx, row: int) -> int:
    """Net head and power at the design flow, as live formulas over visible inputs."""
    h = ctx.r.headline
    t = ctx.case.turbine
    sh.put(ws, row, 1, "Net head and power at the design flow (live formulas, SI units)",
           font=sh.SUBTITLE)
    row += 1
    items = [
        ("headwater level", ctx.case.headwater, "m", None),
        ("tailwater level (or runner, impulse units)", ctx.case.headwater - h.gross_head,
         "m", None),
        ("penstock losses at design flow", h.total_loss, "m", None),
        ("head recovered by the draft tube (0 without one)", h.draft_tube_recovery, "m",
         None),
        ("net head", None, "m", "=B{0}-B{1}-B{2}+B{3}"),
        ("design flow", h.design_flow, "m³/s", None),
        ("water density", ctx.r.headline.density, "kg/m³", None),
        ("gravity", GRAVITY, "m/s²", None),
        ("turbine efficiency at design flow", h.eta_rated, "-", None),
        ("gearbox × generator efficiency", t["gearbox_efficiency"] * t["generator_efficiency"],
         "-", None),
        ("transformer efficiency", t["transformer_efficiency"], "-", None),
        ("installed capacity", None, "kW",
         "=B{6}*B{7}*B{5}*B{4}*B{8}*B{9}*B{10}/1000"),
    ]
    rows = [row + i for i in range(len(items))]
    for i, (name, value, unit, f) in enumerate(items):
        sh.put(ws, rows[i], 1, name)
        if f is None:
            c = sh.put(ws, rows[i], 2, value, fmt="0.0000")
            c.fill = sh.INPUT_FILL
        else:
            sh.formula(ws, rows[i], 2, f.format(*rows), fmt="#,##0.00", font=sh.SUBTITLE)
        sh.put(ws, rows[i], 3, unit)
    ctx.formula_cells = {"net head": (ws.title, f"B{rows[4]}", h.net_head),
                         "installed capacity": (ws.title, f"B{rows[11]}",
                                                h.installed_capacity / 1e3)}
    return rows[-1] + 2


def _inputs_sheet(ws, ctx):
    row = _title(ws, ctx, "Inputs, as written in the case folder and in SI")
    df = ctx.r.inputs.copy()
    df["value (SI)"] = [v if isinstance(v, (int, float, str)) else str(v)
                        for v in df["value (SI)"]]
    first, _ = sh.write_table(ws, df, row=row, widths={"key": 30, "as written": 34,
                                                       "value (SI)": 30, "source": 18})
    ws.freeze_panes = ws.cell(row=first, column=1)
    ctx.page(ws, f"{row}:{row}")


def _route_sheet(ws, ctx):
    r = ctx.r
    row = _title(ws, ctx, "Route profile and grade lines")
    gl = r.grade_lines
    cases = list(dict.fromkeys(gl["flow case"]))
    first_case = gl[gl["flow case"] == cases[0]]
    wide = pd.DataFrame({
        "chainage [m]": first_case["chainage [m]"].to_numpy(),
        "point": first_case["point"].to_numpy(),
        "pipe elevation [m]": first_case["pipe elevation [m]"].to_numpy(),
    })
    flows = {}
    for name in cases:
        part = gl[gl["flow case"] == name]
        q = float(part["flow [m^3/s]"].iloc[0])
        flows[name] = q
        wide[f"EGL, {name} [m]"] = part["energy grade line [m]"].to_numpy()
        wide[f"HGL, {name} [m]"] = part["hydraulic grade line [m]"].to_numpy()
        # the basis of the pressure checks and of the margin line beside it
        wide[f"crown pressure head, minimum headwater, {name} [m]"] = part[
            "pressure head at the crown, minimum headwater [m]"].to_numpy()
    flagged = _flag_column(r, wide["chainage [m]"].to_numpy(), wide["pipe elevation [m]"])
    wide["flagged: pressure below margin [m]"] = flagged
    wide["required margin [m]"] = ctx.case.pressure_margin
    total = len(wide)
    crown = [c for c in wide.columns if c.startswith(("pipe elevation", "crown pressure"))]
    wide = wide.iloc[sh.route_rows(wide["chainage [m]"], wide[crown],
                                   labelled=wide["point"] != "profile")]
    table = convert_table(wide.reset_index(drop=True), ctx.system)
    sh.put(ws, row, 1, "Flows: " + "; ".join(
        f"{k} {ctx.v(q, 'm^3/s'):.3f} {ctx.u('m^3/s')}" for k, q in flows.items())
        + sh.rows_note(len(wide), total, "grade_lines.csv", named=True), font=sh.NOTE)
    row += 1
    first, last = sh.write_table(ws, table, row=row, widths={c: 13 for c in table.columns[2:]})
    ws.column_dimensions["B"].width = 34
    ws.freeze_panes = ws.cell(row=first, column=2)
    ctx.page(ws)
    # the profile with its ground line, below the grade-line table
    prof = r.profile
    rows = sh.route_rows(prof.iloc[:, 0], prof.iloc[:, 1:])
    prof = convert_table(prof.iloc[rows].reset_index(drop=True), ctx.system)
    chart_row = last + 2
    sh.put(ws, last + 30, 1, "Route profile as given" + sh.rows_note(
        len(rows), len(r.profile), "the case's profile file"), font=sh.SUBTITLE)
    pfirst, plast = sh.write_table(ws, prof, row=last + 31, col=1)
    cols = list(table.columns)
    chart = _route_chart(ctx, ws, table, cols, first, last, cases, 1, pfirst, plast, prof)
    ws.add_chart(chart, f"A{chart_row}")
    ws.add_chart(_pressure_chart(ctx, ws, table, cols, first, last, cases), f"L{chart_row}")
    summary_chart = _route_chart(ctx, ws, table, cols, first, last, ["design flow"], 1,
                                 pfirst, plast, prof, width=18, height=10,
                                 title="Route and grade lines at the design flow")
    ctx.summary_ws.add_chart(summary_chart, ctx.headline_anchor)


def _flag_column(r, chainage, elevation):
    """Pipe elevation where any flow's pressure head is below the margin, else blank."""
    out = np.full(len(chainage), np.nan)
    st = r.flagged_stretches
    for _, s in st.iterrows():
        inside = (chainage >= s["from chainage [m]"] - 1e-9) & (chainage <= s["to chainage [m]"]
                                                                 + 1e-9)
        out[inside] = np.asarray(elevation)[inside]
    return out


def _route_chart(ctx, ws, table, cols, first, last, cases, pcol, pfirst, plast, prof,
                 width=26, height=13, title="Route profile with energy and hydraulic grade lines"):
    lu = ctx.u("m")
    x = table.iloc[:, 0].to_numpy(dtype=float)
    ys = [table[c].to_numpy(dtype=float) for c in cols if c.startswith(("EGL", "HGL", "pipe"))]
    lo = float(np.nanmin([np.nanmin(y) for y in ys]))
    hi = float(np.nanmax([np.nanmax(y) for y in ys]))
    span = hi - lo
    ch = sh.scatter_chart(title, f"chainage [{lu}]", f"elevation [{lu}]",
                          x_major=sh.nice_step(x.max() - x.min()),
                          y_major=sh.nice_step(span * 1.1 if span > 0 else 10, 6),
                          width=width, height=height)
    ch.x_axis.scaling.min = float(x.min())
    ch.x_axis.scaling.max = float(x.max())
    step = sh.nice_step(span * 1.1 if span > 0 else 10, 6)
    ch.y_axis.scaling.min = float(np.floor((lo - 0.05 * span) / step) * step)
    ch.y_axis.scaling.max = float(np.ceil((hi + 0.05 * span) / step) * step)
    ch.y_axis.number_format = "0" if float(step).is_integer() else "0.0"
    if "ground" in " ".join(prof.columns):
        sh.add_line(ch, ws, pcol, pcol + 2, pfirst, plast, "ground", "8D6E63", dash="dash")
    sh.add_line(ch, ws, 1, 3, first, last, "pipe centreline", "000000", width=28575)
    for i, name in enumerate(cases):
        color = sh_color(i)
        e = _col(cols, f"EGL, {name}")
        h = _col(cols, f"HGL, {name}")
        if e is None:
            continue
        sh.add_line(ch, ws, 1, h, first, last, f"HGL, {name}", color)
        if name == "design flow" or len(cases) == 1:
            sh.add_line(ch, ws, 1, e, first, last, f"EGL, {name}", color, dash="dash")
    fl = _col(cols, "flagged")
    if fl is not None and np.isfinite(table.iloc[:, fl - 1].to_numpy(dtype=float)).any():
        sh.add_line(ch, ws, 1, fl, first, last, "pressure below margin", "D62728", markers=True)
    return ch


def _pressure_chart(ctx, ws, table, cols, first, last, cases):
    """Pressure head along the route at each study flow, with the required margin."""
    lu = ctx.u("m")
    x = table.iloc[:, 0].to_numpy(dtype=float)
    ch = sh.scatter_chart("Pressure head along the route", f"chainage [{lu}]",
                          f"pressure head at the crown, minimum headwater [{lu}]",
                          x_major=sh.nice_step(x.max() - x.min()), width=20, height=13)
    ch.x_axis.scaling.min = float(x.min())
    ch.x_axis.scaling.max = float(x.max())
    ys = [table[c].to_numpy(dtype=float) for c in cols
          if c.startswith("crown pressure head")]
    top = float(np.nanmax([np.nanmax(y) for y in ys]))
    low = float(np.nanmin([np.nanmin(y) for y in ys]))
    # the low range is where the checks bite: show up to ten margins (at least 20 m)
    margin = float(ctx.v(ctx.case.pressure_margin, "m"))
    top = min(top, max(10 * margin, float(ctx.v(20.0, "m"))))
    ch.title = "Pressure head at the crown, minimum headwater (lower range)"
    ch.y_axis.scaling.min = float(min(0.0, np.floor(low)))
    step = sh.nice_step(top - ch.y_axis.scaling.min, 6)
    ch.y_axis.majorUnit = step
    ch.y_axis.scaling.max = float(ch.y_axis.scaling.min + step * np.ceil(
        (top - ch.y_axis.scaling.min) / step))
    ch.y_axis.number_format = "0" if float(step).is_integer() else "0.0"
    for i, name in enumerate(cases):
        j = _col(cols, f"crown pressure head, minimum headwater, {name}")
        if j is not None:
            sh.add_line(ch, ws, 1, j, first, last, name, sh_color(i))
    m = _col(cols, "required margin")
    if m is not None:
        sh.add_line(ch, ws, 1, m, first, last, "required margin", "D62728", dash="dash")
    return ch


def sh_color(i):
    return COLORS[i % len(COLORS)]


def _col(cols, prefix):
    for j, c in enumerate(cols):
        if c.startswith(prefix):
            return j + 1
    return None


def _pressure_sheet(ws, ctx):
    r = ctx.r
    row = _title(ws, ctx, "Pressure checks along the route")
    lu = ctx.u("m")
    sh.put(ws, row, 1, f"Pressure head is gauge pressure in {lu} of water. The checks hold at "
           f"the pipe crown (D/2 above the centreline) with the headwater at its minimum "
           f"level; the grade-line sheet shows the centreline at the normal headwater. "
           f"Margin required: {ctx.v(ctx.case.pressure_margin, 'm'):.2f} {lu}.", font=sh.NOTE)
    row += 1
    first, last = sh.write_table(ws, convert_table(r.pressure_checks, ctx.system), row=row)
    ws.freeze_panes = ws.cell(row=first, column=1)
    row = last + 2
    sh.put(ws, row, 1, "Flagged stretches", font=sh.SUBTITLE)
    row += 1
    if len(r.flagged_stretches):
        _, last = sh.write_table(ws, convert_table(r.flagged_stretches, ctx.system), row=row)
    else:
        sh.put(ws, row, 1, "None: the pressure head stays above the margin at every flow.")
        last = row
    walls = r.own_wall_checks
    if walls is not None and len(walls):
        row = last + 2
        sh.put(ws, row, 1, "The case's own walls against the design pressure line (static "
               "head at the flood level plus the transient rise)", font=sh.SUBTITLE)
        shown = walls[["pipe", "material", "inside diameter [m]", "wall thickness [mm]",
                       "allowable pressure head [m]",
                       "highest design pressure head at the invert [m]", "at chainage [m]",
                       "utilisation [%]", "verdict"]
                      + (["lowest class carrying the design head"]
                         if walls["lowest class carrying the design head"].astype(bool).any()
                         else [])]
        sh.put(ws, row + 1, 1, "Allowable stress, rating basis and each pipe's extent: "
               "own_wall_checks.csv.", font=sh.NOTE)
        _, last = sh.write_table(ws, convert_table(shown, ctx.system), row=row + 2,
                                 widths={"verdict": 18})
    thrusts = r.fitting_thrusts
    if thrusts is not None and len(thrusts):
        row = last + 2
        sh.put(ws, row, 1, "Thrust on bends and changes of diameter, for the anchor blocks "
               "(in the plane of the bend; add the weight of water and pipe in a vertical "
               "bend)", font=sh.SUBTITLE)
        shown = thrusts[["fitting", "chainage [m]", "deflection [deg]",
                         "design pressure head at the invert [m]",
                         "thrust, design pressure, no flow [kN]",
                         "thrust, steady flow with momentum [kN]", "governing thrust [kN]"]]
        sh.put(ws, row + 1, 1, "Diameters and the steady case's flow and pressure: "
               "fitting_thrusts.csv.", font=sh.NOTE)
        sh.write_table(ws, convert_table(shown, ctx.system), row=row + 2,
                       widths={"fitting": 30})
    ctx.page(ws)


def _losses_sheet(ws, ctx):
    r = ctx.r
    row = _title(ws, ctx, "Loss breakdown")
    lb = r.loss_breakdown
    cases = list(dict.fromkeys(lb["flow case"]))
    comps = list(dict.fromkeys(lb["component"]))
    wide = pd.DataFrame({"component": comps,
                         "type": [lb[lb["component"] == c]["type"].iloc[0] for c in comps]})
    for name in cases:
        part = lb[lb["flow case"] == name].set_index("component")
        wide[f"{name}: head loss [m]"] = part.loc[comps, "head loss [m]"].to_numpy()
        wide[f"{name}: share of gross head [%]"] = part.loc[comps,
                                                            "share of gross head [%]"].to_numpy()
    table = convert_table(wide, ctx.system)
    first, last = sh.write_table(ws, table, row=row, widths={"component": 46})
    ws.freeze_panes = ws.cell(row=first, column=2)
    # live total for audit
    cols = list(table.columns)
    j = cols.index(next(c for c in cols if c.startswith("design flow: head loss")))
    letter = ws.cell(row=1, column=j + 1).column_letter
    total_row = last
    sh.formula(ws, last + 1, j + 1, f"=SUM({letter}{first}:{letter}{last - 1})", fmt="0.000")
    sh.put(ws, last + 1, 1, "sum of the components at the design flow (live formula)",
           font=sh.NOTE)
    ctx.formula_cells["loss sum"] = (ws.title, f"{letter}{last + 1}",
                                     float(ctx.v(wide.iloc[-1, j], "m")))
    chart = sh.bar_chart("Head loss by component at the design flow", "component",
                         f"head loss [{ctx.u('m')}]")
    data = Reference(ws, min_col=j + 1, min_row=first, max_row=total_row - 1)
    labels = Reference(ws, min_col=1, min_row=first, max_row=total_row - 1)
    chart.add_data(data, titles_from_data=False)
    chart.set_categories(labels)
    chart.height = max(8, 0.7 * len(comps) + 4)
    ws.add_chart(chart, f"A{last + 4}")
    ctx.page(ws, f"{row}:{row}")


def _cautions_sheet(ws, ctx):
    r = ctx.r
    row = _title(ws, ctx, "Cautions")
    c = sh.put(ws, row, 1, STANDING_CAUTION, font=sh.CAUTION)
    c.alignment = sh.WRAP
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=5)
    ws.row_dimensions[row].height = 48
    row += 2
    w = r.cautions
    if len(w):
        first, _ = sh.write_table(ws, convert_table(w, ctx.system), row=row,
                                  widths={"message": 90, "topic": 14, "severity": 10},
                                  wrap_cols=("message",))
        ws.freeze_panes = ws.cell(row=first, column=1)
    else:
        sh.put(ws, row, 1, "No check raised a warning.")
    ctx.page(ws, f"{row}:{row}")


def _methods_sheet(ws, ctx):
    row = _title(ws, ctx, "Methods and sources")
    sh.write_table(ws, ctx.r.methods, row=row, widths={"topic": 22, "method": 60,
                                                       "reference": 90},
                   wrap_cols=("method", "reference"))
    ctx.page(ws, f"{row}:{row}")
