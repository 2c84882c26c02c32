"""Diameter study, materials: PE100 and ductile iron, each at its own best uniform size,
beside the welded-steel recommendation.

Orchestration only (the walls, classes and prices are :mod:`penstock.pipeclasses`).  For
each material the case allows (``diameter_study.materials``) and each of its sizes near the
sweep's range:

* **classes along the route**: each reach takes the lowest class that carries its design
  pressure head (static at the flood level, at the invert, plus the transient rise) and
  whose wall stands full vacuum at the site unstiffened with the case's buckling safety
  factor (:func:`penstock.pipeclasses.reach_classes`).  A class carries no more than its
  rated pressure: no surge allowance above the rating is taken;
* **screening**: the rise is Allievi's for the case's closure, at most Joukowsky's, with
  the wave speed of the size's heaviest class (the stiffest wall, the highest rise); the
  capital is the classes' prices per metre plus the case's installation, civil and
  contingency items; the energy lost is that of the pipe's own head loss over the flow
  record (its bore at the heaviest class on the route, its own roughness);
* **evaluation** of the cheapest sizes in turn, until one passes: the pipe built as a
  case of its own, its load rejections by the method of characteristics on the case's
  converged grid with the wall of the heaviest class the screening chose (repeated with a
  heavier wall where the run needs a heavier class; a run that needs only lighter classes
  stands, its rise on the safe side),
  and the checks of a steel candidate: the steady pressure margin at the crown, new and
  aged, a class for every reach and a wall that stands full vacuum.

The plastic's roughness grows linearly from its new to its aged value of the roughness
table over the service life, so that the aged check and the mid-life energy basis mean
what they mean for steel.
"""

from __future__ import annotations

import copy
import dataclasses

import numpy as np
import pandas as pd

from .. import economics, friction, gradeline, pipeclasses, pipewall, surge, wavespeed
from ..constants import J_PER_KWH, J_PER_MWH
from ..materials import MATERIALS, pipe_wall_modulus, pipe_wall_poisson_ratio
from ..route import build_route
from .core import Say, Warning_

#: The families the study prices besides welded steel: the registry material, the pipe
#: material of the roughness table, the standard and the illustrative price's key.
FAMILIES = {
    "hdpe": {"material": "hdpe_pe100", "pipe_material": "hdpe", "name": "PE100",
             "standard": "ISO 4427-2 (PE100, C = 1.25)"},
    "ductile_iron": {"material": "ductile_iron_en545",
                     "pipe_material": "ductile_iron_en545", "name": "ductile iron",
                     "standard": "EN 545:2010 pressure classes"},
}
#: Sizes evaluated in full at most per material, cheapest first.
MAX_EVALUATED = 4
#: Passes of the classes and the water hammer at most (the wall sets the wave speed, the
#: rise sets the classes).
CLASS_PASSES = 3
#: How far below and above the sweep's diameter bounds a material's bores are offered. [-]
RANGE_BELOW = 0.8
RANGE_ABOVE = 1.5


@dataclasses.dataclass(frozen=True)
class Size:
    """One nominal size of a family and its classes, ascending (SI)."""

    family: str
    label: str
    outside: float
    bore: np.ndarray      # per class [m]
    wall: np.ndarray      # per class, the wall the wave speed uses (nominal) [m]
    heads: np.ndarray     # rated pressure heads, re-rated for the water's temperature [m]
    labels: tuple
    price: np.ndarray     # per class [currency/m]
    pressures: np.ndarray  # rated pressures of the standard (PN, PFA) [Pa]
    vacuum_wall: np.ndarray    # per class, the least wall the standard allows [m]
    vacuum_inside: np.ndarray  # per class, inside diameter at that wall, OD - 2 e_min [m]
    quoted: bool = False  # prices from the case's table (else illustrative)

    def only(self, keep, price):
        """The size with the classes ``keep`` (a boolean mask) only, at ``price``."""
        return dataclasses.replace(
            self, bore=self.bore[keep], wall=self.wall[keep], heads=self.heads[keep],
            labels=tuple(np.asarray(self.labels, dtype=object)[keep]),
            pressures=self.pressures[keep], vacuum_wall=self.vacuum_wall[keep],
            vacuum_inside=self.vacuum_inside[keep], price=np.asarray(price, float),
            quoted=True)


