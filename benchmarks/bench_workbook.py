"""Benchmark of the report writers against the physics, on the high-head demo.

One run each: the whole ``run_case`` (all physics stages), the workbook alone, and the CSV
tables and PNG figures. The writer should not dominate the physics.

Run from the repository root: ``python benchmarks/bench_workbook.py``.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import penstock
from penstock.report import write_reports, write_tables
from penstock.report.figures import write_figures
from penstock.report.workbook import write_workbook

CASE = Path(__file__).resolve().parents[1] / "cases" / "alder-gorge-high-head"


def run():
    case = penstock.load_case(CASE)
    penstock.run_case(case)              # warm-up (imports, caches)
    t0 = time.perf_counter()
    results = penstock.run_case(case)
    t_run = time.perf_counter() - t0
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        write_workbook(results, Path(tmp) / "book.xlsx")
        t_book = time.perf_counter() - t0
        t0 = time.perf_counter()
        write_tables(results, Path(tmp), case.unit_system)
        write_figures(results, Path(tmp), case.unit_system)
        t_files = time.perf_counter() - t0
        # the whole publication: the same writers plus lock, manifest digests, fsync and the
        # one-step exchange over an earlier report
        write_reports(results, Path(tmp) / "report")
        t0 = time.perf_counter()
        write_reports(results, Path(tmp) / "report")
        t_publish = time.perf_counter() - t0
    return [
        {"figure": "publishing the report folder (writers, lock, manifest, fsync, exchange)",
         "value": t_publish, "unit": "s", "reference": "the writers alone",
         "reference_value": t_book + t_files, "ratio": t_publish / (t_book + t_files),
         "target": "close to 1"},
        {"figure": "workbook writing, high-head demo", "value": t_book, "unit": "s",
         "reference": "run_case (all physics)", "reference_value": t_run,
         "ratio": t_book / t_run, "target": "info (writer should not dominate)"},
        {"figure": "CSV tables and PNG figures", "value": t_files, "unit": "s",
         "reference": "run_case (all physics)", "reference_value": t_run,
         "ratio": t_files / t_run, "target": "info"},
    ]


if __name__ == "__main__":
    for r in run():
        print(f"{r['figure']:<40} {r['value']:.3f} s vs {r['reference']} "
              f"{r['reference_value']:.3f} s: ratio {r['ratio']:.2f}")
