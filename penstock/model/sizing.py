"""Diameter-study stage: wall thickness, pipe cost and the annualized-cost optimum.

The study treats the penstock as one uniform inside diameter D along the whole
route (the case's segments keep their roughness; transitions between them vanish).
For each D:

* **Energy lost** to the penstock's head loss is computed over the whole flow record
  through the turbine efficiency.  The plant's dispatch does not depend on D (the net
  head depends on the total flow only, so the best number of units at each step is
  set by the efficiency curve alone), hence
  ``E_lost(D) = η_drive·ρ·g·Δt·Σ_t Q_t·η_t·h(Q_t; D)``.  ``h`` is tabulated on a
  flow grid for a grid of diameters; the record enters through linear-interpolation
  weights on the flow grid, so each D costs one dot product.
* **Wall**: hoop thickness p·D/(2·σ·E_j) + corrosion allowance, at least the handling
  minimum, rounded up to the available plates, per reach (the larger of its two
  ends).  The design head is the static head plus the transient rise: in the sweep an
  Allievi uniform-closure rise growing linearly from the reservoir to the turbine
  (common practice for slow closure); for the candidate diameters the envelope of a
  method-of-characteristics run.
* **Capital** = steel mass × price × (1 + fabrication + installation) + civil works
  per metre (fixed + coefficient·D^exponent), plus contingency; O&M a fraction of it.
* **Annualized cost** = CRF × capital + O&M + value of the energy lost.
"""

from __future__ import annotations

import copy
import dataclasses
import math

import numpy as np
import pandas as pd

from .. import diameter as dia
from .. import economics, pipewall, surge, transients
from ..constants import GRAVITY, P_ATM_SEA_LEVEL
from ..materials import get_material as _get_material
from ..route import build_route
from .core import Say, Warning_

STEEL = ("welded_steel", "riveted_steel")


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


