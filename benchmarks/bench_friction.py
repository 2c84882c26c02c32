"""Benchmark of the Colebrook–White solver in ``penstock.friction``.

Friction factors for 1e6 random pairs (Re log-uniform in 4e3..1e8, relative roughness
log-uniform in 1e-6..0.05, fixed seed), one timed run each after one warm-up:

* ``colebrook`` (vectorized) against a Python loop over ``fluids.friction.Colebrook``;
  the loop is timed on the first 20 000 pairs and scaled linearly to 1e6.
* ``colebrook`` against the explicit ``swamee_jain`` on the same arrays.

Run from the repository root: ``PYTHONPATH=. python benchmarks/bench_friction.py``.
"""

from __future__ import annotations

import time
import warnings

import numpy as np

from penstock.friction import colebrook, swamee_jain

SIZE = 1_000_000
LOOP_SUBSET = 20_000
SEED = 20_240_501


def _pairs(size=SIZE, seed=SEED):
    """Random (reynolds, relative_roughness) arrays, log-uniform in the benchmark ranges."""
    rng = np.random.default_rng(seed)
    reynolds = 10.0 ** rng.uniform(np.log10(4.0e3), 8.0, size)
    relative_roughness = 10.0 ** rng.uniform(-6.0, np.log10(0.05), size)
    return reynolds, relative_roughness


def _timed(function, *args):
    """Wall time of one call of ``function(*args)`` after one warm-up call. [s]"""
    function(*args)
    start = time.perf_counter()
    result = function(*args)
    return time.perf_counter() - start, result


def run():
    """Time the solvers and return the figures as a list of dict rows.

    Returns
    -------
    list of dict
        Keys ``figure``, ``value``, ``unit``, ``reference``, ``reference_value``,
        ``ratio`` (reference_value / value for speed-ups, value / reference_value for
        slow-downs, as named in ``figure``) and ``target``.
    """
    from fluids.friction import Colebrook  # reference library, benchmark only

    reynolds, relative_roughness = _pairs()
    time_colebrook, friction = _timed(colebrook, reynolds, relative_roughness)
    time_swamee_jain, _ = _timed(swamee_jain, reynolds, relative_roughness)

    re_subset = reynolds[:LOOP_SUBSET].tolist()
    rr_subset = relative_roughness[:LOOP_SUBSET].tolist()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # overflow handled inside fluids
        start = time.perf_counter()
        reference = [Colebrook(re, rr) for re, rr in zip(re_subset, rr_subset)]
        time_loop = (time.perf_counter() - start) * SIZE / LOOP_SUBSET
    deviation = float(np.max(np.abs(friction[:LOOP_SUBSET] / np.array(reference) - 1.0)))

    return [
        {
            "figure": "colebrook, 1e6 pairs, vectorized",
            "value": time_colebrook * 1e3,
            "unit": "ms",
            "reference": (
                f"loop over fluids.friction.Colebrook, timed on {LOOP_SUBSET} pairs and "
                "scaled linearly to 1e6"
            ),
            "reference_value": time_loop * 1e3,
            "ratio": time_loop / time_colebrook,
            "target": ">= 100 (speed-up)",
        },
        {
            "figure": "colebrook time / swamee_jain time, same 1e6 pairs",
            "value": time_colebrook * 1e3,
            "unit": "ms",
            "reference": "swamee_jain (explicit), same arrays",
            "reference_value": time_swamee_jain * 1e3,
            "ratio": time_colebrook / time_swamee_jain,
            "target": "<= 4 (slow-down)",
        },
        {
            "figure": f"max relative deviation from fluids on the {LOOP_SUBSET} subset",
            "value": deviation,
            "unit": "-",
            "reference": "fluids.friction.Colebrook (analytical Lambert-W solution)",
            "reference_value": 0.0,
            "ratio": float("nan"),
            "target": "<= 1e-9",
        },
    ]


def _format(value):
    """Short text of a number for the table."""
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


if __name__ == "__main__":
    rows = run()
    columns = ["figure", "value", "unit", "reference", "reference_value", "ratio", "target"]
    widths = {c: max(len(c), *(len(_format(row[c])) for row in rows)) for c in columns}
    print("  ".join(c.ljust(widths[c]) for c in columns))
    for row in rows:
        print("  ".join(_format(row[c]).ljust(widths[c]) for c in columns))
    print(
        f"\nLoop time over fluids measured on {LOOP_SUBSET} of {SIZE} pairs and scaled "
        "linearly; colebrook and swamee_jain timed once each on all pairs after a warm-up."
    )
