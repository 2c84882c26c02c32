"""Diameter-study stage: wall thickness, pipe cost and the annualized-cost optimum.

Orchestration only: every formula is a tested physics function.  The study treats the
penstock as one uniform inside diameter D along the whole route (the case's segments
keep their roughness; transitions between them vanish).  For each D:

* **Energy lost** to the penstock's head loss over the whole flow record, with the
  roughness of the energy basis (mid-life when a growth rate is given), on the mean
  annual basis of the energy stage (:func:`penstock.energy.mean_annual_weights`).  The
  plant's dispatch does not depend on D (the net head depends on the total flow
  only), so ``E_lost(D) = Σ_t w_t·P(Q_t, h(Q_t; D), η_t)·Δt``.  ``h`` is tabulated on
  a flow grid for a grid of diameters; the record enters through linear-interpolation
  weights on the flow grid, so each D costs one dot product.
* **Wall** (:func:`penstock.pipewall.wall_along_route`): hoop thickness, handling
  minimum and an unstiffened wall under full vacuum at the site, rounded up to plates,
  per reach (the thicker of its two ends).  The design head is the static head plus
  the transient rise: in the sweep an Allievi uniform-closure rise growing linearly
  from the reservoir to the turbine (common practice for slow closure); for the
  candidates the envelope of a method-of-characteristics run.
* **Capital** (:func:`penstock.economics.pipe_cost_breakdown`) and **annualized
  cost** (:func:`penstock.diameter.annual_cost_model`).
* **Feasibility** of each candidate: the steady pressure margin at the crown with the
  headwater at its minimum, at every study flow up to the maximum plant flow, for the
  pipe new and with its roughness at the end of the service life (the basis of the
  Pressure checks sheet); and a wall within the available plates.  The recommended
  size is the cheaper feasible neighbour of the optimum, or the next larger feasible
  size.
"""

from __future__ import annotations

import copy
import dataclasses
import warnings

import numpy as np
import pandas as pd

from .. import diameter as dia
from .. import economics, energy, friction, gradeline, pipewall, surge, transients
from ..constants import J_PER_KWH, J_PER_MWH
from ..materials import STEEL_PIPE_MATERIALS
from ..materials import get_material as _get_material
from ..route import build_route, uniform_pipe
from . import flow_diameter, material_study, stepped
from .core import Methods, Say, Warning_
from .stages import SizingHeadline, SizingStage

#: Diameters closer than this share (0.1 mm in 1 m) are one size. [-]
SAME_SIZE = 1e-4

#: How many sizes above the optimum are tried for a feasible recommendation.
MAX_SIZES_UP = 20

#: Diameters x reaches evaluated at once by the cost model, to bound its memory.
COST_BLOCK_ELEMENTS = 200_000


def wall_material(case):
    """The wall's steel grade with the case's own property overrides, if any."""
    w = case.wall
    own = {k: w[k] for k in ("allowable_stress", "elastic_modulus", "density")
           if w.get(k) is not None}
    return _get_material(w["grade"], own or None)


def uniform_case(case, d):
    """A copy of the case with every pipe segment at inside diameter ``d``."""
    c = copy.copy(case)
    c.segments = [dataclasses.replace(s, diameter=float(d)) for s in case.segments]
    return c


def _plates(case):
    w = case.wall
    return np.asarray(w["plates"], float) if w["plates"] else \
        np.asarray(pipewall.standard_plate_thicknesses(), float)


def wall_on_route(case, props, chainage, design_head, diameter):
    """The case's wall rules along a route (:func:`penstock.pipewall.wall_along_route`):
    its steel, plates, joint efficiency, corrosion allowance, handling rule and an
    unstiffened wall under full vacuum at the site; ``diameter`` one value or one per
    station [m], ``design_head`` one per station [m]."""
    w = case.wall
    return pipewall.wall_along_route(
        chainage, np.maximum(design_head, 0.0), diameter, wall_material(case), _plates(case),
        joint_efficiency=w["joint_efficiency"], corrosion_allowance=w["corrosion_allowance"],
        handling_rule=w["handling_rule"], water_density=props.density,
        external_pressure=props.atmospheric_pressure, buckling_safety=w["buckling_safety"],
        beyond_plates="keep")


def element_costs(case, diameter, length, thickness, steel_factor=1.0):
    """Capital cost items of pipe reaches (:func:`penstock.economics.pipe_cost_breakdown`)
    at the case's prices, broadcast over ``diameter``, ``length`` and ``thickness`` [m]."""
    c = case.costs
    return economics.pipe_cost_breakdown(
        diameter, length, thickness=thickness, density=wall_material(case).density,
        cost_per_tonne=c["steel_price"] * steel_factor,
        fabrication_factor=c["fabrication_factor"],
        installation_factor=c["installation_factor"], civil_fixed=c["civil_fixed"],
        civil_coefficient=c["civil_per_diameter"], civil_exponent=c["civil_exponent"],
        contingency_factor=c["contingency"])