#: The case key of each family's price table.
PRICE_KEYS = {"hdpe": "pe100_prices", "ductile_iron": "ductile_iron_prices"}


def sizes(family, case, props):
    """The sizes of a family with their classes, walls and prices: the case's price table
    where it gives one (only the sizes and classes it lists), else illustrative ones."""
    table = case.diameter_study.get(PRICE_KEYS[family])
    out = _all_sizes(family, case, props)
    if table is None:
        return [sz for sz, _ in out]
    priced = []
    for sz, nominal in out:
        rows = table[np.isclose(table["size"].to_numpy(), nominal, rtol=0, atol=1e-9)]
        if rows.empty:
            continue
        keep = np.isin(sz.pressures, rows["class"].to_numpy())
        price = rows.set_index("class").loc[sz.pressures[keep], "price"].to_numpy()
        priced.append(sz.only(keep, price))
    return priced


def _all_sizes(family, case, props):
    """Every size of the family with all its classes and illustrative prices, each with its
    nominal size as a price table gives it (PE: outside diameter, ductile iron: DN) [m].

    PE100's classes are re-rated for the case's water temperature
    (:func:`penstock.pipeclasses.pe100_temperature_factor`); a ductile-iron size offers
    the classes up to its highest (:func:`penstock.pipeclasses.ductile_iron_highest_class`)
    and its bore is the narrower of DN and the lined bore."""
    f = FAMILIES[family]
    mat = MATERIALS[f["material"]]
    pressures = np.asarray(mat.pressure_classes, float)
    labels = np.asarray(mat.pressure_class_labels, dtype=object)
    per_kg = case.costs["steel_price"] / 1000.0
    out = []
    if family == "hdpe":
        factor = float(pipeclasses.pe100_temperature_factor(case.temperature))
        heads = np.asarray(pipeclasses.rated_head(pressures * factor, props.density))
        sdr = np.asarray(mat.sdr_series, float)
        for od in pipeclasses.PE_OUTSIDE_DIAMETERS:
            bore = np.asarray(pipeclasses.pe_bore(od, sdr))
            wall = np.asarray(pipeclasses.pe_wall(od, sdr))   # e_n, the least wall
            out.append((Size(family, f"OD {1e3 * od:.0f} mm", float(od), bore, wall, heads,
                             tuple(labels), _price(family, bore, wall, mat, per_kg),
                             pressures, wall, bore), float(od)))
    else:
        for dn, de in pipeclasses.DUCTILE_IRON_OUTSIDE_DIAMETERS.items():
            keep = pressures <= float(pipeclasses.ductile_iron_highest_class(dn)) * (1 + 1e-9)
            p = pressures[keep]
            e_min = np.asarray(pipeclasses.ductile_iron_wall(p, 1e-3 * de,
                                                             mat.tensile_strength))
            wall = np.asarray(pipeclasses.ductile_iron_nominal_wall(e_min, dn))
            bore = np.asarray(pipeclasses.ductile_iron_bore(1e-3 * de, wall, dn))
            heads = np.asarray(pipeclasses.rated_head(p, props.density))
            out.append((Size(family, f"DN {dn}", 1e-3 * de, bore, wall, heads,
                             tuple(labels[keep]), _price(family, bore, wall, mat, per_kg), p,
                             e_min, 1e-3 * de - 2.0 * e_min), 1e-3 * dn))
    return out


def _price(family, bore, wall, mat, per_kg):
    return np.asarray(pipeclasses.illustrative_price_per_metre(family, bore, wall,
                                                               mat.density, per_kg))


class _Context:
    """What every size of every family shares: the route, the flow record's weights and
    the economics (from the steel study's :class:`~penstock.model.sizing.DiameterModel`)."""

    def __init__(self, case, props, prod, model):
        self.case, self.props, self.prod, self.model = case, props, prod, model
        route = model.route
        self.keep = model.lengths > 0
        self.reach = model.lengths[self.keep]
        self.s = model._s_nodes / model._s_nodes[-1]
        self.z = route.elevation
        self.length = float(model._s_nodes[-1])
        self.hw_top = case.headwater_max if case.headwater_max is not None else case.headwater
        self.h0 = case.headwater - float(route.elevation[-1])
        self.crf = model.cost_model().crf

    def roughness(self, family, years):
        """The family's roughness after ``years`` (None: new) [m]."""
        new, growth = roughness(self.case, family)
        return new if years is None else float(friction.aged_roughness(new, years, growth))


