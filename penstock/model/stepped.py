"""Stepped diameters along the route: the cheapest sequence of sizes, checked as a whole.

Orchestration only.  The route's reaches (between its profile points, grouped into at
most :data:`MAX_STATION_REACHES` runs on a long route) each take one of the sizes around
the uniform recommendation.  For each reach and size:

* **capital**: the reach's plates from the wall rules with the sweep's design head at
  that size (:meth:`DiameterModel.walls`), priced by
  :func:`penstock.economics.pipe_cost_breakdown`, annualized with the capital recovery
  factor plus the O&M fraction;
* **energy lost**: the plant's lost energy is linear in the penstock's head loss at each
  step of the record (the dispatch does not depend on the pipe), so each reach is
  charged the energy of its own Darcy–Weisbach loss, and of the local losses inside it,
  through the same flow-grid weights as the uniform study
  (:attr:`DiameterModel.weights`);
* **rules**: a wall within the thickest plate and no stiffeners needed under vacuum.

:func:`penstock.diameter.stepped_design` (dynamic programming over the stations) picks
the sizes with a transition cost per change of diameter and a minimum reach length.  The
pressure margin at the crown couples the reaches (it depends on the losses upstream), so
the chosen design is then built as a case of its own and evaluated whole: its own route
and transitions, its own load rejections by the method of characteristics, real plates,
the energy lost from its exact head loss, and the same checks as a uniform candidate.
Where it fails the steady margin, the sizes at and upstream of the failing point are
raised and the search is run again.
"""

from __future__ import annotations

import copy
import dataclasses
import types

import numpy as np
import pandas as pd

from .. import diameter as dia
from .. import economics, friction, gradeline, pipewall
from ..constants import J_PER_KWH, J_PER_MWH
from ..route import build_route, loss_k_and_area
from .core import Say, Warning_

#: Reaches of the dynamic programme at most; a longer route's profile intervals are
#: grouped into runs of equal count (the work grows as the square of the reaches).
MAX_STATION_REACHES = 200
#: Sizes offered below the uniform recommendation (smaller sizes suit the lower reaches).
SIZES_BELOW = 6
#: Sizes offered above it (larger sizes suit the reaches above a high point).
SIZES_ABOVE = 3
#: Searches at most, each after raising the sizes upstream of a failing margin.
MAX_SEARCHES = 30
#: Shortest piece of a split segment [m]; a shorter one joins its neighbour of the same
#: diameter (a run that starts a few metres from a segment's end).
SLIVER = 5.0
#: Passes of the wall and the water hammer at most: the wave speed of the design's own
#: plates sets the rise, the rise sets the plates.
WALL_PASSES = 3

STEPPED = "stepped optimum"
UNIFORM = "best uniform diameter"
OWN = "the case's own diameters"


def options(sizes, centre):
    """The sizes the search may use: up to :data:`SIZES_BELOW` below the uniform size
    ``centre`` and :data:`SIZES_ABOVE` above it [m]."""
    sizes = np.unique(np.asarray(sizes, float))
    i = int(np.argmin(np.abs(sizes - centre)))
    return sizes[max(0, i - SIZES_BELOW):i + SIZES_ABOVE + 1]


def stations(route, segments, losses):
    """Group index of each pipe reach of ``route`` for the search, and the reaches'
    start and end chainages: a run may change size only between groups. Every change
    of segment and every local loss starts a group; on a long route the groups are
    made of several profile intervals."""
    keep = route.length > 0
    x0, x1 = route.chainage[:-1][keep], route.chainage[1:][keep]
    seg = route.element_segment[keep]
    n = x0.size
    step = max(1, int(np.ceil(n / MAX_STATION_REACHES)))
    start = np.zeros(n, bool)
    start[::step] = True
    start[1:] |= seg[1:] != seg[:-1]
    at = np.array([ls.at for ls in losses], float)
    if at.size:
        start[np.clip(np.searchsorted(x0, at, side="left"), 0, n - 1)] = True
    start[0] = True
    return np.cumsum(start) - 1, x0, x1


