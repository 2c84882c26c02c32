"""The case folder's CSV tables, each read and checked (flow record, ratings, duration
table, headwater series, efficiency table) and the water-hammer settings that read one.

Called by :func:`penstock.case.load_case` with its reader; every problem is a
:class:`~penstock.case.CaseError` naming the file and the row.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from .case import CaseError, _Reader
from .schema import CASE_FILE, PRICE_COLUMNS, SECTIONS_BY_NAME


def _flow_record(rd: _Reader, path: Path, gap_method: str) -> pd.Series:
    fname = path.name
    rfield = SECTIONS_BY_NAME["flows"].fields_by_name["record"]
    df = rd.table(path, rfield.columns, max_rows=rfield.max_rows)
    idx = pd.DatetimeIndex(df["date"])
    q = df["flow"].to_numpy()
    neg = q < 0
    if neg.any():
        row = int(np.flatnonzero(neg)[0])
        raise CaseError(fname, f"row {rd.line(fname, row)}, column 'flow'", f"flow {q[row]:g} m^3/s on "
                        f"{idx[row]:%Y-%m-%d %H:%M} is negative; expected a flow of zero or more")
    dup = idx.duplicated()
    if dup.any():
        row = int(np.flatnonzero(dup)[0])
        raise CaseError(fname, f"row {rd.line(fname, row)}, column 'date'", f"date {idx[row]:%Y-%m-%d %H:%M} appears "
                        "twice; expected each date once")
    ns = idx.values.astype("datetime64[ns]").astype(np.int64)
    back = np.diff(ns) <= 0
    if back.any():
        row = int(np.flatnonzero(back)[0]) + 1
        raise CaseError(fname, f"row {rd.line(fname, row)}, column 'date'", f"date {idx[row]} comes before "
                        f"{idx[row - 1]}; expected dates in order")
    if len(idx) < 2:
        raise CaseError(fname, "", "needs at least two dated flows")
    odd = (idx.minute != 0) | (idx.second != 0) | (idx.microsecond != 0) | (idx.nanosecond != 0)
    if np.any(odd):
        row = int(np.flatnonzero(odd)[0])
        raise CaseError(fname, f"row {rd.line(fname, row)}, column 'date'", f"{idx[row]} is not "
                        "on a whole hour; expected daily or hourly dates (YYYY-MM-DD or "
                        "YYYY-MM-DD HH:00)")
    series = pd.Series(q, index=idx, name="flow")
    step = pd.Timedelta(int(np.median(np.diff(ns))), "ns")
    if step not in (pd.Timedelta(hours=1), pd.Timedelta(days=1)):
        raise CaseError(fname, "column 'date'", f"the time step is {step}; expected a daily or "
                        "hourly record")
    full = pd.date_range(idx[0], idx[-1], freq=step)
    if len(full) != len(idx) or not full.equals(idx):
        missing = full.difference(idx)
        if gap_method == "refuse":
            shown = f"{missing[0]:%Y-%m-%d}" if step == pd.Timedelta(days=1) else \
                f"{missing[0]:%Y-%m-%d %H:%M}"
            steps_word = "time step is" if len(missing) == 1 else "time steps are"
            raise CaseError(fname, "column 'date'", f"{len(missing)} {steps_word} missing, the "
                            f"first at {shown}; fill the record or set "
                            "flows.gaps = \"linear\" in site.toml")
        from . import hydrology

        filled = hydrology.fill_gaps(series, gap_method, freq=step)
        series = filled.series.rename("flow")
        series.attrs["filled_gaps"] = filled.gaps
        rd.echo.append({"section": "flows", "key": "flows.record gaps",
                        "as written": f"{len(missing)} missing steps",
                        "value (SI)": f"filled in {len(filled.gaps)} gap"
                        f"{'s' if len(filled.gaps) != 1 else ''}: " +
                        {"linear": "linear interpolation", "previous": "previous value carried "
                         "forward", "monthly_mean": "mean of the calendar month"}[gap_method],
                        "SI unit": "", "source": fname})
    rd.echo.append({"section": "flows", "key": "flows.record", "as written": fname,
                    "value (SI)": f"{len(series)} steps of {step}, {series.index[0]:%Y-%m-%d} "
                    f"to {series.index[-1]:%Y-%m-%d}, mean {series.mean():.4g}",
                    "SI unit": "m^3/s", "source": fname})
    series.attrs["step_hours"] = step / pd.Timedelta(hours=1)
    return series


def _rating(rd: _Reader, path: Path, what: str) -> pd.DataFrame:
    """A level–flow rating: both columns strictly increasing, flows not negative."""
    cols = (("flow", "flow"), ("level", "length"))
    rating = rd.table(path, cols)
    name = path.name
    q = rating["flow"].to_numpy()
    if np.any(q < 0):
        row = int(np.flatnonzero(q < 0)[0])
        raise CaseError(name, f"row {rd.line(name, row)}, column 'flow'", "flow is negative; expected "
                        "zero or more")
    for col in ("flow", "level"):
        d = np.diff(rating[col].to_numpy())
        if np.any(d <= 0):
            row = int(np.flatnonzero(d <= 0)[0]) + 1
            raise CaseError(name, f"row {rd.line(name, row)}, column '{col}'",
                            f"{col} does not increase; expected a monotone {what} rating "
                            "(level rising with flow)")
    rd.echo.append({"section": "levels", "key": f"levels.{what}_rating", "as written": name,
                    "value (SI)": f"{len(rating)} points, {q[0]:g} to {q[-1]:g} m^3/s",
                    "SI unit": "m^3/s, m", "source": name})
    return rating


def _duration_record(rd: _Reader, path: Path) -> pd.Series:
    """A representative hourly year built from a flow-duration table."""
    from . import hydrology

    df = rd.table(path, (("exceedance", "fraction"), ("flow", "flow")))
    name = path.name
    p, q = df["exceedance"].to_numpy(), df["flow"].to_numpy()
    bad = (p < 0) | (p > 1)
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        unit = rd.units.get(name, {}).get("exceedance")
        hint = (" (the column is in [-]: head it 'exceedance [%]' if the values are "
                "percentages)" if unit != "%" and np.all((p >= 0) & (p <= 100)) else "")
        raise CaseError(name, f"row {rd.line(name, row)}, column 'exceedance'", "exceedance is outside "
                        f"0 to 100 %{hint}")
    if np.any(np.diff(p) <= 0):
        row = int(np.flatnonzero(np.diff(p) <= 0)[0]) + 1
        raise CaseError(name, f"row {rd.line(name, row)}, column 'exceedance'", "exceedance does not "
                        "increase; expected rows in rising exceedance")
    if np.any(np.diff(q) > 0) or np.any(q < 0):
        row = int(np.flatnonzero((np.diff(q) > 0) | (q[1:] < 0))[0]) + 1
        raise CaseError(name, f"row {rd.line(name, row)}, column 'flow'", "flow rises with exceedance or "
                        "is negative; expected flows falling as exceedance rises")
    try:
        series = hydrology.duration_table_to_series(100 * p, q)
    except ValueError as exc:
        raise CaseError(name, "", str(exc)) from None
    series.name = "flow"
    series.attrs["from_duration_table"] = True
    series.attrs["duration_coverage"] = (float(p[0]), float(p[-1]))   # fractions
    rd.echo.append({"section": "flows", "key": "flows.duration_table", "as written": name,
                    "value (SI)": f"{len(df)} points, turned into a representative hourly year",
                    "SI unit": "m^3/s", "source": name})
    return series


def _levels_not_below(rd: _Reader, name: str, levels: np.ndarray, floor: float, what: str):
    """Refuse headwater levels below the minimum headwater, where the checks hold."""
    low = levels < floor - 1e-9
    if low.any():
        row = int(np.flatnonzero(low)[0])
        raise CaseError(name, f"row {rd.line(name, row)}, column 'level'", f"{what} "
                        f"{rd.say.m(float(levels[row]))} is below levels.headwater_min "
                        f"({rd.say.m(floor)}), the level the pressure and submergence checks "
                        "hold at; expected levels at or above it (or a lower headwater_min)")


def _level_series(rd: _Reader, path: Path, index: pd.DatetimeIndex) -> pd.Series:
    sfield = SECTIONS_BY_NAME["levels"].fields_by_name["headwater_series"]
    df = rd.table(path, sfield.columns, max_rows=sfield.max_rows)
    series = pd.Series(df["level"].to_numpy(), index=pd.DatetimeIndex(df["date"]))
    if series.index.duplicated().any():
        row = int(np.flatnonzero(series.index.duplicated())[0])
        raise CaseError(path.name, f"row {rd.line(path.name, row)}, column 'date'", "date appears twice")
    missing = index.difference(series.index)
    if len(missing):
        raise CaseError(path.name, "column 'date'", f"has no level for {len(missing)} dates of "
                        f"the flow record, the first {missing[0]}; expected a level for every "
                        "date of the record")
    rd.echo.append({"section": "levels", "key": "levels.headwater_series",
                    "as written": path.name, "value (SI)": f"{len(series)} levels",
                    "SI unit": "m", "source": path.name})
    return series.reindex(index)


def _efficiency_table(rd: _Reader, path: Path, minimum_relative_flow=None) -> np.ndarray:
    df = rd.table(path, (("relative flow", "dimensionless"), ("efficiency", "dimensionless")))
    name = path.name
    x, e = df["relative flow"].to_numpy(), df["efficiency"].to_numpy()
    bad = ~((e > 0) & (e <= 1))
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        raise CaseError(name, f"row {rd.line(name, row)}, column 'efficiency'", f"efficiency {e[row]:g} "
                        "is outside (0, 1]; expected e.g. 0.91 or 91 %")
    if np.any(np.diff(x) <= 0) or np.any(x <= 0):
        row = int(np.flatnonzero(np.concatenate([[x[0] <= 0], np.diff(x) <= 0]))[0])
        raise CaseError(name, f"row {rd.line(name, row)}, column 'relative flow'", "relative flow must be "
                        "positive and increasing")
    if x[-1] < 1.0 - 1e-9:
        raise CaseError(name, "column 'relative flow'", f"ends at {x[-1]:g}; expected the "
                        "table to reach 1 (the unit's design flow)")
    table = np.column_stack([x, e])
    if minimum_relative_flow is not None:
        from . import turbines

        try:
            turbines.check_efficiency_table(table, minimum_relative_flow)
        except ValueError as exc:
            raise CaseError(name, "column 'relative flow'", f"{exc}") from None
    rd.echo.append({"section": "turbine", "key": "turbine.efficiency_table", "as written": name,
                    "value (SI)": f"{len(df)} points, best {e.max():.3f}", "SI unit": "-",
                    "source": name})
    return table


def _surge(rd: _Reader, surge: dict, chainage: np.ndarray) -> dict:
    """Consistency of the water-hammer settings; reads the closure table."""
    law = surge["closure_law"]
    if law == "instant":
        surge["closure_time"] = 1e-9   # named on purpose; the time is not used
    if law == "two_stage":
        for key in ("knee_time", "knee_opening"):
            if surge[key] is None:
                raise CaseError(CASE_FILE, f"surge.{key}", "is missing; a two_stage closure "
                                "needs knee_time and knee_opening")
        if surge["knee_time"] >= surge["closure_time"]:
            raise CaseError(CASE_FILE, "surge.knee_time", f"{surge['knee_time']:g} s is not "
                            f"before the closure time {surge['closure_time']:g} s")
    if law == "table":
        if surge["closure_table"] is None:
            raise CaseError(CASE_FILE, "surge.closure_table", "is missing; a table closure "
                            "needs a CSV of opening against time")
        path = surge["closure_table"]
        df = rd.table(path, (("time", "time"), ("opening", "fraction")))
        t, o = df["time"].to_numpy(), df["opening"].to_numpy()
        if t[0] != 0 or np.any(np.diff(t) <= 0):
            raise CaseError(path.name, "column 'time'", "must start at 0 and increase")
        if np.any((o < 0) | (o > 1)) or np.any(np.diff(o) > 0):
            row = int(np.flatnonzero((o < 0) | (o > 1) | np.concatenate([[False],
                                                                         np.diff(o) > 0]))[0])
            raise CaseError(path.name, f"row {rd.line(path.name, row)}, column 'opening'",
                            "opening must lie in 0..1 and never rise during a closure")
        if o[0] <= 0:
            raise CaseError(path.name, f"row {rd.line(path.name, 0)}, column 'opening'",
                            "the valve starts closed; expected the opening before the "
                            "rejection (e.g. 1) in the first row, at time 0")
        if not o[-1] < o[0]:
            raise CaseError(path.name, "column 'opening'", "the opening never falls, so "
                            "nothing closes; expected openings falling from the first row's "
                            "to the last row's (e.g. 1 to 0)")
        surge["closure_table"] = (t, o)
        surge["closure_time"] = float(t[np.argmax(o <= o[-1])])
    for i, x in enumerate(surge["record_at"]):
        if not chainage[0] <= x <= chainage[-1]:
            raise CaseError(CASE_FILE, f"surge.record_at[{i + 1}]", f"chainage {x:g} m is off "
                            f"the route ({chainage[0]:g} to {chainage[-1]:g} m)")
    return surge


def _price_table(rd: _Reader, path: Path, family: str) -> pd.DataFrame:
    """A price table of a pressure-class pipe family -> SI columns ``size`` [m] (the
    nominal size: PE outside diameter, ductile-iron DN), ``class`` [Pa] (the rated
    pressure, snapped to the family's class) and ``price`` [currency/m]."""
    from . import pipeclasses
    from .materials import MATERIALS

    name = path.name
    df = rd.table(path, PRICE_COLUMNS, max_rows=2000)
    if family == "hdpe":
        series, what = pipeclasses.PE_OUTSIDE_DIAMETERS, "PE100 outside diameter (ISO 4427-2)"
        mat = MATERIALS["hdpe_pe100"]
    else:
        series = 1e-3 * np.array(list(pipeclasses.DUCTILE_IRON_OUTSIDE_DIAMETERS), float)
        what = "ductile-iron DN (EN 545)"
        mat = MATERIALS["ductile_iron_en545"]
    classes = np.asarray(mat.pressure_classes, float)
    size, cls, price = (df[c].to_numpy() for c in ("size", "class", "price"))
    out_size, out_cls = np.empty_like(size), np.empty_like(cls)
    for i in range(len(df)):
        row = f"row {rd.line(name, i)}"
        j = int(np.argmin(np.abs(series - size[i])))
        if abs(series[j] - size[i]) > 5e-4:
            raise CaseError(name, f"{row}, column 'size'", f"{1e3 * size[i]:g} mm is not a "
                            f"{what}; expected one of " + ", ".join(
                                f"{1e3 * v:.0f}" for v in series) + " mm")
        k = int(np.argmin(np.abs(classes - cls[i])))
        if abs(classes[k] - cls[i]) > 5e-3 * classes[k]:
            raise CaseError(name, f"{row}, column 'class'", f"{cls[i] / 1e5:g} bar is not a "
                            f"class of {mat.description}; expected one of " + ", ".join(
                                f"{c / 1e5:g}" for c in classes) + " bar")
        if family != "hdpe":
            top = float(pipeclasses.ductile_iron_highest_class(1e3 * series[j]))
            if classes[k] > top * (1 + 1e-9):
                raise CaseError(name, f"{row}, column 'class'", f"{classes[k] / 1e5:g} bar is "
                                f"above the highest class of DN {1e3 * series[j]:.0f} "
                                f"(C{top / 1e5:g}); expected at most {top / 1e5:g} bar")
        if not price[i] > 0:
            raise CaseError(name, f"{row}, column 'price'", f"{price[i]:g} is not above zero; "
                            "expected the delivered price per metre")
        if i and series[j] == out_size[i - 1] and classes[k] <= out_cls[i - 1]:
            raise CaseError(name, f"{row}, column 'class'", f"{classes[k] / 1e5:g} bar does not "
                            f"increase from the row before ({out_cls[i - 1] / 1e5:g} bar) for the "
                            "same size; expected each size's classes once, in increasing order")
        out_size[i], out_cls[i] = series[j], classes[k]
    seen = set()
    for i, key in enumerate(zip(out_size, out_cls, strict=True)):
        if key in seen:
            raise CaseError(name, f"row {rd.line(name, i)}", "repeats a size and class of an "
                            "earlier row; expected each pair once")
        seen.add(key)
    key = "pe100_prices" if family == "hdpe" else f"{family}_prices"
    rd.echo.append({"section": "diameter_study", "key": f"diameter_study.{key}",
                    "as written": name, "value (SI)": f"{len(df)} prices, "
                    f"{len(set(out_size.tolist()))} sizes", "SI unit": "1/m", "source": name})
    return pd.DataFrame({"size": out_size, "class": out_cls, "price": price})