def roughness(case, family):
    """The family's new roughness [m] and the linear growth rate [m/year] that takes it to
    the roughness table's aged value at the end of the case's service life."""
    pm = FAMILIES[family]["pipe_material"]
    return (friction.material_roughness(pm, "new"),
            friction.material_growth_rate(pm, case.service_life))


def _modulus(family):
    return pipe_wall_modulus(FAMILIES[family]["pipe_material"])


def _least_for_vacuum(ctx, family, size):
    """Index of the lightest class whose least wall (:attr:`Size.vacuum_wall` on
    :attr:`Size.vacuum_inside`: ductile iron's minimum wall on its mean diameter DE - e_min)
    stands full vacuum unstiffened (len if none), and the utilisation of every class [-]."""
    mat = MATERIALS[FAMILIES[family]["material"]]
    chk = pipewall.vacuum_check(size.vacuum_wall, size.vacuum_inside, _modulus(family),
                                mat.poisson_ratio,
                                external_pressure=ctx.props.atmospheric_pressure,
                                safety_factor=ctx.case.wall["buckling_safety"])
    ok = ~np.asarray(chk["needs_stiffeners"], bool)
    return (int(np.argmax(ok)) if ok.any() else size.bore.size,
            np.asarray(chk["utilisation"], float))


def _classes(ctx, size, node_head, least):
    """Class of each reach (pipe reaches only) and whether any reach is beyond the top."""
    k = pipeclasses.reach_classes(node_head, size.heads, least)[ctx.keep]
    return k, bool(np.any(k >= size.heads.size))


def _money(ctx, size, k, bore):
    """Capital [currency] of the reaches at classes ``k``."""
    return float(np.sum(reach_money(ctx.case, size, k, bore, ctx.reach)))


def reach_money(case, size, k, bore, length):
    """Capital [currency] of each reach of ``length`` [m] and ``bore`` [m] at the classes
    ``k`` of ``size`` (its price per metre plus the case's installation, civil works and
    contingency)."""
    c = case.costs
    kk = np.minimum(k, size.heads.size - 1)
    parts = economics.pipe_cost_breakdown(
        bore, length, cost_per_metre=size.price[kk],
        installation_factor=c["installation_factor"], civil_fixed=c["civil_fixed"],
        civil_coefficient=c["civil_per_diameter"], civil_exponent=c["civil_exponent"],
        contingency_factor=c["contingency"])
    return np.asarray(parts["total"], float) * np.ones(np.shape(length))


def screening_rise(ctx, family, size):
    """Allievi's rise [m] from the design flow at the stiffest class's wave speed and bore
    (the screening's rise: the stiffest wall gives the fastest wave)."""
    bore_top, wall_top = float(size.bore[-1]), float(size.wall[-1])
    a = _wave_speed(ctx, family, bore_top, wall_top)
    v = gradeline.mean_velocity(ctx.case.design_flow, bore_top)
    return float(surge.allievi_rise_capped(ctx.length, v, ctx.h0,
                                           ctx.case.surge["closure_time"], a))


def screening_classes(ctx, family, size, rise):
    """Class of each pipe reach for a design pressure head of the static head at the flood
    level (at the invert of the stiffest class's bore) plus ``rise`` [m] growing linearly
    along the pipe, no lighter than the lightest class that stands full vacuum -> (class
    index per reach, ``len(classes)`` beyond the highest; index of that lightest class)."""
    least, _ = _least_for_vacuum(ctx, family, size)
    head = surge.linear_design_head(ctx.hw_top - (ctx.z - 0.5 * float(size.bore[-1])), rise,
                                    ctx.s)
    k, _ = _classes(ctx, size, head, least)
    return k, least


def _lost(ctx, family, bore):
    """Mean annual energy lost [J/year] to a uniform pipe of this bore and material."""
    m = ctx.model
    rough = ctx.roughness(family, m.roughness_years)
    h = m.pipe.head_loss(m.q_grid, bore, np.full(len(ctx.case.segments), rough),
                         ctx.props.kinematic_viscosity)
    return float(m.lost_to(h))


