"""Workbook sheet of the diameter study: candidates with live cost formulas, sweep, wall."""

from __future__ import annotations

from openpyxl.chart import Reference, Series
from openpyxl.utils import get_column_letter

from . import sheets as sh
from .units import convert_table


def _currency(df, cur):
    return df.rename(columns={c: c.replace("[currency", f"[{cur}") for c in df.columns})


def diameter_sheet(ws, ctx, title):
    r = ctx.r
    h = r.headline
    cur = r.case.economics["currency"]
    row = title(ws, ctx, "Diameter study")
    if h.selected_diameter is not None:
        pick = (f"recommended size {ctx.v(h.selected_diameter, 'm'):.3f} {ctx.u('m')}, the "
                "cheaper size beside it that passes the steady pressure check at the crown "
                "(minimum headwater, every study flow, pipe new and aged) and the wall rules, "
                "or the next larger size that does")
    else:
        pick = ("no size passes the steady pressure check at the crown and the wall rules, "
                "so none is recommended (see the column 'governing check')")
    sh.put(ws, row, 1, f"Uniform inside diameter along the whole route. Economic optimum "
           f"{ctx.v(h.optimum_diameter, 'm'):.3f} {ctx.u('m')}; {pick}. Costs in " + cur +
           "; the cost inputs are the case's.", font=sh.SUBTITLE)
    row += 2
    # capital recovery factor as a live formula
    e = r.case.economics
    sh.put(ws, row, 1, "Capital recovery factor (live formula)", font=sh.SUBTITLE)
    sh.put(ws, row + 1, 1, "discount rate i")
    c = sh.put(ws, row + 1, 2, e["discount_rate"], fmt="0.00%")
    c.fill = sh.INPUT_FILL
    sh.put(ws, row + 2, 1, "economic life n [years]")
    c = sh.put(ws, row + 2, 2, e["life"], fmt="0")
    c.fill = sh.INPUT_FILL
    sh.put(ws, row + 3, 1, "CRF = i(1+i)^n / ((1+i)^n − 1)")
    i_c, n_c = f"B{row + 1}", f"B{row + 2}"
    crf_cell = f"$B${row + 3}"
    sh.formula(ws, row + 3, 2, f"=IF({i_c}=0,1/{n_c},{i_c}*(1+{i_c})^{n_c}/((1+{i_c})^{n_c}-1))",
               fmt="0.000000", font=sh.SUBTITLE)
    ctx.formula_cells["crf"] = (ws.title, f"B{row + 3}", h.crf)
    row += 5
    # candidates, with the annualized cost recomputed live from the visible columns
    cand = _currency(convert_table(r.diameter_candidates, ctx.system), cur)
    sh.put(ws, row, 1, "Candidate diameters (each with its own water-hammer run and real "
           "plates). The annualized cost column is a live formula: CRF × capital + O&M + "
           "value of energy lost.", font=sh.NOTE)
    first, last = sh.write_table(ws, cand, row=row + 1)
    cols = list(cand.columns)
    col = {name.split(" [")[0]: j + 1 for j, name in enumerate(cols)}
    L = lambda name: get_column_letter(col[name])  # noqa: E731
    ctx.formula_cells.setdefault("annualized cost", [])
    for i in range(first, last + 1):
        sh.formula(ws, i, col["annualized capital"], f"={crf_cell}*{L('capital cost')}{i}",
                   fmt="#,##0")
        sh.formula(ws, i, col["annualized cost"],
                   f"={L('annualized capital')}{i}+{L('operation and maintenance')}{i}"
                   f"+{L('value of energy lost')}{i}", fmt="#,##0", font=sh.SUBTITLE)
        ctx.formula_cells["annualized cost"].append(
            (ws.title, f"{L('annualized cost')}{i}",
             float(r.diameter_candidates["annualized cost [currency/year]"].iloc[i - first])))
    ws.freeze_panes = ws.cell(row=first, column=2)
    row = last + 2
    chart_row = row
    row += 24
    # the sweep table (for the chart) and the optimum as its own series
    sweep = _currency(convert_table(r.diameter_sweep, ctx.system), cur)
    sh.put(ws, row, 1, "Sweep of the annualized cost (wall without rounding to plates, which "
           "keeps the curve smooth; Allievi rise for the design pressure)", font=sh.NOTE)
    sfirst, slast = sh.write_table(ws, sweep, row=row + 1)
    ocol = len(sweep.columns) + 2
    sh.put(ws, row + 1, ocol, f"optimum diameter [{ctx.u('m')}]", font=sh.HEADER).fill = \
        sh.HEADER_FILL
    sh.put(ws, row + 1, ocol + 1, f"annualized cost [{cur}/year]", font=sh.HEADER).fill = \
        sh.HEADER_FILL
    sh.put(ws, row + 2, ocol, ctx.v(h.optimum_diameter, "m"), fmt="0.000")
    sh.put(ws, row + 2, ocol + 1, h.optimum_cost, fmt="#,##0")
    ch = sh.scatter_chart("Annualized cost against diameter", f"diameter [{ctx.u('m')}]",
                          f"cost [{cur}/year]", x_format="0.00", y_format="#,##0", width=20,
                          height=11)
    for j, color in ((3, "9467BD"), (4, "8C564B"), (5, "2CA02C"), (6, "D62728")):
        sh.add_line(ch, ws, 1, j, sfirst, slast, sweep.columns[j - 1].split(" [")[0], color)
    s = Series(Reference(ws, min_col=ocol + 1, min_row=row + 2, max_row=row + 2),
               Reference(ws, min_col=ocol, min_row=row + 2, max_row=row + 2), title="optimum")
    s.marker.symbol = "diamond"
    s.marker.size = 11
    s.marker.graphicalProperties.solidFill = "000000"
    s.marker.graphicalProperties.line.solidFill = "000000"
    s.graphicalProperties.line.noFill = True
    ch.series.append(s)
    ws.add_chart(ch, f"A{chart_row}")
    # wall and design pressure along the route at the recommended size
    wp = r.wall_profile
    rows = sh.route_rows(wp.iloc[:, 0], wp.iloc[:, 2:])
    wp = convert_table(wp.iloc[rows].reset_index(drop=True), ctx.system)
    wcol = ocol + 3
    which = ("the recommended size" if h.selected_diameter is not None else
             "the economic size (none is recommended: it fails the checks)")
    sh.put(ws, row, wcol, f"Wall at {which}" + sh.rows_note(len(rows), len(r.wall_profile),
                                                           "wall_profile.csv"), font=sh.NOTE)
    wfirst, wlast = sh.write_table(ws, wp, row=row + 1, col=wcol)
    ch2 = sh.scatter_chart("Plate thickness along the route (" + (
        "recommended size" if h.selected_diameter is not None else "economic size")
        + ")",
                           f"chainage [{ctx.u('m')}]", f"thickness [{ctx.u('mm')}]",
                           x_format="0", y_format="0", width=18, height=11)
    sh.add_line(ch2, ws, wcol + 1, wcol + 4, wfirst, wlast, "plate", "1F77B4", markers=True)
    sh.add_line(ch2, ws, wcol + 1, wcol + 3, wfirst, wlast, "required", "D62728", dash="dash")
    ws.add_chart(ch2, f"L{chart_row}")
    row = max(slast, wlast) + 3
    # empirical checks and sensitivity
    sh.put(ws, row, 1, "Sanity checks: empirical diameters", font=sh.SUBTITLE)
    _, last = sh.write_table(ws, convert_table(r.diameter_empirical_checks, ctx.system),
                             row=row + 1, widths={"source": 50, "validity": 50})
    row = last + 2
    sh.put(ws, row, 1, "Sensitivity: optimum over energy price × discount rate",
           font=sh.SUBTITLE)
    _, last = sh.write_table(ws, _currency(convert_table(r.diameter_sensitivity, ctx.system),
                                           cur), row=row + 1)
    row = last + 2
    sh.put(ws, row, 1, "Sensitivity: one input at a time", font=sh.SUBTITLE)
    _, last = sh.write_table(ws, _currency(convert_table(r.diameter_one_at_a_time,
                                                         ctx.system), cur), row=row + 1)
    if r.stepped_design is not None:
        last = _stepped(ws, ctx, last + 3, cur)
    if r.material_comparison is not None and len(r.material_comparison):
        last = _materials(ws, ctx, last + 3, cur)
    ctx.page(ws)


