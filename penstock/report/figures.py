"""Matplotlib figures for reports and slides (PNG), drawn from a results object."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from .. import units as _units  # noqa: E402
from ..constants import J_PER_MWH
from .units import convert_value, report_unit  # noqa: E402


def _fixed_layout(fig, left, right, bottom, top, wspace=None):
    """Fixed margins (fractions of the figure) in place of a layout pass: a layout engine
    measures every text on the figure, a quarter of the time of a figure."""
    fig.subplots_adjust(left=left, right=right, bottom=bottom, top=top, wspace=wspace)


def route_figure(results, system: str):
    """Pipe profile, ground, HGL and EGL at each study flow, flagged stretches shaded."""
    lu = _units.label(report_unit("m", system))
    gl = results.grade_lines
    fig, ax = plt.subplots(figsize=(11, 5.5), dpi=110)
    prof = results.profile
    cv = lambda v: np.asarray(convert_value(np.asarray(v, float), "m", system))  # noqa: E731
    if "ground [m]" in prof:
        ax.plot(cv(prof["chainage [m]"]), cv(prof["ground [m]"]), color="#8d6e63", ls="--",
                lw=1, label="ground")
    first = gl[gl["flow case"] == gl["flow case"].iloc[0]]
    ax.plot(cv(first["chainage [m]"]), cv(first["pipe elevation [m]"]), color="k", lw=2,
            label="pipe centreline")
    for i, (name, part) in enumerate(gl.groupby("flow case", sort=False)):
        color = f"C{i}"
        ax.plot(cv(part["chainage [m]"]), cv(part["hydraulic grade line [m]"]), color=color,
                lw=1.4, label=f"HGL, {name}")
        if name == "design flow":
            ax.plot(cv(part["chainage [m]"]), cv(part["energy grade line [m]"]), color=color,
                    ls="--", lw=1.2, label=f"EGL, {name}")
    st = results.flagged_stretches
    for k, (_, s) in enumerate(st.iterrows()):
        ax.axvspan(float(cv(s["from chainage [m]"])), float(cv(s["to chainage [m]"])),
                   color="#d62728", alpha=0.15, lw=0,
                   label="pressure below margin" if k == 0 else None)
    ax.set_xlabel(f"chainage [{lu}]")
    ax.set_ylabel(f"elevation [{lu}]")
    ax.set_title(f"{results.case.name}: route profile and grade lines")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="lower left")
    _fixed_layout(fig, 0.075, 0.985, 0.095, 0.935)
    return fig


def loss_figure(results, system: str):
    """Head loss by component at the design flow."""
    lu = _units.label(report_unit("m", system))
    lb = results.loss_breakdown
    part = lb[(lb["flow case"] == "design flow") & (lb["component"] != "total")]
    fig, ax = plt.subplots(figsize=(9, 0.4 * len(part) + 2), dpi=110)
    vals = np.asarray(convert_value(part["head loss [m]"].to_numpy(float), "m", system))
    ax.barh(part["component"], vals, color="#1f77b4")
    ax.invert_yaxis()
    ax.set_xlabel(f"head loss [{lu}]")
    ax.set_title("Head loss by component at the design flow")
    ax.grid(True, axis="x", alpha=0.3)
    width, height = fig.get_size_inches()
    # the left margin fits the longest component name (about 0.075 in a character at 10 pt)
    longest = max((len(str(n)) for n in part["component"]), default=4)
    _fixed_layout(fig, min(0.6, (0.075 * longest + 0.25) / width), 0.97, 0.65 / height,
                  1.0 - 0.45 / height)
    return fig


def duration_figure(results, system: str):
    """Flow-duration curves (river, after residual, turbined) and the power-duration curve."""
    fu = _units.label(report_unit("m^3/s", system))
    fd = results.flow_duration
    fig, (a1, a2) = plt.subplots(1, 2, figsize=(12, 4.8), dpi=110)
    x = fd["exceedance [%]"]
    for col, c in (("river flow [m^3/s]", "C0"), ("flow after residual [m^3/s]", "C2"),
                   ("turbined flow [m^3/s]", "C3")):
        a1.plot(x, convert_value(fd[col].to_numpy(float), "m^3/s", system), color=c,
                label=col.split(" [")[0])
    a1.set_xlabel("time exceeded [%]")
    a1.set_ylabel(f"flow [{fu}]")
    a1.set_title("Flow-duration curve")
    a1.legend(fontsize=8)
    a1.grid(True, alpha=0.3)
    pdc = results.power_duration
    a2.plot(pdc["exceedance [%]"], pdc["power when available [kW]"], color="C4")
    a2.set_xlabel("time exceeded [%]")
    a2.set_ylabel("power when available [kW]")
    a2.set_title("Power-duration curve")
    a2.grid(True, alpha=0.3)
    fig.suptitle(results.case.name, fontsize=10)
    _fixed_layout(fig, 0.065, 0.985, 0.11, 0.87, wspace=0.22)
    return fig


def monthly_energy_figure(results, system: str):
    """Mean monthly energy over the complete years of the record."""
    m = results.energy_by_month.merge(results.energy_by_year[["year", "complete year"]], on="year")
    m = m[m["complete year"].astype(bool)] if m["complete year"].astype(bool).any() else m
    mean = m.groupby("month")["energy [MWh]"].mean().reindex(range(1, 13), fill_value=0.0)
    fig, ax = plt.subplots(figsize=(9, 4.5), dpi=110)
    ax.bar(["Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"],
           mean.to_numpy(), color="#1f77b4")
    ax.set_ylabel("energy [MWh]")
    ax.set_title(f"{results.case.name}: mean monthly energy")
    ax.grid(True, axis="y", alpha=0.3)
    _fixed_layout(fig, 0.1, 0.98, 0.08, 0.92)
    return fig


def design_flow_figure(results, system: str):
    """Mean annual energy and installed capacity against design flow."""
    fu = _units.label(report_unit("m^3/s", system))
    d = results.design_flow_study
    q = convert_value(d["design flow [m^3/s]"].to_numpy(float), "m^3/s", system)
    fig, ax = plt.subplots(figsize=(9, 4.8), dpi=110)
    ax.plot(q, d["mean annual energy [MWh]"], "o-", color="C0", label="mean annual energy")
    ax.set_xlabel(f"design flow [{fu}]")
    ax.set_ylabel("mean annual energy [MWh]", color="C0")
    ax2 = ax.twinx()
    ax2.plot(q, d["capacity factor [%]"], "s--", color="C3", label="capacity factor")
    ax2.set_ylabel("capacity factor [%]", color="C3")
    ax.set_title(f"{results.case.name}: design-flow study")
    ax.grid(True, alpha=0.3)
    _fixed_layout(fig, 0.1, 0.9, 0.1, 0.92)
    return fig


def hammer_figure(results, system: str):
    """Transient envelopes over the route, the head history, and the closure-time study."""
    lu = _units.label(report_unit("m", system))
    env = results.transient_envelope
    env = env[env["rejection from"] == "design flow"]
    cv = lambda v: np.asarray(convert_value(np.asarray(v, float), "m", system))  # noqa: E731
    fig, axes = plt.subplots(1, 3, figsize=(16, 5), dpi=110)
    a1, a2, a3 = axes
    x = cv(env["chainage [m]"])
    a1.plot(x, cv(env["pipe elevation [m]"]), "k", lw=2, label="pipe")
    a1.plot(x, cv(env["static line [m]"]), color="0.5", ls="--", label="static line")
    a1.plot(x, cv(env["initial steady head [m]"]), color="C0", label="steady HGL")
    a1.plot(x, cv(env["maximum head [m]"]), color="C3", label="maximum head")
    a1.plot(x, cv(env["minimum head [m]"]), color="C2", label="minimum head")
    a1.set_xlabel(f"chainage [{lu}]")
    a1.set_ylabel(f"head [{lu}]")
    a1.set_title("Envelopes, rejection from the design flow")
    a1.legend(fontsize=8)
    h = results.turbine_head_history
    a2.plot(h["time [s]"], cv(h["head at the turbine [m]"]), color="C3", label="at the turbine")
    for col in h.columns[4:]:
        a2.plot(h["time [s]"], cv(h[col]), lw=1, label=col.split(" [")[0].replace("head ", ""))
    a2.set_xlabel("time [s]")
    a2.set_ylabel(f"head [{lu}]")
    a2.set_title("Head history")
    a2.legend(fontsize=8)
    c = results.closure_time_study
    a3.plot(c["closure time [s]"], cv(c["maximum head rise [m]"]), "o-", color="C3",
            label="maximum head rise")
    allow = results.headline.allowable_rise   # the stage's own value, not a row looked up
    a3.axhline(float(cv(allow)), color="C3", ls=":", label="allowable rise")
    a3.set_xlabel("closure time [s]")
    a3.set_ylabel(f"head rise [{lu}]")
    a3.set_title("Closure-time study")
    a3.legend(fontsize=8)
    for a in axes:
        a.grid(True, alpha=0.3)
    fig.suptitle(results.case.name, fontsize=10)
    _fixed_layout(fig, 0.05, 0.99, 0.1, 0.87, wspace=0.24)
    return fig



def uncertainty_figure(results, system: str):
    """Exceedance of the sampled mean annual energy, and the annualized-cost histogram."""
    fig, (a1, a2) = plt.subplots(1, 2, figsize=(12, 4.6), dpi=110)
    ex = results.uncertainty_energy_exceedance
    a1.plot(ex["probability of exceedance [%]"], ex["mean annual energy [MWh]"], color="C0")
    h = results.headline
    for key, lab in (("p50_energy", "P50"), ("p90_energy", "P90"), ("p99_energy", "P99")):
        a1.axhline(getattr(h, key) / J_PER_MWH, ls=":", color="0.4")
        a1.annotate(lab, (2, getattr(h, key) / J_PER_MWH), fontsize=8, va="bottom")
    a1.set_xlabel("probability of exceedance [%]")
    a1.set_ylabel("mean annual energy [MWh]")
    a1.set_title("Mean annual energy")
    a1.grid(True, alpha=0.3)
    cost = results.uncertainty_samples["annualized cost [currency/year]"]
    cur = results.case.economics["currency"]
    if cost.notna().any():
        a2.hist(cost.dropna(), bins=30, color="C1")
    a2.set_xlabel(f"annualized cost [{cur}/year]")
    a2.set_ylabel("samples")
    a2.set_title("Annualized cost at the recommended diameter")
    fig.suptitle(f"{results.case.name}: {len(results.uncertainty_samples)} samples", fontsize=10)
    _fixed_layout(fig, 0.08, 0.985, 0.11, 0.87, wspace=0.22)
    return fig


def stepped_figure(results, system: str):
    """The stepped design over the profile: the pipe, and the diameter and thickest wall
    of each run (its material named where it changes) beside the best uniform diameter."""
    lu = _units.label(report_unit("m", system))
    tu = _units.label(report_unit("mm", system))
    cv = lambda v, u="m": np.asarray(convert_value(np.asarray(v, float), u, system))  # noqa: E731
    runs = results.stepped_design
    comp = results.design_comparison.set_index("design")
    prof = results.profile
    fig, (a1, a2) = plt.subplots(2, 1, figsize=(11, 6.5), dpi=110, sharex=True,
                                 gridspec_kw={"height_ratios": [1.2, 1]})
    gl = results.grade_lines
    first = gl[gl["flow case"] == gl["flow case"].iloc[0]]
    a1.plot(cv(first["chainage [m]"]), cv(first["pipe elevation [m]"]), color="k", lw=2,
            label="pipe centreline")
    if "ground [m]" in prof:
        a1.plot(cv(prof["chainage [m]"]), cv(prof["ground [m]"]), color="#8d6e63", ls="--",
                lw=1, label="ground")
    for x in runs["from chainage [m]"].iloc[1:]:
        a1.axvline(float(cv(x)), color="#d62728", lw=1, ls=":")
    a1.set_ylabel(f"elevation [{lu}]")
    verdict = ("" if comp.loc["stepped optimum", "passes the checks"] else
               "; it fails the checks, see the design comparison")
    a1.set_title(f"{results.case.name}: stepped design along the route "
                 f"(dotted: changes of diameter or material{verdict})")
    a1.grid(True, alpha=0.3)
    a1.legend(fontsize=8, loc="upper right")
    x = np.column_stack([runs["from chainage [m]"], runs["to chainage [m]"]]).ravel()
    d = np.repeat(runs["diameter [m]"].to_numpy(float), 2)
    a2.plot(cv(x), cv(d), color="C0", lw=2.2, label="stepped optimum")
    start, end = float(runs["from chainage [m]"].iloc[0]), float(runs["to chainage [m]"].iloc[-1])
    uni = comp.loc["best uniform diameter", "first diameter [m]"]
    a2.plot(cv([start, end]), cv([uni, uni]), color="C1", ls="--", lw=1.4,
            label="best uniform diameter")
    a2.set_xlabel(f"chainage [{lu}]")
    a2.set_ylabel(f"inside diameter [{lu}]")
    a2.grid(True, alpha=0.3)
    a3 = a2.twinx()
    a3.plot(cv(x), cv(np.repeat(runs["thickest wall [mm]"].to_numpy(float), 2), "mm"),
            color="C2", lw=1.2, ls="-.", label="thickest wall of the run (right axis)")
    a3.set_ylabel(f"wall [{tu}]")
    if runs["material"].nunique() > 1:   # name each run's material above its diameter
        for _, run in runs.iterrows():
            a2.annotate(run["material"], (float(cv(0.5 * (run["from chainage [m]"]
                                                          + run["to chainage [m]"]))),
                                          float(cv(run["diameter [m]"]))),
                        textcoords="offset points", xytext=(0, 4), ha="center", fontsize=7)
    lines = a2.get_lines() + a3.get_lines()
    a2.legend(lines, [ln.get_label() for ln in lines], fontsize=8, loc="lower left")
    _fixed_layout(fig, 0.075, 0.93, 0.08, 0.94)
    return fig


def flow_diameter_figure(results, system: str):
    """Contours of the annualized net value over design flow and diameter, the cells that
    fail the steady crown margin shaded, the optimum and the case's own design marked."""
    t = results.flow_diameter_study
    fu = _units.label(report_unit("m^3/s", system))
    lu = _units.label(report_unit("m", system))
    cur = results.case.economics.get("currency", "")
    grid = t.pivot(index="design flow [m^3/s]", columns="diameter [m]",
                   values="annualized net value [currency/year]")
    ok = t.pivot(index="design flow [m^3/s]", columns="diameter [m]",
                 values="passes the steady margin").to_numpy(bool)
    q = np.asarray(convert_value(grid.index.to_numpy(float), "m^3/s", system))
    d = np.asarray(convert_value(grid.columns.to_numpy(float), "m", system))
    v = grid.to_numpy(float) / 1e6
    fig, ax = plt.subplots(figsize=(9, 5.6), dpi=110)
    filled = ax.contourf(d, q, v, levels=14, cmap="viridis")
    ax.contour(d, q, v, levels=filled.levels, colors="k", linewidths=0.4, alpha=0.5)
    fig.colorbar(filled, ax=ax, label=f"annualized net value [million {cur}/year]".replace(
        "  ", " "))
    if (~ok).any():
        ax.contourf(d, q, (~ok).astype(float), levels=[0.5, 1.5], colors="none",
                    hatches=["//"])
        ax.plot([], [], " ", label="hatched: fails the steady crown margin")
    h = results.headline
    if h.best_design_flow is not None:
        ax.plot(convert_value(h.best_flow_diameter, "m", system),
                convert_value(h.best_design_flow, "m^3/s", system), "r*", ms=14,
                label="optimum")
    if h.selected_diameter is not None:
        ax.plot(convert_value(h.selected_diameter, "m", system),
                convert_value(results.case.design_flow, "m^3/s", system), "wo", mec="k",
                ms=8, label="case's design flow, recommended diameter")
    ax.set_xlabel(f"inside diameter [{lu}]")
    ax.set_ylabel(f"design flow [{fu}]")
    ax.set_title(f"{results.case.name}: design flow and diameter")
    ax.legend(fontsize=8, loc="upper center", bbox_to_anchor=(0.5, -0.11), ncol=3,
              frameon=False)
    _fixed_layout(fig, 0.09, 0.97, 0.2, 0.93)
    return fig


FIGURES = {"route_profile": route_figure, "loss_breakdown": loss_figure,
           "duration_curves": duration_figure, "monthly_energy": monthly_energy_figure,
           "design_flow_study": design_flow_figure, "water_hammer": hammer_figure,
           "uncertainty": uncertainty_figure, "stepped_design": stepped_figure,
           "flow_and_diameter": flow_diameter_figure}


#: Figures that need a table of a stage that may not have run.
NEEDS = {"duration_curves": "flow_duration", "monthly_energy": "energy_by_month",
         "design_flow_study": "design_flow_study", "water_hammer": "transient_envelope",
         "uncertainty": "uncertainty_summary", "stepped_design": "stepped_design",
         "flow_and_diameter": "flow_diameter_study"}


def write_figures(results, folder, system: str) -> list[str]:
    """Write every figure as PNG into ``folder``; returns the file names."""
    names = []
    for name, make in FIGURES.items():
        if name in NEEDS and getattr(results, NEEDS[name]) is None:
            continue
        fig = make(results, system)
        fname = f"{name}.png"
        fig.savefig(folder / fname)
        plt.close(fig)
        names.append(fname)
    return names