def _annual(ctx, capital, lost):
    e = ctx.case.economics
    value = float(economics.lost_energy_value(lost, e["energy_price"] / J_PER_KWH))
    return float(economics.annualized_cost(capital, ctx.crf, ctx.case.costs["om_fraction"],
                                           value)), value


def _wave_speed(ctx, family, bore, wall):
    s = ctx.case.surge
    mat = MATERIALS[FAMILIES[family]["material"]]
    return float(wavespeed.pipe_wave_speed(ctx.props.bulk_modulus, ctx.props.density, bore,
                                           wall, _modulus(family), mat.poisson_ratio,
                                           case=s["restraint"]))


def screen(ctx, family, size, steady):
    """The screening estimate of a size: classes from Allievi's rise at the stiffest
    class's wave speed, and the steady crown margin exactly -> dict (annualized cost,
    feasible, bore)."""
    from .sizing import steady_crown_margin

    k, least = screening_classes(ctx, family, size, screening_rise(ctx, family, size))
    beyond = bool(np.any(k >= size.heads.size))
    top = min(int(k.max()), size.bore.size - 1)
    bore = float(size.bore[top])
    capital = _money(ctx, size, k, bore)
    lost = _lost(ctx, family, bore)
    annual, _ = _annual(ctx, capital, lost)
    feasible = not beyond and least < size.bore.size
    if feasible:   # the steady margin decides most sizes: exact, no water hammer needed
        c = material_case(ctx.case, family, bore, float(size.wall[top]))
        feasible = steady_crown_margin(c, ctx.props, steady, build_route(c), bore)[0] >= 0
    return {"size": size, "annual": annual, "feasible": feasible, "bore": bore, "top": top}


def material_case(case, family, bore, wall):
    """A copy of the case with every pipe segment of this family, bore and wall; the
    case's own wave speed, pipe modulus and Poisson ratio (given for its own pipe) no
    longer apply: the water hammer takes the family's."""
    pm = FAMILIES[family]["pipe_material"]
    new, growth = roughness(case, family)
    c = copy.copy(case)
    c.segments = [dataclasses.replace(s, diameter=float(bore), material=pm, roughness=new,
                                      wall_thickness=float(wall),
                                      roughness_growth=growth if growth > 0 else None)
                  for s in case.segments]
    c.surge = dict(case.surge, wave_speed=None, pipe_modulus=None, poisson_ratio=None)
    return c


def evaluate(ctx, family, screened, steady, reaches):
    """One size built whole from its screening (:func:`screen`): its classes settled with
    its own water hammer, its costs and checks -> a row of the comparison."""
    from . import sizing

    case, props = ctx.case, ctx.props
    size = screened["size"]
    least, use = _least_for_vacuum(ctx, family, size)
    top = size.bore.size
    # the first run has the wall of the heaviest class the screening needed; where the
    # run's own rise needs a heavier class, the run is repeated with that class's wall
    # (a heavier wall raises the wave speed and the rise, so the classes only go up); where
    # it needs lighter classes only, its rise is on the safe side and stands
    j, settled = screened["top"], False
    for _ in range(CLASS_PASSES):
        c = material_case(case, family, float(size.bore[j]), float(size.wall[j]))
        head, rise, pmin, route = sizing.moc_design_head(c, props, reaches)
        k, beyond = _classes(ctx, size, head, least)
        j_new = min(int(k.max()), top - 1)
        if j_new <= j or beyond:
            settled = True
            break
        j = j_new
    run_wall = float(size.wall[j])   # the wall of the run whose rise is reported
    kk = np.minimum(k, top - 1)
    bore = float(size.bore[int(kk.max())])
    if bore != float(size.bore[j]):   # the pipe as built (PE: a lighter class, a wider bore)
        c = material_case(case, family, bore, float(size.wall[int(kk.max())]))
        route = build_route(c)
    capital = _money(ctx, size, k, bore)
    lost = _lost(ctx, family, bore)
    annual, value = _annual(ctx, capital, lost)
    margin, at, flow_case = sizing.steady_crown_margin(c, props, steady, route, bore)
    failures = []
    if margin < 0:
        failures.append(f"the steady pressure margin at the crown ({flow_case}, minimum "
                        "headwater)")
    if beyond:
        failures.append("the pressure classes (a reach above the highest class)")
    if least >= top:
        failures.append("vacuum buckling of the unstiffened wall, at every class")
    if not settled:
        failures.append("the classes and the water hammer did not settle")
    x = route.chainage[:-1][ctx.keep]
    x1 = route.chainage[1:][ctx.keep]
    e0 = ctx.prod.headline.mean_annual_energy + ctx.model.case_lost
    f = FAMILIES[family]
    return {
        "material": f["name"], "standard": f["standard"], "size": size.label,
        "inside diameter [m]": bore,
        "classes along the route": _runs(x, x1, kk, size.labels),
        "lightest class": size.labels[int(kk.min())],
        "heaviest class": size.labels[int(kk.max())],
        "wall of the water-hammer runs [mm]": 1e3 * run_wall,
        "wave speed [m/s]": _wave_speed(ctx, family, float(size.bore[j]), run_wall),
        "capital cost [currency]": capital,
        "energy lost [MWh/year]": lost / J_PER_MWH,
        "mean annual energy [MWh]": (e0 - lost) / J_PER_MWH,
        "value of energy lost [currency/year]": value,
        "annualized capital [currency/year]": ctx.crf * capital,
        "operation and maintenance [currency/year]": case.costs["om_fraction"] * capital,
        "annualized cost [currency/year]": annual,
        "maximum surge rise [m]": rise,
        "minimum steady pressure margin at the crown, minimum headwater [m]": margin,
        "at chainage [m]": at,
        "minimum transient pressure head at the crown, minimum headwater [m]":
            float(np.min(pmin)),
        "largest vacuum-buckling utilisation [-]": float(use[int(kk.min())]),
        "passes the checks": not failures,
        "governing check": "; ".join(failures) if failures else "all pass",
        "prices": ("the case's price table" if size.quoted else
                   "illustrative defaults, not prices"),
    }