class DiameterModel:
    """Cost components of a uniform-diameter penstock, vectorized over D."""

    def __init__(self, case, props, prod, *, wave_speed, case_loss=None, roughness_years=None,
                 n_grid=48, n_flow=512):
        self.case = case
        self.props = props
        self.roughness_years = roughness_years
        op = prod.operation
        self.op = op
        t = case.turbine
        o = op.op
        q = np.asarray(o.turbined_flow, float)
        eta = np.asarray(o.turbine_efficiency, float)
        self.drive = dict(op.drive)
        self.availability = t["availability"]
        # per-step weights of the mean annual basis, the energy stage's
        self.annual = energy.mean_annual_weights(op.index)
        # linear-interpolation weights of w_t·Q_t·η_t on a flow grid
        q_top = max(float(q.max()), case.design_flow) * 1.0001
        self.q_grid = np.linspace(0.0, q_top, n_flow)
        self.weights = energy.flow_grid_weights(q, q * eta * self.annual, self.q_grid)
        self.route = build_route(uniform_case(case, 1.0))   # same nodes at any D
        self.pipe = uniform_pipe(case)
        self.lengths = self.route.length
        self._s_nodes = np.concatenate([[0.0], np.cumsum(self.route.length)])
        lo, hi = self.bounds()
        self.d_grid = np.geomspace(lo / 1.05, hi * 1.05, n_grid)
        h = np.array([self.loss_on_grid(d, self.q_grid) for d in self.d_grid])
        self.loss_table = h                     # (n_grid, n_flow) [m]
        self._log_lost = np.log(np.maximum(self._lost(h @ self.weights), 1e-300))
        # the case's own penstock (its real diameters) on the same basis, so that the
        # energy at any D follows from the actual energy: E(D) = E + lost(case) - lost(D)
        self.case_lost = (float(self._lost(self.weights @ case_loss(self.q_grid)))
                          if case_loss is not None else None)
        self.moc_runs = {}   # diameter -> design head etc. (_moc_design_head)
        self.moc_reaches = None   # the water-hammer stage's grid; run() sets it
        # the case's own pipe's equivalent wave speed, for the sweep's Allievi rise and its
        # Joukowsky cap (each candidate's own rise comes from its MOC runs)
        self.wave_speed = float(wave_speed)

    def _lost(self, weighted_head):
        """Mean annual energy [J/year] of Σ_t w_t·Q_t·η_t·h_t [m·m^3/s·year^-1]."""
        head = np.asarray(weighted_head, dtype=float)
        p = energy.electrical_power(np.ones_like(head), head, self.props.density, 1.0,
                                    **self.drive)
        return np.asarray(p) * self.availability * self.op.step_seconds

    def lost_weighted(self, weighted_head):
        """Mean annual energy lost [J/year] to Σ_t w_t·Q_t·η_t·h_t given on any dispatch's
        flow-grid weights (``weights @ head_loss``) [m·m^3/s·year^-1]."""
        return self._lost(weighted_head)

    def lost_to(self, head_loss):
        """Mean annual energy lost [J/year] to a head loss given at each flow of
        :attr:`q_grid` [m] (the last axis): linear in the loss, through the record's
        flow-grid weights."""
        return self._lost(np.asarray(head_loss, dtype=float) @ self.weights)

    # ------------------------------------------------------------------ hydraulics
    def bounds(self):
        """Sweep bounds: the case's, or the economic-velocity diameters at 6 m/s and
        1.5 m/s at the design flow; never below the diameter whose loss at the design flow
        takes half the gross head."""
        if getattr(self, "_bounds", None) is not None:
            return self._bounds
        st = self.case.diameter_study
        q = self.case.design_flow
        lo = st["minimum"] or float(dia.economic_velocity_diameter(q, dia.SWEEP_VELOCITIES[0]))
        hi = st["maximum"] or float(dia.economic_velocity_diameter(q, dia.SWEEP_VELOCITIES[1]))
        lo = max(lo, self.smallest_workable())
        if hi <= lo:
            hi = 2.0 * lo
        self._bounds = (float(lo), float(hi))
        return self._bounds

    def smallest_workable(self):
        """Diameter whose penstock loss at the design flow is half the gross head."""
        if getattr(self, "_workable", None) is not None:
            return self._workable
        from scipy.optimize import brentq

        case = self.case
        gross = case.headwater - case.tailwater
        q = np.array([case.design_flow])

        def excess(log_d):   # the loss falls steeply and monotonically with D
            return float(self.loss_on_grid(float(np.exp(log_d)), q)[0]) - 0.5 * gross

        # the probe starts where a pipe is still a pipe: 2 cm, and at least twice the
        # largest roughness of the pipe new or at the end of its life
        rough = max(float(np.max(self.route.roughness)), float(np.max(
            self.route.aged_roughness(case.segments, case.service_life))))
        smallest = max(0.02, 2.0 * rough)
        lo, hi = np.log(smallest), np.log(50.0)
        with warnings.catch_warnings():   # a probe: far-off trial sizes leave the
            warnings.simplefilter("ignore")   # correlations' ranges, and no result uses them
            if excess(lo) <= 0:
                self._workable = smallest
            else:
                self._workable = float(np.exp(brentq(excess, lo, hi, xtol=1e-9)))
        return self._workable

    def segment_roughness(self, years):
        """Roughness of each pipe segment [m], new (``years`` None) or after ``years``."""
        segs = self.case.segments
        if years is None:
            return np.array([s.roughness for s in segs])
        return np.array([friction.aged_roughness(s.roughness, years, s.roughness_growth)
                         if s.roughness_growth else s.roughness for s in segs])

    def loss_on_grid(self, d, flows, years="energy"):
        """Penstock head loss at ``flows`` for a uniform diameter ``d`` [m], with the
        roughness of the energy basis (``years="energy"``), new (None) or after
        ``years`` of service: the route lumped per segment (:class:`route.UniformPipe`),
        whatever its number of profile points."""
        years = self.roughness_years if years == "energy" else years
        return self.pipe.head_loss(flows, d, self.segment_roughness(years),
                                   self.props.kinematic_viscosity)

    def energy_lost(self, d):
        """Mean annual energy lost to the penstock's head loss [J/year].

        Interpolated in log-log on the diameter grid; a diameter outside the grid (a
        candidate beyond the sweep) is evaluated directly, never clamped to the grid's end.
        """
        d = np.asarray(d, float)
        x = np.log(d)
        out = np.exp(np.interp(x, np.log(self.d_grid), self._log_lost))
        outside = (d < self.d_grid[0] * (1 - 1e-12)) | (d > self.d_grid[-1] * (1 + 1e-12))
        if np.any(outside):
            flat = np.atleast_1d(out).astype(float)
            for k in np.flatnonzero(np.atleast_1d(outside)):
                di = float(np.atleast_1d(d)[k])
                flat[k] = float(self._lost(self.loss_on_grid(di, self.q_grid) @ self.weights))
            out = flat.reshape(np.shape(d)) if np.ndim(d) else flat[0]
        return out

    def energy_lost_brute_force(self, d):
        """The same, by evaluating the losses at every step of the record (for checks)."""
        o = self.op.op
        q = np.asarray(o.turbined_flow, float)
        eta = np.asarray(o.turbine_efficiency, float)
        grid = np.geomspace(1e-4, 1.0, 600) * max(q.max(), 1e-9)
        h = np.interp(q, grid, self.loss_on_grid(d, grid))
        return float(self._lost(np.sum(self.annual * q * eta * h)))

    # ------------------------------------------------------------------ wall and cost
    def design_head(self, d, rise=None, flow=None):
        """Design pressure head at each route node: static + transient rise [m]; the rise
        of a load rejection from ``flow`` (default the design flow)."""
        z = self.route.elevation
        static = self.case.headwater - z
        if rise is None:
            rise = self.allievi_rise(d, flow)
        return surge.linear_design_head(static[None, :], rise,
                                        self._s_nodes / self._s_nodes[-1])

    def allievi_rise(self, d, flow=None):
        """Allievi's slow-closure rise, at most Joukowsky's (rapid closure governs), from
        ``flow`` (default the design flow) [m^3/s]."""
        case = self.case
        q = case.design_flow if flow is None else flow
        v = gradeline.mean_velocity(q, np.asarray(d, float))
        h0 = case.headwater - float(self.route.elevation[-1])
        return np.asarray(surge.allievi_rise_capped(float(self._s_nodes[-1]), v, h0,
                                                    case.surge["closure_time"],
                                                    self.wave_speed))

    def walls(self, d, design_head=None):
        """The wall profile along the route for each diameter ``d``.

        Returns the list of :class:`penstock.pipewall.WallProfile`, one per diameter.
        """
        return list(self._each_wall(d, design_head))

    def _each_wall(self, d, design_head=None):
        """The wall profiles one at a time (a long route's profiles are large)."""
        d = np.atleast_1d(np.asarray(d, float))
        head = self.design_head(d) if design_head is None else np.atleast_2d(design_head)
        head = np.broadcast_to(head, (d.size, head.shape[-1]))
        for di, hd in zip(d, head, strict=True):
            yield wall_on_route(self.case, self.props, self.route.chainage, hd, di)

    def wall(self, d, design_head=None):
        """Plate and required thickness of each reach -> two (n_d, n_reach) arrays [m]."""
        keep = self.lengths > 0
        plate, req = [], []
        for p in self._each_wall(d, design_head):
            plate.append(p.reach_plate[keep])
            req.append(p.reach_required[keep])
        return np.array(plate), np.array(req)

    def costs(self, d, thickness=None, smooth=True, steel_factor=1.0, flow=None):
        """Capital cost items of the pipe for diameters ``d`` (summed over the reaches).

        ``smooth`` uses the required (unrounded) thickness, which keeps the cost a smooth
        function of D for the optimizer; the candidate table uses the real plates.
        ``steel_factor`` scales the steel price and the items charged on it; ``flow`` is
        the design flow of the wall's surge (default the case's) [m^3/s].
        """
        d = np.atleast_1d(np.asarray(d, float))
        reach = self.lengths[self.lengths > 0]
        # diameters in blocks, so that a long route's (diameters x reaches) arrays stay small
        block = max(1, COST_BLOCK_ELEMENTS // max(reach.size, 1))
        out = {}
        for a in range(0, d.size, block):
            t = None if thickness is None else np.atleast_2d(thickness)[a:a + block]
            part = self._block_costs(d[a:a + block], reach, t, smooth, steel_factor, flow)
            for k, v in part.items():
                out.setdefault(k, []).append(v)
        return {k: np.concatenate(v) for k, v in out.items()}

    def _block_costs(self, d, reach, thickness, smooth, steel_factor, flow=None):
        if thickness is None:
            plate, req = self.wall(d, None if flow is None else self.design_head(d, flow=flow))
            thickness = req if smooth else plate
        thickness = np.atleast_2d(thickness)
        parts = element_costs(self.case, d[:, None], reach[None, :], thickness, steel_factor)
        return {k: np.broadcast_to(np.asarray(v), (d.size, reach.size)).sum(axis=1)
                for k, v in parts.items()}

    def capital(self, d, thickness=None, smooth=True, steel_factor=1.0, flow=None):
        """Pipe capital cost [currency] for diameters ``d`` (wall surge from ``flow``)."""
        return self.costs(d, thickness, smooth, steel_factor, flow)["total"]

    def steel_mass(self, d, thickness):
        return self.costs(d, thickness)["mass"]

    def cost_model(self, energy_price=None, discount_rate=None, capital_factor=1.0,
                   steel_factor=1.0):
        """The annualized cost of a diameter (:func:`penstock.diameter.annual_cost_model`)."""
        e = self.case.economics
        price = e["energy_price"] if energy_price is None else energy_price

        def capital(d):
            out = self.capital(d, steel_factor=steel_factor) * capital_factor
            return float(out[0]) if np.ndim(d) == 0 else out

        return dia.annual_cost_model(
            capital, self.energy_lost, energy_price=price / J_PER_KWH,
            discount_rate=e["discount_rate"] if discount_rate is None else discount_rate,
            economic_life=e["life"], om_fraction=self.case.costs["om_fraction"])

    def annualized(self, d, **kw):
        """Annualized cost [currency/year] and its parts for diameters ``d``."""
        return self.cost_model(**kw).components(np.atleast_1d(np.asarray(d, float)))


def applicable(case) -> str | None:
    """Why the diameter study cannot run for this case, or None."""
    bad = [i + 1 for i, s in enumerate(case.segments) if s.material not in STEEL_PIPE_MATERIALS]
    if bad:
        return (f"pipe(s) {', '.join(map(str, bad))} are not steel: the diameter study "
                "covers welded steel penstocks only")
    return None


def run(case, props, steady, prod, ham, warns, methods, tick) -> dict:
    """Sweep, optimum, feasible recommendation, candidates and sensitivity of a uniform
    penstock diameter."""
    why = applicable(case)
    if why:
        warns.append(Warning_("diameter study", why + "; the study is skipped",
                              severity="note"))
        return SizingStage()
    tick("diameter study")
    say = Say(case.unit_system)
    table = ham.wave_speeds
    model = DiameterModel(case, props, prod, case_loss=steady.head_loss,
                          roughness_years=steady.energy_roughness_years,
                          wave_speed=surge.equivalent_wave_speed(
                              (table["to chainage [m]"] - table["from chainage [m]"]).to_numpy(),
                              table["wave speed [m/s]"].to_numpy()))
    # the candidates are ranked on the coarsest grid of the case's refinement (the rise,
    # which sets the wall, converges first); the case's own pipe has the converged grid
    model.moc_reaches = ham.screening_reaches
    methods.add("Diameter study, water hammer", f"each candidate's load rejections on the "
                f"screening grid of {ham.screening_reaches} reaches (the case's own pipe: "
                f"{ham.grid_reaches}, converged)", "see Water hammer, simulation")
    lo, hi = model.bounds()
    st = case.diameter_study
    sizes = np.array(st["sizes"]) if st["sizes"] else dia.standard_sizes(
        minimum=lo * 0.8, maximum=hi * 1.25)
    workable = model.smallest_workable()
    sizes = np.asarray(sizes, float)
    if (sizes >= workable).any():
        sizes = sizes[sizes >= workable]   # no size that loses half the head is offered
    if sizes.size == 0:
        warns.append(Warning_("diameter study", f"no available size lies near the sweep "
                              f"range {say.m(lo, 3)} to {say.m(hi, 3)} (the default sizes go "
                              "in 50 mm steps); give diameter_study.sizes to study this pipe; "
                              "the study is skipped", severity="warning"))
        return SizingStage()
    d_sweep = np.geomspace(lo, hi, st["points"])
    parts = model.annualized(d_sweep)
    t_sweep, _ = model.wall(d_sweep)
    sweep = pd.DataFrame({
        "diameter [m]": d_sweep,
        "capital cost, unrounded wall [currency]": parts["capital"],
        "annualized capital [currency/year]": parts["capital_annual"],
        "operation and maintenance [currency/year]": parts["om"],
        "value of energy lost [currency/year]": parts["lost_energy_value"],
        "annualized cost [currency/year]": parts["total"],
        "energy lost [MWh/year]": parts["energy_lost"] / J_PER_MWH,
        "thinnest plate [mm]": 1e3 * t_sweep.min(axis=1),
        "thickest plate [mm]": 1e3 * t_sweep.max(axis=1),
    })
    base = model.cost_model()
    opt = dia.optimum_diameter(base, (lo, hi), sizes=sizes)
    if opt.warning:
        warns.append(Warning_("diameter study", opt.warning))
    years = steady.energy_roughness_years
    methods.add("Diameter study", "annualized cost = capital recovery factor × capital + O&M + "
                "value of the energy lost over the flow record (roughness " +
                ("as new" if years is None else f"after {years:g} years, half the service "
                 "life") + "); bounded scalar minimization (scipy), snapped to the available "
                "sizes; the recommended size is the cheaper neighbour of the optimum that "
                "passes the steady pressure check at the crown (minimum headwater, every "
                "study flow, new and aged pipe) and the wall rules, else the next larger size "
                "that does", "Capital recovery factor: any engineering-economics text, e.g. "
                "Newnan, Eschenbach & Lavelle (2020), Engineering Economic Analysis, 14th ed., "
                "OUP, ch. 4; scipy.optimize.minimize_scalar (Brent, bounded)")
    methods.add("Wall thickness", "hoop stress t = p·D/(2·σ_allow·E_j) + corrosion allowance, "
                "handling minimum, and an unstiffened wall under full vacuum at the site "
                "(p_cr = 2E/(1−ν²)·((t−c)/D_mean)³ with the case's safety factor), rounded up "
                "to plates, each reach at the thicker of its two ends",
                "AWWA M11 (2017), Steel Pipe, ch. 4 and 6; ASCE MOP 79 (2012), Steel "
                "Penstocks; Timoshenko & Gere (1961), Theory of Elastic Stability (from "
                "memory)")

    # candidates: the neighbours of the optimum, the case's own diameter(s), user's list
    neighbours = sorted({x for x in (opt.lower_size, opt.selected_size, opt.upper_size)
                         if x is not None})
    cands = list(st["candidates"]) or sorted({*neighbours,
                                              *[s.diameter for s in case.segments]})
    dropped = [d for d in cands if d < workable]
    if dropped:
        warns.append(Warning_("diameter study", "candidate diameter(s) " + ", ".join(
            say.m(d, 3) for d in dropped) + " lose more than half the gross head at the "
            f"design flow (smaller than {say.m(workable, 3)}) and are left out"))
    cands = sorted({float(d) for d in cands if d >= workable} | set(neighbours))
    # one row per size: a listed or own diameter within SAME_SIZE of a size is that size
    merged = []
    for d in cands:
        if merged and abs(d - merged[-1]) <= SAME_SIZE * d:
            if d in neighbours:
                merged[-1] = d
            continue
        merged.append(d)
    cands = merged
    tick("diameter candidates")
    rows = {d: candidate_row(case, props, steady, prod, model, d) for d in cands}
    recommended = _recommend(opt, sizes, rows, case, props, steady, prod, model, warns, say)
    cand = pd.DataFrame([rows[d] for d in sorted(rows)])
    if recommended is not None:
        _vacuum_note(case, rows[recommended], recommended, warns, say)
    # empirical sanity checks
    p_inst = prod.headline.installed_capacity
    hn = prod.headline.net_head
    emp = []
    for name, entry in dia.EMPIRICAL_DIAMETER_METHODS.items():
        inputs = {"flow": case.design_flow} if "flow" in entry["inputs"] else {
            "power": p_inst, "net_head": hn}
        emp.append({"method": name.replace("_", " "), "diameter [m]":
                    float(dia.empirical_diameter(name, **inputs)),
                    "source": entry["reference"], "validity": entry["validity"]})
    methods.add("Diameter sanity checks", "empirical diameters of Bier, Sarkaria, Fahlbusch "
                "and an economic velocity", "; ".join(e["source"] for e in emp))
    # sensitivity of the economic optimum (before the pressure checks)
    tick("diameter sensitivity")
    e = case.economics
    prices = e["energy_price"] * np.array([0.5, 0.75, 1.0, 1.25, 1.5])
    rates = np.unique(np.clip(e["discount_rate"] + np.array([-0.03, 0.0, 0.03]), 0.0, None))
    grid = dia.sensitivity_grid(lambda energy_price, discount_rate: model.cost_model(
        energy_price=energy_price, discount_rate=discount_rate), prices, rates,
        bounds=(lo, hi), sizes=sizes)
    grid_rows = [{"energy price [currency/kWh]": pr, "discount rate [%]": 100 * rt,
                  "optimum diameter [m]": grid.optimum_diameter[i, j],
                  "selected size [m]": grid.selected_size[i, j],
                  "annualized cost [currency/year]": grid.optimum_cost[i, j]}
                 for i, pr in enumerate(grid.energy_prices)
                 for j, rt in enumerate(grid.discount_rates)]
    names = {"capital_factor": "capital cost (all items)",
             "steel_factor": "steel, fabrication and installation",
             "energy_price": "energy price", "discount_rate": "discount rate"}
    base_inputs = {"capital_factor": 1.0, "steel_factor": 1.0,
                   "energy_price": e["energy_price"]}
    if e["discount_rate"] > 0:
        base_inputs["discount_rate"] = e["discount_rate"]
    oat = [{"input varied": names.get(r.name, r.name), "factor [-]": r.factor,
            "optimum diameter [m]": r.optimum_diameter, "selected size [m]": r.selected_size,
            "annualized cost [currency/year]": r.optimum_cost}
           for r in dia.one_at_a_time(lambda **kw: model.cost_model(**kw), base_inputs,
                                      bounds=(lo, hi), variation=0.2, sizes=sizes)]
    methods.add("Diameter sensitivity", "the economic optimum re-found with one input varied "
                "(before the pressure checks, which may move the recommendation up)",
                "penstock.diameter.sensitivity_grid and one_at_a_time")
    sel = rows.get(recommended) if recommended is not None else None
    # the wall along the route of the recommended size, else of the economic size (labelled
    # so on the sheet)
    wall_profile = _wall_profile(case, model, recommended if recommended is not None else
                                 opt.selected_size)
    tick("stepped diameters")
    runs, comparison, stepped_forces = stepped.run(case, props, steady, prod, model, sizes,
                                   recommended if recommended is not None else
                                   opt.selected_size, ham.grid_reaches, warns, methods)
    tick("design flow and diameter")
    flow_d, flow_d_best = flow_diameter.run(case, props, prod, model, warns, methods,
                                            selected=recommended)
    tick("materials")
    mats = material_study.run(case, props, steady, prod, model, sel, ham.grid_reaches, warns,
                              methods)
    return SizingStage(
        diameter_sweep=sweep, diameter_candidates=cand,
        diameter_empirical_checks=pd.DataFrame(emp),
        diameter_sensitivity=pd.DataFrame(grid_rows),
        diameter_one_at_a_time=pd.DataFrame(oat),
        wall_profile=wall_profile,
        stepped_design=runs, design_comparison=comparison, stepped_thrusts=stepped_forces,
        material_comparison=mats,
        flow_diameter_study=flow_d,
        model=model,
        headline=SizingHeadline(
            optimum_diameter=opt.diameter, selected_diameter=recommended,
            economic_size=opt.selected_size,
            optimum_cost=opt.cost, optimum_relative_derivative=opt.relative_derivative,
            selected_wall_min=sel["thinnest plate [mm]"] / 1e3 if sel else None,
            selected_wall_max=sel["thickest plate [mm]"] / 1e3 if sel else None,
            selected_row=sel,
            crf=base.crf,
            best_design_flow=None if flow_d_best is None else
            float(flow_d_best["design flow [m^3/s]"]),
            best_flow_diameter=None if flow_d_best is None else
            float(flow_d_best["diameter [m]"]),
            best_net_value=None if flow_d_best is None else
            float(flow_d_best["annualized net value [currency/year]"]),
        ),
    )


def _recommend(opt, sizes, rows, case, props, steady, prod, model, warns, say):
    """The cheaper feasible neighbour of the optimum, else the smallest feasible size above
    it: among the rows already computed (listed candidates too) and the sizes tried upward
    (the case's sizes, or the standard series beyond the sweep)."""
    near = [d for d in (opt.lower_size, opt.upper_size, opt.selected_size) if d is not None]
    ok = [d for d in near if rows[d]["passes the checks"]]
    failing = rows[opt.selected_size]
    if ok:
        best = min(ok, key=lambda d: rows[d]["annualized cost [currency/year]"])
        if not failing["passes the checks"]:
            warns.append(Warning_("diameter study", "the economic size "
                                  f"{say.m(opt.selected_size, 3)} fails "
                                  f"{failing['governing check']}; {say.m(best, 3)} is "
                                  "recommended instead"))
        return best
    top = max(near)
    margin = "minimum steady pressure margin at the crown, minimum headwater [m]"
    previous = rows[top][margin]
    upward = [float(x) for x in sizes if x > top]
    if not case.diameter_study["sizes"]:   # the standard series goes on beyond the sweep
        upward = sorted(set(upward) | {float(x) for x in dia.standard_sizes(minimum=top * 1.001,
                                                                           maximum=top * 3.0)})
    last_failing = failing
    for d in upward[:MAX_SIZES_UP]:
        same = [k for k in rows if abs(k - d) <= SAME_SIZE * d]
        if same:       # a case's own diameter given in other units, say: already a row
            d = same[0]
        else:
            rows[d] = candidate_row(case, props, steady, prod, model, d)
        if rows[d]["passes the checks"]:
            break
        last_failing = rows[d]
        if rows[d][margin] <= previous + 1e-3:
            break   # a larger pipe no longer raises the grade line where it governs
        previous = rows[d][margin]
    passing = [k for k in sorted(rows) if k > top and rows[k]["passes the checks"]]
    if passing:
        d = passing[0]
        warns.append(Warning_("diameter study", f"the sizes beside the optimum fail "
                              f"{failing['governing check']}; the smallest size that passes "
                              f"every check, {say.m(d, 3)}, is recommended (costlier than the "
                              "economic optimum)"))
        return d
    warns.append(Warning_("diameter study", f"no size up to {say.m(max(rows), 3)} passes the "
                          f"checks (governing: {last_failing['governing check']}), and larger "
                          "sizes do not help or were not tried: no diameter is recommended; "
                          "the route (or the intake's depth), the headwater or the pipe "
                          "material must change"))
    return None


def _moc_design_head(case, props, model, d):
    """Design head at the route nodes from load rejections at diameter d, from the same
    flows as the water-hammer stage (design flow and the listed rejection flows): the
    envelope over them, with the transient minimum at the crown floored at the steady one.

    Run once per diameter: the candidate row and the wall profile share it."""
    if float(d) not in model.moc_runs:
        model.moc_runs[float(d)] = _moc_runs(case, props, d, model.moc_reaches)
    return model.moc_runs[float(d)]


#: Water-hammer runs of a candidate at most: a steel segment whose plates come out
#: thicker than the wall it ran with is run again with its thickest plate.
CANDIDATE_WALL_PASSES = 3


def _moc_runs(case, props, d, reaches):
    """The candidate's load rejections with the case's walls (the handling minimum where a
    segment gives none); where its design head needs thicker plates than a steel
    segment's wall, run again with the thickest plate as that wall (a stiffer wall gives
    a faster wave and a larger rise; the walls only grow, so the rise stays on the safe
    side of the wall priced)."""
    c = uniform_case(case, d)
    for _ in range(CANDIDATE_WALL_PASSES):
        out = moc_design_head(c, props, reaches)
        if case.surge["wave_speed"] is not None:
            break   # a given wave speed does not depend on the wall
        head, _, _, route = out
        keep = route.length > 0
        plate = wall_on_route(c, props, route.chainage, head, d).reach_plate[keep]
        thick = np.zeros(len(c.segments))
        np.maximum.at(thick, route.element_segment[keep], plate)
        walls = [s.wall_thickness if s.wall_thickness is not None else
                 float(pipewall.minimum_handling_thickness(d)) for s in c.segments]
        steel = [s.material in STEEL_PIPE_MATERIALS for s in c.segments]
        if all(t <= w * (1 + 1e-9) or not st
               for t, w, st in zip(thick, walls, steel, strict=True)):
            break
        c = copy.copy(c)
        c.segments = [dataclasses.replace(s, wall_thickness=max(w, float(t)) if st else
                                          s.wall_thickness)
                      for s, t, w, st in zip(c.segments, thick, walls, steel, strict=True)]
    return out


def moc_design_head(c, props, reaches):
    """The design head, largest rise, least transient crown pressure head and route of a
    case's pipe as it stands (any diameters): see :func:`_moc_design_head`."""
    from . import hammer

    route = build_route(c)
    pipes = hammer._pipes(c, props, route, [], Methods())
    s_nodes = pipes.axis
    hw_top = c.headwater_max if c.headwater_max is not None else c.headwater
    d_node = node_diameters(route)
    static = hw_top - (route.elevation - 0.5 * d_node)     # at the invert, flood level
    head, pmin, rise_max = None, None, 0.0
    aged = hammer.aged_roughness(c, route, pipes)
    for _, res, _ in hammer.rejections(c, props, pipes, reaches, aged):
        h_max = transients.envelope_at(res, s_nodes, "max")
        h_0 = transients.envelope_at(res, s_nodes, "steady")
        h = transients.design_pressure_line(static, h_max, h_0)
        low = gradeline.crown_pressure_head(transients.envelope_at(res, s_nodes, "min")
                                            - route.elevation, d_node,
                                            c.headwater - c.headwater_min)
        head = h if head is None else np.maximum(head, h)
        pmin = low if pmin is None else np.minimum(pmin, low)
        rise_max = max(rise_max, float(res.max_head_rise.max()))
    return head, rise_max, pmin, route


def node_diameters(route):
    """The pipe diameter at each route node, the reservoir node taking the first pipe's."""
    d = route.node_diameter
    return np.where(np.isnan(d), d[~np.isnan(d)][0], d)


def steady_crown_margin(case, props, steady, route, d):
    """Least steady pressure head at the crown over the study flows, minimum headwater,
    for the pipe new and aged to the end of its service life, less the margin -> (margin
    [m], chainage [m], flow case)."""
    pipe = ~route.is_reservoir
    worst = (np.inf, None, None)
    for p, tag in _crown_pressures(case, props, route, steady.flows):
        i, j = np.unravel_index(np.argmin(p), p.shape)
        if p[i, j] < worst[0]:
            worst = (float(p[i, j]), float(route.chainage[pipe][j]),
                     steady.flow_names[i] + tag)
    return worst[0] - case.pressure_margin, worst[1], worst[2]


def _crown_pressures(case, props, route, flows):
    """Steady pressure head at the crown of each pipe node, minimum headwater, at each of
    ``flows``, for the pipe new and aged to the end of its service life -> [(array
    (flows, nodes) [m], label)]."""
    pipe = ~route.is_reservoir
    drawdown = case.headwater - case.headwater_min
    sets = [(None, "")]
    if any(s.roughness_growth for s in case.segments):
        sets.append((route.aged_roughness(case.segments, case.service_life),
                     f", after {case.service_life:g} years"))
    out = []
    for rough, tag in sets:
        g = route.grade_lines(np.asarray(flows, float), case.headwater,
                              props.kinematic_viscosity, rough)
        out.append((gradeline.crown_pressure_head(g.pressure_head[:, pipe],
                                                  route.node_diameter[pipe], drawdown), tag))
    return out


def crown_margin_by_flow(case, props, route, flows):
    """The least steady crown pressure head less the case's margin at each of ``flows``
    (minimum headwater; new and aged pipe) [m]."""
    return np.min([p.min(axis=1) for p, _ in _crown_pressures(case, props, route, flows)],
                  axis=0) - case.pressure_margin


def candidate_row(case, props, steady, prod, model, d):
    """One row of the candidate table: diameter ``d`` with its own water-hammer run, real
    plates, costs and the checks that decide whether it can be recommended."""
    e = case.economics
    gross = prod.headline.gross_head
    e0 = prod.headline.mean_annual_energy + model.case_lost
    steel = wall_material(case)
    head, rise, pmin_t, route = _moc_design_head(case, props, model, d)
    keep = model.lengths > 0
    prof = model.walls(d, design_head=head[None, :])[0]
    t = prof.reach_plate[keep][None, :]
    costs = model.costs(d, thickness=t, smooth=False)
    cost_model = model.cost_model()
    cap = float(costs["total"][0])
    crf = cost_model.crf
    om = case.costs["om_fraction"] * cap
    lost = float(model.lost_to(model.loss_on_grid(d, model.q_grid)))   # exact at d
    lost_value = float(economics.lost_energy_value(lost, e["energy_price"] / J_PER_KWH))
    h_d = float(model.loss_on_grid(d, np.array([case.design_flow]))[0])
    gain = prod.headline.draft_tube_recovery
    hn = float(energy.net_head(gross, h_d, gain))
    energy_d = e0 - lost    # the actual energy, re-based from the case's pipe to this D
    v = gradeline.mean_velocity(case.design_flow, d)
    tw = float(surge.water_starting_time(route.length.sum(), v, hn))
    margin, at, flow_case = steady_crown_margin(case, props, steady, route, d)
    w = case.wall
    buck = pipewall.vacuum_check(t[0], d, steel.elastic_modulus, steel.poisson_ratio,
                                 external_pressure=props.atmospheric_pressure,
                                 safety_factor=w["buckling_safety"],
                                 corrosion_allowance=w["corrosion_allowance"])
    beyond = bool(np.any(prof.beyond_plates))
    # reaches whose required thickness is the vacuum rule's (the plate rounds it up)
    vac_governs = int(np.sum(np.maximum(prof.vacuum_thickness[:-1], prof.vacuum_thickness[1:])
                             [keep] >= prof.reach_required[keep] - 1e-12))
    failures = []
    # named without numbers (they stand in their own columns), so the text is the same
    # in any unit system
    if margin < 0:
        failures.append(f"the steady pressure margin at the crown ({flow_case}, minimum "
                        "headwater)")
    if beyond:
        failures.append("the wall (more than the thickest plate)")
    if np.any(np.asarray(buck["needs_stiffeners"])):
        failures.append("vacuum buckling of the unstiffened wall")
    return {
        "diameter [m]": d, "thinnest plate [mm]": 1e3 * t.min(),
        "thickest plate [mm]": 1e3 * t.max(), "steel mass [t]": float(costs["mass"][0]) / 1e3,
        "capital cost [currency]": cap, "head loss at design flow [m]": h_d,
        "net head at design flow [m]": hn,
        "mean annual energy [MWh]": energy_d / J_PER_MWH,
        "energy lost [MWh/year]": lost / J_PER_MWH,
        "value of energy lost [currency/year]": lost_value,
        "annualized capital [currency/year]": crf * cap,
        "operation and maintenance [currency/year]": om,
        "annualized cost [currency/year]": float(economics.annualized_cost(
            cap, crf, case.costs["om_fraction"], lost_value)),
        "annualized cost, unrounded wall [currency/year]":
            float(cost_model.components(np.array([d]))["total"][0]),
        "maximum surge rise [m]": rise,
        "minimum steady pressure margin at the crown, minimum headwater [m]": margin,
        "at chainage [m]": at,
        "minimum transient pressure head at the crown, minimum headwater [m]":
            float(pmin_t.min()),
        "velocity at design flow [m/s]": v, "water starting time [s]": tw,
        "largest vacuum-buckling utilisation [-]": float(np.max(buck["utilisation"])),
        "reaches whose wall is set by full vacuum [-]": vac_governs,
        "passes the checks": not failures,
        "governing check": "; ".join(failures) if failures else "all pass",
    }


def _vacuum_note(case, row, d, warns, say):
    n = row["reaches whose wall is set by full vacuum [-]"]
    if n:
        warns.append(Warning_("pipe wall", f"at the recommended D = {say.m(d, 3)}, {n} reaches "
                              "take their plate from full vacuum (unstiffened, safety factor "
                              f"{case.wall['buckling_safety']:g}); stiffener rings or air "
                              "valves may cost less", severity="note"))


def _wall_profile(case, model, d):
    """Wall thickness and design pressure along the route at the selected diameter."""
    head, _, _, route = _moc_design_head(case, model.props, model, d)
    t, req = model.wall(d, design_head=head[None, :])
    x = route.chainage
    keep = route.length > 0
    x0, x1 = x[:-1][keep], x[1:][keep]
    return pd.DataFrame({
        "from chainage [m]": x0, "to chainage [m]": x1,
        "design pressure head at the invert [m]": np.maximum(head[:-1], head[1:])[keep],
        "required thickness [mm]": 1e3 * req[0],
        "plate thickness [mm]": 1e3 * t[0],
    })
