"""Benchmark of the MOC solver: a 100-reach pipe over 20 000 time steps.

Run as ``python benchmarks/bench_transients.py`` (with ``/work/main`` on PYTHONPATH).
``run()`` returns rows of (figure, value, reference, reference_value, ratio).

The floor is the same number of node updates done as one numpy array expression with no
time loop (the interior-node MOC formulas on a (steps, nodes) array): it is what the
arithmetic costs when Python overhead per step is removed.
"""

from __future__ import annotations

import math
import time

import numpy as np

from penstock.constants import GRAVITY
from penstock.transients import simulate

REACHES = 100
STEPS = 20_000
TARGET_SECONDS = 1.0


def _case():
    length, diameter, wave_speed = 1000.0, 1.0, 1000.0
    dt = length / wave_speed / REACHES
    return dict(lengths=[length], diameters=[diameter], wave_speeds=[wave_speed],
                friction_factors=[0.015], reservoir_head=200.0, tailwater_head=0.0,
                flow=2.0, closure_time=5.0, min_reaches=REACHES, duration=STEPS * dt)


def _best_of(func, repeat):
    best = math.inf
    for _ in range(repeat):
        start = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - start)
    return best


def _floor(nodes, steps):
    rng = np.random.default_rng(1)
    q = rng.random((steps, nodes))
    h = 100.0 + rng.random((steps, nodes))
    ca = np.full(nodes, GRAVITY * 0.785 / 1000.0)
    r = np.full(nodes, 0.015 * 0.01 / (2 * 0.785))

    def work():
        fr = r * q * np.abs(q)
        cah = ca * h
        cp = q[:, :-1] + cah[:, :-1] - fr[:, :-1]
        cn = q[:, 1:] - cah[:, 1:] - fr[:, 1:]
        return (cp - cn) * (0.5 / ca[1:]), 0.5 * (cp + cn)

    return work


def run(repeat=3):
    """Time the solver and the array-expression floor.

    Parameters
    ----------
    repeat : int
        Timed repetitions; the best is kept. [-]

    Returns
    -------
    list of tuple
        Rows (figure, value, reference, reference_value, ratio).
    """
    case = _case()
    result = simulate(**case)
    nodes, steps = result.chainage.size, result.time.size - 1
    if (nodes, steps) != (REACHES + 1, STEPS):
        raise RuntimeError(f"benchmark grid is {nodes} nodes x {steps} steps, expected "
                           f"{REACHES + 1} x {STEPS}")
    solver = _best_of(lambda: simulate(**case), repeat)
    floor = _best_of(_floor(nodes, steps), repeat)
    updates = nodes * steps
    return _demo_rows(repeat) + [
        ("solver time, 100 reaches x 20000 steps [s]", solver, "target [s]", TARGET_SECONDS,
         solver / TARGET_SECONDS),
        ("node updates per second [1/s]", updates / solver, "array-expression floor [1/s]",
         updates / floor, floor / solver),
        ("solver time [s]", solver, "array-expression floor time [s]", floor, solver / floor),
    ]


def _demo_rows(repeat):
    """Each demo's converged design-flow rejection (the refinement included) against one
    run on the coarsest grid of 20 reaches."""
    from pathlib import Path

    from penstock import load_case, water
    from penstock.model import hammer
    from penstock.model.core import Methods
    from penstock.route import build_route

    rows = []
    cases = Path(__file__).resolve().parent.parent / "cases"
    for name in ("alder-gorge-high-head", "cedar-fork-us-units", "millrace-flats-low-head"):
        case = load_case(cases / name)
        props = water.water_properties(case.temperature, case.altitude)
        route = build_route(case)
        pipes = hammer._pipes(case, props, route, [], Methods())
        kw = dict(**pipes.args(props, case.design_flow, 20), reservoir_head=case.headwater,
                  tailwater_head=pipes.downstream, flow=case.design_flow,
                  **hammer._law_args(case.surge))
        converged = _best_of(lambda: hammer.converged_grid(case, props, pipes, pipes.axis),
                             repeat)
        one = _best_of(lambda: simulate(**kw), repeat)
        rows.append((f"{name}: converged water-hammer grid [s]", converged,
                     "one 20-reach run [s]", one, converged / one))
    return rows


if __name__ == "__main__":
    for figure, value, reference, reference_value, ratio in run():
        print(f"{figure:45s} {value:12.4g}   {reference:32s} {reference_value:12.4g}   "
              f"ratio {ratio:8.3g}")
