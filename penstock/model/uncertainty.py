"""Monte Carlo stage: P50/P90/P99 energy, annualized cost and pressure-margin risk.

Vectorized across samples: the plant is operated over the flow record for a block of
samples at once (arrays of shape ``(samples, steps)``), each step's power read from
the sample's own table of :func:`penstock.energy.simulate_plant` over turbined flow and
gross head when the record is longer than the table (:func:`penstock.energy.
tabulated_power`; within 1e-6 of the mean annual energy of the step-by-step operation),
step by step otherwise.  The sampled inputs:

* the pipes' roughness, a log-normal factor and a growth rate spread: the penstock
  loss of each sample is the deterministic loss of the energy stage (roughness at half
  the service life when it grows) times the ratio of the sample's loss to the
  deterministic one, both at half the service life, tabulated on a grid of (factor,
  growth offset);
* an offset on the turbine efficiency, applied to each step's efficiency with and
  without friction (the dispatch follows the unshifted curve, a planning
  simplification);
* a factor on the flow record, or that factor and a block bootstrap of complete years;
  means are on the energy stage's year (:func:`penstock.energy.mean_annual_weights`);
* log-normal factors on the energy price and the pipe capital cost.

With every spread zero each sample reproduces the deterministic run.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import economics, energy, gradeline
from ..constants import J_PER_KWH, J_PER_MWH
from .core import Warning_
from .stages import UncertaintyHeadline, UncertaintyStage
from .steady import mid_life

BLOCK_ELEMENTS = 2_000_000   # samples × steps (or table nodes) per block, to bound memory
TABLE_FLOW_NODES = 1025       # energy.tabulated_power's nodes in turbined flow
TABLE_HEAD_NODES = 9          # and in gross head


def draw(u: dict, n: int) -> dict:
    """The sampled factors, in a fixed order from the case's seed."""
    rng = np.random.default_rng(u["seed"])
    z = rng.standard_normal((6, n))
    return {
        "roughness factor": np.exp(u["roughness_factor"] * z[0]),
        "growth offset": u["roughness_growth"] * z[1],
        "efficiency offset": u["efficiency_offset"] * z[2],
        "flow factor": np.maximum(1.0 + u["flow_scale"] * z[3], 0.05),
        "price factor": np.exp(u["energy_price"] * z[4]),
        "capital factor": np.exp(u["capital_cost"] * z[5]),
        "rng": rng,
    }


def sampled_roughness(case, route, factor, growth, years):
    """Element roughness: the pipe's own times ``factor``, plus its growth rate shifted by
    ``growth`` (never below zero) over ``years``."""
    rough = route.roughness * factor
    for i, seg in enumerate(case.segments):
        rate = max((seg.roughness_growth or 0.0) + growth, 0.0)
        rough[route.element_segment == i] += rate * years
    return rough


class _LossRatio:
    """Loss ratio h(Q; factor, growth) / h(Q; 1, 0) tabulated on a grid, interpolated."""

    def __init__(self, case, props, route, years, factors, growth, n_flow=64):
        self.years = years
        q_top = 1.5 * case.maximum_flow
        self.q = np.geomspace(1e-3 * q_top, q_top, n_flow)
        self.active = bool(np.any(factors != 1.0) or np.any(growth != 0.0))
        if not self.active:
            return
        self.f_grid = np.geomspace(max(factors.min(), 1e-3), max(factors.max(), 1e-3) * 1.0001,
                                   7)
        lo, hi = float(growth.min()), float(growth.max())
        self.g_grid = np.linspace(lo, hi if hi > lo else lo + 1e-9, 5)
        base = self._loss(case, props, route, 1.0, 0.0)
        self.table = np.array([[self._loss(case, props, route, f, g) / base
                                for g in self.g_grid] for f in self.f_grid])

    def _loss(self, case, props, route, factor, growth):
        rough = sampled_roughness(case, route, factor, growth, self.years)
        return route.total_head_loss(self.q, props.kinematic_viscosity, rough)

    def per_sample(self, factors, growth):
        """Ratio on the flow grid for each sample -> (samples, n_flow)."""
        if not self.active:
            return np.ones((len(factors), len(self.q)))
        from scipy.interpolate import RegularGridInterpolator

        lf = np.log(self.f_grid)
        x = np.clip(np.log(factors), lf[0], lf[-1])
        y = np.clip(growth, self.g_grid[0], self.g_grid[-1])
        # bilinear in (ln factor, growth), one value per flow of the grid
        return RegularGridInterpolator((lf, self.g_grid), self.table)(np.column_stack([x, y]))


