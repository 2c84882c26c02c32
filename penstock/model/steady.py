"""Steady hydraulics stage of a run: grade lines, pressure checks, losses.

Called by :func:`penstock.model.run_case`; pure computation, no I/O.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import gradeline
from ..constants import GRAVITY
from ..route import build_route
from ..turbines import TURBINE_TYPES
from .core import Warning_

def _study_flows(case) -> tuple[np.ndarray, list[str]]:
    """Flows at which grade lines are drawn, with their names, in rising order."""
    named = {}
    q_min = minimum_plant_flow(case)
    named.setdefault(round(q_min, 12), "minimum turbine flow")
    named.setdefault(round(case.design_flow, 12), "design flow")
    named.setdefault(round(case.maximum_flow, 12), "maximum plant flow")
    for q in case.extra_flows:
        named.setdefault(round(q, 12), "listed flow")
    flows = np.array(sorted(named))
    return flows, [named[q] for q in flows]


def minimum_plant_flow(case) -> float:
    """Smallest flow the plant runs at: one unit at its type's minimum fraction of rated flow."""
    if case.minimum_flow is not None:
        return case.minimum_flow
    fraction = TURBINE_TYPES[case.turbine["type"]]["minimum_relative_flow"]
    return fraction * case.design_flow / case.turbine["units"]


def run(case, props, warns, methods, tick) -> dict:
    """Grade lines, pressure checks and the loss breakdown at the study flows.

    Returns a dict of tables (``grade_lines``, ``pressure_checks``, ``stretches``,
    ``loss_breakdown``, ``profile``) and objects for later stages (``route``,
    ``flows``, ``flow_names``, ``gl``, ``head_loss``).
    """
    tick("route and grade lines")
    route = build_route(case, warns, methods)
    flows, flow_names = _study_flows(case)
    args = (route.chainage, route.elevation, route.node_area, route.length, route.diameter)
    tail = (route.k, route.reference_area, props.kinematic_viscosity)
    gl = gradeline.grade_lines(flows, case.headwater, *args, route.roughness, *tail)
    methods.add("Pipe friction", "Darcy–Weisbach with the Colebrook–White friction factor "
                "(64/Re below Re 2000; linear blend 2000–4000)",
                "Colebrook, C.F. (1939). J. Inst. Civil Eng. 11(4), 133–156, "
                "doi:10.1680/ijoti.1939.13150")
    rho_g = props.density * GRAVITY
    atm_head = props.atmospheric_pressure / rho_g
    vap_head = props.vapour_pressure / rho_g
    sets = [(gl, flow_names)]
    if any(seg.roughness_growth for seg in case.segments):
        years = case.service_life
        keep = [i for i, n in enumerate(flow_names) if n in ("design flow", "maximum plant flow")]
        aged = gradeline.grade_lines(flows[keep], case.headwater, *args,
                                     route.aged_roughness(case.segments, years), *tail)
        sets.append((aged, [f"{flow_names[i]}, after {years:g} years" for i in keep]))
        methods.add("Roughness ageing", f"linear growth of roughness with age, shown after "
                    f"{years:g} years", "Colebrook, C.F. & White, C.M. (1937). The reduction of "
                    "carrying capacity of pipes with age. J. ICE 7(1), 99–118; rates after "
                    "Lamont, P.A. (1981), J. AWWA 73(5), 274–280")
    grade = pd.concat([_grade_table(route, g, n) for g, n in sets], ignore_index=True)
    parts = [_pressure_checks(case, route, g, n, atm_head, vap_head, warns) for g, n in sets]
    checks = pd.concat([p[0] for p in parts], ignore_index=True)
    stretches = pd.concat([p[1] for p in parts if len(p[1])] or [parts[0][1]],
                          ignore_index=True)
    _submergence(case, route, checks["flow [m^3/s]"].to_numpy(), list(checks["flow case"]),
                 warns, methods, checks)
    breakdown = pd.concat([_loss_breakdown(case, route, g, n) for g, n in sets],
                          ignore_index=True)
    _velocity_checks(case, route, flows, flow_names, warns)
    _siphon_check(case, route, warns)
    return {
        "route": route, "flows": flows, "flow_names": flow_names, "gl": gl,
        "grade_lines": grade, "pressure_checks": checks, "stretches": stretches,
        "loss_breakdown": breakdown, "profile": _profile_table(case, route),
        "head_loss": loss_function(case, route, props),
    }


def loss_function(case, route, props, points: int = 400):
    """Penstock head loss as a vectorized function of the total flow [m^3/s] -> [m].

    The losses are computed exactly on a geometric grid of flows from 1e-4 to 1.5
    times the maximum plant flow and interpolated in between as h(Q) = c(Q)·Q², with
    c interpolated linearly in log Q: c varies slowly (only through the friction
    factor), so the relative interpolation error stays below 1e-5
    (tests/test_model.py checks it against direct evaluation).
    """
    q_top = 1.5 * case.maximum_flow
    grid = np.geomspace(1e-4 * q_top, q_top, points)
    g = gradeline.grade_lines(grid, case.headwater, route.chainage, route.elevation,
                              route.node_area, route.length, route.diameter, route.roughness,
                              route.k, route.reference_area, props.kinematic_viscosity)
    log_grid = np.log(grid)
    coeff = (g.friction_loss + g.local_loss).sum(axis=1) / grid**2

    def head_loss(total_flow):
        q = np.asarray(total_flow, dtype=float)
        a = np.abs(q)
        with np.errstate(divide="ignore"):
            c = np.interp(np.log(np.where(a > 0, a, grid[0])), log_grid, coeff)
        return c * q * a

    return head_loss
