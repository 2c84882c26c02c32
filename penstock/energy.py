"""Power and energy over a flow record.

Pure functions. Power in [W], energy in [J] (convert to kWh/GWh at the output
edge: 1 kWh = 3.6e6 J). The time step comes from the record's DatetimeIndex and
each step's power is held over the step that starts at its timestamp, so
:math:`E = \\sum_i P_i \\Delta t`. A step belongs to the calendar year and
month of its timestamp.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from penstock.constants import GRAVITY, HOURS_PER_YEAR, SECONDS_PER_HOUR
from penstock.hydrology import (
    FlowDurationCurve,
    _check_non_negative,
    _check_record,
    _same_kind,
    available_flow,
    exceedance_curve,
    flow_at_exceedance,
)
from penstock.turbines import TURBINE_TYPES, dispatch, efficiency_function

__all__ = [
    "LEAST_NET_HEAD_FRACTION",
    "PlantOperation",
    "EnergySummary",
    "hydraulic_power",
    "electrical_power",
    "simulate_plant",
    "tabulated_power",
    "TabulatedPower",
    "energy_summary",
    "mean_annual_weights",
    "flow_grid_weights",
    "net_head",
    "design_flow_study",
]

#: Least share of the gross head a penstock must leave as net head at a design flow for the
#: plant to be worth studying there: a pipe losing more is refused (common practice for a
#: screening bound, not a design rule; an economic pipe loses a few per cent). [-]
LEAST_NET_HEAD_FRACTION = 0.05


def hydraulic_power(flow, net_head, density):
    """Hydraulic power of a flow under a head.

    Parameters
    ----------
    flow : numeric or pandas.Series
        Flow. [m^3/s]
    net_head : numeric
        Head (net or gross). [m]
    density : numeric
        Water density. [kg/m^3]

    Returns
    -------
    power : numeric
        Hydraulic power. [W]

    Notes
    -----
    .. math:: P_h = \\rho g Q H
    """
    q = np.asarray(flow, dtype=float)
    return _same_kind(flow, density * GRAVITY * q * np.asarray(net_head, dtype=float), "power")


def _efficiency_product(**factors):
    """Product of efficiency-like factors, each checked to lie in [0, 1]."""
    product = 1.0
    for name, value in factors.items():
        v = np.asarray(value, dtype=float)
        if np.any(~np.isfinite(v)) or np.any((v < 0.0) | (v > 1.0)):
            raise ValueError(f"{name}: expected a fraction in [0, 1], got {value}")
        product = product * v
    return product


def electrical_power(flow, net_head, density, turbine_efficiency, gearbox_efficiency=1.0,
                     generator_efficiency=1.0, transformer_efficiency=1.0, availability=1.0):
    """Electrical power delivered at the high-voltage side of the step-up transformer.

    Parameters
    ----------
    flow : numeric or pandas.Series
        Turbined flow. [m^3/s]
    net_head : numeric
        Net head. [m]
    density : numeric
        Water density. [kg/m^3]
    turbine_efficiency : numeric
        Turbine efficiency. [-]
    gearbox_efficiency : numeric, default 1.0
        Speed increaser efficiency (1.0 for direct drive). [-]
    generator_efficiency : numeric, default 1.0
        Generator efficiency. [-]
    transformer_efficiency : numeric, default 1.0
        Step-up transformer efficiency. [-]
    availability : numeric, default 1.0
        Fraction of time the plant is available (outages for maintenance and
        faults); applied as an expected-value factor. [-]

    Returns
    -------
    power : numeric
        Expected electrical power. [W]

    Notes
    -----
    .. math:: P_e = \\rho g Q H_n \\eta_t \\eta_{gb} \\eta_g \\eta_{tr} A
    """
    factor = _efficiency_product(turbine_efficiency=turbine_efficiency,
                                 gearbox_efficiency=gearbox_efficiency,
                                 generator_efficiency=generator_efficiency,
                                 transformer_efficiency=transformer_efficiency,
                                 availability=availability)
    return _same_kind(flow, np.asarray(hydraulic_power(flow, net_head, density)) * factor,
                      "power")


class PlantOperation(NamedTuple):
    """Step-by-step operation of a plant over a flow record (same kind as the river flow)."""

    #: Flow through the turbines. [m^3/s]
    turbined_flow: object
    #: River flow above the residual release that is not turbined. [m^3/s]
    spill_flow: object
    #: Residual flow released, min(requirement, river). [m^3/s]
    residual_flow: object
    #: Units running. [-]
    n_running: np.ndarray
    #: Net head at the turbined flow. [m]
    net_head: object
    #: Turbine efficiency. [-]
    turbine_efficiency: object
    #: Expected electrical power. [W]
    power: object
    #: Expected electrical power the same plant would give with no penstock head loss. [W]
    power_without_friction: object


def _net_head(gross, head_loss, head_gain=None):
    """Net head as a function of the total flow (or an array): gross − loss + gain."""
    if head_loss is None and head_gain is None:
        return gross
    if not callable(head_loss) and head_gain is None:
        return gross - np.asarray(head_loss, dtype=float)

    def at(values, total_flow):
        if values is None:
            return 0.0
        return np.asarray(values(total_flow) if callable(values) else values, dtype=float)

    return lambda total_flow: net_head(gross, at(head_loss, total_flow),
                                       at(head_gain, total_flow))


def net_head(gross_head, penstock_loss, draft_tube_recovery=0.0):
    """Net head at the turbine, penstock's one convention.

    Parameters
    ----------
    gross_head : numeric
        Headwater less tailwater; for an impulse runner set above the tailwater, less
        the runner's level instead (the head below the runner is lost). [m]
    penstock_loss : numeric
        Head lost from the reservoir to the turbine inlet (friction and local losses,
        intake and valves included). [m]
    draft_tube_recovery : numeric, default 0
        Head a draft tube recovers over discharging straight from the runner outlet,
        from :func:`penstock.drafttube.velocity_head_recovery`; 0 without one. [m]

    Returns
    -------
    numeric
        Net head. [m]

    Notes
    -----
    .. math:: H_n = H_g - h_{penstock} + \\Delta H_{draft\\ tube}

    The turbine efficiency curve is taken as that of the machine with its runner-outlet
    velocity head lost, as at an abrupt exit into the tailwater, so that without a draft
    tube nothing more is charged at the outlet and a draft tube adds the head it
    recovers (negative only for a cone wider than Gibson's tests favour, which loses
    more than an abrupt exit). The same convention serves the energy, the installed
    capacity, the diameter study and the turbine setting.
    """
    return gross_head - penstock_loss + draft_tube_recovery


def _calendar_years(index, step):
    """The record's calendar years -> (years, year of each step as a position, steps
    held, steps expected, complete), the basis of every mean annual value."""
    unique_years, pos = np.unique(np.asarray(index.year), return_inverse=True)
    counts = np.bincount(pos, minlength=unique_years.size)
    tz = index.tz
    expected = np.rint(np.array([(pd.Timestamp(year=int(y) + 1, month=1, day=1, tz=tz)
                                  - pd.Timestamp(year=int(y), month=1, day=1, tz=tz)) / step
                                 for y in unique_years]))
    return unique_years, pos, counts, expected, counts >= expected


def mean_annual_weights(index):
    """Per-step weights turning a per-step quantity into its mean annual value.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Timestamps of a regular record without gaps or duplicates. [-]

    Returns
    -------
    numpy.ndarray
        ``w`` with ``sum(w * x)`` the mean annual value of a per-step quantity ``x``
        on the basis of :func:`energy_summary`: steps of complete calendar years
        weigh 1 / (number of complete years), other steps 0; with no complete year,
        every step weighs 8760 h over the record's duration. [1/year]
    """
    index = pd.DatetimeIndex(index)
    if len(index) < 2:
        raise ValueError("index: expected a record of at least two steps")
    step = index[1] - index[0]
    _, pos, _, _, complete = _calendar_years(index, step)
    if complete.any():
        return np.where(complete[pos], 1.0 / complete.sum(), 0.0)
    duration = len(index) * step.total_seconds()
    return np.full(len(index), HOURS_PER_YEAR * SECONDS_PER_HOUR / duration)


def flow_grid_weights(flow, weight, grid):
    """Spread per-step weights onto a uniform flow grid by linear interpolation.

    Parameters
    ----------
    flow : array_like
        Flow at each step, within ``[grid[0], grid[-1]]``. [m^3/s]
    weight : array_like
        Weight of each step (e.g. mean-annual weight × flow × efficiency). [any]
    grid : array_like
        Uniform flow grid starting at 0, at least two points. [m^3/s]

    Returns
    -------
    numpy.ndarray
        ``W`` on the grid with ``W @ f(grid) == sum(weight * f_lin(flow))`` for any ``f``,
        ``f_lin`` its piecewise-linear interpolant on the grid: a quantity linear in a
        function of the flow (the energy lost to a head loss) then costs one dot product
        per function. [any]

    Raises
    ------
    ValueError
        A grid that is not uniform from 0, or a flow outside it.
    """
    q = np.asarray(flow, dtype=float)
    w = np.asarray(weight, dtype=float)
    g = np.asarray(grid, dtype=float)
    if g.ndim != 1 or g.size < 2 or g[0] != 0.0 or not np.allclose(np.diff(g), g[1],
                                                                     rtol=1e-9, atol=0):
        raise ValueError("grid: expected a uniform 1-D grid from 0 with at least two points")
    if np.any(q < 0) or np.any(q > g[-1] * (1 + 1e-12)):
        raise ValueError(f"flow: expected flows within [0, {g[-1]:g}] m^3/s")
    n = g.size
    pos = q / g[1]
    i = np.clip(np.floor(pos).astype(int), 0, n - 2)
    frac = pos - i
    return np.bincount(i, w * (1 - frac), n) + np.bincount(i + 1, w * frac, n)


def simulate_plant(river_flow, gross_head, rated_flow_per_unit, *, density, n_units=1,
                   turbine_type="francis", efficiency_table=None, head_loss=None, residual=0.0,
                   minimum_relative_flow=None, gearbox_efficiency=1.0, generator_efficiency=1.0,
                   transformer_efficiency=1.0, availability=1.0, head_gain=None,
                   efficiency_offset=None):
    """Operate a plant of identical units over a flow record.

    Parameters
    ----------
    river_flow : array_like or pandas.Series
        River flow at the intake at each step. [m^3/s]
    gross_head : numeric or array_like
        Headwater minus tailwater level, scalar or aligned with the steps. [m]
    rated_flow_per_unit : float
        Rated (design) flow of one unit. [m^3/s]
    density : float
        Water density. [kg/m^3]
    n_units : int, default 1
        Number of identical units on the common penstock. [-]
    turbine_type : str, default "francis"
        Key of :data:`penstock.turbines.TURBINE_TYPES`. [-]
    efficiency_table : array_like of shape (n, 2), optional
        User part-load curve of (Q/Q_rated, efficiency) replacing the type's. [-]
    head_loss : callable or array_like, optional
        Penstock head loss: ``head_loss(total_flow)`` (vectorized, e.g. an
        interpolation in a precomputed table) or an array aligned with the
        steps. None means no loss. [m]
    residual : numeric or array_like, default 0.0
        Residual flow requirement, released before the turbines. [m^3/s]
    minimum_relative_flow : float, optional
        Stop a unit below this Q/Q_rated; the type's value by default. [-]
    gearbox_efficiency, generator_efficiency, transformer_efficiency : float, default 1.0
        Drive-train efficiencies. [-]
    availability : float, default 1.0
        Availability factor. [-]
    head_gain : callable, optional
        Head added at the turbine as a function of the total flow, e.g. a draft tube's
        recovery (:func:`net_head`); it is part of the plant, not a penstock loss, so
        ``power_without_friction`` keeps it. None means none. [m]
    efficiency_offset : numeric or array_like, optional
        Added to the turbine efficiency of the running units after the dispatch
        (kept within 0..1), broadcast against the steps, e.g. one value per row of a
        block of Monte Carlo samples. The units are still chosen on the unshifted
        curve. None means no offset. [-]

    Returns
    -------
    operation : PlantOperation
        Flows, units running, net head, efficiency, power and power without
        friction at each step. [-]

    Notes
    -----
    1. :func:`penstock.hydrology.available_flow` releases the residual flow
       and offers :math:`\\min(Q - R, n Q_r)` to the plant, nothing below one
       unit's minimum flow.
    2. :func:`penstock.turbines.dispatch` picks the number of units giving the
       most power with :math:`H_n = H_g - h_f(Q_t)`; flow the chosen units do
       not take is added to the spill.
    3. :func:`electrical_power` applies the drive-train factors.

    ``power_without_friction`` repeats step 2 with :math:`h_f = 0`. An efficiency
    offset scales both powers by :math:`\\mathrm{clip}(\\eta + \\delta, 0, 1) / \\eta`
    at the dispatched efficiency :math:`\\eta`.
    """
    entry = TURBINE_TYPES.get(turbine_type)
    if entry is None:
        raise ValueError(f"turbine_type: unknown type {turbine_type!r}; expected one of "
                         f"{sorted(TURBINE_TYPES)}")
    eta_fn = efficiency_function(turbine_type, efficiency_table, minimum_relative_flow)
    river = _check_non_negative(river_flow, "river_flow")
    gross = np.asarray(gross_head, dtype=float)
    rated = _rated_flow(rated_flow_per_unit)
    allocation = available_flow(river, residual, n_units * rated,
                                eta_fn.minimum_relative_flow * rated)
    drive = dict(gearbox_efficiency=gearbox_efficiency,
                 generator_efficiency=generator_efficiency,
                 transformer_efficiency=transformer_efficiency, availability=availability)
    actual = dispatch(allocation.turbined, n_units, rated, eta_fn,
                      _net_head(gross, head_loss, head_gain), density)
    ideal = dispatch(allocation.turbined, n_units, rated, eta_fn,
                     _net_head(gross, None, head_gain), density)
    factor = float(_efficiency_product(**drive))  # electrical W per W of shaft power
    eta, power, power_ideal = actual.efficiency, actual.power, ideal.power
    if efficiency_offset is not None:
        offset = np.asarray(efficiency_offset, dtype=float)
        eta, power = _shift_efficiency(actual.efficiency, power, offset)
        power_ideal = _shift_efficiency(ideal.efficiency, power_ideal, offset)[1]
    spill = allocation.spill + (allocation.turbined - actual.turbined_flow)

    def kind(values, name):
        return _same_kind(river_flow, values, name)

    return PlantOperation(
        turbined_flow=kind(actual.turbined_flow, "turbined_flow"),
        spill_flow=kind(spill, "spill_flow"),
        residual_flow=kind(allocation.residual, "residual_flow"),
        n_running=actual.n_running,
        net_head=kind(actual.net_head, "net_head"),
        turbine_efficiency=kind(eta, "turbine_efficiency"),
        power=kind(power * factor, "power"),
        power_without_friction=kind(power_ideal * factor, "power_without_friction"),
    )


class TabulatedPower(NamedTuple):
    """Power of a plant at each step read from a table (see :func:`tabulated_power`)."""

    #: Flow offered to the plant, exact (:func:`penstock.hydrology.available_flow`); the
    #: dispatch may spill part of it. [m^3/s]
    offered_flow: np.ndarray
    #: Expected electrical power. [W]
    power: np.ndarray
    #: Expected electrical power with no penstock head loss. [W]
    power_without_friction: np.ndarray


def tabulated_power(river_flow, gross_head, rated_flow_per_unit, *, density, n_units=1,
                    residual=0.0, flow_nodes=1025, head_nodes=9, **plant):
    """Power of :func:`simulate_plant` at each step, interpolated in a table of its own.

    For long records run many times over (Monte Carlo samples), the plant is operated
    on a grid of turbined flows and gross heads only, and each step's power is read
    from that table.

    Parameters
    ----------
    river_flow : array_like
        River flow at each step, shape ``(..., steps)``; the leading axes (e.g. a
        block of samples) each get their own table. [m^3/s]
    gross_head : numeric or array_like of shape (steps,)
        Gross head at each step, the same for every leading index. [m]
    rated_flow_per_unit : float
        Rated flow of one unit. [m^3/s]
    density : float
        Water density. [kg/m^3]
    n_units : int, default 1
        Number of identical units. [-]
    residual : numeric or array_like, default 0.0
        Residual flow requirement, broadcast against ``river_flow``. [m^3/s]
    flow_nodes : int, default 1025
        Nodes of the table between one unit's minimum flow and the plant's rated
        flow, both included. [-]
    head_nodes : int, default 9
        Nodes of the table between the smallest and largest gross head; one when
        the gross head is constant. [-]
    **plant
        The other keywords of :func:`simulate_plant` (``turbine_type``,
        ``efficiency_table``, ``head_loss``, ``head_gain``, drive-train
        efficiencies, ``availability``, ``minimum_relative_flow``,
        ``efficiency_offset``). ``head_loss`` is None or a callable taking total flows of
        shape ``(units, ..., nodes)``, and an ``efficiency_offset`` must broadcast
        against the leading axes and one trailing axis. [-]

    Returns
    -------
    TabulatedPower
        Flow offered to the plant, power and power without friction, shaped like
        ``river_flow``. [-]

    Notes
    -----
    The flow offered to the plant at each step is exact, from
    :func:`penstock.hydrology.available_flow`: zero, or between one unit's minimum
    flow :math:`q_{min}` and the plant's rated flow :math:`n Q_r`, both of which are
    table nodes, so the shut-down threshold and full-load operation (where much of
    a record sits) are read without interpolation error. At each node
    :func:`simulate_plant` gives the power; between nodes it is interpolated
    linearly in flow and in gross head. For a given number of running units the
    power is linear in the gross head (:math:`P = \\rho g Q \\eta (H_g - h(Q))`),
    so the gross-head interpolation is exact away from a change in the number of
    units; in flow the error is of the order of the node spacing squared, and at a
    kink of the curve (a unit starting, a corner of the efficiency curve) of the
    spacing times the change of slope. The dispatch takes the best number of units, so
    those kinks are convex and the interpolation there can only overstate the power,
    by a fraction of the spacing: within 1e-5 of the energy in the tests, about 0.1 %
    where the penstock loss approaches half the head. The table pays where a record is
    longer than the table (``flow_nodes`` × ``head_nodes`` steps); on a shorter one
    :func:`simulate_plant` itself is cheaper and exact.
    """
    if plant.get("head_loss") is not None and not callable(plant["head_loss"]):
        raise ValueError("head_loss: expected a callable of the total flow or None")
    river = _check_non_negative(river_flow, "river_flow")
    rated = _rated_flow(rated_flow_per_unit)
    if int(flow_nodes) < 2 or int(head_nodes) < 1:
        raise ValueError("flow_nodes, head_nodes: expected at least 2 and 1 nodes")
    # refuses an unknown turbine type, as simulate_plant does
    eta_fn = efficiency_function(plant.get("turbine_type", "francis"),
                                 plant.get("efficiency_table"),
                                 plant.get("minimum_relative_flow"))
    q_min, q_max = eta_fn.minimum_relative_flow * rated, n_units * rated
    turbined = available_flow(river, residual, q_max, q_min).turbined
    turbined = np.asarray(turbined, dtype=float)
    gross = np.broadcast_to(np.asarray(gross_head, dtype=float), river.shape[-1:])
    h_lo, h_hi = float(gross.min()), float(gross.max())
    n_h = 1 if h_hi - h_lo <= 1e-9 * max(abs(h_hi), 1.0) else int(head_nodes)
    q_nodes = np.linspace(q_min, q_max, int(flow_nodes))
    h_nodes = np.linspace(h_lo, h_hi, n_h)
    lead = river.shape[:-1]
    grid_q = np.broadcast_to(np.repeat(q_nodes, n_h), lead + (q_nodes.size * n_h,))
    table = simulate_plant(grid_q, np.tile(h_nodes, q_nodes.size), rated, density=density,
                           n_units=n_units, **plant)
    # flow position of each step, and the weight of the upper node
    dq = (q_max - q_min) / (q_nodes.size - 1)
    x = np.clip((turbined - q_min) / dq, 0.0, q_nodes.size - 1) if dq > 0 else \
        np.zeros_like(turbined)
    i = np.minimum(x.astype(np.intp), q_nodes.size - 2)
    wq = x - i
    if n_h > 1:
        y = np.clip((gross - h_lo) / (h_nodes[1] - h_nodes[0]), 0.0, n_h - 1)
        j = np.minimum(y.astype(np.intp), n_h - 2)
        wh = y - j
    else:
        j, wh = np.zeros(gross.shape, np.intp), np.zeros(gross.shape)
    # one row per leading index: node table (rows, nodes), steps (rows, steps)
    rows = (-1, turbined.shape[-1])
    idx = (i * n_h + j).reshape(rows)
    w_up = wq.reshape(rows)
    running = turbined > 0.0

    def read(values):
        flat = np.asarray(values, dtype=float).reshape((-1, q_nodes.size * n_h))

        def along_flow(dj):   # linear in flow between the nodes at head node j + dj
            lo = np.take_along_axis(flat, idx + dj, axis=1)
            hi = np.take_along_axis(flat, idx + n_h + dj, axis=1)
            return lo * (1 - w_up) + hi * w_up

        a = along_flow(0)
        if n_h > 1:
            a = a * (1 - wh) + along_flow(1) * wh
        return np.where(running, a.reshape(turbined.shape), 0.0)

    return TabulatedPower(turbined, read(table.power), read(table.power_without_friction))


def _rated_flow(value):
    """The rated flow of one unit as a float, refused unless positive."""
    rated = float(value)
    if rated <= 0:
        raise ValueError(f"rated_flow_per_unit: expected a positive flow, got {rated}")
    return rated


def _shift_efficiency(eta, power, offset):
    """Efficiency moved by ``offset`` (within 0..1) and the power scaled with it."""
    running = eta > 0.0
    shifted = np.where(running, np.clip(eta + offset, 0.0, 1.0), 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return shifted, np.where(running, power * shifted / np.where(running, eta, 1.0), 0.0)


class EnergySummary(NamedTuple):
    """Energy figures of a power record. Energies in [J], powers in [W]."""

    #: Time step of the record. [-]
    time_step: pd.Timedelta
    #: Per calendar year: energy, steps, expected_steps, complete, and when the
    #: inputs were given friction_loss, spill_energy, residual_energy. [J]
    annual: pd.DataFrame
    #: Energy per calendar year (rows) and month 1..12 (columns). [J]
    monthly: pd.DataFrame
    #: Mean annual energy (see mean_annual_basis). [J]
    mean_annual_energy: float
    #: "complete calendar years" or "annualised record" (no complete year). [-]
    mean_annual_basis: str
    #: Mean energy of each calendar month on the same basis. [J]
    mean_monthly_energy: pd.Series
    #: Energy over the whole record. [J]
    total_energy: float
    #: Total energy / (installed capacity x record duration); NaN without capacity. [-]
    capacity_factor: float
    #: Power exceeded with probability firm_exceedance (Weibull position). [W]
    firm_power: float
    #: Exceedance probability used for firm_power. [-]
    firm_exceedance: float
    #: Power-duration curve (``exceedance``, ``flow`` field holds the power). [W]
    power_duration: FlowDurationCurve
    #: Mean annual energy lost to penstock friction (NaN when not given). [J]
    mean_annual_friction_loss: float
    #: Mean annual gross hydraulic energy of the spill (NaN when not given). [J]
    mean_annual_spill_energy: float
    #: Mean annual gross hydraulic energy of the residual flow (NaN when not given). [J]
    mean_annual_residual_energy: float


def energy_summary(index, power, installed_capacity=None, firm_exceedance=0.95,
                   power_without_friction=None, spill_flow=None, residual_flow=None,
                   gross_head=None, density=None):
    """Annual, monthly and mean annual energy, capacity factor, firm power, losses.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Timestamps of a regular record without gaps or duplicates. [-]
    power : array_like or pandas.Series
        Electrical power at each step, held over the step. [W]
    installed_capacity : float, optional
        Installed electrical capacity for the capacity factor. [W]
    firm_exceedance : float, default 0.95
        Exceedance probability of the firm power. [-]
    power_without_friction : array_like, optional
        Power the same plant would give with no penstock head loss. [W]
    spill_flow : array_like, optional
        Flow spilled at the intake. [m^3/s]
    residual_flow : array_like, optional
        Residual flow released. [m^3/s]
    gross_head : numeric or array_like, optional
        Gross head, needed with ``spill_flow`` or ``residual_flow``. [m]
    density : float, optional
        Water density, needed with ``spill_flow`` or ``residual_flow``. [kg/m^3]

    Returns
    -------
    summary : EnergySummary
        See the fields of :class:`EnergySummary`. [-]

    Notes
    -----
    * Step energy :math:`E_i = P_i \\Delta t`; a calendar year is *complete*
      when it holds every step of that year; incomplete years are flagged in
      ``annual["complete"]`` and left out of the means. With no complete year
      the mean annual energy is the total scaled to 8760 h.
    * Monthly energies of a year add up to its annual energy.
    * Capacity factor :math:`CF = \\sum E_i / (P_{inst} \\, n \\Delta t)`.
    * Energy lost to friction :math:`\\sum (P^{h_f=0}_i - P_i) \\Delta t`: the
      energy the plant would have produced with a loss-free penstock minus the
      actual energy (same units, same dispatch rule).
    * Energy of the spill and of the residual flow: their *gross hydraulic*
      energy :math:`\\sum \\rho g Q_i H_g \\Delta t` (efficiency 1, no friction),
      an upper bound on what they could have produced.
    """
    step = _check_record(power, index, None, "power")
    index = power.index if index is None else pd.DatetimeIndex(index)
    dt = step.total_seconds()
    columns = {"energy": np.asarray(power, dtype=float) * dt}
    if power_without_friction is not None:
        ideal = _check_non_negative(power_without_friction, "power_without_friction")
        columns["friction_loss"] = (ideal - columns["energy"] / dt) * dt
    for name, flow in (("spill_energy", spill_flow), ("residual_energy", residual_flow)):
        if flow is None:
            continue
        if gross_head is None or density is None:
            raise ValueError(f"gross_head, density: required to value the {name[:-7]} flow")
        q = _check_non_negative(flow, name[:-7] + "_flow")
        columns[name] = np.asarray(hydraulic_power(q, gross_head, density)) * dt

    months = np.asarray(index.month)
    unique_years, year_pos, counts, expected, complete = _calendar_years(index, step)
    ny = unique_years.size
    annual = pd.DataFrame({name: np.bincount(year_pos, weights=values, minlength=ny)
                           for name, values in columns.items()},
                          index=pd.Index(unique_years, name="year"))
    annual.insert(1, "steps", counts)
    annual.insert(2, "expected_steps", expected.astype(np.int64))
    annual.insert(3, "complete", complete)
    monthly_values = np.bincount(year_pos * 12 + months - 1, weights=columns["energy"],
                                 minlength=ny * 12).reshape(ny, 12)
    monthly = pd.DataFrame(monthly_values, index=annual.index,
                           columns=pd.Index(range(1, 13), name="month"))

    total = float(columns["energy"].sum())
    duration = len(index) * dt
    if complete.any():
        basis = "complete calendar years"

        def mean_annual(name):
            return float(annual.loc[complete, name].mean()) if name in annual else float("nan")

        mean_monthly = monthly.loc[complete].mean(axis=0)
    else:
        basis = "annualised record"
        scale = HOURS_PER_YEAR * SECONDS_PER_HOUR / duration

        def mean_annual(name):
            return float(annual[name].sum() * scale) if name in annual else float("nan")

        mean_monthly = monthly.sum(axis=0) * scale
    capacity_factor = float("nan")
    if installed_capacity is not None:
        if installed_capacity <= 0:
            raise ValueError(f"installed_capacity: expected a positive power, got "
                             f"{installed_capacity}")
        capacity_factor = total / (installed_capacity * duration)
    return EnergySummary(
        time_step=step, annual=annual, monthly=monthly,
        mean_annual_energy=mean_annual("energy"), mean_annual_basis=basis,
        mean_monthly_energy=mean_monthly.rename("energy"), total_energy=total,
        capacity_factor=capacity_factor,
        firm_power=float(flow_at_exceedance(np.asarray(power, dtype=float), firm_exceedance)),
        firm_exceedance=float(firm_exceedance),
        power_duration=exceedance_curve(np.asarray(power, dtype=float)),
        mean_annual_friction_loss=mean_annual("friction_loss"),
        mean_annual_spill_energy=mean_annual("spill_energy"),
        mean_annual_residual_energy=mean_annual("residual_energy"),
    )


def design_flow_study(index, river_flow, gross_head, *, density, head_loss=None, residual=0.0,
                      n_units=1, turbine_type="francis", efficiency_table=None,
                      minimum_relative_flow=None, design_exceedances=None, design_flows=None,
                      gearbox_efficiency=1.0, generator_efficiency=1.0,
                      transformer_efficiency=1.0, availability=1.0, head_gain=None,
                      flow_grid=None):
    """Installed capacity, mean annual energy and capacity factor against design flow.

    Parameters
    ----------
    index : pandas.DatetimeIndex
        Timestamps of a regular record. [-]
    river_flow : array_like or pandas.Series
        River flow at the intake. [m^3/s]
    gross_head : numeric or array_like
        Gross head, scalar or aligned with the steps. [m]
    density : float
        Water density. [kg/m^3]
    head_loss : callable, optional
        Penstock head loss ``head_loss(total_flow)`` (vectorized); a callable
        because the loss changes with the design flow. None means no loss. [m]
    residual : numeric or array_like, default 0.0
        Residual flow requirement. [m^3/s]
    n_units : int, default 1
        Identical units; each is rated at design flow / n_units. [-]
    turbine_type : str, default "francis"
        Key of :data:`penstock.turbines.TURBINE_TYPES`. [-]
    efficiency_table : array_like of shape (n, 2), optional
        User part-load curve. [-]
    minimum_relative_flow : float, optional
        Stop a unit below this Q/Q_rated. [-]
    design_exceedances : array_like, optional
        Exceedance probabilities of the design flows on the duration curve of
        the flow available after the residual release; default 0.10, 0.15, ...,
        0.60 (Q10 to Q60). Ignored when ``design_flows`` is given. [-]
    design_flows : array_like, optional
        Plant design flows to study instead. [m^3/s]
    gearbox_efficiency, generator_efficiency, transformer_efficiency : float, default 1.0
        Drive-train efficiencies. [-]
    availability : float, default 1.0
        Availability factor (reduces energy, not installed capacity). [-]
    head_gain : callable, optional
        Head added at the turbine against total flow (a draft tube), as in
        :func:`simulate_plant`. [m]
    flow_grid : array_like, optional
        A uniform flow grid from 0 covering the design flows: the study then also returns
        each design flow's dispatch as :func:`flow_grid_weights` of the mean-annual
        weight × turbined flow × turbine efficiency. [m^3/s]

    Returns
    -------
    study : pandas.DataFrame
        One row per design flow: ``design_exceedance`` [-] (NaN for given
        flows), ``design_flow`` [m^3/s], ``installed_capacity`` [W],
        ``mean_annual_energy`` [J], ``capacity_factor`` [-],
        ``mean_annual_friction_loss`` [J], ``mean_annual_spill_energy`` [J].
    weights : numpy.ndarray
        Only with ``flow_grid``: shape (design flows, grid points). [m^3/s/year]

    Notes
    -----
    Installed capacity is the electrical output with all units at rated flow
    (availability 1) under the largest gross head in ``gross_head``, or the largest
    output over the record if that is higher (a pipe whose loss grows faster than the
    flow peaks below its design flow). Each
    design flow runs :func:`simulate_plant`, vectorized over the time steps;
    the few design flows are looped over, which keeps memory at O(number of
    steps).
    """
    if head_loss is not None and not callable(head_loss):
        raise ValueError("head_loss: expected a callable head_loss(total_flow) -> m for a "
                         "design flow study (the loss depends on the design flow)")
    river = _check_non_negative(river_flow, "river_flow")
    if design_flows is None:
        p = np.arange(0.10, 0.601, 0.05) if design_exceedances is None \
            else np.asarray(design_exceedances, dtype=float)
        usable = np.maximum(river - np.asarray(residual, dtype=float), 0.0)
        flows = np.atleast_1d(flow_at_exceedance(usable, p))
        p = np.atleast_1d(p)
    else:
        flows = np.atleast_1d(np.asarray(design_flows, dtype=float))
        p = np.full(flows.shape, np.nan)
    if np.any(flows <= 0):
        raise ValueError(f"design flows: expected positive flows, got {flows}")
    drive = dict(gearbox_efficiency=gearbox_efficiency,
                 generator_efficiency=generator_efficiency,
                 transformer_efficiency=transformer_efficiency)
    common = dict(density=density, n_units=n_units, turbine_type=turbine_type,
                  efficiency_table=efficiency_table, head_loss=head_loss, head_gain=head_gain,
                  minimum_relative_flow=minimum_relative_flow, **drive)
    rows, grid_weights = [], []
    annual = mean_annual_weights(index) if flow_grid is not None else None
    gross_at_rated = float(np.max(gross_head))
    for design_p, design_q in zip(p, flows):
        rated = design_q / n_units
        capacity = simulate_plant(np.array([design_q]), gross_at_rated, rated, **common)
        operation = simulate_plant(river, gross_head, rated, residual=residual,
                                   availability=availability, **common)
        # the installed capacity is at least the largest output the plant gives over the
        # record (with a long pipe, the output can peak below the design flow)
        peak = float(np.max(operation.power)) / availability if availability > 0 else 0.0
        capacity_w = max(float(capacity.power[0]), peak)
        summary = energy_summary(index, operation.power,
                                 installed_capacity=capacity_w if capacity_w > 0 else None,
                                 power_without_friction=operation.power_without_friction,
                                 spill_flow=operation.spill_flow, gross_head=gross_head,
                                 density=density)
        rows.append({"design_exceedance": design_p, "design_flow": design_q,
                     "installed_capacity": capacity_w,
                     "mean_annual_energy": summary.mean_annual_energy,
                     "capacity_factor": summary.capacity_factor,
                     "mean_annual_friction_loss": summary.mean_annual_friction_loss,
                     "mean_annual_spill_energy": summary.mean_annual_spill_energy})
        if flow_grid is not None:
            qt = np.asarray(operation.turbined_flow, dtype=float)
            grid_weights.append(flow_grid_weights(
                qt, annual * qt * np.asarray(operation.turbine_efficiency, dtype=float),
                flow_grid))
    if flow_grid is not None:
        return pd.DataFrame(rows), np.array(grid_weights).reshape(len(rows), -1)
    return pd.DataFrame(rows)
