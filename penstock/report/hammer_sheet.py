"""Workbook sheet of the water-hammer stage: quick checks, envelopes, history, closure study."""

from __future__ import annotations

from openpyxl.utils import get_column_letter

from ..constants import GRAVITY
from . import sheets as sh
from .units import convert_table


def hammer_sheet(ws, ctx, title):
    r = ctx.r
    row = title(ws, ctx, "Water hammer: load rejection")
    s = r.case.surge
    sh.put(ws, row, 1, f"Load rejection from the design flow, {s['closure_law'].replace('_', '-')}"
           f" closure in {s['closure_time']:g} s; method of characteristics. Heads are "
           "piezometric (elevation + pressure head).", font=sh.NOTE)
    row += 2
    # Joukowsky's rise as a live formula over visible inputs (SI)
    a, v = r.headline.joukowsky_wave_speed, r.headline.joukowsky_velocity
    sh.put(ws, row, 1, "Joukowsky's rise for an instant full closure (live formula, SI units)",
           font=sh.SUBTITLE)
    cells = [("wave speed at the turbine end a", a, "m/s"), ("velocity change ΔV", v, "m/s"),
             ("gravity g", GRAVITY, "m/s²")]
    for i, (name, val, unit) in enumerate(cells):
        sh.put(ws, row + 1 + i, 1, name)
        c = sh.put(ws, row + 1 + i, 2, val, fmt="0.0000")
        c.fill = sh.INPUT_FILL
        sh.put(ws, row + 1 + i, 3, unit)
    f_row = row + 4
    sh.put(ws, f_row, 1, "Joukowsky rise ΔH = a·ΔV/g")
    sh.formula(ws, f_row, 2, f"=B{row + 1}*B{row + 2}/B{row + 3}", fmt="0.00", font=sh.SUBTITLE)
    sh.put(ws, f_row, 3, "m")
    ctx.formula_cells["joukowsky"] = (ws.title, f"B{f_row}", r.headline.joukowsky)
    row = f_row + 2
    sh.put(ws, row, 1, "Quick checks and simulated results", font=sh.SUBTITLE)
    first, last = sh.write_table(ws, convert_table(r.water_hammer_checks, ctx.system), row=row + 1,
                                 widths={"quantity": 58, "value": 16, "unit": 8})
    for i in range(first, last + 1):
        ws.cell(row=i, column=2).number_format = "#,##0.00"
    row = last + 2
    sh.put(ws, row, 1, "Wave speed by pipe segment", font=sh.SUBTITLE)
    _, last = sh.write_table(ws, convert_table(r.wave_speeds, ctx.system), row=row + 1)
    row = last + 2
    if r.wave_speed_sensitivity is not None:
        sh.put(ws, row, 1, "Sensitivity to the wave speed (rejection from the design flow, "
               "every wave speed scaled)", font=sh.SUBTITLE)
        _, last = sh.write_table(ws, convert_table(r.wave_speed_sensitivity, ctx.system),
                                 row=row + 1)
        row = last + 2
    # closure-time study, with its chart beside the table
    sh.put(ws, row, 1, "Closure-time study (rejection from the design flow)", font=sh.SUBTITLE)
    shortest = r.headline.shortest_closure
    sh.put(ws, row + 1, 1, "Shortest closure keeping the rise within the allowable: " +
           (f"{shortest:.1f} s" if shortest is not None else "none of the times studied"),
           font=sh.NOTE)
    cfirst, clast = sh.write_table(ws, convert_table(r.closure_time_study, ctx.system), row=row + 2)
    ch3 = sh.scatter_chart("Maximum and minimum head against closure time",
                           "closure time [s]", f"head [{ctx.u('m')}]", x_format="0.0",
                           y_format="#,##0", width=18, height=9)
    sh.add_line(ch3, ws, 1, 4, cfirst, clast, "maximum head at the turbine", "D62728",
                markers=True)
    sh.add_line(ch3, ws, 1, 5, cfirst, clast, "minimum head along the route", "2CA02C",
                markers=True)
    cs = r.closure_time_study
    lo3 = float(ctx.v(min(cs["minimum head along the route [m]"].min(),
                          cs["maximum head at the turbine [m]"].min()), "m"))
    hi3 = float(ctx.v(cs["maximum head at the turbine [m]"].max(), "m"))
    step3 = sh.nice_step(hi3 - lo3, 6)
    ch3.y_axis.majorUnit = step3
    ch3.y_axis.scaling.min = float((lo3 // step3) * step3)
    ch3.y_axis.scaling.max = float((hi3 // step3 + 1) * step3)
    ws.add_chart(ch3, f"H{row}")
    row = max(clast + 2, row + 20)
    chart_row = row
    row += 28
    # envelope table (design-flow rejection) and chart
    env = r.transient_envelope
    env = env[env["rejection from"] == "design flow"].drop(columns=["rejection from"])
    total = len(env)
    heads = [c for c in env.columns if c.startswith(("pipe elevation", "maximum head",
                                                     "minimum head", "minimum pressure head",
                                                     "design pressure head"))]
    env = env.iloc[sh.route_rows(env["chainage [m]"], env[heads])]
    et = convert_table(env.reset_index(drop=True), ctx.system)
    sh.put(ws, row, 1, "Envelopes along the route, rejection from the design flow"
           + sh.rows_note(len(env), total, "transient_envelope.csv"), font=sh.SUBTITLE)
    efirst, elast = sh.write_table(ws, et, row=row + 1)
    cols = list(et.columns)
    lu = ctx.u("m")
    x = et.iloc[:, 1].to_numpy(dtype=float)
    ys = et.iloc[:, 2:7].to_numpy(dtype=float)
    ch = sh.scatter_chart("Transient head envelopes over the route", f"chainage [{lu}]",
                          f"elevation / head [{lu}]", x_major=sh.nice_step(x.max() - x.min()),
                          width=26, height=13)
    ch.x_axis.scaling.min, ch.x_axis.scaling.max = float(x.min()), float(x.max())
    lo, hi = float(ys.min()), float(ys.max())
    step = sh.nice_step((hi - lo) * 1.1, 6)
    ch.y_axis.majorUnit = step
    ch.y_axis.scaling.min = float((lo // step) * step)
    ch.y_axis.scaling.max = float((hi // step + 1) * step)
    for name, color, dash in (("pipe elevation", "000000", None), ("static line", "7F7F7F", "dash"),
                              ("initial steady head", "1F77B4", None),
                              ("maximum head", "D62728", None), ("minimum head", "2CA02C", None)):
        j = next(k for k, c in enumerate(cols) if c.startswith(name)) + 1
        sh.add_line(ch, ws, 2, j, efirst, elast, name, color, dash=dash)
    ws.add_chart(ch, f"A{chart_row}")
    # history: to the right of the envelope table
    vh = r.turbine_head_history
    hist = convert_table(vh.iloc[::max(1, len(vh) // 400)], ctx.system)
    hcol = len(cols) + 2
    hfirst, hlast = sh.write_table(ws, hist, row=row + 1, col=hcol)
    t = hist.iloc[:, 0].to_numpy(dtype=float)
    ch2 = sh.scatter_chart("Head at the turbine after the load rejection", "time [s]",
                           f"head [{lu}]", x_major=sh.nice_step(t.max()), width=20, height=13)
    ch2.x_axis.scaling.min, ch2.x_axis.scaling.max = 0.0, float(t.max())
    hv = hist.iloc[:, 2].to_numpy(dtype=float)
    step2 = sh.nice_step(hv.max() - hv.min() if hv.max() > hv.min() else 1.0, 6)
    ch2.y_axis.majorUnit = step2
    ch2.y_axis.scaling.min = float((hv.min() // step2) * step2)
    ch2.y_axis.scaling.max = float((hv.max() // step2 + 1) * step2)
    sh.add_line(ch2, ws, hcol, hcol + 2, hfirst, hlast, "head at the turbine", "D62728")
    for k in range(4, len(hist.columns)):
        sh.add_line(ch2, ws, hcol, hcol + k, hfirst, hlast, hist.columns[k].split(" [")[0],
                    ["1F77B4", "2CA02C", "9467BD", "FF7F0E"][(k - 4) % 4])
    ws.add_chart(ch2, f"{get_column_letter(15)}{chart_row}")
    ctx.page(ws)