def reach_table(case, props, model, sizes):
    """Annualized cost of each reach built at each size, and whether the size may be
    used there -> (group of each pipe reach, x0, x1, then per group and size: cost
    [currency/year], capital [currency], lost energy [J/year], feasible; and the
    annualizing factor, capital recovery plus O&M [1/year])."""
    route = model.route
    keep = route.length > 0
    group, x0, x1 = stations(route, case.segments, case.losses)
    length = route.length[keep]
    seg = route.element_segment[keep]
    profiles = model.walls(sizes)                                   # one per size
    plate = np.array([p.reach_plate[keep] for p in profiles])      # (sizes, reaches)
    beyond = np.array([(p.beyond_plates[:-1] | p.beyond_plates[1:])[keep] for p in profiles])
    w = case.wall
    from .sizing import element_costs, wall_material
    steel = wall_material(case)
    vac = pipewall.vacuum_check(plate, sizes[:, None], steel.elastic_modulus,
                                steel.poisson_ratio,
                                external_pressure=props.atmospheric_pressure,
                                safety_factor=w["buckling_safety"],
                                corrosion_allowance=w["corrosion_allowance"])
    ok = ~beyond & ~np.asarray(vac["needs_stiffeners"], bool)
    capital = np.asarray(element_costs(case, sizes[:, None], length[None, :], plate)["total"])
    # energy lost per metre of each segment, and by each local loss, at each size
    rough = model.segment_roughness(model.roughness_years)
    q = model.q_grid
    per_metre = np.array([model.lost_to(friction.head_loss(
        q[None, :], d, 1.0, rough[:, None], props.kinematic_viscosity)) for d in sizes])
    lost = per_metre[:, seg] * length[None, :]
    if case.losses:
        where = np.clip(np.searchsorted(x0, [ls.at for ls in case.losses], side="left"), 0,
                        x0.size - 1)
        for j, ls in enumerate(case.losses):
            for k, d in enumerate(sizes):
                kj, area = loss_k_and_area(ls.kind, ls.params, d, d, ls.k)
                lost[k, where[j]] += float(model.lost_to(kj * gradeline.velocity_head(q,
                                                                                     area)))
    e = case.economics
    annual = model.cost_model().crf + case.costs["om_fraction"]
    value = np.asarray(economics.lost_energy_value(lost, e["energy_price"] / J_PER_KWH))
    cost = annual * capital + value
    n = int(group.max()) + 1

    def by_group(a):
        return np.array([np.bincount(group, weights=row, minlength=n) for row in a]).T

    feasible = by_group((~ok).astype(float)) == 0
    return (group, x0, x1, by_group(cost), by_group(capital), by_group(lost), feasible,
            annual)


def stepped_case(case, bounds, diameters, sliver=None):
    """A copy of ``case`` whose pipe takes ``diameters[i]`` from ``bounds[i]`` to
    ``bounds[i + 1]`` (chainages [m]); its segments are split where a run starts, each
    part keeping its material, roughness, roughness growth and wall. A part shorter than
    ``sliver`` [m] (default :data:`SLIVER`; a run that starts just beside a segment's end)
    joins the part of the same diameter beside it: a sliver would set a tiny time step
    for the water hammer."""
    sliver = SLIVER if sliver is None else float(sliver)
    parts = []
    for s in case.segments:
        for a, b, d in zip(bounds[:-1], bounds[1:], diameters, strict=True):
            lo, hi = max(s.start, a), min(s.end, b)
            if hi - lo > 1e-9:
                parts.append(dataclasses.replace(s, start=float(lo), end=float(hi),
                                                 diameter=float(d)))
    i = 0
    while i < len(parts) and len(parts) > 1:
        p = parts[i]
        if p.end - p.start < sliver:
            j = next((j for j in (i - 1, i + 1)
                      if 0 <= j < len(parts) and parts[j].diameter == p.diameter), None)
            if j is not None:
                q = parts[j]
                parts[j] = dataclasses.replace(q, start=min(q.start, p.start),
                                               end=max(q.end, p.end))
                del parts[i]
                i = 0
                continue
        i += 1
    c = copy.copy(case)
    c.segments = parts
    return c