def _runs(x0, x1, k, labels):
    """'PN10 0-640 m; PN16 640-1,210 m': the runs of one class along the route."""
    out, a = [], 0
    for i in range(1, k.size + 1):
        if i == k.size or k[i] != k[a]:
            out.append(f"{labels[int(k[a])]} {x0[a]:,.0f}–{x1[i - 1]:,.0f} m")
            a = i
    return "; ".join(out)


def steel_row(case, props, row):
    """The welded-steel recommendation's candidate row in the comparison's columns."""
    from .sizing import wall_material

    d = float(row["diameter [m]"])
    thin, thick = row["thinnest plate [mm]"], row["thickest plate [mm]"]
    steel = wall_material(case)
    # the candidate's water hammer runs with the case's own walls (the handling minimum
    # where a segment gives none), the largest of them setting the highest wave speed
    run_wall = max(s.wall_thickness if s.wall_thickness is not None else
                   float(pipewall.minimum_handling_thickness(d)) for s in case.segments)
    a = float(wavespeed.pipe_wave_speed(props.bulk_modulus, props.density, d, run_wall,
                                        steel.elastic_modulus,
                                        case.surge["poisson_ratio"]
                                        if case.surge["poisson_ratio"] is not None
                                        else pipe_wall_poisson_ratio("welded_steel"),
                                        case=case.surge["restraint"]))
    keys = ("capital cost [currency]", "energy lost [MWh/year]", "mean annual energy [MWh]",
            "value of energy lost [currency/year]", "annualized capital [currency/year]",
            "operation and maintenance [currency/year]", "annualized cost [currency/year]",
            "maximum surge rise [m]",
            "minimum steady pressure margin at the crown, minimum headwater [m]",
            "at chainage [m]",
            "minimum transient pressure head at the crown, minimum headwater [m]",
            "largest vacuum-buckling utilisation [-]", "passes the checks", "governing check")
    out = {"material": "welded steel", "standard": f"{steel.description} plates",
           "size": f"D {1e3 * d:.0f} mm", "inside diameter [m]": d,
           "classes along the route": f"plates {thin:.0f} to {thick:.0f} mm",
           "lightest class": f"{thin:.0f} mm plate", "heaviest class": f"{thick:.0f} mm plate",
           "wall of the water-hammer runs [mm]": 1e3 * run_wall, "wave speed [m/s]": a}
    out.update({k: row[k] for k in keys})
    out["prices"] = "the case's steel price model"
    return out


