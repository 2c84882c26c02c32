"""Benchmark: mean annual energy over a long hourly record.

A synthetic hourly river record (seasonal log-normal flows) runs through the full
energy chain: residual release, penstock head loss interpolated in a precomputed
table, Francis part-load efficiency, best dispatch of 2 identical units, drive-train
efficiencies, then the energy summary (annual, monthly, power-duration curve,
friction/spill/residual losses). Timed at 10, 20 and 40 years; the target is
< 0.5 s for 40 years (~350 000 steps) on one core, and the time should grow
linearly with the record length.

Run: ``PYTHONPATH=. python benchmarks/bench_energy.py``
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from penstock import energy

TARGET_SECONDS_40_YEARS = 0.5
DENSITY = 999.7  # [kg/m^3] water near 10 degC
GROSS_HEAD = 85.0  # [m]
RATED_FLOW_PER_UNIT = 2.5  # [m^3/s]


def synthetic_record(years, seed=1):
    """Hourly synthetic river flow [m^3/s] starting 1 January 2001."""
    index = pd.date_range("2001-01-01", pd.Timestamp(year=2001 + years, month=1, day=1),
                          freq="h", inclusive="left")
    rng = np.random.default_rng(seed)
    day = np.asarray(index.day_of_year)
    flow = np.exp(np.log(3.0) + 0.8 * np.sin(2.0 * np.pi * (day - 80) / 365.25)
                  + 0.35 * rng.standard_normal(len(index)))
    return index, flow


# Precomputed penstock loss table (head loss proportional to Q^2 at 6 m for 5 m^3/s),
# evaluated at run time by linear interpolation, as the orchestrator will do with a table
# built from the friction module.
_LOSS_FLOWS = np.linspace(0.0, 2 * RATED_FLOW_PER_UNIT, 201)
_LOSS_HEADS = 6.0 * (_LOSS_FLOWS / (2 * RATED_FLOW_PER_UNIT)) ** 2


def head_loss(total_flow):
    """Penstock head loss [m] at total flow [m^3/s] from the precomputed table."""
    return np.interp(total_flow, _LOSS_FLOWS, _LOSS_HEADS)


def mean_annual_energy(index, flow):
    """The timed work: plant operation plus energy summary. Returns mean annual energy [J]."""
    operation = energy.simulate_plant(
        flow, GROSS_HEAD, RATED_FLOW_PER_UNIT, density=DENSITY, n_units=2,
        turbine_type="francis", head_loss=head_loss, residual=0.4,
        generator_efficiency=0.96, transformer_efficiency=0.99)
    summary = energy.energy_summary(
        index, operation.power, installed_capacity=4.0e6,
        power_without_friction=operation.power_without_friction,
        spill_flow=operation.spill_flow, residual_flow=operation.residual_flow,
        gross_head=GROSS_HEAD, density=DENSITY)
    return summary.mean_annual_energy


def best_time(index, flow, repeats=5):
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        mean_annual_energy(index, flow)
        best = min(best, time.perf_counter() - start)
    return best


def run():
    """Rows of (figure, value, reference, reference_value, ratio)."""
    times, steps = {}, {}
    for years in (10, 20, 40):
        index, flow = synthetic_record(years)
        mean_annual_energy(index, flow)  # warm-up
        times[years] = best_time(index, flow)
        steps[years] = len(index)
    energy_gwh = mean_annual_energy(*synthetic_record(40)) / 3.6e12
    rows = [
        ("time, 40-year hourly record [s]", times[40], "target", TARGET_SECONDS_40_YEARS,
         times[40] / TARGET_SECONDS_40_YEARS),
        ("time per step, 40 years [us]", times[40] / steps[40] * 1e6, "target / steps",
         TARGET_SECONDS_40_YEARS / steps[40] * 1e6, times[40] / TARGET_SECONDS_40_YEARS),
        ("time, 10-year record [s]", times[10], "-", float("nan"), float("nan")),
        ("time, 20-year record [s]", times[20], "-", float("nan"), float("nan")),
        ("time ratio 20 y / 10 y", times[20] / times[10], "linear growth (step ratio)",
         steps[20] / steps[10], times[20] / times[10] / (steps[20] / steps[10])),
        ("time ratio 40 y / 20 y", times[40] / times[20], "linear growth (step ratio)",
         steps[40] / steps[20], times[40] / times[20] / (steps[40] / steps[20])),
        ("mean annual energy, 40 years [GWh]", energy_gwh, "-", float("nan"), float("nan")),
    ]
    return rows


if __name__ == "__main__":
    print(f"{'figure':38s} {'value':>12s}  {'reference':28s} {'ref. value':>12s} {'ratio':>7s}")
    for figure, value, reference, reference_value, ratio in run():
        print(f"{figure:38s} {value:12.4g}  {reference:28s} {reference_value:12.4g} "
              f"{ratio:7.3f}")
