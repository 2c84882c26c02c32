"""Workbook sheet of the Monte Carlo: P-values, energy exceedance and cost histogram."""

from __future__ import annotations

from openpyxl.chart import BarChart, Reference

from . import sheets as sh
from .units import convert_table


def uncertainty_sheet(ws, ctx, title):
    r = ctx.r
    cur = r.case.economics["currency"]
    row = title(ws, ctx, "Uncertainty: Monte Carlo")
    sh.put(ws, row, 1, "P90 is the mean annual energy exceeded with 90 % probability. Spreads "
           "and seed as in the Inputs sheet (section uncertainty).", font=sh.NOTE)
    row += 1
    summ = r.uncertainty_summary.copy()
    summ["unit"] = summ["unit"].str.replace("currency", cur)
    first, last = sh.write_table(ws, convert_table(summ, ctx.system), row=row,
                                 widths={"quantity": 60, "value": 16, "unit": 12})
    for i in range(first, last + 1):
        ws.cell(row=i, column=2).number_format = "#,##0.00"
    row = last + 2
    chart_row = row
    row += 24
    ex = r.uncertainty_energy_exceedance
    sh.put(ws, row, 1, "Mean annual energy by probability of exceedance", font=sh.NOTE)
    efirst, elast = sh.write_table(ws, ex, row=row + 1)
    ch = sh.scatter_chart("Mean annual energy: exceedance", "probability of exceedance [%]",
                          "mean annual energy [MWh]", x_major=10, y_format="#,##0",
                          width=16, height=11)
    ch.x_axis.scaling.min, ch.x_axis.scaling.max = 0, 100
    e = ex["mean annual energy [MWh]"]
    step = sh.nice_step(float(e.max() - e.min()) or 1.0, 6)
    ch.y_axis.majorUnit = step
    ch.y_axis.scaling.min = float((e.min() // step) * step)
    ch.y_axis.scaling.max = float((e.max() // step + 1) * step)
    sh.add_line(ch, ws, 1, 2, efirst, elast, "sampled mean annual energy", "1F77B4")
    ws.add_chart(ch, f"A{chart_row}")
    hist = r.uncertainty_cost_histogram.rename(columns=lambda c: c.replace("currency", cur))
    if len(hist):
        hcol = 4
        hfirst, hlast = sh.write_table(ws, hist, row=row + 1, col=hcol)
        bar = BarChart()
        bar.type = "col"
        bar.title = "Annualized cost at the recommended diameter"
        bar.x_axis.title = f"annualized cost [{cur}/year]"
        bar.y_axis.title = "samples"
        bar.x_axis.number_format = "#,##0"
        bar.x_axis.delete = False
        bar.y_axis.delete = False
        bar.legend = None
        bar.height, bar.width = 11, 16
        bar.add_data(Reference(ws, min_col=hcol + 1, min_row=hfirst, max_row=hlast),
                     titles_from_data=False)
        bar.set_categories(Reference(ws, min_col=hcol, min_row=hfirst, max_row=hlast))
        ws.add_chart(bar, f"F{chart_row}")
    ctx.page(ws)
