"""Design flow and diameter together: the annualized net value over a grid of both.

Orchestration only.  For each design flow Qd of the design-flow study (and the case's
own) and each uniform diameter D of a grid over the diameter study's range:

* **energy** ``E(Qd, D) = E(Qd) + L_Qd(case's pipe) - L_Qd(D)``: ``E(Qd)`` is the
  design-flow study's mean annual energy with the case's own pipe, and ``L_Qd`` the mean
  annual energy lost to a penstock head loss at Qd's dispatch, which is linear in the loss
  (the dispatch does not depend on the pipe): one dot product of the loss on a flow grid
  with Qd's weights (:func:`penstock.energy.flow_grid_weights`);
* **pipe capital** at D with the sweep's wall for Qd's surge
  (:meth:`DiameterModel.capital` with ``flow=Qd``);
* **plant capital**: ``costs.plant_cost_per_kw`` times the installed capacity at Qd (the
  design-flow study's), so that the study along D at the case's design flow is the
  diameter study, and along Qd at the case's pipe the design-flow study;
* **annualized net value** = energy price x E - (capital recovery factor + O&M fraction)
  x (pipe + plant capital).

A cell is feasible where the uniform pipe keeps the steady pressure margin at the crown
at minimum headwater, new and aged, at Qd's maximum plant flow (the case's ratio of the
maximum to the design flow).  The optimum is the feasible cell of the largest net value.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import diameter as dia
from .. import energy
from ..constants import J_PER_KWH, J_PER_MWH
from ..route import build_route
from .core import Say, Warning_

#: Diameters of the grid (geometric, over the diameter study's sweep range).
N_DIAMETERS = 30


def run(case, props, prod, model, warns, methods, selected=None, diameters=None):
    """The design flow x diameter table (one row per cell) and its optimum row, or
    (None, None) when the production stage gave no design flows; ``selected`` is the
    diameter study's recommendation [m], kept inside the grid; ``diameters`` replaces the
    grid's diameters [m]."""
    from .sizing import crown_margin_by_flow, uniform_case

    flows = prod.design_flows
    if flows is None or len(flows.table) < 2:
        return None, None
    say = Say(case.unit_system)
    t = flows.table
    qd = t["design_flow"].to_numpy(float)
    lo, hi = model.bounds()
    # the sweep's range, widened for the largest design flow (the same velocities) and to
    # hold the case's own and the recommended diameters with room above
    own = max([s.diameter for s in case.segments] + ([selected] if selected else []))
    hi = max(hi, float(dia.economic_velocity_diameter(qd.max(), dia.SWEEP_VELOCITIES[1])),
             1.3 * own)
    d = np.geomspace(lo, hi, N_DIAMETERS) if diameters is None else \
        np.asarray(diameters, float)
    grid = flows.grid
    loss = np.array([model.loss_on_grid(di, grid) for di in d])          # (D, grid) [m]
    lost = model.lost_weighted(flows.weights @ loss.T)                           # (Qd, D) [J/yr]
    lost_case = model.lost_weighted(flows.weights @ flows.head_loss(grid))   # (Qd,)
    e = t["mean_annual_energy"].to_numpy(float)[:, None] + lost_case[:, None] - lost
    pipe = np.array([model.capital(d, flow=q) for q in qd])               # (Qd, D)
    plant = case.costs["plant_cost_per_kw"] * t["installed_capacity"].to_numpy(float) / 1e3
    base = model.cost_model()
    annual = base.crf + case.costs["om_fraction"]
    price = case.economics["energy_price"] / J_PER_KWH
    value = price * e - annual * (pipe + plant[:, None])
    ratio = case.maximum_flow / case.design_flow
    margin = np.array([crown_margin_by_flow(case, props, build_route(uniform_case(case, di)),
                                            qd * ratio) for di in d]).T   # (Qd, D)
    # the energy re-basing holds while the plant runs as with the case's pipe: a pipe that
    # loses more than 95 % of the gross head at the maximum plant flow does not carry the
    # design flow (the design-flow study's own rule)
    gross = prod.headline.gross_head
    carries = np.array([model.loss_on_grid(di, qd * ratio) for di in d]).T < \
        (1.0 - energy.LEAST_NET_HEAD_FRACTION) * gross
    e = np.where(carries, e, np.nan)
    value = np.where(carries, value, np.nan)
    ok = carries & (margin >= 0)
    table = pd.DataFrame({
        "design flow [m^3/s]": np.repeat(qd, d.size),
        "diameter [m]": np.tile(d, qd.size),
        "installed capacity [kW]": np.repeat(t["installed_capacity"].to_numpy(float) / 1e3,
                                             d.size),
        "mean annual energy [MWh]": (e / J_PER_MWH).ravel(),
        "pipe capital, unrounded wall [currency]": pipe.ravel(),
        "plant capital [currency]": np.repeat(plant, d.size),
        "annualized net value [currency/year]": value.ravel(),
        "minimum steady pressure margin at the crown, minimum headwater [m]": margin.ravel(),
        "carries the design flow": carries.ravel(),
        "passes the steady margin": ok.ravel(),
    })
    methods.add("Design flow and diameter", "annualized net value = energy price × mean "
                "annual energy − (capital recovery factor + O&M fraction) × (pipe capital + "
                "plant cost per kW × installed capacity), on the design-flow study's flows and "
                f"{N_DIAMETERS} diameters over the sweep's range (widened for the largest "
                "design flow and to 1.3 times the case's and the recommended diameter); the "
                "energy at each diameter re-based from the case's pipe by the energy lost at "
                "each design flow's own dispatch; cells that fail the steady crown margin at "
                "minimum headwater, or whose pipe loses more than 95 % of the gross head, are "
                "excluded", "see Diameter study and Design-flow study")
    warns.append(Warning_("design flow and diameter", "the plant cost per kW "
                          f"({case.costs['plant_cost_per_kw']:,.0f} in the economics currency) "
                          "sets the design flow the study prefers; "
                          + ("the default is illustrative, not a price"
                             if "costs.plant_cost_per_kw" not in _given(case) else
                             "it is the case's own figure"), severity="note"))
    if not ok.any():
        warns.append(Warning_("design flow and diameter", "no cell of the design flow x "
                              "diameter study keeps the steady pressure margin at the crown: "
                              "no optimum is given", severity="warning"))
        return table, None
    k = int(np.argmax(np.where(ok, value, -np.inf)))
    best = table.iloc[k]
    iq, jd = np.unravel_index(k, value.shape)
    edge = []
    if jd in (0, d.size - 1):
        edge.append("diameter")
    if qd[iq] in (qd.min(), qd.max()):
        edge.append("design flow")
    if edge:
        warns.append(Warning_("design flow and diameter", f"the optimum ({say.q(qd[iq])}, "
                              f"{say.m(d[jd], 3)}) lies at the edge of the study's "
                              f"{' and '.join(edge)} range: the true optimum may lie beyond "
                              "it", severity="note"))
    return table, best


def _given(case):
    """The keys the case file gives (not defaults)."""
    return {e["key"] for e in case.echo if e.get("source") != "default"}