def _transposed(ws, ctx, table, key, row, cur):
    """``table`` with one column per row of ``key``, one row per quantity, each row in its
    quantity's number format -> (first, last) rows written."""
    comp = _currency(convert_table(table, ctx.system), cur).set_index(key)
    comp = comp.T.rename_axis("quantity").reset_index()
    first, last = sh.write_table(ws, comp, row=row, widths={"quantity": 48})
    for i, name in enumerate(comp["quantity"]):   # each row in its quantity's format
        fmt = ("#,##0" if f"[{cur}" in name or "/s]" in name else
               "0.00" if "utilisation" in name else "0" if "[-]" in name else
               "#,##0.0" if ("MWh" in name or "[t]" in name or "chainage" in name) else
               "0.000")
        for j in range(2, len(comp.columns) + 1):
            if isinstance(ws.cell(row=first + i, column=j).value, (int, float)):
                ws.cell(row=first + i, column=j).number_format = fmt
    return first, last


def _materials(ws, ctx, row, cur):
    """Each allowed material at its own best uniform size, side by side."""
    sh.put(ws, row, 1, "Materials, each at its best uniform size", font=sh.SUBTITLE)
    sh.put(ws, row + 1, 1, "Welded steel is the study's recommendation above. PE100 and "
           "ductile iron take, reach by reach, the lowest pressure class that carries the "
           "design pressure head (no surge allowance above the rating) and stands full vacuum; "
           "each size found is run whole (water hammer with its own wall, the steady "
           "pressure margin at the crown). Their prices are the case's price tables where it "
           "gives them, else illustrative defaults that are not prices: replace them by "
           "quotations before ranking the materials.", font=sh.NOTE)
    _, last = _transposed(ws, ctx, ctx.r.material_comparison, "material", row + 2, cur)
    return last


