"""Engineering economics for the penstock diameter study.

Pure functions: capital recovery and present-value factors, annualised cost, the value of
energy lost to friction, and a pipe capital cost model (material by mass or by length,
fabrication and installation as factors or per-metre costs, civil works per metre as a
power law of diameter with the user's coefficients).

Money is in one currency of the user's choice ("currency" below); energy is in joules
inside. Use :func:`energy_price_per_joule` to turn a price per kWh into the SI price.

References
----------
.. [1] E. L. Grant, W. G. Ireson and R. S. Leavenworth, "Principles of Engineering
   Economy", 8th ed., Wiley, 1990, ch. 4 (interest factors; capital recovery factor).
.. [2] W. G. Sullivan, E. M. Wicks and C. P. Koelling, "Engineering Economy", 17th ed.,
   Pearson, 2019, ch. 4 (uniform series formulas).
"""

from __future__ import annotations

import numpy as np

from penstock.constants import SECONDS_PER_HOUR
from penstock.pipewall import steel_mass

from ._numeric import checked_array as _array
from ._numeric import same_kind as _finish

__all__ = [
    "annualized_cost",
    "annuity_present_value",
    "capital_recovery_factor",
    "civil_cost_per_metre",
    "energy_price_per_joule",
    "lost_energy_value",
    "pipe_capital_cost",
    "pipe_cost_breakdown",
    "present_value",
    "present_worth_factor",
]

_KWH = 1000.0 * SECONDS_PER_HOUR  # J per kWh
_KG_PER_TONNE = 1000.0


def _rate_years(rate, years):
    i = _array("rate", rate, unit="1/year")
    if np.any(i <= -1.0):
        raise ValueError("rate (discount rate) must be greater than -100 % (-1.0) [1/year].")
    n = _array("years", years, unit="year")
    if np.any(n <= 0.0):
        raise ValueError("years (economic life) must be positive [year].")
    return i, n


def capital_recovery_factor(rate, years):
    """Capital recovery factor: uniform annual payment per unit present value.

    Parameters
    ----------
    rate : numeric
        Discount (interest) rate per year as a fraction, > -1. [1/year]
    years : numeric
        Economic life, > 0 (need not be whole). [year]

    Returns
    -------
    numeric
        Capital recovery factor. [1/year]

    Notes
    -----
    .. math:: CRF = \\frac{i (1+i)^n}{(1+i)^n - 1} = \\frac{i}{1 - (1+i)^{-n}}

    evaluated as :math:`i / (-\\mathrm{expm1}(-n\\,\\mathrm{log1p}(i)))` for accuracy near
    :math:`i = 0`, where the limit :math:`1/n` is used for :math:`|i| < 10^{-12}`.

    Examples
    --------
    >>> round(capital_recovery_factor(0.10, 20), 5)
    0.11746
    >>> capital_recovery_factor(0.0, 25)
    0.04

    References
    ----------
    .. [1] Grant, Ireson and Leavenworth, "Principles of Engineering Economy", 8th ed.,
       1990, ch. 4, capital recovery factor (A/P, i, n).
    """
    i, n = _rate_years(rate, years)
    small = np.abs(i) < 1.0e-12
    i_safe = np.where(small, 1.0, i)
    with np.errstate(over="ignore"):
        crf = i_safe / (-np.expm1(-n * np.log1p(i_safe)))
    crf = np.where(small, 1.0 / n, crf)
    return _finish(crf, rate, years)


def present_worth_factor(rate, years):
    """Uniform-series present worth factor (P/A), the inverse of the CRF.

    Parameters
    ----------
    rate : numeric
        Discount rate per year, > -1. [1/year]
    years : numeric
        Number of years, > 0. [year]

    Returns
    -------
    numeric
        Present value of 1 per year for ``years`` years. [year]

    Notes
    -----
    :math:`(P/A) = ((1+i)^n - 1) / (i (1+i)^n) = 1 / CRF`.
    """
    i, n = _rate_years(rate, years)
    return _finish(1.0 / np.asarray(capital_recovery_factor(i, n)), rate, years)


def present_value(amount, rate, years):
    """Present value of a single amount paid after ``years`` years.

    Parameters
    ----------
    amount : numeric
        Future amount. [currency]
    rate : numeric
        Discount rate per year, > -1. [1/year]
    years : numeric
        Time until payment, > 0. [year]

    Returns
    -------
    numeric
        Present value. [currency]

    Notes
    -----
    :math:`P = F (1 + i)^{-n}`.
    """
    i, n = _rate_years(rate, years)
    f = _array("amount", amount, unit="currency")
    return _finish(f * np.exp(-n * np.log1p(i)), amount, rate, years)


