"""Workbook sheets of the energy stage: duration curves, energy, design-flow study, turbine."""

from __future__ import annotations

from openpyxl.chart import BarChart, Reference
from openpyxl.formatting.rule import ColorScaleRule
from openpyxl.styles import Font
from openpyxl.utils import get_column_letter

from ..constants import J_PER_MWH
from . import sheets as sh
from .units import convert_table

MONTHS = ["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"]


def duration_sheet(ws, ctx, title):
    r = ctx.r
    row = title(ws, ctx, "Flow and power duration")
    if r.case.flow_record.attrs.get("from_duration_table"):
        sh.put(ws, row, 1, "The record is a representative year built from the flow-duration "
               "table.", font=sh.NOTE)
    else:
        sh.put(ws, row, 1, f"From the {len(r.case.flow_record):,}-step flow record "
               f"({r.case.flow_record.index[0]:%Y-%m-%d} to "
               f"{r.case.flow_record.index[-1]:%Y-%m-%d}).", font=sh.NOTE)
    row += 1
    fd = convert_table(r.flow_duration, ctx.system)
    first, last = sh.write_table(ws, fd, row=row)
    ws.freeze_panes = ws.cell(row=first, column=1)
    fu = ctx.u("m^3/s")
    ch = sh.scatter_chart("Flow-duration curve", "time exceeded [%]", f"flow [{fu}]",
                          x_major=10, y_format="0.0", width=16, height=12)
    ch.x_axis.scaling.min, ch.x_axis.scaling.max = 0, 100
    for j, color in zip((2, 3, 4), ("1F77B4", "2CA02C", "D62728")):
        sh.add_line(ch, ws, 1, j, first, last, _name(fd.columns[j - 1]), color)
    pd_ = convert_table(r.power_duration.iloc[::max(1, len(r.power_duration) // 200)],
                        ctx.system)
    pcol = len(fd.columns) + 2
    pfirst, plast = sh.write_table(ws, pd_, row=row, col=pcol)
    ch2 = sh.scatter_chart("Power-duration curve", "time exceeded [%]",
                           "power when available [kW]",
                           x_major=10, y_format="#,##0", width=16, height=12)
    ch2.x_axis.scaling.min, ch2.x_axis.scaling.max = 0, 100
    sh.add_line(ch2, ws, pcol, pcol + 1, pfirst, plast, "electrical power", "9467BD")
    ccol = get_column_letter(pcol + len(pd_.columns) + 1)
    ws.add_chart(ch, f"{ccol}{row}")
    ws.add_chart(ch2, f"{ccol}{row + 26}")
    ctx.page(ws)


def _name(header):
    return header.split(" [")[0]


def energy_sheet(ws, ctx, title):
    """Monthly energy by year with live annual sums, and the annual loss accounting."""
    r = ctx.r
    row = title(ws, ctx, "Energy by year and month")
    sh.put(ws, row, 1, "Electrical energy sent out [MWh], after availability. Annual totals "
           "are live sums of the months.", font=sh.NOTE)
    row += 2
    m = r.energy_by_month.pivot(index="year", columns="month", values="energy [MWh]")
    m = m.reindex(columns=range(1, 13), fill_value=0.0)
    annual = r.energy_by_year.set_index("year")
    headers = ["year"] + [f"{MONTHS[i]} [MWh]" for i in range(12)] + ["year total [MWh]",
                                                                       "complete year"]
    for j, h in enumerate(headers):
        c = sh.put(ws, row, 1 + j, h, font=sh.HEADER)
        c.fill = sh.HEADER_FILL
    first = row + 1
    ctx.formula_cells.setdefault("energy", [])
    for i, (year, vals) in enumerate(m.iterrows()):
        rr = first + i
        sh.put(ws, rr, 1, int(year))
        for j, v in enumerate(vals.to_numpy()):
            sh.put(ws, rr, 2 + j, float(v), fmt="#,##0")
        sh.formula(ws, rr, 14, f"=SUM(B{rr}:M{rr})", fmt="#,##0", font=sh.SUBTITLE)
        sh.put(ws, rr, 15, bool(annual.loc[year, "complete year"]))
        ctx.formula_cells["energy"].append((ws.title, f"N{rr}",
                                            float(annual.loc[year, "energy [MWh]"])))
    last = first + len(m) - 1
    mean_row = last + 1
    sh.put(ws, mean_row, 1, "mean of complete years", font=sh.SUBTITLE)
    complete = [first + i for i, y in enumerate(m.index) if bool(annual.loc[y, "complete year"])]
    for j in range(13):
        col = get_column_letter(2 + j)
        if complete:
            cells = ",".join(f"{col}{rr}" for rr in complete)
            sh.formula(ws, mean_row, 2 + j, f"=AVERAGE({cells})", fmt="#,##0",
                       font=sh.SUBTITLE)
    if complete:
        ctx.formula_cells["mean annual energy"] = (ws.title, f"N{mean_row}",
                                                   r.headline.mean_annual_energy / J_PER_MWH)
    ws.freeze_panes = ws.cell(row=first, column=2)
    # mean monthly energy chart
    chart = BarChart()
    chart.type = "col"
    chart.title = "Mean monthly energy (complete years)"
    chart.y_axis.title = "energy [MWh]"
    chart.x_axis.title = "month"
    chart.y_axis.number_format = "#,##0"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend = None
    chart.height, chart.width = 9, 22
    data = Reference(ws, min_col=2, max_col=13, min_row=mean_row, max_row=mean_row)
    for j in range(12):   # plain month names as the chart's categories
        sh.put(ws, mean_row + 1, 2 + j, MONTHS[j], font=sh.NOTE)
    cats = Reference(ws, min_col=2, max_col=13, min_row=mean_row + 1, max_row=mean_row + 1)
    chart.add_data(data, from_rows=True, titles_from_data=False)
    chart.set_categories(cats)
    row = mean_row + 3
    ws.add_chart(chart, f"A{row}")
    row += 20
    sh.put(ws, row, 1, "Energy lost by year [MWh]: to penstock friction (what a loss-free "
           "penstock would add), and the gross hydraulic energy of the spilled and residual "
           "flows (upper bounds)", font=sh.NOTE)
    tab = r.energy_by_year.drop(columns=["steps"])
    sh.write_table(ws, convert_table(tab, ctx.system), row=row + 1)
    for j in range(1, 16):
        ws.column_dimensions[get_column_letter(j)].width = 11
    ws.column_dimensions["A"].width = 22
    ws.column_dimensions["N"].width = 15
    ws.column_dimensions["O"].width = 14
    ctx.page(ws)


def design_flow_sheet(ws, ctx, title):
    r = ctx.r
    row = title(ws, ctx, "Design-flow study")
    sh.put(ws, row, 1, "The same penstock and units, with the design flow set at each "
           "exceedance of the flow-duration curve (after the residual flow).", font=sh.NOTE)
    row += 1
    chart_row = row
    row += 24
    tab = convert_table(r.design_flow_study, ctx.system)
    first, last = sh.write_table(ws, tab, row=row)
    fu = ctx.u("m^3/s")
    ch = sh.scatter_chart("Mean annual energy against design flow", f"design flow [{fu}]",
                          "mean annual energy [MWh]", x_format="0.00", y_format="#,##0",
                          width=16, height=11)
    sh.add_line(ch, ws, 2, 4, first, last, "mean annual energy", "1F77B4", markers=True)
    ws.add_chart(ch, f"A{chart_row}")
    ch2 = sh.scatter_chart("Installed capacity against design flow", f"design flow [{fu}]",
                           "installed capacity [kW]", x_format="0.00", y_format="#,##0",
                           width=16, height=11)
    sh.add_line(ch2, ws, 2, 3, first, last, "installed capacity [kW]", "D62728", markers=True)
    ws.add_chart(ch2, f"F{chart_row}")
    if r.flow_diameter_study is not None:
        _flow_and_diameter(ws, ctx, last + 3)
    ctx.page(ws)


def _flow_and_diameter(ws, ctx, row):
    """The annualized net value over design flow x diameter, as a colour-scaled matrix."""
    r, h = ctx.r, ctx.r.headline
    cur = r.case.economics["currency"]
    fu, lu = ctx.u("m^3/s"), ctx.u("m")
    sh.put(ws, row, 1, "Design flow and diameter together", font=sh.SUBTITLE)
    if h.best_design_flow is not None:
        best = (f"Optimum of the grid: design flow {ctx.v(h.best_design_flow, 'm^3/s'):.3g} "
                f"{fu} with a uniform diameter of {ctx.v(h.best_flow_diameter, 'm'):.3f} {lu}, "
                f"{h.best_net_value:,.0f} {cur}/year.")
    else:
        best = "No cell keeps the steady pressure margin at the crown: no optimum."
    sh.put(ws, row + 1, 1, best, font=sh.BODY)
    notes = [
        f"Annualized net value [{cur}/year] = energy price × mean annual energy − (capital "
        "recovery + O&M) × (pipe capital + plant cost per kW × installed capacity);",
        f"plant cost {r.case.costs['plant_cost_per_kw']:,.0f} {cur}/kW (an illustrative "
        "default unless the case gives costs.plant_cost_per_kw).",
        "Rows: uniform inside diameter (pipe wall of the sweep, Allievi rise); columns: design "
        "flow. Grey italics: fails the steady pressure margin at the crown at minimum "
        "headwater;",
        "empty: the pipe loses more than 95 % of the gross head at that design flow. The whole "
        "grid is in flow_diameter_study.csv.",
    ]
    for k, text in enumerate(notes):
        sh.put(ws, row + 2 + k, 1, text, font=sh.NOTE)
    row += len(notes) - 1
    t = r.flow_diameter_study
    value = t.pivot(index="diameter [m]", columns="design flow [m^3/s]",
                    values="annualized net value [currency/year]")
    ok = t.pivot(index="diameter [m]", columns="design flow [m^3/s]",
                 values="passes the steady margin").to_numpy(bool)
    top = row + 3
    sh.put(ws, top, 1, f"inside diameter [{lu}]", font=sh.HEADER).fill = \
        sh.HEADER_FILL
    for j, q in enumerate(value.columns, start=2):
        cell = sh.put(ws, top, j, f"Q {ctx.v(q, 'm^3/s'):.3f} {fu} [{cur}/year]",
                      font=sh.HEADER)
        cell.fill, cell.alignment = sh.HEADER_FILL, sh.WRAP
        letter = get_column_letter(j)
        ws.column_dimensions[letter].width = max(ws.column_dimensions[letter].width or 0, 11)
    grey = Font(name=sh.FONT, size=10, italic=True, color="808080")
    for i, d in enumerate(value.index, start=1):
        sh.put(ws, top + i, 1, float(ctx.v(d, "m")), fmt="0.000")
        for j, v in enumerate(value.iloc[i - 1], start=2):
            sh.put(ws, top + i, j, float(v), fmt="#,##0",
                   font=sh.BODY if ok[i - 1, j - 2] else grey)
    area = f"B{top + 1}:{get_column_letter(value.shape[1] + 1)}{top + value.shape[0]}"
    ws.conditional_formatting.add(area, ColorScaleRule(
        start_type="min", start_color="F8696B", mid_type="percentile", mid_value=50,
        mid_color="FFEB84", end_type="max", end_color="63BE7B"))
    return top + value.shape[0]


def turbine_sheet(ws, ctx, title):
    r = ctx.r
    row = title(ws, ctx, "Turbine choice and setting")
    h = r.headline
    sh.put(ws, row, 1, f"Chosen: {r.case.turbine['units']} × {r.case.turbine['type']}, "
           f"{h.speed:.1f} rpm; net head at design flow "
           f"{ctx.v(h.net_head, 'm'):.2f} {ctx.u('m')}.", font=sh.SUBTITLE)
    row += 2
    sh.put(ws, row, 1, "Types whose published application range holds the site", font=sh.NOTE)
    _, last = sh.write_table(ws, convert_table(r.turbine_choice, ctx.system), row=row + 1)
    row = last + 2
    impulse = "required clearance [m]" in r.turbine_setting.columns
    sh.put(ws, row, 1, "Setting: runner clearance above the highest tailwater" if impulse else
           "Setting: Thoma cavitation check, Hs = (p_atm − p_v)/(ρg) − σ·Hn", font=sh.NOTE)
    _, last = sh.write_table(ws, convert_table(r.turbine_setting, ctx.system), row=row + 1)
    row = last + 2
    if r.draft_tube is not None:
        sh.put(ws, row, 1, "Draft tube: recovery of the outlet velocity head by the conical "
               "diffuser (Gibson), against an abrupt exit", font=sh.NOTE)
        sh.write_table(ws, convert_table(r.draft_tube, ctx.system), row=row + 1)
    ctx.page(ws)


def has_energy(r) -> bool:
    return r.energy_by_month is not None and len(r.energy_by_month) > 0