def with_plates(variant, runs):
    """The design with each segment's wall set to the thickest plate of its run, so that
    its wave speed is that of the wall it is priced with."""
    starts = runs["from chainage [m]"].to_numpy(float)
    out = []
    for s in variant.segments:
        k = int(np.clip(np.searchsorted(starts, 0.5 * (s.start + s.end), side="right") - 1,
                        0, len(runs) - 1))
        out.append(dataclasses.replace(
            s, wall_thickness=float(runs["thickest plate [mm]"].iloc[k]) / 1e3))
    c = copy.copy(variant)
    c.segments = out
    return c


def design_row(case, props, steady, prod, model, variant, name, reaches, own_wall=False,
               thrusts=False):
    """One design evaluated whole: its own route and load rejections on a grid of
    ``reaches`` over the pipe, real plates, exact energy lost, the checks of a uniform
    candidate -> (row dict, run table, thrust table or None). Unless ``own_wall`` (the
    case's own pipe, whose walls are given), the water hammer is run again with each run's
    thickest plate as its wall until the plates stop changing, so that the wave speed is
    that of the wall priced. The capital includes the case's transition cost per change of
    diameter. With ``thrusts``, the thrust at each bend, change of diameter and closed end
    of the design, from its own design pressure line and steady grade line
    (:func:`design_thrusts`)."""
    from .sizing import (
        element_costs,
        moc_design_head,
        node_diameters,
        steady_crown_margin,
        wall_material,
        wall_on_route,
    )

    previous, settled = None, own_wall
    for _ in range(WALL_PASSES):
        head, rise, pmin, route = moc_design_head(variant, props, reaches)
        prof = wall_on_route(variant, props, route.chainage, head, node_diameters(route))
        keep = route.length > 0
        plate = prof.reach_plate[keep]
        d_reach = route.diameter[keep]
        items = element_costs(variant, d_reach, route.length[keep], plate)
        runs = run_table(variant, route, plate, items)
        if own_wall or (previous is not None and np.array_equal(plate, previous)):
            settled = True
            break
        previous = plate
        variant = with_plates(variant, runs)
    changes = len(runs) - 1
    cap = float(np.sum(items["total"])) + changes * float(
        case.diameter_study["transition_cost"])
    years = model.roughness_years
    rough = route.roughness if years is None else route.aged_roughness(variant.segments,
                                                                        years)
    lost = float(model.lost_to(route.total_head_loss(model.q_grid,
                                                     props.kinematic_viscosity, rough)))
    e = case.economics
    crf = model.cost_model().crf
    value = float(economics.lost_energy_value(lost, e["energy_price"] / J_PER_KWH))
    om = case.costs["om_fraction"] * cap
    h_d = float(route.total_head_loss(np.array([case.design_flow]),
                                      props.kinematic_viscosity, rough)[0])
    margin, at, flow_case = steady_crown_margin(variant, props, steady, route, None)
    steel = wall_material(variant)
    w = variant.wall
    vac = pipewall.vacuum_check(plate, d_reach, steel.elastic_modulus, steel.poisson_ratio,
                                external_pressure=props.atmospheric_pressure,
                                safety_factor=w["buckling_safety"],
                                corrosion_allowance=w["corrosion_allowance"])
    failures = []
    if margin < 0:
        failures.append(f"the steady pressure margin at the crown ({flow_case}, minimum "
                        "headwater)")
    if np.any(prof.beyond_plates):
        failures.append("the wall (more than the thickest plate)")
    if np.any(np.asarray(vac["needs_stiffeners"])):
        failures.append("vacuum buckling of the unstiffened wall")
    if not settled:
        failures.append("the plates and the water hammer (still changing each other)")
    row = {
        "design": name,
        "first diameter [m]": float(runs["diameter [m]"].iloc[0]),
        "last diameter [m]": float(runs["diameter [m]"].iloc[-1]),
        "changes of diameter [-]": changes,
        "capital cost, with the changes of diameter [currency]": cap,
        "annualized capital [currency/year]": crf * cap,
        "operation and maintenance [currency/year]": om,
        "energy lost [MWh/year]": lost / J_PER_MWH,
        "value of energy lost [currency/year]": value,
        "annualized cost [currency/year]": float(economics.annualized_cost(
            cap, crf, case.costs["om_fraction"], value)),
        "head loss at design flow [m]": h_d,
        "steel mass [t]": float(np.sum(items["mass"])) / 1e3,
        "maximum surge rise [m]": rise,
        "minimum steady pressure margin at the crown, minimum headwater [m]": margin,
        "at chainage [m]": at,
        "minimum transient pressure head at the crown, minimum headwater [m]":
            float(pmin.min()),
        "passes the checks": not failures,
        "governing check": "; ".join(failures) if failures else "all pass",
    }
    forces = design_thrusts(variant, props, steady, route, head) if thrusts else None
    return row, runs, forces