def annuity_present_value(annual_amount, rate, years):
    """Present value of a uniform annual amount paid at the end of each year.

    Parameters
    ----------
    annual_amount : numeric
        Amount per year. [currency/year]
    rate : numeric
        Discount rate per year, > -1. [1/year]
    years : numeric
        Number of years, > 0. [year]

    Returns
    -------
    numeric
        Present value. [currency]

    Notes
    -----
    :math:`P = A / CRF(i, n)`.
    """
    a = _array("annual_amount", annual_amount, unit="currency/year")
    return _finish(a * np.asarray(present_worth_factor(rate, years)), annual_amount, rate, years)


def annualized_cost(capital, crf, om_fraction=0.0, energy_lost_value=0.0):
    """Total annual cost: capital recovery + operation and maintenance + lost energy.

    Parameters
    ----------
    capital : numeric
        Capital (investment) cost. [currency]
    crf : numeric
        Capital recovery factor, see :func:`capital_recovery_factor`. [1/year]
    om_fraction : numeric
        Annual operation and maintenance cost as a fraction of capital. [1/year]
    energy_lost_value : numeric
        Annual value of the energy lost in the pipe. [currency/year]

    Returns
    -------
    numeric
        Annualised cost. [currency/year]

    Notes
    -----
    :math:`C_a = K (CRF + f_{OM}) + V_{lost}`.
    """
    k = _array("capital", capital, nonnegative=True, unit="currency")
    c = _array("crf", crf, positive=True, unit="1/year")
    f = _array("om_fraction", om_fraction, nonnegative=True, unit="1/year")
    v = _array("energy_lost_value", energy_lost_value, nonnegative=True, unit="currency/year")
    return _finish(k * (c + f) + v, capital, crf, om_fraction, energy_lost_value)


def energy_price_per_joule(price_per_kwh):
    """Convert an energy price per kWh to the SI price per joule.

    Parameters
    ----------
    price_per_kwh : numeric
        Energy price. [currency/kWh]

    Returns
    -------
    numeric
        Energy price. [currency/J]

    Notes
    -----
    1 kWh = 1000 W x 3600 s = 3.6e6 J.
    """
    p = _array("price_per_kwh", price_per_kwh, nonnegative=True, unit="currency/kWh")
    return _finish(p / _KWH, price_per_kwh)


def lost_energy_value(energy_lost, energy_price):
    """Annual value of energy lost to head loss in the pipe.

    Parameters
    ----------
    energy_lost : numeric
        Energy not generated per year because of the pipe's losses. [J/year]
    energy_price : numeric
        Value of energy. [currency/J]

    Returns
    -------
    numeric
        Value of the lost energy. [currency/year]

    Notes
    -----
    :math:`V_{lost} = E_{lost} \\, c_E`.
    """
    e = _array("energy_lost", energy_lost, nonnegative=True, unit="J/year")
    c = _array("energy_price", energy_price, nonnegative=True, unit="currency/J")
    return _finish(e * c, energy_lost, energy_price)


def civil_cost_per_metre(diameter, fixed=0.0, coefficient=0.0, exponent=1.0):
    """Civil works cost per metre (supports, anchors, trench) as a power law of diameter.

    Parameters
    ----------
    diameter : numeric
        Pipe diameter. [m]
    fixed : numeric
        Part independent of diameter. [currency/m]
    coefficient : numeric
        Coefficient of the diameter term. [currency/m^(1+exponent)]
    exponent : numeric
        Exponent of diameter, >= 0. [-]

    Returns
    -------
    numeric
        Civil cost per metre of pipe. [currency/m]

    Notes
    -----
    :math:`c_{civil} = a + b D^c`, user coefficients (no published default).
    """
    d = _array("diameter", diameter, positive=True, unit="m")
    a = _array("fixed", fixed, nonnegative=True, unit="currency/m")
    b = _array("coefficient", coefficient, nonnegative=True, unit="currency/m")
    c = _array("exponent", exponent, nonnegative=True, unit="-")
    return _finish(a + b * d**c, diameter, fixed, coefficient, exponent)


