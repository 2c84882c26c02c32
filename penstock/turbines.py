"""Turbine types, specific speed, part-load efficiency and dispatch of identical units.

Pure functions; SI inside except where the trade's customary units are named
(metric specific speed uses rev/min, kW and m).

Sources of the registry values
------------------------------
* Head ranges: ESHA (2004), Guide on How to Develop a Small Hydropower Plant,
  European Small Hydropower Association, Chapter 6, table "Range of heads"
  (Kaplan and propeller 2-40 m, Francis 25-350 m, Pelton 50-1300 m, cross-flow
  5-200 m, Turgo 50-250 m). From memory.
* Specific-speed ranges: ESHA (2004) Chapter 6 gives n_QE ranges (Pelton
  0.005-0.025 per jet, Francis 0.05-0.33, Kaplan/propeller 0.19-1.55), stored
  here converted to metric kW-based n_s with n_s ~= 995 n_QE (rounded). Turgo
  and cross-flow ranges are common practice. From memory.
* Flow ranges: approximate envelopes read from the ESHA (2004) application-range
  chart (head against flow). Read from figure, from memory; for ranking only.
* Minimum flow fraction of rated flow: common practice values (ESHA 2004, Ch. 6,
  and manufacturers' usual figures). From memory.
* Efficiency curves: typical small-turbine efficiency against Q/Q_rated, read
  from the "typical efficiency curves" figure of ESHA (2004), Chapter 6.
  Read from figure, from memory; +-0.02 absolute.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from penstock.constants import GRAVITY
from penstock.hydrology import _check_non_negative, _position, _same_kind

__all__ = [
    "angular_speed",
    "head_datum",
    "synchronous_speed",
    "units_running",
    "TURBINE_TYPES",
    "TurbineCandidate",
    "ApplicationRanges",
    "application_ranges",
    "DispatchResult",
    "specific_speed",
    "dimensionless_specific_speed",
    "suggest_turbine_types",
    "check_efficiency_table",
    "turbine_efficiency",
    "efficiency_function",
    "scaled_efficiency_table",
    "dispatch",
]

_ESHA = ("ESHA (2004). Guide on How to Develop a Small Hydropower Plant. European Small "
         "Hydropower Association, Brussels, Chapter 6 (Electromechanical equipment).")

#: Registry of turbine types. Per type: ``head_range`` [m] (published application
#: range), ``flow_range`` [m^3/s] per unit (read from the application-range chart,
#: approximate), ``specific_speed_range`` (metric n_s, rev/min, kW, m),
#: ``minimum_relative_flow`` [-] (common practice), ``efficiency_table``
#: ((Q/Q_rated, efficiency) rows), ``impulse`` (True for impulse turbines) and
#: ``sources``.
TURBINE_TYPES = {
    "pelton": {
        "head_range": (50.0, 1300.0),
        "flow_range": (0.02, 10.0),
        "specific_speed_range": (5.0, 60.0),  # 1 to 6 jets: 0.005..0.025*sqrt(6) n_QE
        "minimum_relative_flow": 0.10,
        "efficiency_table": ((0.10, 0.80), (0.20, 0.87), (0.30, 0.89), (0.40, 0.90),
                             (0.60, 0.91), (0.80, 0.91), (1.00, 0.90)),
        "impulse": True,
        "sources": {"head_range": _ESHA + " Table 'Range of heads'. From memory.",
                    "specific_speed_range": _ESHA + " n_QE 0.005-0.025 per jet, up to 6 jets; "
                                            "converted n_s ~= 995 n_QE. From memory.",
                    "minimum_relative_flow": "Common practice (multi-jet Pelton). From memory.",
                    "efficiency_table": _ESHA + " Typical efficiency curves. Read from figure, "
                                        "from memory."},
    },
    "turgo": {
        "head_range": (50.0, 250.0),
        "flow_range": (0.02, 10.0),
        "specific_speed_range": (20.0, 80.0),
        "minimum_relative_flow": 0.20,
        "efficiency_table": ((0.20, 0.80), (0.30, 0.84), (0.50, 0.86), (0.70, 0.87),
                             (1.00, 0.86)),
        "impulse": True,
        "sources": {"head_range": _ESHA + " Table 'Range of heads'. From memory.",
                    "specific_speed_range": "Common practice. From memory.",
                    "minimum_relative_flow": "Common practice. From memory.",
                    "efficiency_table": "Common practice typical curve (between the Pelton and "
                                        "cross-flow curves of " + _ESHA + "). From memory."},
    },
    "crossflow": {
        "head_range": (5.0, 200.0),
        "flow_range": (0.02, 9.0),
        "specific_speed_range": (40.0, 200.0),
        "minimum_relative_flow": 0.15,
        "efficiency_table": ((0.15, 0.70), (0.20, 0.76), (0.30, 0.80), (0.50, 0.82),
                             (0.70, 0.82), (1.00, 0.80)),
        "impulse": True,
        "sources": {"head_range": _ESHA + " Table 'Range of heads'. From memory.",
                    "specific_speed_range": "Common practice. From memory.",
                    "minimum_relative_flow": "Common practice (divided guide vane). From memory.",
                    "efficiency_table": _ESHA + " Typical efficiency curves. Read from figure, "
                                        "from memory."},
    },
    "francis": {
        "head_range": (25.0, 350.0),
        "flow_range": (0.3, 40.0),
        "specific_speed_range": (50.0, 330.0),
        "minimum_relative_flow": 0.40,
        "efficiency_table": ((0.40, 0.78), (0.50, 0.84), (0.60, 0.88), (0.70, 0.905),
                             (0.80, 0.92), (0.90, 0.925), (1.00, 0.915)),
        "impulse": False,
        "sources": {"head_range": _ESHA + " Table 'Range of heads'. From memory.",
                    "specific_speed_range": _ESHA + " n_QE 0.05-0.33, converted n_s ~= 995 "
                                            "n_QE. From memory.",
                    "minimum_relative_flow": "Common practice. From memory.",
                    "efficiency_table": _ESHA + " Typical efficiency curves. Read from figure, "
                                        "from memory."},
    },
    "kaplan": {
        "head_range": (2.0, 40.0),
        "flow_range": (0.5, 50.0),
        "specific_speed_range": (190.0, 1550.0),
        "minimum_relative_flow": 0.20,
        "efficiency_table": ((0.20, 0.80), (0.30, 0.86), (0.40, 0.89), (0.60, 0.91),
                             (0.80, 0.915), (1.00, 0.905)),
        "impulse": False,
        "sources": {"head_range": _ESHA + " Table 'Range of heads'. From memory.",
                    "specific_speed_range": _ESHA + " n_QE 0.19-1.55, converted n_s ~= 995 "
                                            "n_QE. From memory.",
                    "minimum_relative_flow": "Common practice (double regulated). From memory.",
                    "efficiency_table": _ESHA + " Typical efficiency curves (double regulated). "
                                        "Read from figure, from memory."},
    },
    "propeller": {
        "head_range": (2.0, 40.0),
        "flow_range": (0.5, 50.0),
        "specific_speed_range": (190.0, 1550.0),
        "minimum_relative_flow": 0.75,
        "efficiency_table": ((0.75, 0.81), (0.80, 0.85), (0.90, 0.89), (1.00, 0.90)),
        "impulse": False,
        "sources": {"head_range": _ESHA + " Table 'Range of heads' (with Kaplan). From memory.",
                    "specific_speed_range": _ESHA + " n_QE 0.19-1.55 (with Kaplan). "
                                            "From memory.",
                    "minimum_relative_flow": "Common practice (fixed blade, fixed gate "
                                             "operation). From memory.",
                    "efficiency_table": _ESHA + " Typical efficiency curves (propeller). Read "
                                        "from figure, from memory."},
    },
}


def _turbine(turbine_type):
    try:
        return TURBINE_TYPES[turbine_type]
    except KeyError:
        raise ValueError(f"turbine_type: unknown type {turbine_type!r}; expected one of "
                         f"{sorted(TURBINE_TYPES)}") from None


# ---------------------------------------------------------------------------
# specific speed
# ---------------------------------------------------------------------------
def head_datum(turbine_type, tailwater, runner_elevation=None):
    """Level the gross head is measured down to: the tailwater, or an impulse runner above it.

    Parameters
    ----------
    turbine_type : str
        Key of :data:`TURBINE_TYPES`. [-]
    tailwater : numeric
        Tailwater level. [m]
    runner_elevation : float, optional
        Runner (nozzle centreline) elevation. [m]

    Returns
    -------
    numeric
        ``max(tailwater, runner_elevation)`` for an impulse turbine with a runner
        elevation, else ``tailwater``. [m]

    Notes
    -----
    An impulse runner turns in air and discharges freely: the head between the runner
    and the tailwater below it is lost (common practice). A reaction runner works down
    to the tailwater through its draft tube.
    """
    tw = np.asarray(tailwater, dtype=float)
    if _turbine(turbine_type)["impulse"] and runner_elevation is not None:
        out = np.maximum(tw, float(runner_elevation))
    else:
        out = tw
    return float(out) if out.ndim == 0 else out


def angular_speed(rotational_speed):
    """Rotational speed in rpm as an angular speed, ω = 2πn/60. [rad/s]

    Parameters
    ----------
    rotational_speed : numeric
        Speed. [rpm]

    Returns
    -------
    numeric
        Angular speed. [rad/s]
    """
    n = np.asarray(rotational_speed, dtype=float)
    out = 2.0 * np.pi * n / 60.0
    return float(out) if out.ndim == 0 else out


def units_running(flow, rated_flow_per_unit, n_units):
    """Units sharing a plant flow when each runs as near its rated flow as it can.

    Parameters
    ----------
    flow : array_like
        Plant flow. [m^3/s]
    rated_flow_per_unit : float
        Rated flow of one unit. [m^3/s]
    n_units : int
        Units installed. [-]

    Returns
    -------
    numpy.ndarray of int
        ``clip(ceil(Q / Q_rated), 1, n)`` (common practice: start a unit only when the
        running ones are full). [-]
    """
    k = np.ceil(np.asarray(flow, float) / rated_flow_per_unit - 1e-9)
    return np.clip(k, 1, n_units).astype(int)


def synchronous_speed(turbine_type, net_head, power_per_unit, frequency, max_pole_pairs=60):
    """Synchronous speed giving a specific speed nearest the middle of the type's range.

    Parameters
    ----------
    turbine_type : str
        Key of :data:`TURBINE_TYPES`. [-]
    net_head : float
        Net head. [m]
    power_per_unit : float
        Power of one unit. [W]
    frequency : float
        Grid frequency. [Hz]
    max_pole_pairs : int
        Largest number of pole pairs tried. [-]

    Returns
    -------
    float
        Speed. [rpm]

    Notes
    -----
    Common practice for a first choice of speed: :math:`n = 60 f / p` for :math:`p`
    pole pairs (synchronous machine), choosing :math:`p` so that the metric specific
    speed :math:`n \\sqrt{P} / H^{5/4}` (:func:`specific_speed`) lies nearest the
    geometric middle of the type's published range.
    """
    lo, hi = _turbine(turbine_type)["specific_speed_range"]
    target = np.sqrt(lo * hi)
    pairs = np.arange(1, int(max_pole_pairs) + 1)
    speeds = 60.0 * frequency / pairs
    ns = np.asarray(specific_speed(speeds, power_per_unit, net_head))
    return float(speeds[np.argmin(np.abs(np.log(ns / target)))])


def specific_speed(rotational_speed, power, net_head):
    """Metric (kW-based) specific speed.

    Parameters
    ----------
    rotational_speed : numeric
        Runner speed. [rev/min]
    power : numeric
        Turbine shaft power per runner (per jet for multi-jet Pelton if the
        per-jet value is wanted). [W]
    net_head : numeric
        Net head. [m]

    Returns
    -------
    specific_speed : numeric
        :math:`n_s` in the metric kW convention (rev/min, kW, m). [-]

    Notes
    -----
    .. math:: n_s = \\frac{n \\sqrt{P / 1000}}{H_n^{5/4}}

    with :math:`n` in rev/min, :math:`P` in kW and :math:`H_n` in m.

    References
    ----------
    .. [1] ESHA (2004). Guide on How to Develop a Small Hydropower Plant.
       European Small Hydropower Association, Chapter 6, specific speed.
    """
    n = np.asarray(rotational_speed, dtype=float)
    p = np.asarray(power, dtype=float)
    h = np.asarray(net_head, dtype=float)
    if np.any(h <= 0):
        raise ValueError("net_head: expected positive net head")
    return _same_kind(rotational_speed, n * np.sqrt(p / 1000.0) / h ** 1.25)


def dimensionless_specific_speed(rotational_speed, flow, net_head):
    """Dimensionless specific speed n_QE (IEC 60193 definition).

    Parameters
    ----------
    rotational_speed : numeric
        Runner speed. [rev/min]
    flow : numeric
        Flow through the runner. [m^3/s]
    net_head : numeric
        Net head. [m]

    Returns
    -------
    n_qe : numeric
        Dimensionless specific speed. [-]

    Notes
    -----
    .. math:: n_{QE} = \\frac{n \\, Q^{1/2}}{E^{3/4}}, \\quad E = g H_n

    with :math:`n` in rev/s. Multiply by :math:`2\\pi` for the angular
    "shape number".

    References
    ----------
    .. [1] IEC 60193:1999. Hydraulic turbines, storage pumps and pump-turbines -
       Model acceptance tests. Clause 1.3 (n_QE).
    """
    n = np.asarray(rotational_speed, dtype=float) / 60.0
    q = np.asarray(flow, dtype=float)
    h = np.asarray(net_head, dtype=float)
    if np.any(h <= 0):
        raise ValueError("net_head: expected positive net head")
    return _same_kind(rotational_speed, n * np.sqrt(q) / (GRAVITY * h) ** 0.75)


class ApplicationRanges(NamedTuple):
    """Where a duty lies against a turbine type's application ranges
    (:func:`application_ranges`)."""

    head_in_range: bool
    flow_in_range: bool
    #: False when no specific speed was given.
    specific_speed_in_range: bool
    head_range: tuple       # [m]
    flow_range: tuple       # per unit [m^3/s]
    specific_speed_range: tuple   # metric n_s (rev/min, kW, m) [-]


def application_ranges(turbine_type, net_head, flow, specific_speed=float("nan")):
    """Check a duty against the application ranges of a turbine type.

    Parameters
    ----------
    turbine_type : str
        A key of :data:`TURBINE_TYPES`. [-]
    net_head : float
        Net head. [m]
    flow : float
        Flow per unit. [m^3/s]
    specific_speed : float, optional
        Metric specific speed n·√P/H^(5/4) (rev/min, kW, m); NaN (the default) leaves it
        unchecked. [-]

    Returns
    -------
    ApplicationRanges
        Whether each quantity lies inside its range (ends included), and the ranges.

    Notes
    -----
    The ranges are the ``head_range``, ``flow_range`` and ``specific_speed_range`` of
    :data:`TURBINE_TYPES`, with the sources named there. They are screening ranges: the
    types overlap, and the manufacturers' charts decide.

    References
    ----------
    .. [1] ESHA (2004). Guide on How to Develop a Small Hydropower Plant. European Small
       Hydropower Association, Chapter 6 (the ranges, as cited in :data:`TURBINE_TYPES`).
    """
    entry = _turbine(turbine_type)
    head, flows, speeds = (entry["head_range"], entry["flow_range"],
                           entry["specific_speed_range"])
    return ApplicationRanges(
        head_in_range=bool(head[0] <= net_head <= head[1]),
        flow_in_range=bool(flows[0] <= flow <= flows[1]),
        specific_speed_in_range=bool(speeds[0] <= specific_speed <= speeds[1]),
        head_range=tuple(head), flow_range=tuple(flows), specific_speed_range=tuple(speeds))


class TurbineCandidate(NamedTuple):
    """One ranked entry of :func:`suggest_turbine_types`."""

    turbine_type: str
    #: Higher is better: sum of log-centrality scores (1 at the centre of a range, 0 at an edge).
    score: float
    flow_in_range: bool
    #: Metric specific speed, NaN when no rotational speed was given.
    specific_speed: float
    specific_speed_in_range: bool


def _centrality(x, bounds):
    low, high = np.log(bounds[0]), np.log(bounds[1])
    return 1.0 - abs(2.0 * (np.log(x) - low) / (high - low) - 1.0)


def suggest_turbine_types(net_head, flow, rotational_speed=None, density=1000.0,
                          efficiency=0.90):
    """Turbine types whose published head range contains the net head, ranked.

    Parameters
    ----------
    net_head : float
        Net head at rated flow. [m]
    flow : float
        Rated flow per unit. [m^3/s]
    rotational_speed : float, optional
        Intended runner speed; when given, the specific speed is checked against
        each type's range and adds to the score. [rev/min]
    density : float, default 1000.0
        Water density, used only to estimate power for the specific speed. [kg/m^3]
    efficiency : float, default 0.90
        Turbine efficiency used only to estimate power for the specific speed. [-]

    Returns
    -------
    candidates : list of TurbineCandidate
        Types with ``net_head`` inside ``TURBINE_TYPES[t]["head_range"]``, best
        score first. Empty when no type fits. [-]

    Notes
    -----
    Each range [a, b] scores :math:`1 - |2 (\\ln x - \\ln a)/(\\ln b - \\ln a) - 1|`
    (1 at the geometric centre, 0 at the edges, negative outside). The score is
    the sum over head, flow and (when given) specific speed. This is a
    screening aid; the overlap between types is real and the final choice
    belongs to the designer and the manufacturers.
    """
    if net_head <= 0 or flow <= 0:
        raise ValueError("net_head, flow: expected positive values")
    candidates = []
    for name, entry in TURBINE_TYPES.items():
        ns = float("nan")
        if rotational_speed is not None:
            power = density * GRAVITY * flow * net_head * efficiency
            ns = float(specific_speed(rotational_speed, power, net_head))
        fits = application_ranges(name, net_head, flow, ns)
        if not fits.head_in_range:
            continue
        score = _centrality(net_head, entry["head_range"])
        score += _centrality(flow, entry["flow_range"])
        if rotational_speed is not None:
            score += _centrality(ns, entry["specific_speed_range"])
        candidates.append(TurbineCandidate(name, float(score), fits.flow_in_range, ns,
                                           fits.specific_speed_in_range))
    return sorted(candidates, key=lambda c: -c.score)


# ---------------------------------------------------------------------------
# efficiency
# ---------------------------------------------------------------------------
def check_efficiency_table(table, minimum_relative_flow):
    """Validate a part-load efficiency table and return it as two arrays.

    Parameters
    ----------
    table : array_like of shape (n, 2)
        Rows of (relative flow Q/Q_rated, efficiency). [-]
    minimum_relative_flow : float
        Lowest relative flow the unit runs at; the table must start at or below
        it and reach 1.0 (rated flow). [-]

    Returns
    -------
    relative_flow, efficiency : numpy.ndarray
        The two columns. [-]

    Raises
    ------
    ValueError
        Wrong shape, relative flows not strictly increasing or <= 0,
        efficiency outside (0, 1], or a table not covering
        [minimum_relative_flow, 1.0] (naming the row or the uncovered end).
    """
    arr = np.asarray(table, dtype=float)
    if arr.ndim != 2 or arr.shape[1] != 2 or arr.shape[0] < 2:
        raise ValueError(f"table: expected at least 2 rows of (relative flow, efficiency), "
                         f"got shape {arr.shape}")
    x, eta = arr[:, 0], arr[:, 1]
    bad = ~np.isfinite(eta) | (eta <= 0.0) | (eta > 1.0)
    if bad.any():
        i = int(np.argmax(bad))
        raise ValueError(f"table: efficiency {eta[i]} at row {i} is outside (0, 1]")
    if np.any(~np.isfinite(x)) or np.any(x <= 0.0):
        i = int(np.argmax(~np.isfinite(x) | (x <= 0.0)))
        raise ValueError(f"table: relative flow {x[i]} at row {i} must be a positive number")
    if np.any(np.diff(x) <= 0):
        i = int(np.argmax(np.diff(x) <= 0)) + 1
        raise ValueError(f"table: relative flow {x[i]} at row {i} does not increase")
    if x[0] > minimum_relative_flow + 1e-12:
        raise ValueError(f"table: starts at relative flow {x[0]} but the unit runs from "
                         f"{minimum_relative_flow}; the table must cover the operating range "
                         f"[{minimum_relative_flow}, 1.0]")
    if x[-1] < 1.0 - 1e-12:
        raise ValueError(f"table: ends at relative flow {x[-1]}; the table must cover the "
                         f"operating range up to 1.0 (rated flow)")
    return x, eta


def turbine_efficiency(relative_flow, turbine_type="francis", table=None,
                       minimum_relative_flow=None):
    """Turbine efficiency against relative flow Q/Q_rated.

    Parameters
    ----------
    relative_flow : numeric or pandas.Series
        Flow through the unit divided by its rated flow, in [0, x_max] where
        x_max is the last table row (1.0 for the built-in curves). [-]
    turbine_type : str, default "francis"
        Key of ``TURBINE_TYPES``; gives the default curve and minimum flow. [-]
    table : array_like of shape (n, 2), optional
        User curve of (relative flow, efficiency) rows replacing the type's
        curve; checked by :func:`check_efficiency_table`. [-]
    minimum_relative_flow : float, optional
        Relative flow below which the unit is stopped (efficiency 0); defaults
        to the type's common-practice value. [-]

    Returns
    -------
    efficiency : numeric
        Turbine efficiency, 0 below the minimum flow. [-]

    Notes
    -----
    Piecewise-linear interpolation of the table,
    :math:`\\eta(x) = 0` for :math:`x < x_{min}`.

    References
    ----------
    .. [1] ESHA (2004). Guide on How to Develop a Small Hydropower Plant.
       European Small Hydropower Association, Chapter 6, typical efficiency
       curves of small turbines (built-in tables read from the figure).
    """
    entry = _turbine(turbine_type)
    x_min = entry["minimum_relative_flow"] if minimum_relative_flow is None \
        else float(minimum_relative_flow)
    xs, etas = check_efficiency_table(entry["efficiency_table"] if table is None else table,
                                      x_min)
    x = _check_non_negative(relative_flow, "relative_flow")
    over = x > xs[-1] * (1.0 + 1e-9)
    if np.any(over):
        i = int(np.argmax(over.ravel()))
        raise ValueError(f"relative_flow: {x.ravel()[i]} at {_position(relative_flow, i)} "
                         f"exceeds the end of the efficiency curve ({xs[-1]}); cap the flow "
                         f"per unit at the rated flow")
    # a relative tolerance keeps a flow computed as exactly the minimum (in any unit
    # system) on the running side of it
    eta = np.where(x < x_min * (1.0 - 1e-9), 0.0, np.interp(x, xs, etas))
    return _same_kind(relative_flow, eta, "efficiency")


def efficiency_function(turbine_type="francis", table=None, minimum_relative_flow=None):
    """Efficiency curve as a one-argument callable, for :func:`dispatch`.

    Parameters
    ----------
    turbine_type : str, default "francis"
        Key of ``TURBINE_TYPES``. [-]
    table : array_like of shape (n, 2), optional
        User curve of (relative flow, efficiency) rows. [-]
    minimum_relative_flow : float, optional
        Stop below this relative flow; defaults to the type's value. [-]

    Returns
    -------
    efficiency : callable
        ``efficiency(relative_flow)`` as :func:`turbine_efficiency`. [-]
    """
    entry = _turbine(turbine_type)
    x_min = entry["minimum_relative_flow"] if minimum_relative_flow is None \
        else float(minimum_relative_flow)
    xs, etas = check_efficiency_table(entry["efficiency_table"] if table is None else table,
                                      x_min)

    def efficiency(relative_flow):
        """Turbine efficiency at ``relative_flow`` = Q/Q_rated. [-]"""
        return turbine_efficiency(relative_flow, turbine_type, np.column_stack((xs, etas)),
                                  x_min)

    efficiency.minimum_relative_flow = x_min
    return efficiency


def scaled_efficiency_table(turbine_type, peak_efficiency):
    """The type's part-load curve scaled so that its best efficiency is ``peak_efficiency``.

    Parameters
    ----------
    turbine_type : str
        Key of ``TURBINE_TYPES``. [-]
    peak_efficiency : float
        Best efficiency of the actual machine (manufacturer's figure), in (0, 1]. [-]

    Returns
    -------
    table : numpy.ndarray of shape (n, 2)
        Rows of (relative flow, efficiency) for ``table=`` arguments. [-]

    Notes
    -----
    :math:`\\eta'(x) = \\eta(x) \\, \\eta'_{peak} / \\max \\eta`: the shape of the
    typical curve is kept, its level set by the machine's peak efficiency.
    """
    peak = float(peak_efficiency)
    if not 0.0 < peak <= 1.0:
        raise ValueError(f"peak_efficiency: expected a fraction in (0, 1], got {peak}")
    table = np.array(_turbine(turbine_type)["efficiency_table"], dtype=float)
    table[:, 1] *= peak / table[:, 1].max()
    return table


# ---------------------------------------------------------------------------
# dispatch of identical units
# ---------------------------------------------------------------------------
class DispatchResult(NamedTuple):
    """Best number of running units at each step and the resulting turbine output."""

    #: Units running (0 when no configuration produces power). [-]
    n_running: np.ndarray
    #: Flow through the running units, min(flow, n_running * rated). [m^3/s]
    turbined_flow: np.ndarray
    #: Net head of the chosen configuration (at a stopped step: one unit offered the flow). [m]
    net_head: np.ndarray
    #: Turbine efficiency of each running unit. [-]
    efficiency: np.ndarray
    #: Turbine (shaft) power, rho g Q H_n eta. [W]
    power: np.ndarray


def dispatch(flow, n_units, rated_flow_per_unit, efficiency_function, net_head, density):
    """Number of identical units to run at each step for the most power.

    Parameters
    ----------
    flow : array_like
        Flow available to the plant at each step, at most
        ``n_units * rated_flow_per_unit`` (see
        :func:`penstock.hydrology.available_flow`). [m^3/s]
    n_units : int
        Number of identical units sharing one penstock. [-]
    rated_flow_per_unit : float or array_like
        Rated flow of one unit (broadcast against ``flow``). [m^3/s]
    efficiency_function : callable
        ``efficiency(relative_flow)`` -> turbine efficiency, vectorized, 0 below
        the minimum flow (e.g. from :func:`efficiency_function`). [-]
    net_head : callable or numeric
        ``net_head(total_flow)`` -> net head at the plant's total turbined flow
        (vectorized; the penstock is common to all units), or a number/array
        broadcast against ``flow``. [m]
    density : float
        Water density. [kg/m^3]

    Returns
    -------
    result : DispatchResult
        Arrays shaped like ``flow``. [-]

    Notes
    -----
    For k = 1..n running units the plant passes :math:`Q_k = \\min(Q, k Q_r)`
    (the excess is spilled), shared equally:

    .. math:: P_k = \\rho g Q_k H_n(Q_k) \\eta(Q_k / (k Q_r))

    and the k with the largest :math:`P_k` is chosen (ties go to fewer units).
    All k are evaluated at once as an array of shape (n_units, ...) and the
    choice is an ``argmax`` over the first axis. A negative net head gives no
    power.
    """
    q = _check_non_negative(flow, "flow")
    n_units = int(n_units)
    if n_units < 1:
        raise ValueError(f"n_units: expected at least 1 unit, got {n_units}")
    rated = np.asarray(rated_flow_per_unit, dtype=float)
    if np.any(rated <= 0):
        raise ValueError("rated_flow_per_unit: expected a positive rated flow")
    if np.any(q > n_units * rated * (1.0 + 1e-9)):
        i = int(np.argmax((q > n_units * rated * (1.0 + 1e-9)).ravel()))
        raise ValueError(f"flow: {q.ravel()[i]} m^3/s at position {i} exceeds the plant's "
                         f"rated flow n_units * rated_flow_per_unit; cap it with "
                         "available_flow()")
    k = np.arange(1, n_units + 1, dtype=float).reshape((n_units,) + (1,) * q.ndim)
    capacity = k * rated
    q_k = np.minimum(q, capacity)
    head = net_head(q_k) if callable(net_head) else np.broadcast_to(
        np.asarray(net_head, dtype=float), q_k.shape)
    head = np.asarray(head, dtype=float)
    eta = np.asarray(efficiency_function(q_k / capacity), dtype=float)
    power = np.where(head > 0.0, density * GRAVITY * q_k * head * eta, 0.0)
    best = np.argmax(power, axis=0)[None, ...]
    chosen_power = np.take_along_axis(power, best, axis=0)[0]
    running = chosen_power > 0.0

    def pick(values):
        return np.take_along_axis(np.broadcast_to(values, power.shape), best, axis=0)[0]

    return DispatchResult(
        n_running=np.where(running, best[0] + 1, 0),
        turbined_flow=np.where(running, pick(q_k), 0.0),
        net_head=pick(head),
        efficiency=np.where(running, pick(eta), 0.0),
        power=chosen_power,
    )
