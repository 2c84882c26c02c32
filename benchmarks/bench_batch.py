"""Benchmarks of the batch runner and of the Monte Carlo.

* 100 copies of the invented low-head demo run as a batch on 2 workers (full reports each),
  against running them one by one in one process (timed on 20 and scaled to 100, said so).
* A 1,000-sample Monte Carlo of the high-head demo: time per sample against one
  deterministic run.

Run from the repository root: ``python benchmarks/bench_batch.py``.
"""

from __future__ import annotations

import copy
import shutil
import tempfile
import time
from pathlib import Path

import penstock
from penstock import batch

CASES = Path(__file__).resolve().parents[1] / "cases"


def _batch_rows(n=100, serial=20):
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        folders = []
        for i in range(n):
            dst = tmp / "cases" / f"site{i:03d}"
            shutil.copytree(CASES / "millrace-flats-low-head", dst)
            folders.append(dst)
        t0 = time.perf_counter()
        out = batch.run_many(folders, tmp / "out", workers=2)
        t_batch = time.perf_counter() - t0
        assert all(o.ok for o in out)
        t0 = time.perf_counter()
        batch.run_many(folders[:serial], tmp / "serial", workers=1)
        t_serial = (time.perf_counter() - t0) * n / serial
    return [
        {"figure": f"batch of {n} demo-sized cases, 2 workers", "value": n / t_batch,
         "unit": "cases/s", "reference": f"one by one ({serial} timed, scaled to {n})",
         "reference_value": n / t_serial, "ratio": t_serial / t_batch,
         "target": "speed-up, ideally near 2 on 2 cores"},
    ]


def _mc_rows(samples=1000):
    case = penstock.load_case(CASES / "alder-gorge-high-head")
    penstock.run_case(case, samples=0)           # warm-up
    t0 = time.perf_counter()
    penstock.run_case(case, samples=0)
    t_det = time.perf_counter() - t0
    mc = copy.copy(case)
    t0 = time.perf_counter()
    penstock.run_case(mc, samples=samples)
    t_mc = time.perf_counter() - t0 - t_det
    per = t_mc / samples
    return [{"figure": f"Monte Carlo, {samples} samples, time per sample", "value": per,
             "unit": "s", "reference": "one deterministic run", "reference_value": t_det,
             "ratio": per / t_det, "target": "well under 1"}]


def run():
    return _mc_rows() + _batch_rows()


if __name__ == "__main__":
    for r in run():
        print(f"{r['figure']:<48} {r['value']:.4g} {r['unit']} vs {r['reference']} "
              f"{r['reference_value']:.4g}: ratio {r['ratio']:.3g}")