class DiameterModel:
    """Cost components of a uniform-diameter penstock, vectorized over D."""

    def __init__(self, case, props, prod, case_loss=None, n_grid=48, n_flow=512):
        self.case = case
        self.props = props
        op = prod["operation"]
        self.op = op
        t = case.turbine
        o = op["op"]
        q = np.asarray(o.turbined_flow, float)
        eta = np.asarray(o.turbine_efficiency, float)
        drive = op["drive"]
        self.drive_factor = (drive["gearbox_efficiency"] * drive["generator_efficiency"]
                             * drive["transformer_efficiency"] * t["availability"])
        years = len(q) * op["step_seconds"] / (8760 * 3600.0)
        self.years = years
        # linear-interpolation weights of w_t = Q_t·η_t on a flow grid
        q_top = max(float(q.max()), case.design_flow) * 1.0001
        self.q_grid = np.linspace(0.0, q_top, n_flow)
        dq = self.q_grid[1]
        pos = q / dq
        i = np.clip(np.floor(pos).astype(int), 0, n_flow - 2)
        frac = pos - i
        w = q * eta
        self.weights = (np.bincount(i, w * (1 - frac), n_flow)
                        + np.bincount(i + 1, w * frac, n_flow))
        self.energy_factor = self.drive_factor * props.density * GRAVITY * op["step_seconds"]
        lo, hi = self.bounds()
        self.d_grid = np.geomspace(lo / 1.05, hi * 1.05, n_grid)
        h = np.array([self.loss_on_grid(d, self.q_grid) for d in self.d_grid])
        self.loss_table = h                     # (n_grid, n_flow) [m]
        s = h @ self.weights                    # Σ Q η h over the record, per grid D
        self._log_lost = np.log(np.maximum(s * self.energy_factor / years, 1e-300))
        # the case's own penstock (its real diameters) on the same basis, so that the
        # energy at any D follows from the actual energy: E(D) = E + lost(case) - lost(D)
        self.case_lost = (float(self.energy_factor * self.weights @ case_loss(self.q_grid)
                                / years) if case_loss is not None else None)
        self.route = build_route(uniform_case(case, self.d_grid[0]))   # same nodes at any D
        w = case.surge["wave_speed"]
        # for the Joukowsky cap only; run() sets the case's computed value when it has one
        self.wave_speed = w if w is not None else 1000.0
        self.lengths = self.route.length
        self._x_nodes = self.route.chainage
        self._s_nodes = np.concatenate([[0.0], np.cumsum(self.route.length)])

    # ------------------------------------------------------------------ hydraulics
    def bounds(self):
        """Sweep bounds: the case's, or 6 m/s to 1.5 m/s at the design flow; never below
        the diameter whose loss at the design flow takes half the gross head."""
        if getattr(self, "_bounds", None) is not None:
            return self._bounds
        st = self.case.diameter_study
        q = self.case.design_flow
        lo = st["minimum"] or math.sqrt(4 * q / (math.pi * 6.0))
        hi = st["maximum"] or math.sqrt(4 * q / (math.pi * 1.5))
        d_half = self.smallest_workable()
        lo = max(lo, d_half)
        if hi <= lo:
            hi = 2.0 * lo
        self._bounds = (float(lo), float(hi))
        return self._bounds

    def smallest_workable(self):
        """Diameter whose penstock loss at the design flow is half the gross head."""
        case = self.case
        gross = case.headwater - case.tailwater
        q = np.array([case.design_flow])
        d_lo, d_hi = 0.02, 50.0
        for _ in range(40):   # bisection in log D; the loss falls steeply with D
            mid = math.sqrt(d_lo * d_hi)
            if self.loss_on_grid(mid, q)[0] > 0.5 * gross:
                d_lo = mid
            else:
                d_hi = mid
        return d_hi

    def loss_on_grid(self, d, flows):
        """Penstock head loss at ``flows`` for a uniform diameter ``d`` [m]."""
        c = uniform_case(self.case, d)
        r = build_route(c)
        g = r.grade_lines(flows, c.headwater, self.props.kinematic_viscosity)
        return (g.friction_loss + g.local_loss).sum(axis=1)

    def energy_lost(self, d):
        """Mean annual energy lost to the penstock's head loss [J/year]."""
        x = np.log(np.asarray(d, float))
        return np.exp(np.interp(x, np.log(self.d_grid), self._log_lost))

    def energy_lost_brute_force(self, d):
        """The same, by evaluating the losses at every step of the record (for checks)."""
        o = self.op["op"]
        q = np.asarray(o.turbined_flow, float)
        eta = np.asarray(o.turbine_efficiency, float)
        grid = np.geomspace(1e-4, 1.0, 600) * max(q.max(), 1e-9)
        h = np.interp(q, grid, self.loss_on_grid(d, grid))
        return float(self.energy_factor * np.sum(q * eta * h) / self.years)

    # ------------------------------------------------------------------ wall and cost
    def design_head(self, d, rise=None):
        """Design pressure head at each route node: static + transient rise [m]."""
        case = self.case
        z = self.route.elevation
        static = case.headwater - z
        if rise is None:
            rise = self.allievi_rise(d)
        s = self._s_nodes / self._s_nodes[-1]
        return static[None, :] + np.asarray(rise, float)[..., None] * s

    def allievi_rise(self, d):
        """Allievi's slow-closure rise, at most Joukowsky's (rapid closure governs)."""
        d = np.asarray(d, float)
        case = self.case
        v = case.design_flow / (math.pi * d**2 / 4)
        l_total = float(self._s_nodes[-1])
        h0 = case.headwater - float(self.route.elevation[-1])
        slow = surge.allievi_max_head(l_total, v, h0, case.surge["closure_time"]) - h0
        return np.minimum(slow, surge.joukowsky(self.wave_speed, v))

    def wall(self, d, design_head=None):
        """Plate thickness of each reach for diameters ``d`` -> (n_d, n_reach) [m]."""
        w = self.case.wall
        d = np.atleast_1d(np.asarray(d, float))
        steel = wall_material(self.case)
        head = self.design_head(d) if design_head is None else np.atleast_2d(design_head)
        p = self.props.density * GRAVITY * np.maximum(head, 0.0)
        hoop = pipewall.hoop_thickness(p, d[:, None], steel.allowable_stress,
                                       w["joint_efficiency"], w["corrosion_allowance"])
        hoop = np.maximum(hoop[:, 1:], hoop[:, :-1])[:, self.lengths > 0]  # reach: worse end
        handling = np.asarray(pipewall.minimum_handling_thickness(d, w["handling_rule"]))
        req = np.maximum(hoop, handling[:, None])
        plates = np.asarray(w["plates"]) if w["plates"] else \
            pipewall.standard_plate_thicknesses()
        top = float(np.max(plates))
        # beyond the thickest plate the required thickness stands (flagged by the caller)
        rounded = np.asarray(pipewall.round_up_to_plates(np.minimum(req, top), plates))
        return np.where(req > top, req, rounded), req

    def steel_mass(self, d, thickness):
        steel = wall_material(self.case)
        d = np.atleast_1d(np.asarray(d, float))
        reach = self.lengths[None, self.lengths > 0]
        return pipewall.steel_mass(d[:, None], thickness, reach, steel.density).sum(axis=1)

    def capital(self, d, thickness=None, smooth=True):
        """Pipe capital cost [currency] for diameters ``d``.

        ``smooth`` uses the required (unrounded) thickness, which keeps the cost a smooth
        function of D for the optimizer; the candidate table uses the real plates.
        """
        c = self.case.costs
        d = np.atleast_1d(np.asarray(d, float))
        if thickness is None:
            plate, req = self.wall(d)
            thickness = req if smooth else plate
        mass = self.steel_mass(d, thickness)
        steel_cost = mass / 1000.0 * c["steel_price"]
        length = float(self.lengths.sum())
        civil = (c["civil_fixed"] + c["civil_per_diameter"] * d ** c["civil_exponent"]) * length
        return (steel_cost * (1 + c["fabrication_factor"] + c["installation_factor"]) + civil) \
            * (1 + c["contingency"])

    def annualized(self, d, energy_price=None, discount_rate=None, capital_factor=1.0,
                   steel_factor=1.0):
        """Annualized cost [currency/year] and its parts for diameters ``d``."""
        e = self.case.economics
        price = (e["energy_price"] if energy_price is None else energy_price) / 3.6e6
        rate = e["discount_rate"] if discount_rate is None else discount_rate
        crf = float(economics.capital_recovery_factor(rate, e["life"]))
        cap = self.capital(d) * capital_factor
        if steel_factor != 1.0:
            cap = cap + (steel_factor - 1.0) * self.steel_part(d) * capital_factor
        om = self.case.costs["om_fraction"] * cap
        lost = self.energy_lost(d) * price
        return {"capital": cap, "crf": crf, "capital_annual": crf * cap, "om": om,
                "lost_value": lost, "total": crf * cap + om + lost}

    def steel_part(self, d):
        c = self.case.costs
        _, t = self.wall(d)
        mass = self.steel_mass(d, t)
        return mass / 1000.0 * c["steel_price"] * (1 + c["fabrication_factor"]
                                                    + c["installation_factor"]) * \
            (1 + c["contingency"])


