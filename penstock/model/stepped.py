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
from .. import economics, friction, gradeline, pipeclasses, pipewall
from ..constants import J_PER_KWH, J_PER_MWH
from ..materials import MATERIALS
from ..route import build_route, loss_k_and_area
from .core import Say, Warning_
from .material_study import (
    FAMILIES,
    _Context,
    _least_for_vacuum,
    reach_money,
    screening_classes,
    screening_rise,
)
from .material_study import _runs as _class_runs
from .material_study import material_case as _material_case
from .material_study import sizes as material_sizes

#: Reaches of the dynamic programme at most; a longer route's profile intervals are
#: grouped into runs of equal count (the work grows as the square of the reaches).
MAX_STATION_REACHES = 200
#: Sizes offered below the uniform recommendation (smaller sizes suit the lower reaches).
SIZES_BELOW = 6
#: Sizes offered above it (larger sizes suit the reaches above a high point).
SIZES_ABOVE = 3
#: Searches at most, each after raising the sizes upstream of a failing margin.
MAX_SEARCHES = 30
#: Searches in a row that may fail to lift the margin before the repair stops (a wider
#: size of another material can be rougher, so the margin need not rise at every step).
PATIENCE = 2
#: Shortest piece of a split segment [m]; a shorter one joins its neighbour of the same
#: diameter (a run that starts a few metres from a segment's end).
SLIVER = 5.0
#: Passes of the wall and the water hammer at most: the wave speed of the design's own
#: plates sets the rise, the rise sets the plates.
WALL_PASSES = 3

STEEL = "welded steel"
STEPPED = "stepped optimum"
UNIFORM = "best uniform diameter"
OWN = "the case's own diameters"


def options(sizes, centre):
    """The sizes the search may use: up to :data:`SIZES_BELOW` below the uniform size
    ``centre`` and :data:`SIZES_ABOVE` above it [m]."""
    sizes = np.unique(np.asarray(sizes, float))
    i = int(np.argmin(np.abs(sizes - centre)))
    return sizes[max(0, i - SIZES_BELOW):i + SIZES_ABOVE + 1]


@dataclasses.dataclass(frozen=True)
class Option:
    """One choice of the search for a reach: the case's welded steel at a diameter, or a
    size of a family sold in classes (:data:`penstock.model.material_study.FAMILIES`)."""

    diameter: float            # steel: inside diameter; a class family: its widest bore [m]
    family: str | None = None  # None: the case's welded steel
    size: object = None        # penstock.model.material_study.Size of a class family

    @property
    def material(self):
        return STEEL if self.family is None else FAMILIES[self.family]["name"]

    @property
    def label(self):
        return f"D {1e3 * self.diameter:.0f} mm" if self.family is None else self.size.label


def class_options(case, props, families, lo, hi, centre, most=SIZES_BELOW + SIZES_ABOVE + 1):
    """Sizes of the class ``families`` whose bores meet [``lo``, ``hi``] [m], at most
    ``most`` per family, those nearest ``centre`` [m] first -> list of :class:`Option`."""
    out = []
    for family in families:
        near = [sz for sz in material_sizes(family, case, props)
                if sz.bore[-1] >= lo and sz.bore[0] <= hi]
        near.sort(key=lambda sz: abs(float(sz.bore[0]) - centre))
        out += [Option(float(sz.bore[0]), family, sz)
                for sz in sorted(near[:most], key=lambda sz: float(sz.bore[0]))]
    return out


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


