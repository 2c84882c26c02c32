"""Penstock diameter study: empirical first guesses and the economic optimum.

* Empirical sanity-check diameters (:func:`empirical_diameter`, registry
  :data:`EMPIRICAL_DIAMETER_METHODS`): Bier (1945), Sarkaria (1979), Fahlbusch (1987) and
  the economic-velocity rule (common practice).
* :func:`annual_cost_model` joins a capital-cost function of diameter and the energy lost
  (a callable of diameter, or a table of values over diameters) into an annualised cost
  function.
* :func:`optimum_diameter` minimises such a function between bounds, checks the
  derivative at the optimum and snaps to the available sizes (:func:`standard_sizes`).
* :func:`sensitivity_grid` and :func:`one_at_a_time` repeat the optimisation over energy
  prices and discount rates, or over +/- x % on each cost input.

The physics of the losses lives elsewhere: this module receives energy lost as a callable
or an array and never computes friction itself.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Mapping

import numpy as np

from penstock.constants import FOOT
from penstock.economics import annualized_cost, capital_recovery_factor, lost_energy_value

from ._numeric import same_kind as _finish

__all__ = [
    "EMPIRICAL_DIAMETER_METHODS",
    "SIZE_SERIES",
    "SWEEP_VELOCITIES",
    "USUAL_PENSTOCK_VELOCITY",
    "AnnualCostModel",
    "OneAtATimeRow",
    "OptimumDiameter",
    "SensitivityGrid",
    "annual_cost_model",
    "bier_diameter",
    "cost_curve",
    "economic_velocity_diameter",
    "empirical_diameter",
    "fahlbusch_diameter",
    "one_at_a_time",
    "optimum_diameter",
    "sarkaria_diameter",
    "sensitivity_grid",
    "standard_sizes",
    "SteppedDesign",
    "stepped_design",
]

_KW = 1000.0  # W
_HP = 745.6998715822702  # W per mechanical horsepower (550 ft lbf/s; NIST SP 811, B.8)
_FOOT = FOOT


def _positive(name, value, unit):
    arr = np.asarray(value, dtype=float)
    if np.any(~np.isfinite(arr)) or np.any(arr <= 0.0):
        raise ValueError(f"{name} must be positive and finite [{unit}].")
    return arr


# --------------------------------------------------------------------------------------
# Empirical formulas
# --------------------------------------------------------------------------------------


def bier_diameter(power, net_head):
    """Economic penstock diameter by Bier's formula (USBR practice).

    Parameters
    ----------
    power : numeric
        Rated plant output. [W]
    net_head : numeric
        Rated net head. [m]

    Returns
    -------
    numeric
        Diameter. [m]

    Notes
    -----
    .. math:: D = 0.176 \\left(\\frac{P}{H}\\right)^{0.466}

    with :math:`P` in kW, :math:`H` in m, :math:`D` in m (coefficients and units from
    memory).

    References
    ----------
    .. [1] P. J. Bier, "Welded steel penstocks - design and construction", Engineering
       Monograph No. 3, U.S. Bureau of Reclamation, Denver, 1945 (from memory).
    """
    p = _positive("power", power, "W") / _KW
    h = _positive("net_head", net_head, "m")
    return _finish(0.176 * (p / h) ** 0.466, power, net_head)


def sarkaria_diameter(power, net_head):
    """Economic penstock diameter by Sarkaria's formula (US customary coefficients).

    Parameters
    ----------
    power : numeric
        Rated plant output. [W]
    net_head : numeric
        Rated net head. [m]

    Returns
    -------
    numeric
        Diameter. [m]

    Notes
    -----
    .. math:: D_{ft} = 4.44 \\frac{P_{hp}^{0.43}}{H_{ft}^{0.65}}

    with :math:`P` in horsepower and :math:`H`, :math:`D` in feet, i.e. about
    :math:`D = 0.709\\,P_{kW}^{0.43} / H^{0.65}` in metres (coefficients and units from
    memory). The metric form :math:`0.62 P^{0.35} / H^{0.65}` sometimes quoted gives
    velocities near 20 m/s for a 10 MW, 100 m plant when P is in kW and is not used here.

    References
    ----------
    .. [1] G. S. Sarkaria, "Economic penstock diameters: a 20-year review", Water Power &
       Dam Construction 31(11), 70-72, 1979 (from memory).
    """
    p = _positive("power", power, "W") / _HP
    h = _positive("net_head", net_head, "m") / _FOOT
    return _finish(4.44 * p**0.43 / h**0.65 * _FOOT, power, net_head)


def fahlbusch_diameter(power, net_head):
    """Economic penstock diameter by Fahlbusch's formula.

    Parameters
    ----------
    power : numeric
        Rated plant output. [W]
    net_head : numeric
        Rated net head. [m]

    Returns
    -------
    numeric
        Diameter. [m]

    Notes
    -----
    .. math:: D = 0.52\\, H^{-0.17} \\left(\\frac{P}{H}\\right)^{0.43}

    with :math:`P` in kW, :math:`H` in m, :math:`D` in m (coefficients and units from
    memory).

    References
    ----------
    .. [1] F. Fahlbusch, "Determining diameters for power tunnels and pressure shafts",
       Water Power & Dam Construction 39(2), 42-48, 1987 (title and pages from memory).
    """
    p = _positive("power", power, "W") / _KW
    h = _positive("net_head", net_head, "m")
    return _finish(0.52 * h**-0.17 * (p / h) ** 0.43, power, net_head)


#: Usual range of the mean velocity in steel penstocks at the design flow, outside which
#: a run cautions (common practice, from memory). [m/s]
USUAL_PENSTOCK_VELOCITY = (2.0, 6.0)

#: Mean velocities at the design flow whose diameters bound the default diameter sweep,
#: (small-diameter end, large-diameter end) (common practice, from memory). [m/s]
SWEEP_VELOCITIES = (6.0, 1.5)


def economic_velocity_diameter(flow, velocity=3.0):
    """Diameter that carries ``flow`` at a chosen mean velocity (common practice).

    Parameters
    ----------
    flow : numeric
        Design flow. [m^3/s]
    velocity : numeric
        Chosen mean velocity; 2-4 m/s is common practice for steel penstocks. [m/s]

    Returns
    -------
    numeric
        Diameter. [m]

    Notes
    -----
    .. math:: D = \\sqrt{\\frac{4 Q}{\\pi V}}
    """
    q = _positive("flow", flow, "m^3/s")
    v = _positive("velocity", velocity, "m/s")
    return _finish(np.sqrt(4.0 * q / (np.pi * v)), flow, velocity)


#: Empirical diameter methods: key -> function, inputs, validity and reference, in one place.
EMPIRICAL_DIAMETER_METHODS = {
    "bier_1945": {
        "function": bier_diameter,
        "inputs": ("power", "net_head"),
        "required": ("power", "net_head"),
        "validity": "US steel penstocks of the first half of the 20th century; numeric "
        "range not recalled",
        "reference": "Bier (1945), USBR Engineering Monograph 3 (from memory)",
    },
    "sarkaria_1979": {
        "function": sarkaria_diameter,
        "inputs": ("power", "net_head"),
        "required": ("power", "net_head"),
        "validity": "survey of penstocks built 1959-1979; numeric range not recalled",
        "reference": "Sarkaria (1979), Water Power & Dam Construction 31(11) (from memory)",
    },
    "fahlbusch_1987": {
        "function": fahlbusch_diameter,
        "inputs": ("power", "net_head"),
        "required": ("power", "net_head"),
        "validity": "steel penstocks and pressure shafts; numeric range not recalled",
        "reference": "Fahlbusch (1987), Water Power & Dam Construction 39(2) (from memory)",
    },
    "economic_velocity": {
        "function": economic_velocity_diameter,
        "inputs": ("flow", "velocity"),
        "required": ("flow",),
        "validity": "velocity 2-4 m/s (common practice)",
        "velocity_range": (2.0, 4.0),
        "reference": "common practice",
    },
}


def empirical_diameter(method, **inputs):
    """Empirical sanity-check diameter by a named method.

    Parameters
    ----------
    method : str
        Key of :data:`EMPIRICAL_DIAMETER_METHODS`. [-]
    **inputs : numeric
        The method's inputs by name: ``power`` and ``net_head``, or ``flow`` and
        optionally ``velocity``. [W], [m], [m^3/s], [m/s]

    Returns
    -------
    numeric
        Diameter. [m]
    """
    if method not in EMPIRICAL_DIAMETER_METHODS:
        raise ValueError(
            f"method={method!r} is unknown; expected one of {sorted(EMPIRICAL_DIAMETER_METHODS)}."
        )
    entry = EMPIRICAL_DIAMETER_METHODS[method]
    unknown = set(inputs) - set(entry["inputs"])
    if unknown:
        raise ValueError(f"method {method!r} takes {entry['inputs']}, not {sorted(unknown)}.")
    missing = [name for name in entry["required"] if name not in inputs]
    if missing:
        raise ValueError(f"method {method!r} needs {missing} (of {entry['inputs']}).")
    return entry["function"](**inputs)


# --------------------------------------------------------------------------------------
# Size series
# --------------------------------------------------------------------------------------

#: Size series: key -> diameters [m] and source.
SIZE_SERIES = {
    "step_50mm": {
        "sizes": np.round(np.arange(0.20, 6.0 + 1e-9, 0.05), 3),
        "reference": "common practice: fabricated steel pipe rolled to any diameter, "
        "sized in 50 mm steps",
    },
    "iso_dn": {
        "sizes": np.asarray(
            [200, 250, 300, 350, 400, 450, 500, 600, 700, 800, 900, 1000, 1100, 1200, 1400,
             1500, 1600, 1800, 2000, 2200, 2400, 2600, 2800, 3000, 3200, 3400, 3600, 3800,
             4000],
            dtype=float,
        )
        / 1000.0,
        "reference": "ISO 6708:1995 nominal sizes DN 200-4000, DN taken as the diameter "
        "in mm (from memory)",
    },
}


def standard_sizes(series="step_50mm", minimum=None, maximum=None):
    """Diameters of a standard size series, optionally limited to a range.

    Parameters
    ----------
    series : str
        Key of :data:`SIZE_SERIES`. [-]
    minimum : float, optional
        Smallest diameter kept. [m]
    maximum : float, optional
        Largest diameter kept. [m]

    Returns
    -------
    numpy.ndarray
        Ascending diameters. [m]
    """
    if series not in SIZE_SERIES:
        raise ValueError(f"series={series!r} is unknown; expected one of {sorted(SIZE_SERIES)}.")
    sizes = SIZE_SERIES[series]["sizes"].copy()
    if minimum is not None:
        sizes = sizes[sizes >= minimum - 1e-12]
    if maximum is not None:
        sizes = sizes[sizes <= maximum + 1e-12]
    return sizes


def _check_sizes(sizes):
    arr = np.asarray(sizes, dtype=float).ravel()
    if arr.size == 0:
        raise ValueError("sizes must be a non-empty list of diameters [m].")
    if np.any(~np.isfinite(arr)) or np.any(arr <= 0.0):
        raise ValueError(f"sizes must all be positive diameters [m], got min {arr.min()}.")
    return np.unique(arr)


# --------------------------------------------------------------------------------------
# Annualised cost model
# --------------------------------------------------------------------------------------


def _as_function(name, obj):
    """A callable of diameter, or a (diameters, values) table interpolated in log-log."""
    if callable(obj):
        return obj
    try:
        grid, values = (np.asarray(v, dtype=float) for v in obj)
    except (TypeError, ValueError) as exc:
        raise ValueError(
            f"{name} must be a callable of diameter or a pair (diameters, values)."
        ) from exc
    if grid.ndim != 1 or grid.shape != values.shape or grid.size < 2:
        raise ValueError(f"{name} table needs two 1-D arrays of equal length >= 2.")
    order = np.argsort(grid)
    grid, values = grid[order], values[order]
    if np.any(grid <= 0.0) or np.any(np.diff(grid) <= 0.0):
        raise ValueError(f"{name} table diameters must be positive and distinct [m].")
    if np.any(values <= 0.0):
        raise ValueError(f"{name} table values must be positive for log-log interpolation.")
    from scipy.interpolate import PchipInterpolator   # loaded where used: a slow import

    spline = PchipInterpolator(np.log(grid), np.log(values), extrapolate=False)
    lo, hi = grid[0], grid[-1]

    def interpolated(diameter):
        d = np.asarray(diameter, dtype=float)
        if np.any(d < lo * (1 - 1e-12)) or np.any(d > hi * (1 + 1e-12)):
            raise ValueError(
                f"diameter outside the {name} table range [{lo:.4g}, {hi:.4g}] m."
            )
        out = np.exp(spline(np.log(np.clip(d, lo, hi))))
        return float(out) if out.ndim == 0 else out

    return interpolated


@dataclasses.dataclass(frozen=True)
class AnnualCostModel:
    """Annualised cost as a function of diameter (build with :func:`annual_cost_model`).

    Call it with a diameter [m] to get the total [currency/year]; :meth:`components`
    gives each part.
    """

    capital_cost: Callable
    energy_lost: Callable
    energy_price: float
    discount_rate: float
    economic_life: float
    om_fraction: float
    crf: float

    def components(self, diameter):
        """Cost parts at ``diameter`` [m]: capital [currency], capital_annual, om,
        lost_energy_value and total [currency/year], energy_lost [J/year]."""
        capital = np.asarray(self.capital_cost(diameter), dtype=float)
        energy = np.asarray(self.energy_lost(diameter), dtype=float)
        value = np.asarray(lost_energy_value(energy, self.energy_price))
        total = np.asarray(annualized_cost(capital, self.crf, self.om_fraction, value))
        parts = {
            "capital": capital,
            "capital_annual": capital * self.crf,
            "om": capital * self.om_fraction,
            "energy_lost": energy,
            "lost_energy_value": value,
            "total": total,
        }
        scalar = np.ndim(diameter) == 0
        return {k: float(v) if scalar else v for k, v in parts.items()}

    def __call__(self, diameter):
        return self.components(diameter)["total"]


def annual_cost_model(
    capital_cost, energy_lost, *, energy_price, discount_rate, economic_life, om_fraction=0.0
):
    """Build the annualised cost function of diameter for :func:`optimum_diameter`.

    Parameters
    ----------
    capital_cost : callable or (array_like, array_like)
        Capital cost as a function of diameter, or a table (diameters [m], cost
        [currency]) interpolated monotonically (PCHIP) in log-log. [currency]
    energy_lost : callable or (array_like, array_like)
        Energy lost per year as a function of diameter, or a table (diameters [m],
        energy [J/year]). [J/year]
    energy_price : float
        Value of energy. [currency/J]
    discount_rate : float
        Discount rate per year, > -1. [1/year]
    economic_life : float
        Economic life, > 0. [year]
    om_fraction : float
        Annual O&M as a fraction of capital. [1/year]

    Returns
    -------
    AnnualCostModel

    Notes
    -----
    :math:`C_a(D) = K(D) (CRF(i, n) + f_{OM}) + E_{lost}(D)\\, c_E`.
    """
    crf = capital_recovery_factor(discount_rate, economic_life)
    if energy_price < 0.0:
        raise ValueError("energy_price must be >= 0 [currency/J].")
    if om_fraction < 0.0:
        raise ValueError("om_fraction must be >= 0 [1/year].")
    return AnnualCostModel(
        capital_cost=_as_function("capital_cost", capital_cost),
        energy_lost=_as_function("energy_lost", energy_lost),
        energy_price=float(energy_price),
        discount_rate=float(discount_rate),
        economic_life=float(economic_life),
        om_fraction=float(om_fraction),
        crf=float(crf),
    )


def cost_curve(annualized_cost_fn, diameters):
    """Evaluate a cost function at each diameter (for tables and plots).

    Parameters
    ----------
    annualized_cost_fn : callable
        Cost as a function of one diameter. [currency/year]
    diameters : array_like
        Diameters. [m]

    Returns
    -------
    numpy.ndarray
        Cost at each diameter. [currency/year]
    """
    d = _positive("diameters", diameters, "m").ravel()
    return np.fromiter((float(annualized_cost_fn(float(x))) for x in d), float, d.size)


# --------------------------------------------------------------------------------------
# Optimum
# --------------------------------------------------------------------------------------


@dataclasses.dataclass(frozen=True)
class OptimumDiameter:
    """Result of :func:`optimum_diameter`.

    Attributes
    ----------
    diameter : float
        Continuous optimum. [m]
    cost : float
        Cost at the optimum. [currency/year]
    derivative : float
        Central-difference dC/dD at the optimum. [currency/year/m]
    relative_derivative : float
        D/C dC/dD at the optimum, ~0 at an interior minimum. [-]
    at_bound : bool
        The optimum lies on a bound (the true minimum may be outside). [-]
    lower_size, upper_size : float or None
        Available sizes just below and just above the optimum. [m]
    lower_cost, upper_cost : float or None
        Cost at those sizes. [currency/year]
    selected_size : float
        The cheaper of the two neighbouring sizes. [m]
    selected_cost : float
        Its cost. [currency/year]
    nearest_size : float
        The available size closest to the optimum. [m]
    warning : str or None
        Text when no available size is within the tolerance or the optimum is at a bound.
    converged : bool
        The optimiser reported success. [-]
    """

    diameter: float
    cost: float
    derivative: float
    relative_derivative: float
    at_bound: bool
    lower_size: float | None
    upper_size: float | None
    lower_cost: float | None
    upper_cost: float | None
    selected_size: float
    selected_cost: float
    nearest_size: float
    warning: str | None
    converged: bool


def optimum_diameter(
    annualized_cost_fn, bounds, sizes=None, *, xatol=1.0e-6, size_tolerance=0.10
):
    """Diameter of least annualised cost, snapped to available sizes.

    Parameters
    ----------
    annualized_cost_fn : callable
        Annualised cost as a function of diameter, e.g. from :func:`annual_cost_model`.
        [currency/year]
    bounds : (float, float)
        Search interval (lower, upper), 0 < lower < upper. [m]
    sizes : array_like, optional
        Available diameters; default :func:`standard_sizes` ``("step_50mm")``. [m]
    xatol : float
        Absolute tolerance on the continuous optimum. [m]
    size_tolerance : float
        Warn when no size is within this fraction of the optimum. [-]

    Returns
    -------
    OptimumDiameter

    Notes
    -----
    Bounded Brent minimisation (``scipy.optimize.minimize_scalar``, ``method="bounded"``).
    Derivative check by central difference with step :math:`h = 10^{-4} D^*`:
    :math:`C'(D^*) \\approx (C(D^*+h) - C(D^*-h)) / 2h`. Of the sizes bracketing
    :math:`D^*`, the cheaper is selected (the cost curve is not symmetric).

    Examples
    --------
    Analytic optimum of 1e5 D^2 + 2e4 / D^5 is 0.5^(1/7) = 0.90572 m:

    >>> res = optimum_diameter(lambda d: 1e5 * d**2 + 2e4 / d**5, (0.2, 5.0))
    >>> round(res.diameter, 4), res.lower_size, res.upper_size, res.warning is None
    (0.9057, 0.9, 0.95, True)
    """
    lo, hi = (float(b) for b in bounds)
    if not (np.isfinite(lo) and np.isfinite(hi) and 0.0 < lo < hi):
        raise ValueError(f"bounds must satisfy 0 < lower < upper [m], got {bounds!r}.")
    if not 0.0 < size_tolerance < 1.0:
        raise ValueError("size_tolerance must lie in (0, 1) [-].")
    available = standard_sizes() if sizes is None else _check_sizes(sizes)

    def fn(d):
        return float(annualized_cost_fn(float(d)))

    from scipy.optimize import minimize_scalar   # loaded where used: a slow import

    res = minimize_scalar(
        fn, bounds=(lo, hi), method="bounded", options={"xatol": xatol, "maxiter": 1000}
    )
    d_opt = float(res.x)
    c_opt = float(res.fun)
    h = 1.0e-4 * d_opt
    d_minus, d_plus = max(d_opt - h, lo), min(d_opt + h, hi)
    deriv = (fn(d_plus) - fn(d_minus)) / (d_plus - d_minus)
    rel = deriv * d_opt / c_opt if c_opt != 0.0 else float("nan")
    at_bound = bool(min(d_opt - lo, hi - d_opt) <= 10.0 * xatol + 1e-9 * hi)

    below = available[available <= d_opt]
    above = available[available >= d_opt]
    lower = float(below[-1]) if below.size else None
    upper = float(above[0]) if above.size else None
    lower_cost = fn(lower) if lower is not None else None
    upper_cost = fn(upper) if upper is not None else None
    candidates = [(c, s) for c, s in ((lower_cost, lower), (upper_cost, upper)) if s is not None]
    selected_cost, selected = min(candidates)
    nearest = float(available[np.argmin(np.abs(available - d_opt))])

    messages = []
    if abs(nearest - d_opt) > size_tolerance * d_opt:
        messages.append(
            f"no available size within +/-{size_tolerance:.0%} of the optimum "
            f"{d_opt:.3f} m (nearest {nearest:.3f} m)"
        )
    if at_bound:
        messages.append(
            f"optimum {d_opt:.3f} m lies on the search bound ({lo:.3f}, {hi:.3f}) m; "
            "widen the bounds"
        )
    return OptimumDiameter(
        diameter=d_opt,
        cost=c_opt,
        derivative=float(deriv),
        relative_derivative=float(rel),
        at_bound=at_bound,
        lower_size=lower,
        upper_size=upper,
        lower_cost=lower_cost,
        upper_cost=upper_cost,
        selected_size=float(selected),
        selected_cost=float(selected_cost),
        nearest_size=nearest,
        warning="; ".join(messages) if messages else None,
        converged=bool(res.success),
    )


# --------------------------------------------------------------------------------------
# Sensitivity
# --------------------------------------------------------------------------------------


@dataclasses.dataclass(frozen=True)
class SensitivityGrid:
    """Result of :func:`sensitivity_grid`; 2-D arrays indexed [energy price, discount rate].

    Attributes
    ----------
    energy_prices : numpy.ndarray
        [currency/J] (or whatever unit the factory takes)
    discount_rates : numpy.ndarray
        [1/year]
    optimum_diameter, selected_size : numpy.ndarray
        [m]
    optimum_cost, selected_cost : numpy.ndarray
        [currency/year]
    results : tuple of tuple of OptimumDiameter
        Full results, same indexing.
    """

    energy_prices: np.ndarray
    discount_rates: np.ndarray
    optimum_diameter: np.ndarray
    optimum_cost: np.ndarray
    selected_size: np.ndarray
    selected_cost: np.ndarray
    results: tuple


def sensitivity_grid(
    cost_fn_factory, energy_prices, discount_rates, *, bounds, sizes=None, xatol=1.0e-6
):
    """Optimum diameter and cost over a grid of energy prices and discount rates.

    Parameters
    ----------
    cost_fn_factory : callable
        ``cost_fn_factory(energy_price=..., discount_rate=...)`` returns an annualised
        cost function of diameter. [-]
    energy_prices : array_like
        Energy prices to try. [currency/J]
    discount_rates : array_like
        Discount rates to try. [1/year]
    bounds : (float, float)
        Search interval for :func:`optimum_diameter`. [m]
    sizes : array_like, optional
        Available diameters. [m]
    xatol : float
        Tolerance on the optimum. [m]

    Returns
    -------
    SensitivityGrid
    """
    prices = np.atleast_1d(np.asarray(energy_prices, dtype=float))
    rates = np.atleast_1d(np.asarray(discount_rates, dtype=float))
    if prices.ndim != 1 or rates.ndim != 1 or prices.size == 0 or rates.size == 0:
        raise ValueError("energy_prices and discount_rates must be non-empty 1-D lists.")
    results = tuple(
        tuple(
            optimum_diameter(
                cost_fn_factory(energy_price=float(p), discount_rate=float(r)),
                bounds,
                sizes,
                xatol=xatol,
            )
            for r in rates
        )
        for p in prices
    )

    def grid(attr):
        return np.array([[getattr(res, attr) for res in row] for row in results], dtype=float)

    return SensitivityGrid(
        energy_prices=prices,
        discount_rates=rates,
        optimum_diameter=grid("diameter"),
        optimum_cost=grid("cost"),
        selected_size=grid("selected_size"),
        selected_cost=grid("selected_cost"),
        results=results,
    )


@dataclasses.dataclass(frozen=True)
class OneAtATimeRow:
    """One line of :func:`one_at_a_time`.

    Attributes
    ----------
    name : str
        Input varied (``"base"`` for the base case). [-]
    factor : float
        Multiplier applied to that input. [-]
    value : float
        Value of the input. [its unit]
    optimum_diameter : float
        [m]
    optimum_cost : float
        [currency/year]
    selected_size : float
        [m]
    diameter_change : float
        optimum / base optimum - 1. [-]
    cost_change : float
        optimum cost / base optimum cost - 1. [-]
    """

    name: str
    factor: float
    value: float
    optimum_diameter: float
    optimum_cost: float
    selected_size: float
    diameter_change: float
    cost_change: float


def one_at_a_time(
    cost_fn_factory, base_inputs, *, bounds, variation=0.20, names=None, sizes=None,
    xatol=1.0e-6,
):
    """Vary each main cost input by +/- ``variation`` alone and re-optimise.

    Parameters
    ----------
    cost_fn_factory : callable
        ``cost_fn_factory(**inputs)`` returns an annualised cost function of diameter. [-]
    base_inputs : mapping of str to float
        Base values of the factory's inputs. [their units]
    bounds : (float, float)
        Search interval. [m]
    variation : float
        Fractional change, in (0, 1): inputs are multiplied by 1 - x and 1 + x. [-]
    names : sequence of str, optional
        Inputs to vary; default all of ``base_inputs``. [-]
    sizes : array_like, optional
        Available diameters. [m]
    xatol : float
        Tolerance on the optimum. [m]

    Returns
    -------
    tuple of OneAtATimeRow
        The base case first, then (low, high) for each input in order.
    """
    if not isinstance(base_inputs, Mapping) or not base_inputs:
        raise ValueError("base_inputs must be a non-empty mapping of input name -> value.")
    if not 0.0 < variation < 1.0:
        raise ValueError(f"variation must lie in (0, 1) [-], got {variation}.")
    names = list(base_inputs) if names is None else list(names)
    missing = [n for n in names if n not in base_inputs]
    if missing:
        raise ValueError(f"names {missing} are not in base_inputs {sorted(base_inputs)}.")
    base = optimum_diameter(cost_fn_factory(**base_inputs), bounds, sizes, xatol=xatol)

    def row(name, factor, value, res):
        return OneAtATimeRow(
            name=name,
            factor=factor,
            value=float(value),
            optimum_diameter=res.diameter,
            optimum_cost=res.cost,
            selected_size=res.selected_size,
            diameter_change=res.diameter / base.diameter - 1.0,
            cost_change=res.cost / base.cost - 1.0 if base.cost != 0.0 else float("nan"),
        )

    rows = [row("base", 1.0, float("nan"), base)]
    for name in names:
        for factor in (1.0 - variation, 1.0 + variation):
            inputs = dict(base_inputs)
            inputs[name] = base_inputs[name] * factor
            res = optimum_diameter(cost_fn_factory(**inputs), bounds, sizes, xatol=xatol)
            rows.append(row(name, factor, inputs[name], res))
    return tuple(rows)


@dataclasses.dataclass(frozen=True)
class SteppedDesign:
    """The cheapest stepped design of :func:`stepped_design`."""

    #: Option (column of the cost table) of each reach. [-]
    option: np.ndarray
    #: Total cost: the reaches' costs plus the transitions. [currency/year]
    cost: float
    #: Runs of one option: (first reach, last reach, option), in route order. [-]
    runs: tuple


def stepped_design(lengths, reach_cost, *, transition_cost=0.0, minimum_length=0.0,
                   feasible=None):
    """Cheapest choice of an option (a diameter, a material) for each reach of a route.

    Parameters
    ----------
    lengths : array_like of shape (R,)
        Length of each reach between consecutive stations, in route order. [m]
    reach_cost : array_like of shape (R, K)
        Cost of each reach built with each of K options, e.g. annualized capital plus
        the value of the energy its friction loses. [currency/year]
    transition_cost : float or array_like of shape (K, K), default 0
        Cost of each change from one option (row) to the next (column) between two
        reaches (a reducer, a change of material); the diagonal is ignored. [currency/year]
    minimum_length : float, default 0
        Shortest run of one option; every run, the first and the last included, must
        be at least this long. [m]
    feasible : array_like of bool, shape (R, K), optional
        Whether each option is allowed on each reach (wall, class and buckling
        rules); all by default. [-]

    Returns
    -------
    SteppedDesign
        The option of each reach, the total cost and the runs. [-]

    Raises
    ------
    ValueError
        When no design meets the minimum length and the feasibility (the route shorter
        than ``minimum_length``, or a reach that no option may take).

    Notes
    -----
    Dynamic programming over the stations (Bellman's principle of optimality): with
    :math:`P_k(r)` the cost of reaches :math:`0..r-1` in option :math:`k` and
    :math:`B_k(r)` the cheapest design of those reaches whose last run is in option
    :math:`k`,

    .. math::

        B_k(r) = \\min_{i:\\ L(i, r) \\ge L_{min}} \\Big[\\min_{k'} \\big(B_{k'}(i)
        + T_{k'k}\\big) + P_k(r) - P_k(i)\\Big], \\qquad B_k(0) = 0,\\ T_{kk} = 0

    over the starts :math:`i` of the last run, :math:`L(i, r)` its length. The work
    grows as :math:`R^2 K`. The costs must be additive over the reaches: a reach's
    energy loss is charged at its own share of the loss (a first-order split of the
    plant's lost energy), and a constraint that couples reaches (the pressure margin,
    which depends on the losses upstream) is checked on the design afterwards.

    References
    ----------
    .. [1] R. Bellman, "Dynamic Programming", Princeton University Press, 1957.
    """
    length = np.asarray(lengths, dtype=float)
    cost = np.asarray(reach_cost, dtype=float)
    if length.ndim != 1 or length.size == 0 or np.any(~np.isfinite(length)) or \
            np.any(length <= 0):
        raise ValueError("lengths must be a non-empty 1-D array of positive lengths [m].")
    if cost.ndim != 2 or cost.shape[0] != length.size or cost.shape[1] == 0:
        raise ValueError(f"reach_cost must have shape ({length.size}, K) [currency/year]; "
                         f"got {cost.shape}")
    n_reach, n_opt = cost.shape
    ok = np.ones(cost.shape, bool) if feasible is None else np.asarray(feasible, bool)
    if ok.shape != cost.shape:
        raise ValueError(f"feasible must have the shape of reach_cost {cost.shape} [-].")
    ok = ok & np.isfinite(cost)
    trans = np.broadcast_to(np.asarray(transition_cost, dtype=float), (n_opt, n_opt)).copy()
    if np.any(~np.isfinite(trans)) or np.any(trans < 0):
        raise ValueError("transition_cost must be finite and >= 0 [currency/year].")
    np.fill_diagonal(trans, 0.0)
    min_len = float(minimum_length)
    total_length = float(length.sum())
    if min_len > total_length * (1 + 1e-12):
        raise ValueError(f"minimum_length {min_len:g} m is longer than the route "
                         f"({total_length:g} m)")
    x = np.concatenate([[0.0], np.cumsum(length)])
    prefix = np.vstack([np.zeros(n_opt), np.cumsum(np.where(ok, cost, 0.0), axis=0)])
    bad = np.vstack([np.zeros(n_opt, int), np.cumsum(~ok, axis=0)])
    best = np.full((n_reach + 1, n_opt), np.inf)
    best[0] = 0.0
    entry = np.zeros((n_reach + 1, n_opt))       # cheapest way into a run of option k at i
    came_from = np.zeros((n_reach + 1, n_opt), np.intp)   # previous option at i
    start = np.zeros((n_reach + 1, n_opt), np.intp)        # start of the last run
    entry[0] = 0.0
    for r in range(1, n_reach + 1):
        starts = np.flatnonzero(x[r] - x[:r] >= min_len * (1 - 1e-12))
        if starts.size:
            run = prefix[r][None, :] - prefix[starts]
            run[(bad[r][None, :] - bad[starts]) > 0] = np.inf
            total = entry[starts] + run
            pick = np.argmin(total, axis=0)
            best[r] = total[pick, np.arange(n_opt)]
            start[r] = starts[pick]
        if r < n_reach:
            into = best[r][:, None] + trans            # (previous option, next option)
            came_from[r] = np.argmin(into, axis=0)
            entry[r] = into[came_from[r], np.arange(n_opt)]
    k = int(np.argmin(best[n_reach]))
    if not np.isfinite(best[n_reach, k]):
        raise ValueError("no stepped design meets the minimum length and the feasibility "
                         "of every reach")
    option = np.empty(n_reach, np.intp)
    runs = []
    r = n_reach
    while r > 0:
        i = int(start[r, k])
        option[i:r] = k
        runs.append((i, r - 1, k))
        k_prev = int(came_from[i, k]) if i > 0 else k
        r, k = i, k_prev
    merged = []
    for first, last, k in reversed(runs):   # runs of one option that meet are one run
        if merged and merged[-1][2] == k:
            merged[-1] = (merged[-1][0], last, k)
        else:
            merged.append((first, last, k))
    return SteppedDesign(option=option, cost=float(best[n_reach].min()), runs=tuple(merged))