def applicable(case) -> str | None:
    """Why the diameter study cannot run for this case, or None."""
    bad = [i + 1 for i, s in enumerate(case.segments) if s.material not in STEEL]
    if bad:
        return (f"pipe(s) {', '.join(map(str, bad))} are not steel: the diameter study "
                "covers welded steel penstocks only")
    return None


def run(case, props, steady, prod, ham, warns, methods, tick) -> dict:
    """Sweep, optimum, candidates and sensitivity of a uniform penstock diameter."""
    why = applicable(case)
    if why:
        warns.append(Warning_("diameter study", why + "; the study is skipped",
                              severity="note"))
        return {"headline": {}}
    tick("diameter study")
    model = DiameterModel(case, props, prod, case_loss=steady["head_loss"])
    if ham.get("wave_speeds") is not None:   # the case's own wave speed, for Joukowsky's cap
        model.wave_speed = float(ham["wave_speeds"]["wave speed [m/s]"].mean())
    lo, hi = model.bounds()
    st = case.diameter_study
    sizes = np.array(st["sizes"]) if st["sizes"] else dia.standard_sizes(
        minimum=lo * 0.8, maximum=hi * 1.25)
    workable = model.smallest_workable()
    sizes = np.asarray(sizes, float)
    if (sizes >= workable).any():
        sizes = sizes[sizes >= workable]   # no size that loses half the head is offered
    if sizes.size == 0:
        say = Say(case.unit_system)
        warns.append(Warning_("diameter study", f"no available size lies near the sweep "
                              f"range {say.m(lo, 3)} to {say.m(hi, 3)} (the default sizes go "
                              "in 50 mm steps); give diameter_study.sizes to study this pipe; "
                              "the study is skipped", severity="warning"))
        return {"headline": {}}
    d_sweep = np.geomspace(lo, hi, st["points"])
    parts = model.annualized(d_sweep)
    t_sweep, _ = model.wall(d_sweep)
    sweep = pd.DataFrame({
        "diameter [m]": d_sweep,
        "capital cost, unrounded wall [currency]": parts["capital"],
        "annualized capital [currency/year]": parts["capital_annual"],
        "operation and maintenance [currency/year]": parts["om"],
        "value of energy lost [currency/year]": parts["lost_value"],
        "annualized cost [currency/year]": parts["total"],
        "energy lost [MWh/year]": model.energy_lost(d_sweep) / 3.6e9,
        "thinnest plate [mm]": 1e3 * t_sweep.min(axis=1),
        "thickest plate [mm]": 1e3 * t_sweep.max(axis=1),
    })
    opt = dia.optimum_diameter(lambda d: float(model.annualized(d)["total"][0]), (lo, hi),
                               sizes=sizes)
    if opt.warning:
        warns.append(Warning_("diameter study", opt.warning))
    methods.add("Diameter study", "annualized cost = capital recovery factor × capital + O&M + "
                "value of the energy lost over the flow record; bounded scalar minimization "
                "(scipy), snapped to the available sizes", "Capital recovery factor: any "
                "engineering-economics text, e.g. Newnan, Eschenbach & Lavelle (2020), "
                "Engineering Economic Analysis, 14th ed., OUP, ch. 4; scipy.optimize."
                "minimize_scalar (Brent, bounded)")
    methods.add("Wall thickness", "hoop stress t = p·D/(2·σ_allow·E_j) + corrosion allowance, "
                "handling minimum, rounded up to plates; buckling of an unstiffened tube "
                "under full vacuum p_cr = 2E/(1−ν²)·(t/D)³ with a safety factor",
                "AWWA M11 (2017), Steel Pipe, ch. 4 and 6; ASCE MOP 79 (2012), Steel "
                "Penstocks; Timoshenko & Gere (1961), Theory of Elastic Stability (from "
                "memory)")

    # candidates: the neighbours of the optimum, the case's own diameter(s), user's list
    cands = list(st["candidates"]) or sorted({opt.lower_size or opt.selected_size,
                                              opt.selected_size,
                                              opt.upper_size or opt.selected_size,
                                              *[s.diameter for s in case.segments]})
    dropped = [d for d in cands if d < workable]
    if dropped:
        warns.append(Warning_("diameter study", "candidate diameter(s) " + ", ".join(
            f"{d:g} m" for d in dropped) + f" lose more than half the gross head at the design "
            f"flow (smaller than {workable:.3f} m) and are left out"))
    cands = [d for d in cands if d >= workable]
    if not any(math.isclose(d, opt.selected_size, rel_tol=1e-12) for d in cands):
        cands = sorted([*cands, opt.selected_size])   # the recommended size: always checked
    tick("diameter candidates")
    cand = candidate_table(case, props, steady, prod, model, cands, warns)
    # empirical sanity checks
    p_inst = prod["headline"]["installed_capacity"]
    hn = prod["headline"]["net_head"]
    emp = []
    for name, entry in dia.EMPIRICAL_DIAMETER_METHODS.items():
        inputs = {"flow": case.design_flow} if "flow" in entry["inputs"] else {
            "power": p_inst, "net_head": hn}
        emp.append({"method": name.replace("_", " "), "diameter [m]":
                    float(dia.empirical_diameter(name, **inputs)),
                    "source": entry["reference"], "validity": entry["validity"]})
    methods.add("Diameter sanity checks", "empirical diameters of Bier, Sarkaria, Fahlbusch "
                "and an economic velocity", "; ".join(e["source"] for e in emp))
    # sensitivity
    tick("diameter sensitivity")
    e = case.economics
    prices = e["energy_price"] * np.array([0.5, 0.75, 1.0, 1.25, 1.5])
    rates = np.unique(np.clip(e["discount_rate"] + np.array([-0.03, 0.0, 0.03]), 0.0, None))
    grid_rows = []
    for pr in prices:
        for rt in rates:
            o = dia.optimum_diameter(lambda d, pr=pr, rt=rt: float(model.annualized(
                d, energy_price=pr, discount_rate=rt)["total"][0]), (lo, hi), sizes=sizes)
            grid_rows.append({"energy price [currency/kWh]": pr, "discount rate [%]": 100 * rt,
                              "optimum diameter [m]": o.diameter,
                              "selected size [m]": o.selected_size,
                              "annualized cost [currency/year]": o.cost})
    oat = []
    for name, kw in (("capital cost (all items)", "capital_factor"),
                     ("steel, fabrication and installation", "steel_factor")):
        for factor in (0.8, 1.0, 1.2):
            o = dia.optimum_diameter(lambda d, kw=kw, f=factor: float(model.annualized(
                d, **{kw: f})["total"][0]), (lo, hi), sizes=sizes)
            oat.append({"input varied": name, "factor [-]": factor,
                        "optimum diameter [m]": o.diameter,
                        "selected size [m]": o.selected_size,
                        "annualized cost [currency/year]": o.cost})
    for name, base in (("energy price", e["energy_price"]),
                       ("discount rate", e["discount_rate"])):
        for factor in (0.8, 1.2):
            kwargs = {"energy_price": base * factor} if name == "energy price" else {
                "discount_rate": base * factor}
            o = dia.optimum_diameter(lambda d, kw=kwargs: float(model.annualized(
                d, **kw)["total"][0]), (lo, hi), sizes=sizes)
            oat.append({"input varied": name, "factor [-]": factor,
                        "optimum diameter [m]": o.diameter,
                        "selected size [m]": o.selected_size,
                        "annualized cost [currency/year]": o.cost})
    sel = cand[np.isclose(cand["diameter [m]"], opt.selected_size)]
    wall_profile = _wall_profile(case, model, ham, opt.selected_size)
    return {
        "diameter_sweep": sweep, "diameter_candidates": cand,
        "diameter_empirical": pd.DataFrame(emp),
        "diameter_sensitivity": pd.DataFrame(grid_rows),
        "diameter_one_at_a_time": pd.DataFrame(oat),
        "wall_profile": wall_profile,
        "model": model,
        "headline": {
            "optimum_diameter": opt.diameter, "selected_diameter": opt.selected_size,
            "optimum_cost": opt.cost, "optimum_relative_derivative": opt.relative_derivative,
            "selected_wall_min": float(sel["thinnest plate [mm]"].iloc[0]) / 1e3 if len(sel)
            else None,
            "selected_wall_max": float(sel["thickest plate [mm]"].iloc[0]) / 1e3 if len(sel)
            else None,
            "crf": float(economics.capital_recovery_factor(e["discount_rate"], e["life"])),
        },
    }