def reach_table(case, props, model, sizes, extra=(), ctx=None):
    """Annualized cost of each reach built with each option, and whether the option may be
    used there -> (group of each pipe reach, x0, x1, then per group and option: cost
    [currency/year], capital [currency], lost energy [J/year], feasible; and the
    annualizing factor, capital recovery plus O&M [1/year]).

    The options are the welded-steel ``sizes`` [m], then the class-family options
    ``extra`` (:class:`Option`; ``ctx`` their :class:`material_study._Context`): each reach
    in the lowest class carrying the screening's design pressure head
    (:func:`penstock.model.material_study.screening_classes`, with the larger of the
    steel sweep's and the material's own Allievi rise) that stands full vacuum."""
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
    # energy lost in each reach, by its friction and the local losses inside it
    rough = model.segment_roughness(model.roughness_years)[seg]
    lost = np.array([reach_energy(case, props, model, np.full(length.size, d), rough,
                                  length, x0) for d in sizes])
    if extra:
        cols = [_class_column(case, props, model, ctx, o, length, x0) for o in extra]
        capital = np.vstack([capital, [c[0] for c in cols]])
        lost = np.vstack([lost, [c[1] for c in cols]])
        ok = np.vstack([ok, [c[2] for c in cols]])
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


def reach_energy(case, props, model, bore, rough, length, x0):
    """Mean annual energy lost [J/year] in each pipe reach (start chainages ``x0`` [m],
    ``length`` [m]) at its ``bore`` and ``rough`` [m]: its Darcy–Weisbach loss and the
    case's local losses inside it, each at the reach's bore, through the record's
    flow-grid weights (:meth:`DiameterModel.lost_to`)."""
    q = model.q_grid
    pairs, inv = np.unique(np.column_stack([bore, rough]), axis=0, return_inverse=True)
    per_metre = np.array([float(model.lost_to(friction.head_loss(
        q, b, 1.0, e, props.kinematic_viscosity))) for b, e in pairs])
    lost = per_metre[np.ravel(inv)] * length
    if case.losses:
        where = np.clip(np.searchsorted(x0, [ls.at for ls in case.losses], side="left"), 0,
                        x0.size - 1)
        for j, ls in enumerate(case.losses):
            b = float(bore[where[j]])
            kj, area = loss_k_and_area(ls.kind, ls.params, b, b, ls.k)
            lost[where[j]] += float(model.lost_to(kj * gradeline.velocity_head(q, area)))
    return lost


def _screened_classes(ctx, model, option):
    """The screening's class of each pipe reach for a class-family option, and the lightest
    class standing full vacuum (:func:`material_study.screening_classes`, with the larger
    of the material's own and the steel sweep's Allievi rise)."""
    rise = max(screening_rise(ctx, option.family, option.size),
               float(model.allievi_rise(float(option.size.bore[-1]))))
    return screening_classes(ctx, option.family, option.size, rise)


def _class_column(case, props, model, ctx, option, length, x0):
    """Capital [currency], lost energy [J/year] and feasibility of each pipe reach built as
    a class-family option, each in its screening class."""
    size = option.size
    k, least = _screened_classes(ctx, model, option)
    n = size.heads.size
    kk = np.minimum(k, n - 1)
    bore = size.bore[kk]
    capital = reach_money(case, size, kk, bore, length)
    lost = reach_energy(case, props, model, bore,
                        np.full(length.size, ctx.roughness(option.family,
                                                           model.roughness_years)), length, x0)
    return capital, lost, (k < n) & (least < n)