def pipe_cost_breakdown(
    diameter,
    length,
    *,
    thickness=None,
    density=None,
    cost_per_tonne=None,
    cost_per_metre=None,
    fabrication_factor=0.0,
    installation_factor=0.0,
    fabrication_cost_per_metre=0.0,
    installation_cost_per_metre=0.0,
    civil_fixed=0.0,
    civil_coefficient=0.0,
    civil_exponent=1.0,
    contingency_factor=0.0,
):
    """Capital cost of a pipe, item by item.

    Parameters
    ----------
    diameter : numeric
        Inside diameter. [m]
    length : numeric
        Pipe length. [m]
    thickness : numeric, optional
        Wall thickness; needed with ``cost_per_tonne``. [m]
    density : numeric, optional
        Wall material density; needed with ``cost_per_tonne``. [kg/m^3]
    cost_per_tonne : numeric, optional
        Delivered material price by mass (steel, ductile iron). [currency/t]
    cost_per_metre : numeric, optional
        Delivered pipe price by length (GRP, HDPE), for this diameter. [currency/m]
    fabrication_factor : numeric
        Fabrication cost as a fraction of material cost. [-]
    installation_factor : numeric
        Installation cost as a fraction of material cost. [-]
    fabrication_cost_per_metre : numeric
        Fabrication cost per metre, added to the factor. [currency/m]
    installation_cost_per_metre : numeric
        Installation cost per metre, added to the factor. [currency/m]
    civil_fixed, civil_coefficient, civil_exponent : numeric
        Civil works per metre :math:`a + b D^c`, see :func:`civil_cost_per_metre`.
        [currency/m], [currency/m^(1+c)], [-]
    contingency_factor : numeric
        Contingency as a fraction of the subtotal. [-]

    Returns
    -------
    dict
        ``material``, ``fabrication``, ``installation``, ``civil``, ``contingency`` and
        ``total`` costs [currency], plus ``mass`` [kg] (NaN for by-length pricing).

    Raises
    ------
    ValueError
        If neither or both of ``cost_per_tonne`` and ``cost_per_metre`` are given, or
        ``cost_per_tonne`` is given without ``thickness`` and ``density``.

    Notes
    -----
    By mass: :math:`K_m = c_t\\, m / 1000`, :math:`m = \\rho \\pi (D+t) t L`
    (:func:`penstock.pipewall.steel_mass`). By length: :math:`K_m = c_L L`.
    :math:`K_{fab} = f_{fab} K_m + c_{fab} L`, :math:`K_{inst} = f_{inst} K_m + c_{inst} L`,
    :math:`K_{civ} = (a + b D^c) L`, total :math:`(K_m + K_{fab} + K_{inst} + K_{civ})(1 + f_c)`.
    """
    args = (diameter, length)
    d = _array("diameter", diameter, positive=True, unit="m")
    length_ = _array("length", length, nonnegative=True, unit="m")
    if (cost_per_tonne is None) == (cost_per_metre is None):
        raise ValueError(
            "give exactly one of cost_per_tonne [currency/t] (priced by mass) or "
            "cost_per_metre [currency/m] (priced by length)."
        )
    if cost_per_tonne is not None:
        if thickness is None or density is None:
            raise ValueError("cost_per_tonne needs thickness [m] and density [kg/m^3].")
        mass = np.asarray(steel_mass(d, thickness, length_, density))
        material = mass * _array("cost_per_tonne", cost_per_tonne, nonnegative=True,
                                 unit="currency/t") / _KG_PER_TONNE
        args = args + (thickness, density, cost_per_tonne)
    else:
        mass = np.full(np.broadcast(d, length_).shape, np.nan)
        material = length_ * _array("cost_per_metre", cost_per_metre, nonnegative=True,
                                    unit="currency/m")
        args = args + (cost_per_metre,)
    fab = (
        _array("fabrication_factor", fabrication_factor, nonnegative=True, unit="-") * material
        + _array("fabrication_cost_per_metre", fabrication_cost_per_metre, nonnegative=True,
                 unit="currency/m") * length_
    )
    inst = (
        _array("installation_factor", installation_factor, nonnegative=True, unit="-") * material
        + _array("installation_cost_per_metre", installation_cost_per_metre, nonnegative=True,
                 unit="currency/m") * length_
    )
    civil = np.asarray(civil_cost_per_metre(d, civil_fixed, civil_coefficient, civil_exponent))
    civil = civil * length_
    subtotal = material + fab + inst + civil
    contingency = subtotal * _array("contingency_factor", contingency_factor, nonnegative=True,
                                    unit="-")
    parts = {
        "material": material,
        "fabrication": fab,
        "installation": inst,
        "civil": civil,
        "contingency": contingency,
        "total": subtotal + contingency,
        "mass": mass,
    }
    return {key: _finish(val, *args) for key, val in parts.items()}


def pipe_capital_cost(diameter, length, **cost_inputs):
    """Total capital cost of a pipe; keyword inputs as :func:`pipe_cost_breakdown`.

    Parameters
    ----------
    diameter : numeric
        Inside diameter. [m]
    length : numeric
        Pipe length. [m]
    **cost_inputs
        ``thickness``, ``density``, ``cost_per_tonne`` or ``cost_per_metre``,
        ``fabrication_factor``, ``installation_factor``, ``fabrication_cost_per_metre``,
        ``installation_cost_per_metre``, ``civil_fixed``, ``civil_coefficient``,
        ``civil_exponent``, ``contingency_factor``. [see pipe_cost_breakdown]

    Returns
    -------
    numeric
        Total capital cost. [currency]

    Notes
    -----
    The ``"total"`` entry of :func:`pipe_cost_breakdown`.
    """
    return pipe_cost_breakdown(diameter, length, **cost_inputs)["total"]