def _moc_design_head(case, props, model, d):
    """Design head at the route nodes from a load-rejection run at diameter d."""
    from . import hammer

    c = uniform_case(case, d)
    route = build_route(c)
    lengths = hammer._segment_geometry(route, c)
    diam = np.full(len(c.segments), d)
    speeds, _ = hammer._wave_speeds(c, props, [], _NullMethods())
    f = hammer._folded_friction(c, route, props, c.design_flow, lengths)
    downstream = hammer.outlet_level(c, float(route.elevation[-1]))
    res = transients.simulate(lengths, diam, speeds, f, c.headwater, downstream,
                              c.design_flow, **hammer._law_args(c.surge))
    s_nodes = np.concatenate([[0.0], np.cumsum(route.length)])
    rise = np.interp(s_nodes, res.chainage, np.maximum(res.max_head - res.steady_head, 0.0))
    min_head = np.interp(s_nodes, res.chainage, res.min_head)
    static = c.headwater - route.elevation
    return static + rise, float(res.max_head_rise.max()), min_head - route.elevation, route


class _NullMethods:
    def add(self, *args):
        pass


def candidate_table(case, props, steady, prod, model, diameters, warns):
    """The full table for a few diameters, each with its own water-hammer run."""
    rows = []
    e = case.economics
    crf = float(economics.capital_recovery_factor(e["discount_rate"], e["life"]))
    price = e["energy_price"] / 3.6e6
    gross = prod["headline"]["gross_head"]
    e0 = prod["headline"]["mean_annual_energy"] + model.case_lost
    steel = wall_material(case)
    for d in sorted(set(float(x) for x in diameters)):
        head, rise, pmin_t, route = _moc_design_head(case, props, model, d)
        t, _ = model.wall(d, design_head=head[None, :])
        cap = float(model.capital(d, thickness=t, smooth=False)[0])
        mass = float(model.steel_mass(d, t)[0])
        h_d = float(model.loss_on_grid(d, np.array([case.design_flow]))[0])
        lost = float(model.energy_lost(d))
        energy = e0 - lost    # the actual energy, re-based from the case's pipe to this D
        v = case.design_flow / (math.pi * d**2 / 4)
        tw = float(surge.water_starting_time(route.length.sum(), v, gross - h_d))
        # steady pressure margin: minimum over the study flows of the grade lines at d
        g = route.grade_lines(steady["flows"], case.headwater, props.kinematic_viscosity)
        p_steady = float(g.pressure_head[:, ~route.is_reservoir].min())
        buck = pipewall.buckling_check(t[0], d, steel.elastic_modulus, steel.poisson_ratio,
                                       external_pressure=P_ATM_SEA_LEVEL,
                                       safety_factor=case.wall["buckling_safety"])
        needs = np.asarray(buck["needs_stiffeners"])
        om = case.costs["om_fraction"] * cap
        rows.append({
            "diameter [m]": d, "thinnest plate [mm]": 1e3 * t.min(),
            "thickest plate [mm]": 1e3 * t.max(), "steel mass [t]": mass / 1e3,
            "capital cost [currency]": cap, "head loss at design flow [m]": h_d,
            "net head at design flow [m]": gross - h_d,
            "mean annual energy [MWh]": energy / 3.6e9,
            "energy lost [MWh/year]": lost / 3.6e9,
            "value of energy lost [currency/year]": lost * price,
            "annualized capital [currency/year]": crf * cap,
            "operation and maintenance [currency/year]": om,
            "annualized cost [currency/year]": crf * cap + om + lost * price,
            "maximum surge rise [m]": rise,
            "minimum pressure margin, steady [m]": p_steady - case.pressure_margin,
            "minimum pressure head, transient [m]": float(pmin_t.min()),
            "velocity at design flow [m/s]": v, "water starting time [s]": tw,
            "reaches needing stiffeners under vacuum [-]": int(needs.sum()),
        })
        top = max(case.wall["plates"]) if case.wall["plates"] else \
            float(np.max(pipewall.standard_plate_thicknesses()))
        if t.max() > top:
            warns.append(Warning_("pipe wall", f"at D = {d:g} m the wall needs "
                                  f"{1e3 * t.max():.1f} mm, more than the thickest plate "
                                  f"({1e3 * top:.0f} mm)"))
        if needs.any():
            warns.append(Warning_("pipe wall", f"at D = {d:g} m, {int(needs.sum())} reaches "
                                  f"would buckle under full vacuum (safety factor "
                                  f"{case.wall['buckling_safety']:g}) without stiffeners or "
                                  "a vacuum valve"))
    return pd.DataFrame(rows)


def _wall_profile(case, model, ham, d):
    """Wall thickness and design pressure along the route at the selected diameter."""
    head, _, _, route = _moc_design_head(case, model.props, model, d)
    t, req = model.wall(d, design_head=head[None, :])
    x = route.chainage
    keep = route.length > 0
    x0, x1 = x[:-1][keep], x[1:][keep]
    return pd.DataFrame({
        "from chainage [m]": x0, "to chainage [m]": x1,
        "design pressure head [m]": np.maximum(head[:-1], head[1:])[keep],
        "required thickness [mm]": 1e3 * req[0],
        "plate thickness [mm]": 1e3 * t[0],
    })