def stepped_case(case, bounds, diameters, sliver=None, materials=None):
    """A copy of ``case`` whose pipe takes ``diameters[i]`` from ``bounds[i]`` to
    ``bounds[i + 1]`` (chainages [m]); its segments are split where a run starts, each
    part keeping its material, roughness, roughness growth and wall, unless
    ``materials[i]`` is a ``(family, wall [m])`` of a class family
    (:func:`penstock.model.material_study.material_case`: its material, roughness and
    growth, and that wall; the case's own wave speed or pipe modulus then no longer
    applies). A part shorter than ``sliver`` [m] (default :data:`SLIVER`; a run that starts
    just beside a segment's end) joins the part of the same diameter and material beside
    it: a sliver would set a tiny time step for the water hammer."""
    sliver = SLIVER if sliver is None else float(sliver)
    materials = [None] * len(diameters) if materials is None else list(materials)
    parts = []
    for s in case.segments:
        for a, b, d, m in zip(bounds[:-1], bounds[1:], diameters, materials, strict=True):
            lo, hi = max(s.start, a), min(s.end, b)
            if hi - lo > 1e-9:
                part = dataclasses.replace(s, start=float(lo), end=float(hi),
                                           diameter=float(d))
                if m is not None:
                    part = _material_case(_with_segments(case, [part]), m[0], d,
                                          m[1]).segments[0]
                parts.append(part)
    i = 0
    while i < len(parts) and len(parts) > 1:
        p = parts[i]
        if p.end - p.start < sliver:
            j = next((j for j in (i - 1, i + 1)
                      if 0 <= j < len(parts) and parts[j].diameter == p.diameter
                      and parts[j].material == p.material), None)
            if j is not None:
                q = parts[j]
                parts[j] = dataclasses.replace(q, start=min(q.start, p.start),
                                               end=max(q.end, p.end))
                del parts[i]
                i = 0
                continue
        i += 1
    c = _with_segments(case, parts)
    if any(m is not None for m in materials):
        c.surge = dict(case.surge, wave_speed=None, pipe_modulus=None, poisson_ratio=None)
    return c


def _with_segments(case, segments):
    c = copy.copy(case)
    c.segments = segments
    return c


def with_plates(variant, runs):
    """The design with each welded-steel segment's wall set to the thickest plate of its
    run, so that its wave speed is that of the wall it is priced with (a run of a class
    family keeps the wall of its class)."""
    starts = runs["from chainage [m]"].to_numpy(float)
    out = []
    for s in variant.segments:
        k = int(np.clip(np.searchsorted(starts, 0.5 * (s.start + s.end), side="right") - 1,
                        0, len(runs) - 1))
        steel = "material" not in runs or runs["material"].iloc[k] == STEEL
        out.append(dataclasses.replace(
            s, wall_thickness=float(runs["thickest wall [mm]"].iloc[k]) / 1e3) if steel else s)
    return _with_segments(variant, out)


@dataclasses.dataclass
class Run:
    """One run of a design to evaluate: its chainages [m], its option, and for a class
    family the class whose wall and bore it is built and run with (its heaviest)."""

    start: float
    end: float
    option: Option
    j: int = 0


def plan_case(case, plan):
    """The case with the pipe of ``plan`` (a list of :class:`Run`): each steel run at its
    diameter with the case's own segment walls, each class run at its class's bore and
    wall."""
    bounds = [r.start for r in plan] + [plan[-1].end]
    diameters = [r.option.diameter if r.option.family is None else
                 float(r.option.size.bore[r.j]) for r in plan]
    materials = [None if r.option.family is None else
                 (r.option.family, float(r.option.size.wall[r.j])) for r in plan]
    return stepped_case(case, bounds, diameters, materials=materials)


