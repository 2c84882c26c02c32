"""Benchmarks of the command line as a user meets it, in paired rounds of CPU time.

Every figure is the CPU time (user + system) of a child process, measured in the same round
as its reference; a row gives the median of the per-round ratios with their minimum and
maximum, and whether the median meets its target.

* ``penstock run`` of each demo case, report included, against a floor script that imports
  numpy, pandas, scipy, matplotlib, openpyxl and pint, reads the case's files, and writes a
  one-sheet workbook and one PNG. Target: at most 2x.
* ``penstock check`` of each demo case against a script that imports only pandas and pint
  and reads the same files. Target: at most 1.5x.
* The high-head demo with its route profile resampled to 10,000 points against the same
  route at 100 points (the same line, more survey points), ``penstock run`` both: CPU time
  and peak memory. Target: at most 1.5x each.
* The default Monte Carlo (400 samples) of the high-head demo on a synthetic 40-year hourly
  flow record (350,640 steps): the CPU time of ``run_case`` with 400 samples less that of
  the same run with none. Target: at most 20 s.

Run from the repository root: ``python -m benchmarks cli`` (or
``python benchmarks/bench_cli.py``). ``BENCH_ROUNDS`` sets the number of rounds (default 3).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd

if __package__ in (None, ""):
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from benchmarks._rounds import child_cost, paired, python, verdict
else:
    from ._rounds import child_cost, paired, python, verdict

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
DEMOS = ("alder-gorge-high-head", "cedar-fork-us-units", "millrace-flats-low-head")
ROUNDS = int(os.environ.get("BENCH_ROUNDS", "3"))

FLOOR_RUN = textwrap.dedent("""
    import sys, tomllib
    from pathlib import Path
    import numpy, pandas, scipy, matplotlib, openpyxl, pint
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    folder, out = Path(sys.argv[1]), Path(sys.argv[2])
    tomllib.loads((folder / "site.toml").read_text())
    tables = [pandas.read_csv(f, comment="#") for f in sorted(folder.glob("*.csv"))]
    pint.UnitRegistry()
    book = openpyxl.Workbook()
    sheet = book.active
    for row in tables[0].head(50).itertuples(index=False):
        sheet.append(list(row))
    book.save(out / "floor.xlsx")
    fig, ax = plt.subplots()
    ax.plot(tables[0].iloc[:, 1].to_numpy())
    fig.savefig(out / "floor.png", dpi=150)
""")

FLOOR_CHECK = textwrap.dedent("""
    import sys, tomllib
    from pathlib import Path
    import pandas, pint
    folder = Path(sys.argv[1])
    tomllib.loads((folder / "site.toml").read_text())
    for f in sorted(folder.glob("*.csv")):
        pandas.read_csv(f, comment="#")
    pint.UnitRegistry()
""")

MONTE_CARLO = textwrap.dedent("""
    import sys, time
    import penstock
    case = penstock.load_case(sys.argv[1])
    penstock.run_case(case, samples=0)                    # warm-up: imports, caches
    t0 = time.process_time(); penstock.run_case(case, samples=0)
    t_none = time.process_time() - t0
    t0 = time.process_time(); penstock.run_case(case, samples=400)
    t_400 = time.process_time() - t0
    print(t_400 - t_none, t_none)