def design_thrusts(variant, props, steady, route, head):
    """Thrust at each bend, change of diameter (reducer) and closed end of a design, for
    anchor-block design: :func:`penstock.model.hammer.fitting_thrusts` with the design's
    own design pressure line ``head`` at ``route``'s nodes [m] and its own steady grade
    lines at the study flows (normal headwater, new pipe)."""
    from .hammer import fitting_thrusts

    own = types.SimpleNamespace(route=route, flows=steady.flows, gl=route.grade_lines(
        np.asarray(steady.flows, float), variant.headwater, props.kinematic_viscosity))
    table = fitting_thrusts(variant, props, own, route.chainage, head)
    reducer = table["fitting"].str.startswith("change of diameter")
    table.loc[reducer, "fitting"] = "reducer, change of diameter"
    return table


def run_table(variant, route, plate, items):
    """Runs of one diameter along the route, with their plates, steel and capital."""
    keep = route.length > 0
    d = route.diameter[keep]
    x0, x1 = route.chainage[:-1][keep], route.chainage[1:][keep]
    new = np.concatenate([[True], np.abs(np.diff(d)) > 1e-9 * d[1:]])
    run = np.cumsum(new) - 1
    n = int(run.max()) + 1
    total = np.asarray(items["total"], float) * np.ones_like(d)
    mass = np.asarray(items["mass"], float) * np.ones_like(d)
    thin = np.full(n, np.inf)
    thick = np.zeros(n)
    np.minimum.at(thin, run, plate)
    np.maximum.at(thick, run, plate)
    return pd.DataFrame({
        "from chainage [m]": x0[new], "to chainage [m]": np.append(x0[new][1:], x1[-1]),
        "length along the pipe [m]": np.bincount(run, route.length[keep], n),
        "diameter [m]": d[new], "thinnest plate [mm]": 1e3 * thin,
        "thickest plate [mm]": 1e3 * thick,
        "steel mass [t]": np.bincount(run, mass, n) / 1e3,
        "capital cost [currency]": np.bincount(run, total, n),
    })


def run(case, props, steady, prod, model, sizes, uniform_d, reaches, warns, methods):
    """The stepped optimum beside the best uniform diameter and the case's own pipe ->
    (stepped design runs, design comparison, thrust at the stepped design's bends,
    reducers and closed ends), or (None, None, None) when no search runs.

    ``uniform_d`` is the uniform recommendation (or the economic size when none passes),
    ``reaches`` the water-hammer grid of the case's own pipe (converged), on which every
    design of the comparison is run."""
    say = Say(case.unit_system)
    opts = options(sizes, uniform_d)
    if opts.size < 2:
        warns.append(Warning_("diameter study", "only one size lies near the uniform "
                              "recommendation, so no stepped design is studied",
                              severity="note"))
        return None, None, None
    try:
        return _run(case, props, steady, prod, model, opts, uniform_d, reaches, warns,
                    methods, say)
    except ValueError as err:   # a design the water hammer cannot run: say so, run on
        warns.append(Warning_("diameter study", f"the stepped design could not be "
                              f"evaluated ({err}); only uniform diameters are compared"))
        return None, None, None