def _block_loss(base_loss, ratio_q, ratio):
    """A head-loss callable for a block of samples: base loss × the sample's ratio."""
    log_q = np.log(ratio_q)

    def loss(q):
        q = np.asarray(q, float)
        h = base_loss(q)
        if np.all(ratio == 1.0):
            return h
        x = np.clip(np.log(np.maximum(np.abs(q), ratio_q[0])), log_q[0], log_q[-1])
        k = np.clip(np.searchsorted(log_q, x) - 1, 0, len(log_q) - 2)
        w = (x - log_q[k]) / (log_q[k + 1] - log_q[k])
        # samples run along the second-to-last axis of q: (units, samples, steps)
        shape = [1] * q.ndim
        shape[q.ndim - 2] = ratio.shape[0]
        rows = np.arange(ratio.shape[0]).reshape(shape)
        return h * (ratio[rows, k] * (1 - w) + ratio[rows, k + 1] * w)

    return loss


def run(case, props, steady, prod, size, warns, methods, tick, samples=None) -> dict:
    """Monte Carlo of the mean annual energy, annualized cost and minimum pressure margin."""
    u = case.uncertainty
    n = int(samples if samples is not None else u["samples"])
    if n <= 0:
        return UncertaintyStage()
    tick(f"Monte Carlo, {n} samples")
    d = draw(u, n)
    op = prod.operation
    t = case.turbine
    index, river, gross = op.index, op.river, op.gross
    residual = _residual_series(case, index, river)
    route = steady.route
    life = case.service_life
    # energy uses the roughness at half the service life; the margin at its end
    ratio_e = _LossRatio(case, props, route, mid_life(case), d["roughness factor"],
                         d["growth offset"])
    ratio_s = ratio_e.per_sample(d["roughness factor"], d["growth offset"])
    annual_steps = _year_blocks(index, prod)
    complete = annual_steps["complete"]
    step = op.step_seconds
    energies = np.empty((n, len(complete)))
    lost = np.empty(n)
    mean_energy = np.empty(n)
    weights = energy.mean_annual_weights(index)   # the energy stage's year
    # a long record reads each sample's power from a table of the plant (exact on the
    # nodes, linear between); a record shorter than that table runs step by step
    nodes = TABLE_FLOW_NODES * TABLE_HEAD_NODES
    tabulate = len(river) > nodes
    block = max(1, BLOCK_ELEMENTS // max(len(river), nodes if tabulate else 1, 1))
    min_rel = case.minimum_flow / (case.design_flow / t["units"]) \
        if case.minimum_flow is not None else None
    for a in range(0, n, block):
        b = min(n, a + block)
        rv = d["flow factor"][a:b, None] * river[None, :]
        loss = _block_loss(steady.head_loss, ratio_e.q, ratio_s[a:b])
        plant = dict(density=props.density, n_units=t["units"], turbine_type=t["type"],
                     efficiency_table=op.table, head_loss=loss, head_gain=op.dt_recovery,
                     residual=residual[None, :], minimum_relative_flow=min_rel,
                     availability=t["availability"],
                     efficiency_offset=d["efficiency offset"][a:b, None], **op.drive)
        if tabulate:
            o = energy.tabulated_power(rv, gross, case.design_flow / t["units"],
                                       flow_nodes=TABLE_FLOW_NODES,
                                       head_nodes=TABLE_HEAD_NODES, **plant)
        else:
            o = energy.simulate_plant(rv, gross, case.design_flow / t["units"], **plant)
        power, power_0 = np.asarray(o.power, float), np.asarray(o.power_without_friction, float)
        e_step = power * step
        energies[a:b] = np.add.reduceat(e_step, annual_steps["starts"], axis=1)
        # einsum, not @: a threaded BLAS product would spin both cores for a sum
        lost[a:b] = np.einsum("ij,j->i", (power_0 - power) * step, weights)
        mean_energy[a:b] = np.einsum("ij,j->i", e_step, weights)
    if u["flow_method"] == "bootstrap" and complete.sum() >= 2:
        years = np.flatnonzero(complete)
        pick = d["rng"].integers(0, len(years), size=(n, len(years)))
        mean_energy = np.take_along_axis(energies[:, years], pick, axis=1).mean(axis=1)
    # annualized cost at the recommended diameter
    e = case.economics
    crf = float(economics.capital_recovery_factor(e["discount_rate"], e["life"]))
    cost = np.full(n, np.nan)
    cost_note = ""
    row = size.headline.selected_row
    if row is not None:
        base_lost = float(row["energy lost [MWh/year]"]) * J_PER_MWH
        det_lost = prod.headline.friction_energy
        scale = lost / det_lost if det_lost > 0 else np.ones(n)
        cap = float(row["capital cost [currency]"]) * d["capital factor"]
        price = e["energy_price"] / J_PER_KWH * d["price factor"]
        cost = economics.annualized_cost(cap, crf, case.costs["om_fraction"],
                                         base_lost * scale * price)
    else:
        cost_note = ("no diameter study or no recommended diameter: annualized cost not "
                     "sampled")
    margin = _pressure_margin(case, props, steady, route, life, d)
    tick("Monte Carlo summary")
    return _tables(case, n, d, mean_energy, cost, margin, prod, cost_note, warns, methods)


def _residual_series(case, index, river):
    from .production import _residual

    return _residual(case, index, river).to_numpy(dtype=float)


def _year_blocks(index, prod):
    years = index.year.to_numpy()
    starts = np.flatnonzero(np.concatenate([[True], years[1:] != years[:-1]]))
    ann = prod.energy_by_year
    complete = ann["complete year"].astype(bool).to_numpy()
    return {"starts": starts, "complete": complete}


def _pressure_margin(case, props, steady, route, life, d):
    """Minimum steady crown pressure margin per sample (end-of-life roughness)."""
    flows = np.asarray(steady.flows, float)
    ratio = _LossRatio(case, props, route, life, d["roughness factor"], d["growth offset"])
    pipe = ~route.is_reservoir
    d_node = route.node_diameter[pipe]
    drawdown = case.headwater - case.headwater_min

    def margin(factor, growth):
        rough = sampled_roughness(case, route, factor, growth, life)
        g = route.grade_lines(flows, case.headwater, props.kinematic_viscosity, rough)
        crown = gradeline.crown_pressure_head(g.pressure_head[:, pipe], d_node, drawdown)
        return float(crown.min() - case.pressure_margin)

    if not ratio.active:
        return np.full(len(d["roughness factor"]), margin(1.0, 0.0))
    table = np.array([[margin(f, g) for g in ratio.g_grid] for f in ratio.f_grid])
    lf = np.log(ratio.f_grid)
    x = np.clip(np.log(d["roughness factor"]), lf[0], lf[-1])
    y = np.clip(d["growth offset"], ratio.g_grid[0], ratio.g_grid[-1])
    from scipy.interpolate import RegularGridInterpolator

    return RegularGridInterpolator((lf, ratio.g_grid), table)(np.column_stack([x, y]))


def _tables(case, n, d, energy_j, cost, margin, prod, cost_note, warns, methods):
    e_mwh = energy_j / J_PER_MWH
    det = prod.headline.mean_annual_energy / J_PER_MWH
    rng = np.random.default_rng(case.uncertainty["seed"] + 1)
    boot = np.median(e_mwh[rng.integers(0, n, size=(200, n))], axis=1)
    se_p50 = float(boot.std(ddof=1)) if n > 1 else 0.0
    p = lambda q: float(np.quantile(e_mwh, q))  # noqa: E731
    rows = [
        ("samples", n, ""), ("seed", case.uncertainty["seed"], ""),
        ("deterministic mean annual energy", det, "MWh"),
        ("P50 mean annual energy (exceeded with 50 % probability)", p(0.5), "MWh"),
        ("standard error of the P50 (bootstrap, 200 resamples)", se_p50, "MWh"),
        ("P90 mean annual energy (exceeded with 90 % probability)", p(0.10), "MWh"),
        ("P99 mean annual energy (exceeded with 99 % probability)", p(0.01), "MWh"),
        ("probability that the minimum pressure margin is negative",
         100 * float(np.mean(margin < 0)), "%"),
    ]
    if np.isfinite(cost).all():
        rows += [("annualized cost at the recommended diameter, P10", float(np.quantile(cost, .1)),
                  "currency/year"),
                 ("annualized cost at the recommended diameter, P50",
                  float(np.quantile(cost, .5)), "currency/year"),
                 ("annualized cost at the recommended diameter, P90",
                  float(np.quantile(cost, .9)), "currency/year")]
    samples = pd.DataFrame({
        "sample": np.arange(1, n + 1),
        "roughness factor [-]": d["roughness factor"],
        "roughness growth offset [m/year]": d["growth offset"],
        "efficiency offset [-]": d["efficiency offset"],
        "flow factor [-]": d["flow factor"],
        "energy price factor [-]": d["price factor"],
        "capital cost factor [-]": d["capital factor"],
        "mean annual energy [MWh]": e_mwh,
        "annualized cost [currency/year]": cost,
        "minimum pressure margin [m]": margin,
    })
    order = np.sort(e_mwh)[::-1]
    exceed = pd.DataFrame({"probability of exceedance [%]": 100 * (np.arange(1, n + 1)) / (n + 1),
                           "mean annual energy [MWh]": order})
    if len(exceed) > 1000:
        exceed = exceed.iloc[np.linspace(0, len(exceed) - 1, 1000).astype(int)]
    finite = cost[np.isfinite(cost)]
    if finite.size:
        lo, hi = float(finite.min()), float(finite.max())
        if hi - lo <= 1e-9 * max(abs(hi), 1.0):   # no spread: one value, rounding aside
            lo, hi = lo - 0.5, hi + 0.5
        counts, edges = np.histogram(finite, bins=20, range=(lo, hi))
    else:
        counts, edges = np.zeros(0), np.zeros(1)
    hist = pd.DataFrame({"annualized cost, bin centre [currency/year]":
                         0.5 * (edges[1:] + edges[:-1]), "samples": counts})
    methods.add("Uncertainty", "Monte Carlo over roughness, efficiency, flows, price and capital "
                "cost, vectorized across samples; on a record longer than "
                f"{TABLE_FLOW_NODES * TABLE_HEAD_NODES:,} steps each sample's power is read "
                "from its own table of the plant operation over turbined flow and gross head "
                f"({TABLE_FLOW_NODES:,} × {TABLE_HEAD_NODES} nodes, linear between them), on "
                "a shorter one the plant runs step by step; P-values as quantiles of the "
                "sampled mean annual energy", "Seeded NumPy generator (PCG64); bootstrap "
                "standard error: Efron & Tibshirani (1993), An Introduction to the "
                "Bootstrap, ch. 6")
    if cost_note:
        warns.append(Warning_("uncertainty", cost_note, severity="note"))
    return UncertaintyStage(
        uncertainty_summary=pd.DataFrame(rows, columns=["quantity", "value", "unit"]),
        uncertainty_samples=samples, uncertainty_energy_exceedance=exceed.reset_index(drop=True),
        uncertainty_cost_histogram=hist,
        headline=UncertaintyHeadline(
            p50_energy=p(0.5) * J_PER_MWH, p90_energy=p(0.10) * J_PER_MWH,
            p99_energy=p(0.01) * J_PER_MWH, p50_standard_error=se_p50 * J_PER_MWH,
            probability_negative_margin=float(np.mean(margin < 0))))