def _stepped(ws, ctx, row, cur):
    """The stepped design beside the best uniform diameter and the case's own pipe, its
    runs, and a chart of the diameter along the route."""
    r = ctx.r
    st = r.case.diameter_study
    sh.put(ws, row, 1, "Stepped diameters along the route", font=sh.SUBTITLE)
    sh.put(ws, row + 1, 1, "The sizes of each reach chosen by dynamic programming over the "
           "route's stations (annualized capital plus the value of the energy each reach "
           f"loses; {st['transition_cost']:,.0f} {cur} per change of diameter; runs at least "
           f"{ctx.v(st['minimum_reach'], 'm'):,.0f} {ctx.u('m')} long). Each design below is "
           "then evaluated whole: its own water-hammer runs, real plates, exact losses and "
           "the checks of a candidate.", font=sh.NOTE)
    # one column per design, one row per quantity: three designs read side by side
    _, last = _transposed(ws, ctx, r.design_comparison, "design", row + 2, cur)
    row = last + 2
    sh.put(ws, row, 1, "Runs of the stepped design", font=sh.SUBTITLE)
    runs = _currency(convert_table(r.stepped_design, ctx.system), cur)
    rfirst, rlast = sh.write_table(ws, runs, row=row + 1)
    # the diameter as steps: each run's two ends, for the chart
    steps = convert_table(r.stepped_design.iloc[
        [i for i in range(len(r.stepped_design)) for _ in (0, 1)]].reset_index(drop=True),
        ctx.system)
    x_name, d_name = steps.columns[0], steps.columns[3]
    steps[x_name] = [v for i in range(len(r.stepped_design)) for v in (
        runs.iloc[i, 0], runs.iloc[i, 1])]
    scol = len(runs.columns) + 2
    sh.put(ws, row, scol, "Diameter at the ends of each run (for the chart)", font=sh.NOTE)
    sfirst, slast = sh.write_table(ws, steps[[x_name, d_name]], row=row + 1, col=scol)
    ch = sh.scatter_chart("Stepped design: inside diameter along the route",
                          f"chainage [{ctx.u('m')}]", f"diameter [{ctx.u('m')}]",
                          x_format="0", y_format="0.00", width=18, height=9)
    sh.add_line(ch, ws, scol, scol + 1, sfirst, slast, "stepped optimum", "1F77B4")
    ws.add_chart(ch, f"A{max(rlast, slast) + 2}")
    last = max(rlast, slast) + 2 + 18   # the chart's rows
    forces = r.stepped_thrusts
    if forces is not None and len(forces):
        row = last + 2
        sh.put(ws, row, 1, "Thrust at the stepped design's reducers, bends and closed ends, "
               "for the anchor blocks (from its own design pressure line and steady grade "
               "line; in the plane of the bend, without the weight of water and pipe)",
               font=sh.SUBTITLE)
        sh.put(ws, row + 1, 1, "The steady case's flow and pressure: stepped_thrusts.csv.",
               font=sh.NOTE)
        shown = forces[["fitting", "chainage [m]", "deflection [deg]", "inlet diameter [m]",
                        "outlet diameter [m]", "design pressure head at the invert [m]",
                        "thrust, design pressure, no flow [kN]",
                        "thrust, steady flow with momentum [kN]", "governing thrust [kN]"]]
        _, last = sh.write_table(ws, convert_table(shown, ctx.system), row=row + 2,
                                 widths={"fitting": 30})
    return last

