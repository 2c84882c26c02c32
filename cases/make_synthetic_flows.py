"""Write the synthetic flow records of the bundled demo cases.

The demo sites are invented and so are their flow records: a seasonal mean with
log-normal day-to-day noise carried over from day to day (an AR(1) process on the
logarithm of flow).  Run from the repository root to regenerate them:

    python cases/make_synthetic_flows.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).parent

#: case folder -> (mean flow, seasonal amplitude, peak day of year, unit, column, seed)
RECORDS = {
    "alder-gorge-high-head": (2.1, 0.75, 150, "m^3/s", 1, 11),
    "millrace-flats-low-head": (21.0, 0.55, 100, "m^3/s", 1, 22),
    "cedar-fork-us-units": (190.0, 0.65, 120, "cfs", 1, 33),
}


def synthetic_daily_flows(mean, amplitude, peak_day, years=12, start="2008-01-01", seed=0):
    """A synthetic daily flow record [same unit as mean]; labelled synthetic wherever used."""
    rng = np.random.default_rng(seed)
    days = pd.date_range(start, periods=int(365.25 * years), freq="D")
    doy = days.day_of_year.to_numpy()
    seasonal = 1.0 + amplitude * np.cos(2 * np.pi * (doy - peak_day) / 365.25)
    noise = np.empty(len(days))
    eps = rng.normal(0.0, 0.25, len(days))
    noise[0] = eps[0]
    for i in range(1, len(days)):  # AR(1) on log-flow; this generator is not a hot path
        noise[i] = 0.9 * noise[i - 1] + eps[i] * np.sqrt(1 - 0.9**2)
    flow = mean * seasonal * np.exp(noise - 0.5 * 0.25**2)
    return pd.Series(np.round(flow, 4), index=days)


def main():
    for folder, (mean, amp, peak, unit, _, seed) in RECORDS.items():
        s = synthetic_daily_flows(mean, amp, peak, seed=seed)
        out = HERE / folder / "flows.csv"
        out.parent.mkdir(exist_ok=True)
        with out.open("w", encoding="utf-8", newline="\n") as fh:
            fh.write("# SYNTHETIC flow record for an invented demo site "
                     "(cases/make_synthetic_flows.py); not measured data\n")
            pd.DataFrame({"date": s.index.strftime("%Y-%m-%d"),
                          f"flow [{unit}]": s.to_numpy()}).to_csv(fh, index=False)


if __name__ == "__main__":
    main()
