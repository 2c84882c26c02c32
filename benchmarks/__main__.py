"""Run every benchmark and print one table: ``python -m benchmarks`` from the repository root.

Each row gives the figure, the reference it is measured against in the same run, and the
ratio. Timings are from one run on this machine; quote them as ratios.
"""

from __future__ import annotations

import importlib
import platform
import sys
from pathlib import Path

MODULES = sorted(p.stem for p in Path(__file__).parent.glob("bench_*.py"))


def main(names=None) -> int:
    rows = []
    for name in names or MODULES:
        mod = importlib.import_module(f"benchmarks.{name}")
        print(f"running {name} ...", file=sys.stderr, flush=True)
        for row in mod.run():
            if not isinstance(row, dict):   # (figure, value, reference, reference_value, ratio)
                row = dict(zip(("figure", "value", "reference", "reference_value", "ratio"),
                               row))
            rows.append((name, row))
    print(f"machine: {platform.machine()}, {platform.processor() or 'cpu'}, "
          f"Python {platform.python_version()}")
    print("| benchmark | figure | value | reference | reference value | ratio | target |")
    print("|---|---|---|---|---|---|---|")
    for name, r in rows:
        print(f"| {name} | {r['figure']} | {r['value']:.4g} {r.get('unit', '')} | "
              f"{r['reference']} | {r['reference_value']:.4g} | {r['ratio']:.3g} | "
              f"{r.get('target', '')} |")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:] or None))
