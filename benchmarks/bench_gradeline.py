"""Benchmark of the grade-line computation in ``penstock.gradeline``.

A synthetic 2,000-point profile (an invented hillside route, 8 km long, two diameters)
at 20 flows, one timed run after one warm-up. The reference is the time of the
Darcy–Weisbach friction losses alone on the same (flow × reach) array, which every
grade-line computation must pay: the ratio shows what the bookkeeping around it costs.

Run from the repository root: ``python benchmarks/bench_gradeline.py``.
"""

from __future__ import annotations

import math
import time

import numpy as np

from penstock import friction, gradeline

N_POINTS = 2_000
N_FLOWS = 20
NU = 1.3e-6


def _route(n=N_POINTS, seed=7):
    rng = np.random.default_rng(seed)
    x = np.linspace(0.0, 8000.0, n)
    z = 900.0 - 0.04 * x + np.cumsum(rng.normal(0.0, 0.3, n))
    d = np.where(x[:-1] < 4000.0, 1.4, 1.2)
    a_node = np.concatenate([[np.inf], math.pi * np.concatenate([[1.4], d]) ** 2 / 4])
    chainage = np.concatenate([[0.0], x])
    elevation = np.concatenate([[z[0]], z])
    length = np.concatenate([[0.0], np.hypot(np.diff(x), np.diff(z))])
    diameter = np.concatenate([[1.4], d])
    roughness = np.concatenate([[0.0], np.full(n - 1, 4.6e-5)])
    k = np.concatenate([[0.5], np.zeros(n - 1)])
    ref_area = math.pi * diameter**2 / 4
    return chainage, elevation, a_node, length, diameter, roughness, k, ref_area


def _timed(fn):
    fn()
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def run():
    """Return the benchmark rows (figure, value, unit, reference, reference_value, ratio)."""
    route = _route()
    flows = np.linspace(0.2, 6.0, N_FLOWS)
    t_grade = _timed(lambda: gradeline.grade_lines(flows, 1000.0, *route, NU))
    length, diameter, roughness = route[3][1:], route[4][1:], route[5][1:]
    t_floor = _timed(lambda: friction.head_loss(flows[:, None], diameter[None, :],
                                                length[None, :], roughness[None, :], NU))
    return [
        {"figure": f"grade lines, {N_POINTS}-point profile x {N_FLOWS} flows",
         "value": t_grade, "unit": "s", "reference": "target 'well under a second'",
         "reference_value": 1.0, "ratio": t_grade / 1.0, "target": "< 1 s"},
        {"figure": "grade lines / friction losses alone on the same arrays",
         "value": t_grade, "unit": "s", "reference": "Darcy–Weisbach losses only",
         "reference_value": t_floor, "ratio": t_grade / t_floor, "target": "info"},
    ]


if __name__ == "__main__":
    for row in run():
        print(f"{row['figure']:<58} {row['value']:.4f} {row['unit']}  vs {row['reference']} "
              f"({row['reference_value']:.4f}): ratio {row['ratio']:.3f}")