def _run(case, props, steady, prod, model, opts, uniform_d, reaches, warns, methods, say):
    from .sizing import steady_crown_margin, uniform_case

    st = case.diameter_study
    group, x0, x1, cost, capital, lost, feasible, annual = reach_table(
        case, props, model, opts)
    n = cost.shape[0]
    starts = np.array([x0[group == g][0] for g in range(n)])
    ends = np.array([x1[group == g][-1] for g in range(n)])
    lengths = np.bincount(group, model.route.length[model.route.length > 0], n)
    min_len = min(float(st["minimum_reach"]), float(lengths.sum()))
    trans = annual * float(st["transition_cost"])
    allowed = feasible.copy()
    first = best = None
    best_margin = -np.inf
    for _ in range(MAX_SEARCHES):
        try:
            found = dia.stepped_design(lengths, cost, transition_cost=trans,
                                       minimum_length=min_len, feasible=allowed)
        except ValueError:
            break   # no design left that the rules allow
        bounds = [float(starts[i]) for i, _, _ in found.runs] + [float(ends[-1])]
        variant = stepped_case(case, bounds, [float(opts[k]) for _, _, k in found.runs])
        # the steady margin first (cheap); the whole evaluation once it passes
        margin, x_fail, _ = steady_crown_margin(variant, props, steady, build_route(variant),
                                                None)
        first = first or (variant, found)
        if margin <= best_margin + 1e-3:
            break   # larger sizes upstream no longer help (an intake too shallow, say)
        best, best_margin = (variant, found), margin
        if margin >= 0:
            break
        # every size at and upstream of the failing point goes above the smallest there
        up = starts <= x_fail + 1e-9
        allowed[up, :int(found.option[up].min()) + 1] = False
    if best is None:
        warns.append(Warning_("diameter study", "no stepped design meets the minimum reach "
                              f"length and the wall rules with the sizes {say.m(opts[0], 3)} "
                              f"to {say.m(opts[-1], 3)}; only uniform diameters are compared",
                              severity="note"))
        return None, None, None
    if best_margin < 0:
        best = first   # no repair passes: the cheapest design, shown failing
    variant, found = best
    row, runs, forces = design_row(case, props, steady, prod, model, variant, STEPPED,
                                   reaches, thrusts=True)
    if len(found.runs) == 1 and float(opts[found.runs[0][2]]) == float(uniform_d):
        uni = {**row, "design": UNIFORM}   # the same pipe: evaluated once
    else:
        uni, _, _ = design_row(case, props, steady, prod, model,
                               uniform_case(case, uniform_d), UNIFORM, reaches)
    own, _, _ = design_row(case, props, steady, prod, model, case, OWN, reaches,
                           own_wall=True)
    cost_key = "annualized cost [currency/year]"
    if not row["passes the checks"]:
        warns.append(Warning_("diameter study", "the stepped design found fails "
                              f"{row['governing check']}; it is shown for comparison, not "
                              "recommended"))
    elif row[cost_key] < uni[cost_key]:
        sizes_text = " / ".join(say.m(d, 3) for d in runs["diameter [m]"])
        versus = ("the best uniform diameter" if uni["passes the checks"] else
                  "the economic uniform diameter, which fails the checks")
        warns.append(Warning_("diameter study", f"a stepped pipe ({len(runs)} runs, "
                              f"{sizes_text}) costs "
                              f"{uni[cost_key] - row[cost_key]:,.0f} "
                              f"{case.economics['currency']}/year less than {versus}; it "
                              "passes the steady crown margin and the wall rules (the "
                              "transient minimum is reported, not checked); the search's "
                              f"own additive estimate was {found.cost:,.0f} "
                              f"{case.economics['currency']}/year",
                              severity="note"))
    methods.add("Stepped diameters", "dynamic programming over the route's stations: each "
                "reach at each of the sizes around the uniform recommendation, charged its "
                "annualized capital (plates from the sweep's design head) and the energy of "
                "its own friction and local losses over the flow record, with the case's "
                "transition cost per change of diameter and minimum run length "
                "(diameter_study.transition_cost, minimum_reach); the design found is then "
                "evaluated whole (its own water-hammer runs on the case's converged grid "
                "with each run's own plate as its wall, plates, exact losses, the transition "
                "costs, the checks of a uniform candidate), its sizes raised upstream of a "
                "failing steady margin and the search run again while that helps",
                "R. Bellman (1957), Dynamic Programming, Princeton University Press")
    return runs, pd.DataFrame([row, uni, own]), forces
