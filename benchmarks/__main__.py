"""Run every benchmark and print one table: ``python -m benchmarks`` from the repository root.

``python -m benchmarks cli friction`` runs only the named modules (``bench_<name>.py``).

Each row gives the figure, the reference it is measured against in the same run, and the
ratio. Rows measured in paired rounds (``benchmarks/_rounds.py``) give the median ratio of
the rounds with its minimum and maximum; the others are one timed run after a warm-up, and
say so. Every row has a target, and the last column says whether the median meets it.
"""

from __future__ import annotations

import importlib
import platform
import sys
from pathlib import Path

MODULES = sorted(p.stem.removeprefix("bench_") for p in Path(__file__).parent.glob("bench_*.py"))


def _number(value) -> str:
    return f"{value:.3g}" if isinstance(value, float) else str(value)


def print_table(rows) -> None:
    """Print ``(module, row)`` pairs as one Markdown table."""
    import numpy

    print(f"machine: {platform.machine()}, {platform.processor() or 'cpu'}, "
          f"Python {platform.python_version()}, numpy {numpy.__version__}")
    print("| benchmark | figure | value | reference | reference value | ratio (min–max) "
          "| rounds | target | meets |")
    print("|---|---|---|---|---|---|---|---|---|")
    for name, r in rows:
        spread = (f" ({r['ratio_min']:.3g}–{r['ratio_max']:.3g})" if "ratio_min" in r else "")
        print(f"| {name} | {r['figure']} | {r['value']:.4g} {r.get('unit', '')} | "
              f"{r['reference']} | {r['reference_value']:.4g} | {_number(r['ratio'])}{spread} | "
              f"{r.get('rounds', 1)} | {r.get('target', '')} | {r.get('meets', '')} |")


def main(names=None) -> int:
    rows = []
    for name in names or MODULES:
        name = name.removeprefix("bench_")
        mod = importlib.import_module(f"benchmarks.bench_{name}")
        print(f"running {name} ...", file=sys.stderr, flush=True)
        for row in mod.run():
            if not isinstance(row, dict):   # (figure, value, reference, reference_value, ratio)
                row = dict(zip(("figure", "value", "reference", "reference_value", "ratio"),
                               row, strict=False))
            rows.append((name, row))
    print_table(rows)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:] or None))
