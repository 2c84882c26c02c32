"""Flow records: flow-duration curves, residual flow, flow allocation, gaps, rating curves.

Pure functions of numbers, numpy arrays and pandas objects (dated records need a
``pandas.DatetimeIndex``). No file reading or printing. Flows are in [m^3/s],
levels in [m], exceedance probabilities are fractions in [0, 1] unless the
parameter name says ``percent``.

Conventions
-----------
Exceedance probability uses the Weibull plotting position: the i-th largest of
n values (i = 1..n) is exceeded or equalled with probability ``i / (n + 1)``.
This is the same convention as ``numpy.quantile(..., method="weibull")`` applied
to the non-exceedance probability ``1 - p``.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

__all__ = [
    "FlowDurationCurve",
    "FlowAllocation",
    "FilledRecord",
    "FILL_METHODS",
    "time_step",
    "check_flow_record",
    "exceedance_curve",
    "flow_at_exceedance",
    "residual_flow",
    "available_flow",
    "record_gaps",
    "fill_gaps",
    "duration_table_to_series",
    "rating_curve",
]


# ---------------------------------------------------------------------------
# small private helpers shared by the energy modules
# ---------------------------------------------------------------------------
def _same_kind(template, values, name=None):
    """Return ``values`` as the same kind as ``template`` (float, ndarray or Series)."""
    if isinstance(template, pd.Series):
        return pd.Series(np.asarray(values, dtype=float), index=template.index,
                         name=name if name is not None else template.name)
    if np.ndim(template) == 0 and not isinstance(template, np.ndarray):
        return float(np.asarray(values))
    return np.asarray(values, dtype=float)


def _position(template, i):
    """Describe element ``i`` of ``template`` for an error message."""
    if isinstance(template, pd.Series):
        return f"row {i} (index {template.index[i]})"
    if np.ndim(template) == 0:
        return "the scalar value"
    return f"position {i}"


def _check_non_negative(values, name, template=None):
    """Raise ValueError naming the first NaN/inf or negative element."""
    arr = np.asarray(values, dtype=float)
    flat = arr.ravel()
    template = values if template is None else template
    bad = ~np.isfinite(flat)
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueError(f"{name}: value {flat[i]} at {_position(template, i)} is not finite; "
                         f"expected finite numbers (fill or remove missing values first)")
    neg = flat < 0.0
    if neg.any():
        i = int(np.argmax(neg))
        raise ValueError(f"{name}: negative value {flat[i]} at {_position(template, i)}; "
                         f"expected values >= 0")
    return arr


# ---------------------------------------------------------------------------
# time steps and record checks
# ---------------------------------------------------------------------------
def _as_datetime_index(index, name="index"):
    if isinstance(index, pd.Series):
        index = index.index
    if not isinstance(index, pd.DatetimeIndex):
        raise ValueError(f"{name}: expected a pandas.DatetimeIndex (dated record), "
                         f"got {type(index).__name__}")
    return index


def _check_order(index, name="index"):
    """Raise on unsorted or duplicate timestamps, naming the first offender."""
    if len(index) < 2:
        raise ValueError(f"{name}: a dated record needs at least 2 time steps, got {len(index)}")
    diffs = index[1:] - index[:-1]
    zero = diffs == pd.Timedelta(0)
    if zero.any():
        i = int(np.argmax(zero)) + 1
        raise ValueError(f"{name}: duplicate timestamp {index[i]} at row {i}; "
                         f"expected one value per time step")
    backwards = diffs < pd.Timedelta(0)
    if backwards.any():
        i = int(np.argmax(backwards)) + 1
        raise ValueError(f"{name}: timestamp {index[i]} at row {i} is earlier than the one "
                         f"before it ({index[i - 1]}); expected increasing timestamps")
    return diffs


def time_step(index, freq=None):
    """Regular time step of a dated record.

    Parameters
    ----------
    index : pandas.DatetimeIndex or pandas.Series
        Timestamps of the record (a Series contributes its index). [-]
    freq : str or pandas.Timedelta, optional
        Time step to use instead of inferring it, e.g. ``"h"`` or ``"D"``. [-]

    Returns
    -------
    step : pandas.Timedelta
        The time step. When inferred, the most frequent difference between
        consecutive timestamps (robust to gaps). [-]

    Raises
    ------
    ValueError
        Fewer than 2 timestamps, duplicate or decreasing timestamps.
    """
    index = _as_datetime_index(index)
    diffs = _check_order(index)
    if freq is not None:
        return pd.Timedelta(pd.tseries.frequencies.to_offset(freq)) if isinstance(freq, str) \
            else pd.Timedelta(freq)
    return pd.Timedelta(pd.Series(diffs).value_counts().idxmax())


def _runs(mask):
    """Start and stop (exclusive) positions of the runs of True in a boolean array."""
    padded = np.concatenate(([0], mask.astype(np.int8), [0]))
    edges = np.diff(padded)
    return np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)


def _gap_table(starts, ends, counts):
    return pd.DataFrame({"start": pd.DatetimeIndex(starts), "end": pd.DatetimeIndex(ends),
                         "missing_steps": np.asarray(counts, dtype=np.int64)})


def record_gaps(index, freq=None):
    """Find missing time steps in a dated record.

    Parameters
    ----------
    index : pandas.DatetimeIndex or pandas.Series
        Timestamps of the record. [-]
    freq : str or pandas.Timedelta, optional
        Expected time step (``"h"``, ``"D"``, ...); inferred as the most frequent
        difference between timestamps when omitted. [-]

    Returns
    -------
    gaps : pandas.DataFrame
        One row per gap with columns ``start`` (first missing timestamp),
        ``end`` (last missing timestamp) and ``missing_steps``. Empty when the
        record is complete. [-]

    Raises
    ------
    ValueError
        Duplicate or decreasing timestamps, or a timestamp off the regular grid
        (naming the timestamp).
    """
    index = _as_datetime_index(index)
    step = time_step(index, freq)
    diffs = index[1:] - index[:-1]
    ratio = np.asarray(diffs / step, dtype=float)
    steps = np.rint(ratio)
    off = (np.abs(ratio - steps) > 1e-9) | (steps < 1)
    if off.any():
        i = int(np.argmax(off)) + 1
        raise ValueError(f"index: timestamp {index[i]} at row {i} is not on the regular "
                         f"{step} grid (previous timestamp {index[i - 1]})")
    where = np.flatnonzero(steps > 1)
    starts = index[where] + step
    counts = steps[where].astype(np.int64) - 1
    ends = index[where + 1] - step
    return _gap_table(starts, ends, counts)


def check_flow_record(flows, index=None, freq=None):
    """Check a dated flow record for gaps, duplicate timestamps and bad values.

    Parameters
    ----------
    flows : array_like or pandas.Series
        Flow at each time step. [m^3/s]
    index : pandas.DatetimeIndex, optional
        Timestamps; taken from ``flows`` when it is a Series. [-]
    freq : str or pandas.Timedelta, optional
        Expected time step; inferred when omitted. [-]

    Returns
    -------
    step : pandas.Timedelta
        The regular time step of the record. [-]

    Raises
    ------
    ValueError
        Naming the first problem and its position: duplicate or decreasing
        timestamp, gap (first missing timestamp and number of missing steps),
        NaN or infinite flow, negative flow, length mismatch.
    """
    return _check_record(flows, index, freq, "flows")


def _check_record(values, index, freq, name):
    """check_flow_record for any non-negative quantity named ``name``."""
    if index is None:
        index = values
    index = _as_datetime_index(index)
    arr = np.asarray(values, dtype=float)
    if arr.ndim != 1 or arr.size != len(index):
        raise ValueError(f"{name}: {arr.size} values for {len(index)} timestamps; "
                         f"expected one value per timestamp")
    step = time_step(index, freq)
    gaps = record_gaps(index, step)
    if len(gaps):
        g = gaps.iloc[0]
        raise ValueError(f"index: gap of {g.missing_steps} missing step(s) of {step} from "
                         f"{g.start} to {g.end} (after row {index.get_loc(g.start - step)}); "
                         f"fill it explicitly with fill_gaps()")
    template = values if isinstance(values, pd.Series) else pd.Series(arr, index=index)
    _check_non_negative(arr, name, template)
    return step


# ---------------------------------------------------------------------------
# flow-duration curve
# ---------------------------------------------------------------------------
class FlowDurationCurve(NamedTuple):
    """Flow-duration (or power-duration) curve."""

    #: Exceedance probability of each value, fraction in [0, 1]. [-]
    exceedance: np.ndarray
    #: Value exceeded or equalled with that probability. [unit of the input]
    flow: np.ndarray


def exceedance_curve(flows, probabilities=None):
    """Flow-duration curve of a flow series (Weibull plotting position).

    Parameters
    ----------
    flows : array_like or pandas.Series
        Flow series (any order, no NaN, non-negative). Any non-negative
        quantity works (e.g. power for a power-duration curve). [m^3/s]
    probabilities : array_like, optional
        Exceedance probabilities (fractions in [0, 1]) at which to evaluate the
        curve. When omitted, the curve is returned at every sample. [-]

    Returns
    -------
    curve : FlowDurationCurve
        ``exceedance`` and ``flow`` arrays. Without ``probabilities``: the flows
        sorted in decreasing order with exceedance ``i / (n + 1)``. With them:
        the flows at those probabilities, linearly interpolated between
        plotting positions and held at the largest/smallest flow beyond
        ``1/(n+1)`` and ``n/(n+1)``. [-]

    Notes
    -----
    With the flows sorted in decreasing order :math:`Q_{(1)} \\ge ... \\ge Q_{(n)}`,
    the exceedance probability of :math:`Q_{(i)}` is

    .. math:: p_i = \\frac{i}{n + 1}

    (Weibull plotting position). The result equals
    ``numpy.quantile(flows, 1 - p, method="weibull")``.

    References
    ----------
    .. [1] Weibull, W. (1939). A statistical theory of the strength of materials.
       Ingeniörsvetenskapsakademiens Handlingar 151, Stockholm.
    .. [2] Hyndman, R. J. and Fan, Y. (1996). Sample quantiles in statistical
       packages. The American Statistician 50(4), 361-365, definition 6.
       doi:10.1080/00031305.1996.10473566
    """
    values = _check_non_negative(flows, "flows").ravel()
    n = values.size
    if n == 0:
        raise ValueError("flows: empty series; expected at least one value")
    descending = np.sort(values)[::-1]
    positions = np.arange(1, n + 1) / (n + 1.0)
    if probabilities is None:
        return FlowDurationCurve(positions, descending)
    p = np.asarray(probabilities, dtype=float)
    if np.any(~np.isfinite(p)) or np.any((p < 0.0) | (p > 1.0)):
        raise ValueError("probabilities: expected exceedance probabilities as fractions in "
                         f"[0, 1], got {p}")
    # np.interp needs increasing x: exceedance increases as flow decreases.
    return FlowDurationCurve(p, np.interp(p, positions, descending))


def flow_at_exceedance(flows, probability):
    """Flow exceeded or equalled with a given probability, e.g. Q95 for 0.95.

    Parameters
    ----------
    flows : array_like or pandas.Series
        Flow series. [m^3/s]
    probability : numeric
        Exceedance probability, fraction in [0, 1] (0.95 for Q95). [-]

    Returns
    -------
    flow : numeric
        Flow at that exceedance (float for a scalar probability, array
        otherwise). [m^3/s]

    Notes
    -----
    Weibull plotting position, see :func:`exceedance_curve`.

    References
    ----------
    .. [1] Hyndman, R. J. and Fan, Y. (1996). Sample quantiles in statistical
       packages. The American Statistician 50(4), 361-365, definition 6.
       doi:10.1080/00031305.1996.10473566
    """
    result = exceedance_curve(flows, np.atleast_1d(probability)).flow
    return _same_kind(probability, result if np.ndim(probability) else result[0])


# ---------------------------------------------------------------------------
# residual (environmental) flow and allocation
# ---------------------------------------------------------------------------
def residual_flow(index, constant=None, monthly=None, percent_of_mean=None, mean_flow=None):
    """Residual (environmental) flow to release at each time step.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Timestamps of the record. [-]
    constant : float, optional
        Constant residual flow. [m^3/s]
    monthly : sequence of 12 floats or dict, optional
        Residual flow for each calendar month, January first (a dict maps month
        number 1..12 to flow and must give all 12). [m^3/s]
    percent_of_mean : float, optional
        Residual flow as a percentage of ``mean_flow`` (e.g. 10 for 10 %). [%]
    mean_flow : float, optional
        Mean river flow used with ``percent_of_mean``. [m^3/s]

    Returns
    -------
    residual : pandas.Series
        Residual flow at each timestamp, named ``"residual_flow"``. [m^3/s]

    Notes
    -----
    At least one rule must be given. When several are given, the largest
    governs at each step (a rule of the form "the greater of ...").
    """
    index = _as_datetime_index(index)
    rules = []
    if constant is not None:
        rules.append(np.full(len(index), float(_check_non_negative(constant, "constant"))))
    if monthly is not None:
        if isinstance(monthly, dict):
            missing = sorted(set(range(1, 13)) - set(monthly))
            if missing:
                raise ValueError(f"monthly: no residual flow given for month(s) {missing}; "
                                 "expected all 12 months")
            monthly = [monthly[m] for m in range(1, 13)]
        table = _check_non_negative(monthly, "monthly").ravel()
        if table.size != 12:
            raise ValueError(f"monthly: expected 12 values (January to December), got {table.size}")
        rules.append(table[np.asarray(index.month) - 1])
    if percent_of_mean is not None:
        if mean_flow is None:
            raise ValueError("mean_flow: required with percent_of_mean")
        share = float(_check_non_negative(percent_of_mean, "percent_of_mean"))
        mean = float(_check_non_negative(mean_flow, "mean_flow"))
        rules.append(np.full(len(index), share / 100.0 * mean))
    if not rules:
        raise ValueError("residual_flow: give at least one of constant, monthly, percent_of_mean")
    return pd.Series(np.max(rules, axis=0), index=index, name="residual_flow")


class FlowAllocation(NamedTuple):
    """Split of the river flow at the intake. ``residual + turbined + spill == river``."""

    #: Flow sent to the turbines. [m^3/s]
    turbined: object
    #: Flow passing the intake above the residual flow and not turbined. [m^3/s]
    spill: object
    #: Residual flow actually released, min(residual requirement, river flow). [m^3/s]
    residual: object


def available_flow(river_flow, residual, plant_max, plant_min):
    """Share the river flow between residual release, turbines and spill.

    Parameters
    ----------
    river_flow : numeric or pandas.Series
        River flow at the intake. [m^3/s]
    residual : numeric or pandas.Series
        Residual (environmental) flow requirement, broadcast against
        ``river_flow``. [m^3/s]
    plant_max : float
        Largest flow the plant can take (all units at rated flow). [m^3/s]
    plant_min : float
        Smallest flow the plant can run on (one unit at its minimum). [m^3/s]

    Returns
    -------
    allocation : FlowAllocation
        ``turbined``, ``spill`` and ``residual`` of the same kind as
        ``river_flow``. [m^3/s]

    Notes
    -----
    .. math::

        R &= \\min(Q_{res}, Q_{river}) \\\\
        Q_t &= \\min(Q_{river} - R, Q_{max}) \\text{, set to 0 where } Q_t < Q_{min} \\\\
        S &= Q_{river} - R - Q_t \\ge 0

    The residual requirement is always met first (when the river carries it).
    """
    river = _check_non_negative(river_flow, "river_flow")
    requirement = _check_non_negative(residual, "residual")
    plant_max = float(_check_non_negative(plant_max, "plant_max"))
    plant_min = float(_check_non_negative(plant_min, "plant_min"))
    if plant_min > plant_max:
        raise ValueError(f"plant_min: {plant_min} m^3/s exceeds plant_max {plant_max} m^3/s")
    released = np.minimum(requirement, river)
    surplus = river - released
    turbined = np.minimum(surplus, plant_max)
    turbined = np.where(turbined < plant_min * (1.0 - 1e-9), 0.0, turbined)  # rounding-safe
    spill = np.maximum(surplus - turbined, 0.0)
    return FlowAllocation(_same_kind(river_flow, turbined, "turbined_flow"),
                          _same_kind(river_flow, spill, "spill_flow"),
                          _same_kind(river_flow, np.broadcast_to(released, river.shape),
                                     "residual_flow"))


# ---------------------------------------------------------------------------
# gap filling
# ---------------------------------------------------------------------------
class FilledRecord(NamedTuple):
    """A gap-filled record and the table of what was filled."""

    #: Complete record on the regular grid. [m^3/s]
    series: pd.Series
    #: Filled runs: ``start``, ``end``, ``missing_steps`` (missing timestamps and NaN values). [-]
    gaps: pd.DataFrame


def _fill_linear(series):
    values = series.to_numpy()
    missing = np.isnan(values)
    if missing[0] or missing[-1]:
        raise ValueError("method 'linear': the record starts or ends with missing values, "
                         "which cannot be interpolated; trim the record or use another method")
    t = series.index.asi8.astype(float)
    filled = values.copy()
    filled[missing] = np.interp(t[missing], t[~missing], values[~missing])
    return pd.Series(filled, index=series.index, name=series.name)


def _fill_previous(series):
    if np.isnan(series.iloc[0]):
        raise ValueError("method 'previous': the record starts with a missing value, which "
                         "has no previous value; trim the record or use another method")
    return series.ffill()


def _fill_monthly_mean(series):
    months = series.index.month
    means = series.groupby(months).mean()
    needed = np.unique(months[series.isna().to_numpy()])
    empty = [m for m in needed if m not in means.index or np.isnan(means.loc[m])]
    if empty:
        raise ValueError(f"method 'monthly_mean': no data at all for month(s) {empty}")
    fill = pd.Series(means.reindex(months).to_numpy(), index=series.index)
    return series.fillna(fill)


def _refuse(series):
    return series


#: Gap-filling methods: name -> (function, description).
FILL_METHODS = {
    "linear": (_fill_linear, "straight line in time between the values either side of the gap"),
    "previous": (_fill_previous, "last value before the gap carried forward"),
    "monthly_mean": (_fill_monthly_mean,
                     "mean of all present values of the same calendar month in the record"),
    "refuse": (_refuse, "raise ValueError naming the first gap"),
}


def fill_gaps(series, method, freq=None):
    """Fill missing time steps and NaN values of a dated flow record by a named method.

    Parameters
    ----------
    series : pandas.Series
        Flow record with a DatetimeIndex; missing timestamps and NaN values are
        both gaps. [m^3/s]
    method : str
        One of ``FILL_METHODS``: ``"linear"`` (straight line in time),
        ``"previous"`` (last value carried forward), ``"monthly_mean"`` (mean of
        the same calendar month over the record) or ``"refuse"`` (raise a
        ValueError naming the first gap). [-]
    freq : str or pandas.Timedelta, optional
        Time step of the record; inferred when omitted. [-]

    Returns
    -------
    filled : FilledRecord
        ``series``: the record on the complete regular grid; ``gaps``: every run
        that was filled (start, end, missing_steps), so nothing is filled
        silently. [-]

    Raises
    ------
    ValueError
        Unknown method; ``"refuse"`` with any gap; negative flows; duplicate or
        off-grid timestamps; gaps at the ends that the method cannot fill.
    """
    if method not in FILL_METHODS:
        raise ValueError(f"method: unknown gap-filling method {method!r}; "
                         f"expected one of {sorted(FILL_METHODS)}")
    if not isinstance(series, pd.Series):
        raise ValueError("series: expected a pandas.Series with a DatetimeIndex")
    index = _as_datetime_index(series.index, "series.index")
    step = time_step(index, freq)
    record_gaps(index, step)  # raises on off-grid timestamps
    values = series.to_numpy(dtype=float)
    present = ~np.isnan(values)
    if np.isinf(values).any() or (values[present] < 0).any():
        _check_non_negative(np.where(present, values, 0.0), "series",
                            pd.Series(values, index=index))
    full_index = pd.date_range(index[0], index[-1], freq=step)
    full = pd.Series(values, index=index, name=series.name).reindex(full_index)
    starts, stops = _runs(full.isna().to_numpy())
    gaps = _gap_table(full_index[starts], full_index[stops - 1], stops - starts)
    if method == "refuse" and len(gaps):
        g = gaps.iloc[0]
        raise ValueError(f"series: gap of {g.missing_steps} missing step(s) from {g.start} to "
                         f"{g.end}; choose a fill method explicitly "
                         f"(one of {sorted(set(FILL_METHODS) - {'refuse'})})")
    filled = FILL_METHODS[method][0](full) if len(gaps) else full
    return FilledRecord(filled, gaps)


# ---------------------------------------------------------------------------
# flow-duration table -> representative year
# ---------------------------------------------------------------------------
#: Exceedances [-] a flow-duration table should reach at its ends; beyond them the
#: representative year holds the end flows, and a run says so (common practice: the
#: table should reach the floods and the driest days).
DURATION_TABLE_ENDS = (0.01, 0.99)


def duration_table_to_series(exceedance_percent, flow, year=2001, freq="h"):
    """Representative year of flows from a flow-duration table.

    Parameters
    ----------
    exceedance_percent : array_like
        Exceedance of each table row, strictly increasing, in [0, 100]. [%]
    flow : array_like
        Flow exceeded for that percentage of time, non-increasing. [m^3/s]
    year : int, default 2001
        Calendar year given to the timestamps (a non-leap year gives 8760 hourly
        or 365 daily steps). [-]
    freq : {"h", "D"}, default "h"
        Time step of the representative year. [-]

    Returns
    -------
    flows : pandas.Series
        One calendar year of flows, named ``"flow"``. [m^3/s]

    Notes
    -----
    Step i of n (i = 0..n-1) is given the exceedance at its mid-point,
    :math:`p_i = 100 (i + 1/2) / n`, and the flow is linearly interpolated in
    the table at :math:`p_i`; beyond the first/last row the end flows are held.
    The flows therefore fall steadily through the year: the series has the
    same duration curve, hence the same energy, capacity factor and
    power-duration curve, as any record with that table, but no seasonal
    order. Monthly energies computed from it are not meaningful.
    """
    p = np.asarray(exceedance_percent, dtype=float).ravel()
    q = _check_non_negative(flow, "flow").ravel()
    if p.size != q.size or p.size < 2:
        raise ValueError(f"exceedance_percent, flow: expected two equal-length columns of at "
                         f"least 2 rows, got {p.size} and {q.size}")
    if np.any(~np.isfinite(p)) or np.any((p < 0) | (p > 100)):
        i = int(np.argmax(~np.isfinite(p) | (p < 0) | (p > 100)))
        raise ValueError(f"exceedance_percent: value {p[i]} at row {i} is outside [0, 100]")
    if np.any(np.diff(p) <= 0):
        i = int(np.argmax(np.diff(p) <= 0)) + 1
        raise ValueError(f"exceedance_percent: row {i} ({p[i]}) does not increase; "
                         "expected strictly increasing exceedance")
    if np.any(np.diff(q) > 0):
        i = int(np.argmax(np.diff(q) > 0)) + 1
        raise ValueError(f"flow: row {i} ({q[i]} m^3/s) is larger than the row before; a "
                         "flow-duration table must not increase with exceedance")
    if freq not in ("h", "D"):
        raise ValueError(f"freq: expected 'h' (hourly) or 'D' (daily), got {freq!r}")
    index = pd.date_range(pd.Timestamp(year=year, month=1, day=1),
                          pd.Timestamp(year=year + 1, month=1, day=1), freq=freq,
                          inclusive="left")
    n = len(index)
    mid = 100.0 * (np.arange(n) + 0.5) / n
    return pd.Series(np.interp(mid, p, q), index=index, name="flow")


# ---------------------------------------------------------------------------
# rating curve
# ---------------------------------------------------------------------------
def rating_curve(level_flow_table, extrapolate=False):
    """Water level as a function of flow from a stage-discharge table.

    Parameters
    ----------
    level_flow_table : array_like of shape (n, 2), dict or pandas.DataFrame
        Table of (level, flow) rows: an (n, 2) array with columns level then
        flow, or a mapping/DataFrame with keys ``"level"`` and ``"flow"``. Rows
        in increasing order; both columns strictly increasing. [m, m^3/s]
    extrapolate : bool, default False
        Extend the end segments linearly beyond the table; when False a flow
        outside the table raises ValueError. [-]

    Returns
    -------
    level : callable
        ``level(flow)`` -> water level, numeric in, same kind out. [m]

    Notes
    -----
    Piecewise-linear interpolation of level in flow. The table must be
    monotone: a stage-discharge relation whose level does not rise with flow
    is not a valid rating and is rejected, naming the row.
    """
    if isinstance(level_flow_table, (dict, pd.DataFrame)):
        try:
            levels = np.asarray(level_flow_table["level"], dtype=float).ravel()
            flows = np.asarray(level_flow_table["flow"], dtype=float).ravel()
        except KeyError as exc:
            raise ValueError("level_flow_table: expected keys 'level' and 'flow'") from exc
    else:
        table = np.asarray(level_flow_table, dtype=float)
        if table.ndim != 2 or table.shape[1] != 2:
            raise ValueError(f"level_flow_table: expected shape (n, 2) with columns (level, "
                             f"flow), got shape {table.shape}")
        levels, flows = table[:, 0], table[:, 1]
    if levels.size < 2 or levels.size != flows.size:
        raise ValueError("level_flow_table: expected at least 2 rows of (level, flow)")
    if np.any(~np.isfinite(levels)) or np.any(~np.isfinite(flows)):
        raise ValueError("level_flow_table: NaN or infinite entry")
    _check_non_negative(flows, "level_flow_table flow")
    for name, column in (("level", levels), ("flow", flows)):
        step = np.diff(column)
        if np.any(step <= 0):
            i = int(np.argmax(step <= 0)) + 1
            raise ValueError(f"level_flow_table: {name} at row {i} ({column[i]}) does not "
                             f"increase from row {i - 1} ({column[i - 1]}); a rating curve "
                             "must be monotone (level and flow strictly increasing)")
    low_slope = (levels[1] - levels[0]) / (flows[1] - flows[0])
    high_slope = (levels[-1] - levels[-2]) / (flows[-1] - flows[-2])

    def level(flow):
        """Water level at ``flow`` [m^3/s] from the rating table. [m]"""
        q = np.asarray(flow, dtype=float)
        if np.any(~np.isfinite(q)):
            raise ValueError("flow: NaN or infinite flow given to the rating curve")
        if not extrapolate:
            outside = (q < flows[0]) | (q > flows[-1])
            if np.any(outside):
                i = int(np.argmax(outside.ravel()))
                raise ValueError(f"flow: {q.ravel()[i]} m^3/s at {_position(flow, i)} is "
                                 f"outside the rating table [{flows[0]}, {flows[-1]}] m^3/s; "
                                 "extend the table or pass extrapolate=True")
        z = np.interp(q, flows, levels)
        z = np.where(q < flows[0], levels[0] + low_slope * (q - flows[0]), z)
        z = np.where(q > flows[-1], levels[-1] + high_slope * (q - flows[-1]), z)
        return _same_kind(flow, z, "level")

    return level