""")


def _penstock(*args):
    return python("-m", "penstock.cli", *args)


def _resampled_case(tmp: Path, points: int) -> Path:
    """The high-head demo with its profile linearly resampled to ``points`` survey points."""
    dst = tmp / f"alder-{points}"
    shutil.copytree(CASES / "alder-gorge-high-head", dst)
    profile = pd.read_csv(dst / "profile.csv", comment="#")
    chainage = np.linspace(profile.iloc[0, 0], profile.iloc[-1, 0], points)
    # keep every surveyed vertex so that the line is the same; fill in between
    chainage = np.union1d(chainage, profile.iloc[:, 0].to_numpy())
    table = pd.DataFrame({c: np.interp(chainage, profile.iloc[:, 0], profile[c])
                          for c in profile.columns[1:]})
    table.insert(0, profile.columns[0], chainage)
    with open(dst / "profile.csv", "w") as handle:
        handle.write(f"# INVENTED profile resampled to {chainage.size} points (benchmark)\n")
        table.to_csv(handle, index=False, float_format="%.4f")
    return dst


def _hourly_case(tmp: Path, years: int = 40) -> Path:
    """The high-head demo with a synthetic hourly record of ``years`` years."""
    dst = tmp / "alder-hourly"
    shutil.copytree(CASES / "alder-gorge-high-head", dst)
    daily = pd.read_csv(dst / "flows.csv", comment="#")
    mean = float(daily.iloc[:, 1].mean())
    index = pd.date_range("1981-01-01", f"{1981 + years}-01-01", freq="h", inclusive="left")
    rng = np.random.default_rng(40)
    day = np.asarray(index.day_of_year)
    shape = np.exp(0.7 * np.sin(2 * np.pi * (day - 100) / 365.25)
                   + 0.3 * rng.standard_normal(index.size))
    flow = mean * shape / shape.mean()
    with open(dst / "flows.csv", "w") as handle:
        handle.write("# SYNTHETIC hourly flow record for a benchmark; not measured data\n")
        pd.DataFrame({"date": index.strftime("%Y-%m-%d %H:%M"),
                      daily.columns[1]: np.round(flow, 4)}).to_csv(handle, index=False)
    return dst


def _row(figure, result, reference, unit, limit, target):
    return {"figure": figure, "unit": unit, "reference": reference, "target": target,
            "meets": verdict(result["ratio"], limit), **result}


def run():
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        floor_run, floor_check, mc = tmp / "floor_run.py", tmp / "floor_check.py", tmp / "mc.py"
        floor_run.write_text(FLOOR_RUN)
        floor_check.write_text(FLOOR_CHECK)
        mc.write_text(MONTE_CARLO)
        out = tmp / "out"
        out.mkdir()

        for name in DEMOS:
            folder = CASES / name
            result = paired(
                lambda f=folder, n=name: child_cost(_penstock("run", f, "--quiet", "--out",
                                                               out / n)),
                lambda f=folder: child_cost(python(floor_run, f, out)), ROUNDS)
            rows.append(_row(f"penstock run {name} (report included)", result,
                             "floor: imports, reads the case, one sheet, one PNG", "s CPU",
                             2.0, "<= 2x"))
        for name in DEMOS:
            folder = CASES / name
            result = paired(lambda f=folder: child_cost(_penstock("check", f, "--quiet")),
                            lambda f=folder: child_cost(python(floor_check, f)), ROUNDS)
            rows.append(_row(f"penstock check {name}", result,
                             "pandas and pint imported, the same files read", "s CPU",
                             1.5, "<= 1.5x"))

        long, short = _resampled_case(tmp, 10_000), _resampled_case(tmp, 100)
        costs = {}

        def run_route(folder):
            cost = child_cost(_penstock("run", folder, "--quiet", "--out", out / folder.name))
            costs.setdefault(folder.name, []).append(cost)
            return cost

        result = paired(lambda: run_route(long), lambda: run_route(short), ROUNDS)
        rows.append(_row("penstock run, high-head demo, 10,000-point profile", result,
                         "the same route at 100 points", "s CPU", 1.5, "<= 1.5x"))
        memory = [a.peak_memory / b.peak_memory
                  for a, b in zip(costs[long.name], costs[short.name], strict=True)]
        rows.append({
            "figure": "its peak memory", "unit": "MiB",
            "value": float(np.median([c.peak_memory for c in costs[long.name]])),
            "reference": "the same route at 100 points",
            "reference_value": float(np.median([c.peak_memory for c in costs[short.name]])),
            "ratio": float(np.median(memory)), "ratio_min": min(memory),
            "ratio_max": max(memory), "rounds": ROUNDS, "target": "<= 1.5x",
            "meets": verdict(float(np.median(memory)), 1.5)})

        hourly = _hourly_case(tmp)
        extra = []
        for _ in range(ROUNDS):
            text = subprocess.run(python(mc, hourly), capture_output=True, text=True,
                                  check=True).stdout.split()
            extra.append((float(text[0]), float(text[1])))
        mc_cpu = [e[0] for e in extra]
        rows.append({
            "figure": "Monte Carlo, 400 samples, 40-year hourly record", "unit": "s CPU",
            "value": float(np.median(mc_cpu)),
            "reference": "target 20 s (one deterministic run of the same case: "
                         f"{np.median([e[1] for e in extra]):.3g} s)",
            "reference_value": 20.0, "ratio": float(np.median(mc_cpu)) / 20.0,
            "ratio_min": min(mc_cpu) / 20.0, "ratio_max": max(mc_cpu) / 20.0,
            "rounds": ROUNDS, "target": "<= 20 s", "meets": verdict(np.median(mc_cpu), 20.0)})
    return rows


if __name__ == "__main__":
    from benchmarks.__main__ import print_table

    print_table([("cli", r) for r in run()])