def run(case, props, steady, prod, model, steel, reaches, warns, methods):
    """The material comparison: one row per material the case allows, each at its best
    uniform size (steel: the study's recommendation, ``steel`` its candidate row or None).
    """
    say = Say(case.unit_system)
    allowed = case.diameter_study["materials"]
    rows = []
    if "welded_steel" in allowed and steel is not None:
        rows.append(steel_row(case, props, steel))
    others = [f for f in allowed if f in FAMILIES]
    if not others:
        return pd.DataFrame(rows) if rows else None
    ctx = _Context(case, props, prod, model)
    lo, hi = model.bounds()
    workable = model.smallest_workable()
    for family in others:
        name = FAMILIES[family]["name"]
        near = [sz for sz in sizes(family, case, props)
                if lo * RANGE_BELOW <= sz.bore[0] and sz.bore[-1] <= hi * RANGE_ABOVE
                and sz.bore[-1] >= workable]
        screened = sorted((screen(ctx, family, sz, steady) for sz in near),
                          key=lambda r: r["annual"])
        feasible = [r for r in screened if r["feasible"]]
        if not feasible:
            offered = [sz for sz in near] or sizes(family, case, props)
            top = max((sz.labels[-1] for sz in offered),
                      key=lambda lab: float(lab.lstrip("CPN"))) if offered else "none"
            warns.append(Warning_("diameter study", f"no {name} size near the sweep's range "
                                  f"({say.m(lo * RANGE_BELOW, 3)} to {say.m(hi * RANGE_ABOVE, 3)}) "
                                  f"carries the design pressure head with a class up to {top}, "
                                  "keeps the steady pressure margin at the crown and has a wall "
                                  "that stands full vacuum: the material is left out of the "
                                  "comparison", severity="note"))
            continue
        best = None
        for r in feasible[:MAX_EVALUATED]:
            row = evaluate(ctx, family, r, steady, reaches)
            if best is None or (row["passes the checks"] and not best["passes the checks"]):
                best = row
            if row["passes the checks"]:
                break
        if not best["passes the checks"]:
            tried = min(len(feasible), MAX_EVALUATED)
            warns.append(Warning_("diameter study", f"none of the {tried}"
                                  f" cheapest {name} sizes passes the checks (the cheapest, "
                                  f"{best['size']}, fails {best['governing check']})"))
        rows.append(best)
    shown = {row["material"] for row in rows}
    default = [f for f in others if case.diameter_study.get(PRICE_KEYS[f]) is None
               and FAMILIES[f]["name"] in shown]
    if default:
        warns.append(Warning_("diameter study", "the prices of "
                              + " and ".join(FAMILIES[f]["name"] for f in default)
                              + " in the material comparison are illustrative defaults (a "
                              "multiple of the case's steel price per kilogram of pipe), not "
                              "prices: the comparison ranks nothing until they are replaced by "
                              "quotations (diameter_study."
                              + " and diameter_study.".join(PRICE_KEYS[f] for f in default)
                              + ")", severity="note"))
    methods.add("Diameter study, materials", "each material at its own best uniform size: "
                "every reach in the lowest class that carries its design pressure head (static "
                "at the flood level plus the rise, no surge allowance above the rating) and "
                "whose least wall stands full vacuum unstiffened (ductile iron: the minimum "
                "wall on its mean diameter DE − e_min); PE100 classes re-rated for the "
                "water's temperature; sizes screened with Allievi's rise "
                "at the stiffest class's wave speed, the cheapest then run whole (load "
                "rejections by the method of characteristics with the wall of the heaviest "
                "class the screening chose, repeated where a heavier class is needed) with "
                "the steel candidates' checks; "
                "PE walls d_n/SDR, ductile-iron walls e = PFA·SF·DE/(2·R_m + PFA·SF) with SF 3 "
                "plus the casting tolerance (1.3 + 0.001·DN) mm for the wave speed, classes up "
                "to each DN's highest; the bore the narrower of DN and DE − 2·(wall + "
                "lining); roughness growing linearly from new to aged over the service life",
                "ISO 4427-2:2019; EN 545:2010 (the wall rule and tolerance from memory, the "
                "walls and class ranges checked against a manufacturer's summary of the "
                "standard's table); a published PE100 re-rating table (AS/NZS 4130 pipes); "
                "Timoshenko & Gere (1961) for the vacuum check")
    return pd.DataFrame(rows) if rows else None