def design_row(case, props, steady, prod, model, variant, name, reaches, own_wall=False,
               thrusts=False, plan=None, ctx=None):
    """One design evaluated whole: its own route and load rejections on a grid of
    ``reaches`` over the pipe, real plates and classes, exact energy lost, the checks of a
    uniform candidate -> (row dict, run table, thrust table or None).

    ``variant`` is the design as a case; ``plan`` (a list of :class:`Run`, with ``ctx`` the
    :class:`material_study._Context`) gives its runs when some are of a class family, and
    ``variant`` is then rebuilt from it. Unless ``own_wall`` (the case's own pipe, whose
    walls are given), the water hammer is run again with each steel run's thickest plate
    as its wall until the plates stop changing, and with each class run's heaviest class
    until no run needs a heavier one (a heavier class's stiffer wall, and a PE class's
    narrower bore, raise the rise: a run with a class above what it needs is on the safe
    side), so that the wave speed is that of the wall priced. The capital includes the
    case's transition cost per change of diameter or material. With ``thrusts``, the
    thrust at each bend, change of diameter and closed end of the design
    (:func:`design_thrusts`)."""
    from .sizing import (
        element_costs,
        moc_design_head,
        node_diameters,
        steady_crown_margin,
        wall_material,
        wall_on_route,
    )

    plan = [dataclasses.replace(r) for r in plan] if plan else None
    if plan is not None:
        variant = plan_case(case, plan)
    previous, settled = None, own_wall
    for _ in range(WALL_PASSES):
        head, rise, pmin, route = moc_design_head(variant, props, reaches)
        prof = wall_on_route(variant, props, route.chainage, head, node_diameters(route))
        keep = route.length > 0
        plate = prof.reach_plate[keep]
        d_reach = route.diameter[keep]
        length = route.length[keep]
        x0, x1 = route.chainage[:-1][keep], route.chainage[1:][keep]
        which = (np.zeros(x0.size, int) if plan is None else np.clip(np.searchsorted(
            [r.start for r in plan], 0.5 * (x0 + x1), side="right") - 1, 0, len(plan) - 1))
        opts = [Option(float("nan"))] if plan is None else [r.option for r in plan]
        steel = np.array([opts[r].family is None for r in which])
        label = np.array([f"D {1e3 * d:.0f} mm" if st else opts[r].label
                          for r, st, d in zip(which, steel, d_reach, strict=True)], dtype=object)
        cls, least, raised = np.full(x0.size, -1), {}, False
        for r, run in enumerate(plan or []):
            o = run.option
            if o.family is None:
                continue
            idx = which == r
            least[r] = _least_for_vacuum(ctx, o.family, o.size)[0]
            kr = pipeclasses.reach_classes(head, o.size.heads, least[r])[keep][idx]
            cls[idx] = kr
            top = min(int(kr.max()), o.size.heads.size - 1)
            if top > run.j:
                run.j, raised = top, True
        items = element_costs(variant, d_reach, length, plate)
        total = np.asarray(items["total"], float) * np.ones(x0.size)
        mass = np.asarray(items["mass"], float) * np.ones(x0.size)
        wall = plate.copy()
        text = np.full(x0.size, "", dtype=object)
        for r, run in enumerate(plan or []):
            o = run.option
            if o.family is None:
                continue
            idx = which == r
            kk = np.minimum(cls[idx], o.size.heads.size - 1)
            wall[idx] = o.size.wall[kk]
            total[idx] = reach_money(case, o.size, kk, d_reach[idx], length[idx])
            mass[idx] = np.asarray(pipeclasses.tube_mass_per_metre(
                d_reach[idx], wall[idx], MATERIALS[FAMILIES[o.family]["material"]].density)) \
                * length[idx]
            text[idx] = _class_runs(x0[idx], x1[idx], kk, o.size.labels)
        runs = run_table(route, keep, wall, total, mass, [opts[r].material for r in which],
                         label, text, steel)
        if own_wall or (not raised and previous is not None
                        and np.array_equal(plate[steel], previous)):
            settled = True
            break
        previous = plate[steel]
        variant = with_plates(plan_case(case, plan) if plan is not None else variant, runs)
    changes = len(runs) - 1
    cap = float(np.sum(total)) + changes * float(case.diameter_study["transition_cost"])
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
    steel_grade = wall_material(variant)
    w = variant.wall
    vac = pipewall.vacuum_check(plate[steel], d_reach[steel], steel_grade.elastic_modulus,
                                steel_grade.poisson_ratio,
                                external_pressure=props.atmospheric_pressure,
                                safety_factor=w["buckling_safety"],
                                corrosion_allowance=w["corrosion_allowance"]) \
        if steel.any() else {"needs_stiffeners": False}
    beyond = prof.beyond_plates if plan is None else \
        (prof.beyond_plates[:-1] | prof.beyond_plates[1:])[keep][steel]
    failures = []
    if margin < 0:
        failures.append(f"the steady pressure margin at the crown ({flow_case}, minimum "
                        "headwater)")
    if np.any(beyond):
        failures.append("the wall (more than the thickest plate)")
    if np.any(np.asarray(vac["needs_stiffeners"])):
        failures.append("vacuum buckling of the unstiffened wall")
    if any(int(cls[which == r].max()) >= run.option.size.heads.size
           for r, run in enumerate(plan or []) if run.option.family is not None):
        failures.append("the pressure classes (a reach above the highest class)")
    if any(least[r] >= run.option.size.heads.size
           for r, run in enumerate(plan or []) if run.option.family is not None):
        failures.append("vacuum buckling of the unstiffened wall, at every class")
    if not settled:
        failures.append("the plates and the water hammer (still changing each other)")
    row = {
        "design": name,
        "pipe along the route": "; ".join(
            f"{m} {lab} {a:,.0f}–{b:,.0f} m" for m, lab, a, b in zip(
                runs["material"], runs["size"], runs["from chainage [m]"],
                runs["to chainage [m]"], strict=True)),
        "first diameter [m]": float(runs["diameter [m]"].iloc[0]),
        "last diameter [m]": float(runs["diameter [m]"].iloc[-1]),
        "changes of diameter or material [-]": changes,
        "capital cost, with the changes of diameter [currency]": cap,
        "annualized capital [currency/year]": crf * cap,
        "operation and maintenance [currency/year]": om,
        "energy lost [MWh/year]": lost / J_PER_MWH,
        "value of energy lost [currency/year]": value,
        "annualized cost [currency/year]": float(economics.annualized_cost(
            cap, crf, case.costs["om_fraction"], value)),
        "head loss at design flow [m]": h_d,
        "pipe mass [t]": float(np.sum(mass)) / 1e3,
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


def run_table(route, keep, wall, total, mass, material, label, text, steel):
    """Runs of one diameter and material along the route (pipe reaches ``keep``), with
    their walls (steel plates, or the walls of the classes), mass and capital."""
    d = route.diameter[keep]
    x0, x1 = route.chainage[:-1][keep], route.chainage[1:][keep]
    material = np.asarray(material, dtype=object)
    new = np.concatenate([[True], (np.abs(np.diff(d)) > 1e-9 * d[1:])
                          | (material[1:] != material[:-1])])
    run = np.cumsum(new) - 1
    n = int(run.max()) + 1
    thin = np.full(n, np.inf)
    thick = np.zeros(n)
    np.minimum.at(thin, run, wall)
    np.maximum.at(thick, run, wall)
    first = np.flatnonzero(new)
    # a steel run names its own plates
    text = np.asarray(text, dtype=object).copy()
    for r, i in enumerate(first):
        if steel[i]:
            text[i] = (f"plates {1e3 * thin[r]:.0f}–{1e3 * thick[r]:.0f} mm"
                       if thick[r] > thin[r] else f"plate {1e3 * thin[r]:.0f} mm")
    return pd.DataFrame({
        "from chainage [m]": x0[new], "to chainage [m]": np.append(x0[new][1:], x1[-1]),
        "length along the pipe [m]": np.bincount(run, route.length[keep], n),
        "diameter [m]": d[new], "material": material[new],
        "size": np.asarray(label, dtype=object)[new],
        "classes or plates": text[first],
        "thinnest wall [mm]": 1e3 * thin, "thickest wall [mm]": 1e3 * thick,
        "pipe mass [t]": np.bincount(run, mass, n) / 1e3,
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
    families = [f for f in st["stepped_materials"] if f in FAMILIES]
    ctx = _Context(case, props, prod, model) if families else None
    extra = class_options(case, props, families, opts[0] / 1.05, opts[-1] * 1.05, uniform_d)
    choices = [Option(float(d)) for d in opts] + extra
    group, x0, x1, cost, capital, lost, feasible, annual = reach_table(
        case, props, model, opts, extra=extra, ctx=ctx)
    if "welded_steel" not in st["stepped_materials"]:
        feasible[:, :opts.size] = False
    n = cost.shape[0]
    starts = np.array([x0[group == g][0] for g in range(n)])
    ends = np.array([x1[group == g][-1] for g in range(n)])
    lengths = np.bincount(group, model.route.length[model.route.length > 0], n)
    min_len = min(float(st["minimum_reach"]), float(lengths.sum()))
    trans = annual * float(st["transition_cost"])
    bore = np.array([o.diameter for o in choices])
    screened = {}

    def plan_of(found):
        """The runs found, each class run in the heaviest class its screening needs."""
        bounds = [float(starts[i]) for i, _, _ in found.runs] + [float(ends[-1])]
        plan = []
        for (_, _, k), a, b in zip(found.runs, bounds[:-1], bounds[1:], strict=True):
            o, j = choices[k], 0
            if o.family is not None:
                if k not in screened:
                    screened[k] = _screened_classes(ctx, model, o)[0]
                inside = (x0 >= a - 1e-9) & (x0 < b - 1e-9)
                j = min(int(screened[k][inside].max()), o.size.heads.size - 1)
            plan.append(Run(a, b, o, j))
        return plan

    allowed = feasible.copy()
    first = best = None
    best_margin, stalled = -np.inf, 0
    for _ in range(MAX_SEARCHES):
        try:
            found = dia.stepped_design(lengths, cost, transition_cost=trans,
                                       minimum_length=min_len, feasible=allowed)
        except ValueError:
            break   # no design left that the rules allow
        plan = plan_of(found)
        variant = plan_case(case, plan)
        # the steady margin first (cheap); the whole evaluation once it passes
        margin, x_fail, _ = steady_crown_margin(variant, props, steady, build_route(variant),
                                                None)
        first = first or (variant, found, plan)
        if margin <= best_margin + 1e-3:
            stalled += 1
            if stalled > PATIENCE:
                break   # larger sizes upstream no longer help (an intake too shallow, say)
        else:
            stalled = 0
            best, best_margin = (variant, found, plan), margin
            if margin >= 0:
                break
        # every option at and upstream of the failing point goes above the narrowest there
        up = starts <= x_fail + 1e-9
        allowed[up] &= bore[None, :] > bore[found.option[up]].min()
    if best is None:
        warns.append(Warning_("diameter study", "no stepped design meets the minimum reach "
                              f"length and the wall rules with the sizes {say.m(opts[0], 3)} "
                              f"to {say.m(opts[-1], 3)}; only uniform diameters are compared",
                              severity="note"))
        return None, None, None
    if best_margin < 0:
        best = first   # no repair passes: the cheapest design, shown failing
    variant, found, plan = best
    mixed = any(r.option.family is not None for r in plan)
    row, runs, forces = design_row(case, props, steady, prod, model, variant, STEPPED,
                                   reaches, thrusts=True, plan=plan if mixed else None,
                                   ctx=ctx)
    if len(plan) == 1 and not mixed and plan[0].option.diameter == float(uniform_d):
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
        sizes_text = " / ".join(
            (f"{m} " if mixed else "") + say.m(d, 3)
            for m, d in zip(runs["material"], runs["diameter [m]"], strict=True))
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
    if families:
        methods.add("Stepped diameters, materials", "the materials of "
                    "diameter_study.stepped_materials offered reach by reach beside the steel "
                    "sizes: each reach of a PE100 or ductile-iron size in the lowest class that "
                    "carries the screening's design pressure head (static at the flood level "
                    "plus the larger of the steel sweep's and the material's own Allievi rise) "
                    "and stands full vacuum, at its price per metre; a change of material "
                    "charged as a change of diameter. The design found is run whole with each "
                    "class run at the wall and bore of its heaviest class (PE: the narrowest "
                    "bore, on the safe side for the losses and the margin), repeated where a "
                    "reach needs a heavier class; each reach then priced at its own class",
                    "ISO 4427-2:2019; EN 545:2010")
    return runs, pd.DataFrame([row, uni, own]), forces
