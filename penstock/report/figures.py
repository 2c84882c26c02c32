"""Matplotlib figures for reports and slides (PNG), drawn from a results object."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from .. import units as _units  # noqa: E402
from .units import convert_value, report_unit  # noqa: E402


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
    st = results.stretches
    for k, (_, s) in enumerate(st.iterrows()):
        ax.axvspan(float(cv(s["from chainage [m]"])), float(cv(s["to chainage [m]"])),
                   color="#d62728", alpha=0.15, lw=0,
                   label="pressure below margin" if k == 0 else None)
    ax.set_xlabel(f"chainage [{lu}]")
    ax.set_ylabel(f"elevation [{lu}]")
    ax.set_title(f"{results.case.name}: route profile and grade lines")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=8, loc="lower left")
    fig.tight_layout()
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
    fig.tight_layout()
    return fig


FIGURES = {"route_profile": route_figure, "loss_breakdown": loss_figure}


def write_figures(results, folder, system: str) -> list[str]:
    """Write every figure as PNG into ``folder``; returns the file names."""
    names = []
    for name, make in FIGURES.items():
        fig = make(results, system)
        fname = f"{name}.png"
        fig.savefig(folder / fname)
        plt.close(fig)
        names.append(fname)
    return names
