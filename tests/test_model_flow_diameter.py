"""Design flow and diameter together: the two-dimensional study must reduce to the
one-dimensional ones along each axis (the diameter study at the case's design flow, the
design-flow study at the case's own pipe), and its optimum must be a local maximum of the
net value among the cells that keep the steady crown margin.

Invariants across stages; the energy and cost functions themselves are checked against
outside references in their own tests.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import study_parts

from penstock import economics
from penstock.constants import J_PER_KWH, J_PER_MWH
from penstock.model import flow_diameter

VALUE = "annualized net value [currency/year]"


@pytest.fixture(scope="module")
def low():
    case, props, _, prod, model, warns, methods = study_parts("millrace-flats-low-head")
    return case, props, prod, model, warns, methods


def test_along_the_diameter_it_is_the_diameter_study(low):
    """At the case's design flow, net value + the diameter study's annualized cost is the
    same at every diameter (energy revenue of the pipe-less plant less the plant cost): the
    two studies rank the diameters alike. The energy lost comes from two flow grids (the
    design-flow study's and the diameter study's), which differ by their interpolation."""
    case, props, prod, model, warns, methods = low
    d = np.geomspace(2.0, 4.0, 7)
    t, _ = flow_diameter.run(case, props, prod, model, warns, methods, diameters=d)
    at = t[np.isclose(t["design flow [m^3/s]"], case.design_flow, rtol=1e-12)]
    assert len(at) == d.size
    crf = model.cost_model().crf
    price = case.economics["energy_price"] / J_PER_KWH
    cap = model.capital(d)
    lost = np.array([model.lost_to(model.loss_on_grid(di, model.q_grid)) for di in d])
    total = (crf + case.costs["om_fraction"]) * cap + economics.lost_energy_value(lost, price)
    s = at[VALUE].to_numpy() + total
    spread = price * lost.max() * 1e-4          # 0.01 % of the energy lost
    assert np.ptp(s) < spread
    # and the energy there is the energy stage's at the case's own pipe (one segment; the
    # case's loss is the steady stage's flow interpolant, within 1e-6 of the lumped pipe's)
    own = case.segments[0].diameter
    t2, _ = flow_diameter.run(case, props, prod, model, warns, methods, diameters=[own])
    row = t2[np.isclose(t2["design flow [m^3/s]"], case.design_flow, rtol=1e-12)].iloc[0]
    assert row["mean annual energy [MWh]"] * J_PER_MWH == pytest.approx(
        prod.headline.mean_annual_energy, rel=1e-7)


def test_along_the_design_flow_it_is_the_design_flow_study(low):
    """At the case's own (uniform) pipe, the energy at every design flow is the
    design-flow study's, and the installed capacity too."""
    case, props, prod, model, warns, methods = low
    own = case.segments[0].diameter
    t, _ = flow_diameter.run(case, props, prod, model, warns, methods, diameters=[own])
    study = prod.design_flow_study.set_index("design flow [m^3/s]")
    for _, row in t.iterrows():
        q = row["design flow [m^3/s]"]
        if q not in study.index:
            continue   # the case's own design flow, not a duration-curve flow
        assert row["mean annual energy [MWh]"] == pytest.approx(
            study.loc[q, "mean annual energy [MWh]"], rel=1e-7)
        assert row["installed capacity [kW]"] == pytest.approx(
            study.loc[q, "installed capacity [kW]"], rel=1e-12)


def test_the_optimum_is_a_local_maximum_of_the_feasible_cells(demo_run):
    for name in ("alder-gorge-high-head", "millrace-flats-low-head"):
        _, r = demo_run(name, samples=0)
        t = r.flow_diameter_study
        h = r.headline
        v = t.pivot(index="design flow [m^3/s]", columns="diameter [m]", values=VALUE)
        ok = t.pivot(index="design flow [m^3/s]", columns="diameter [m]",
                     values="passes the steady margin").to_numpy(bool)
        i = int(np.flatnonzero(np.isclose(v.index, h.best_design_flow))[0])
        j = int(np.flatnonzero(np.isclose(v.columns, h.best_flow_diameter))[0])
        assert ok[i, j]
        best = v.to_numpy()[i, j]
        assert best == pytest.approx(h.best_net_value)
        assert best >= np.max(np.where(ok, v.to_numpy(), -np.inf)) - 1e-6
        for di, dj in ((-1, 0), (1, 0), (0, -1), (0, 1)):
            a, b = i + di, j + dj
            if 0 <= a < v.shape[0] and 0 <= b < v.shape[1] and ok[a, b]:
                assert v.to_numpy()[a, b] <= best


def test_a_larger_design_flow_never_raises_the_steady_margin(demo_run):
    """More flow, more loss and velocity head: the grade line only comes down. (Along the
    diameter the margin is not monotonic: a wider pipe's crown stands higher.)"""
    _, r = demo_run("alder-gorge-high-head", samples=0)
    m = r.flow_diameter_study.pivot(
        index="design flow [m^3/s]", columns="diameter [m]",
        values="minimum steady pressure margin at the crown, minimum headwater [m]")
    assert np.all(np.diff(m.to_numpy(), axis=0) <= 1e-9)
    # and the cells said to pass are those of a non-negative margin
    t = r.flow_diameter_study
    assert (t["passes the steady margin"] == (t["carries the design flow"] & (t[
        "minimum steady pressure margin at the crown, minimum headwater [m]"] >= 0))).all()
    # a cell that does not carry its design flow has no energy, and loses most of its head
    assert t.loc[~t["carries the design flow"], "mean annual energy [MWh]"].isna().all()


def test_the_plant_cost_is_a_caution_unless_given(demo_run):
    _, r = demo_run("millrace-flats-low-head", samples=0)
    msg = r.cautions["message"]
    assert msg.str.contains("plant cost per kW").any()
    assert msg[msg.str.contains("plant cost per kW")].str.contains("illustrative").all()
