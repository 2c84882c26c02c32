"""Pipes sold in pressure classes: their sizes, the wall and bore of each class, the class
each reach of a route needs, and illustrative default prices.

Pure functions of SI numbers and numpy arrays. Two families are covered:

* **Polyethylene PE100** to ISO 4427-2: sizes by nominal outside diameter, classes by SDR
  (the nominal wall is ``d_n / SDR``), each class's PN from the registry's material
  (:data:`penstock.materials.MATERIALS` ``"hdpe_pe100"``), re-rated for warm water.
* **Ductile iron** to EN 545:2010: sizes by DN with the external diameter of the
  standard, classes C20 up to each size's highest, C100 at most (the class is the
  allowable operating pressure PFA in bar), the minimum wall of each class from the
  standard's design rule, the cement lining and the bore.

A class carries a design pressure head up to its rated pressure; this module takes no
allowance for surge above the rating (the standards allow some), which keeps the choice
on the safe side.
"""

from __future__ import annotations

import numpy as np

from ._numeric import checked_array as _array
from ._numeric import same_kind as _finish
from .constants import GRAVITY

__all__ = [
    "PE_OUTSIDE_DIAMETERS",
    "DUCTILE_IRON_OUTSIDE_DIAMETERS",
    "DUCTILE_IRON_SAFETY_FACTOR",
    "DUCTILE_IRON_LINING",
    "DUCTILE_IRON_HIGHEST_CLASS",
    "PE100_TEMPERATURE_RERATING",
    "ILLUSTRATIVE_PRICE_RATIO",
    "pe_wall",
    "pe_bore",
    "ductile_iron_wall",
    "ductile_iron_nominal_wall",
    "ductile_iron_lining",
    "ductile_iron_bore",
    "ductile_iron_highest_class",
    "pe100_temperature_factor",
    "rated_head",
    "lowest_class",
    "reach_classes",
    "tube_mass_per_metre",
    "illustrative_price_per_metre",
]

#: Nominal outside diameters of PE pressure pipes, 110 mm to 2,500 mm, ISO 4427-2:2019
#: Table 2 (the series from memory; the walls of 110-560 mm checked against published
#: dimension tables in the tests). [m]
PE_OUTSIDE_DIAMETERS = 1e-3 * np.array([
    110, 125, 140, 160, 180, 200, 225, 250, 280, 315, 355, 400, 450, 500, 560, 630, 710,
    800, 900, 1000, 1200, 1400, 1600, 1800, 2000, 2250, 2500], dtype=float)

#: External diameter DE of ductile-iron pipes by nominal size DN, EN 545:2010 (DN 80 to
#: DN 1000 as printed in a manufacturer's summary of EN 545:2010, "The new standard for
#: ductile iron pipes EN 545:2010", Duktus; DN 1100 to 2000 from memory). [mm] -> [mm]
DUCTILE_IRON_OUTSIDE_DIAMETERS = {
    80: 98.0, 100: 118.0, 125: 144.0, 150: 170.0, 200: 222.0, 250: 274.0, 300: 326.0,
    350: 378.0, 400: 429.0, 500: 532.0, 600: 635.0, 700: 738.0, 800: 842.0, 900: 945.0,
    1000: 1048.0, 1100: 1152.0, 1200: 1255.0, 1400: 1462.0, 1500: 1565.0, 1600: 1668.0,
    1800: 1875.0, 2000: 2082.0,
}

#: Safety factor of EN 545:2010's wall design of pressure-class pipes on the minimum
#: tensile strength at the allowable operating pressure (from memory; the walls it gives
#: are checked against the standard's table in the tests). [-]
DUCTILE_IRON_SAFETY_FACTOR = 3.0

#: Least wall of a ductile-iron pipe of any class (EN 545:2010's smallest tabulated
#: minimum wall, 3.0 mm, from the manufacturer's summary named above). [m]
DUCTILE_IRON_LEAST_WALL = 3.0e-3

#: Nominal thickness of the cement-mortar lining of ductile-iron pipes by the largest DN
#: of each band: DN 80-300 3 mm, 350-600 5 mm, 700-1200 6 mm, 1400-2000 9 mm, 2200-2600
#: 12 mm (as printed in a manufacturer's table of the lining, slrpipeline.com, "Cement
#: Mortar Lining"; ISO 4179 / EN 545). [-] -> [mm]
DUCTILE_IRON_LINING = ((300, 3.0), (600, 5.0), (1200, 6.0), (2000, 9.0), (2600, 12.0))

#: Highest pressure class [bar] of ductile-iron pipes by the largest DN it applies to: C100
#: to DN 600, C64 to DN 800, C50 to DN 1000, as printed in the manufacturer's summary of
#: EN 545:2010 (Duktus) named above; above DN 1000, beyond that table, C40 (from memory,
#: the safe side of what larger sizes are made in). [-] -> [bar]
DUCTILE_IRON_HIGHEST_CLASS = ((600, 100.0), (800, 64.0), (1000, 50.0), (2000, 40.0))

#: Re-rating of PE100 pressure pipes for a water temperature above 20 degC: the fraction of
#: the rated pressure allowed at each temperature [degC], from a published table of the
#: maximum allowable operating pressure of PE100 pipes by temperature (AS/NZS 4130 pipes,
#: Enviropipes, "Pressure re-rating due to thermal effects": PN10 carries 100 m at 20 and
#: 25 degC, 94 m at 30, 89 m at 35, 84 m at 40, 80 m at 45 and 76 m at 50 degC).
PE100_TEMPERATURE_RERATING = ((20.0, 1.0), (25.0, 1.0), (30.0, 0.94), (35.0, 0.89),
                              (40.0, 0.84), (45.0, 0.80), (50.0, 0.76))

#: Illustrative delivered price of each family per kilogram of pipe, as a multiple of the
#: case's steel plate price per kilogram. Not prices: placeholders of the right order
#: for a screening comparison, to be replaced by quotations (a case's price table).
ILLUSTRATIVE_PRICE_RATIO = {"hdpe": 2.0, "ductile_iron": 1.4}


def pe_wall(outside_diameter, sdr):
    """Nominal wall of a PE pipe from its outside diameter and SDR (ISO 4427-2).

    Parameters
    ----------
    outside_diameter : numeric
        Nominal outside diameter :math:`d_n`. [m]
    sdr : numeric
        Standard dimension ratio :math:`d_n / e_n`, greater than 2. [-]

    Returns
    -------
    numeric
        Nominal wall thickness :math:`e_n = d_n / SDR`. [m]

    References
    ----------
    .. [1] ISO 4427-2:2019, Plastics piping systems for water supply - Polyethylene (PE) -
       Part 2: Pipes (definition of SDR).
    """
    d = _array("outside_diameter", outside_diameter, positive=True, unit="m")
    s = _array("sdr", sdr, positive=True, unit="-")
    if np.any(s <= 2.0):
        raise ValueError("sdr must be greater than 2 (outside diameter / wall thickness).")
    return _finish(d / s, outside_diameter, sdr)


def pe_bore(outside_diameter, sdr):
    """Inside diameter of a PE pipe at its nominal wall, :math:`d_n (1 - 2/SDR)`. [m]

    Parameters
    ----------
    outside_diameter : numeric
        Nominal outside diameter. [m]
    sdr : numeric
        Standard dimension ratio. [-]

    Returns
    -------
    numeric
        Bore. [m]
    """
    d = _array("outside_diameter", outside_diameter, positive=True, unit="m")
    return _finish(d - 2.0 * np.asarray(pe_wall(outside_diameter, sdr)), outside_diameter, sdr)


def ductile_iron_wall(pressure_class, outside_diameter, tensile_strength,
                      safety_factor=DUCTILE_IRON_SAFETY_FACTOR,
                      least_wall=DUCTILE_IRON_LEAST_WALL):
    """Minimum wall of a ductile-iron pressure-class pipe (EN 545:2010 design rule).

    Parameters
    ----------
    pressure_class : numeric
        Allowable operating pressure PFA of the class (C40: 40 bar). [Pa]
    outside_diameter : numeric
        External diameter DE. [m]
    tensile_strength : numeric
        Minimum tensile strength of the iron, :math:`R_m` (420 MPa). [Pa]
    safety_factor : numeric
        Safety factor on :math:`R_m`. [-]
    least_wall : numeric
        Smallest wall of any class. [m]

    Returns
    -------
    numeric
        Minimum wall :math:`e_{min}`. [m]

    Notes
    -----
    .. math:: e_{min} = \\frac{PFA \\cdot SF \\cdot DE}{2 R_m + PFA \\cdot SF}

    the hoop relation on the outside diameter, :math:`\\sigma = p (DE - e) / (2 e)`, at
    :math:`\\sigma = R_m / SF` (EN 545 writes it with PFA in bar and :math:`R_m` in MPa,
    hence its ``20 R_m``). The smallest sizes of the standard's table have larger minimum
    walls than the rule for manufacturing reasons; ``least_wall`` covers only the
    absolute minimum.

    References
    ----------
    .. [1] EN 545:2010, Ductile iron pipes, fittings, accessories and their joints for
       water pipelines - Requirements and test methods (the rule from memory; its walls
       agree with the standard's table, see the tests).
    """
    p = _array("pressure_class", pressure_class, positive=True, unit="Pa")
    de = _array("outside_diameter", outside_diameter, positive=True, unit="m")
    rm = _array("tensile_strength", tensile_strength, positive=True, unit="Pa")
    sf = _array("safety_factor", safety_factor, positive=True, unit="-")
    e = np.maximum(p * sf * de / (2.0 * rm + p * sf), least_wall)
    return _finish(e, pressure_class, outside_diameter, tensile_strength, safety_factor)


def ductile_iron_nominal_wall(minimum_wall, nominal_size):
    """Nominal wall of a ductile-iron pipe: the minimum wall plus the casting tolerance.

    Parameters
    ----------
    minimum_wall : numeric
        Minimum wall (:func:`ductile_iron_wall`). [m]
    nominal_size : numeric
        Nominal size DN (a number, e.g. 400). [-]

    Returns
    -------
    numeric
        :math:`e_{min} + (1.3 + 0.001\\,DN)` mm, EN 545's tolerance on the wall (from
        memory). The stiffer nominal wall gives the higher wave speed, the safe side for
        the water hammer. [m]
    """
    e = _array("minimum_wall", minimum_wall, positive=True, unit="m")
    dn = _array("nominal_size", nominal_size, positive=True, unit="-")
    return _finish(e + 1e-3 * (1.3 + 0.001 * dn), minimum_wall, nominal_size)


def ductile_iron_lining(nominal_size):
    """Nominal thickness of a ductile-iron pipe's cement-mortar lining
    (:data:`DUCTILE_IRON_LINING`).

    Parameters
    ----------
    nominal_size : numeric
        Nominal size DN (a number, e.g. 600), at most 2600. [-]

    Returns
    -------
    numeric
        Lining thickness. [m]
    """
    dn = _array("nominal_size", nominal_size, positive=True, unit="-")
    tops = np.array([t for t, _ in DUCTILE_IRON_LINING], float)
    if np.any(dn > tops[-1]):
        raise ValueError(f"nominal_size above DN {tops[-1]:.0f} has no lining in the table.")
    mm = np.array([m for _, m in DUCTILE_IRON_LINING], float)
    return _finish(1e-3 * mm[np.searchsorted(tops, dn, side="left")], nominal_size)


def ductile_iron_bore(outside_diameter, nominal_wall, nominal_size):
    r"""Bore of a cement-lined ductile-iron pipe: the smaller of DN and the lined bore.

    Parameters
    ----------
    outside_diameter : numeric
        External diameter DE. [m]
    nominal_wall : numeric
        Nominal wall of the iron (:func:`ductile_iron_nominal_wall`). [m]
    nominal_size : numeric
        Nominal size DN (a number, e.g. 600). [-]

    Returns
    -------
    numeric
        :math:`\min(DN, DE - 2 e - 2 e_{lining})` [m]: the narrower bore, the safe side
        for the losses, the pressure margin and the velocity of the water hammer (a heavy
        class's thick wall leaves less than DN, DN 600 C100 about 577 mm).
    """
    de = _array("outside_diameter", outside_diameter, positive=True, unit="m")
    e = _array("nominal_wall", nominal_wall, positive=True, unit="m")
    dn = _array("nominal_size", nominal_size, positive=True, unit="-")
    lined = de - 2.0 * e - 2.0 * np.asarray(ductile_iron_lining(dn))
    if np.any(lined <= 0):
        raise ValueError("the wall and lining leave no bore; expected a wall below DE/2.")
    return _finish(np.minimum(1e-3 * dn, lined), outside_diameter, nominal_wall, nominal_size)


def ductile_iron_highest_class(nominal_size):
    """Highest pressure class of a ductile-iron size (:data:`DUCTILE_IRON_HIGHEST_CLASS`).

    Parameters
    ----------
    nominal_size : numeric
        Nominal size DN (a number), at most 2000. [-]

    Returns
    -------
    numeric
        Its allowable operating pressure PFA. [Pa]
    """
    dn = _array("nominal_size", nominal_size, positive=True, unit="-")
    tops = np.array([t for t, _ in DUCTILE_IRON_HIGHEST_CLASS], float)
    if np.any(dn > tops[-1]):
        raise ValueError(f"nominal_size above DN {tops[-1]:.0f} is outside EN 545.")
    bar = np.array([c for _, c in DUCTILE_IRON_HIGHEST_CLASS], float)
    return _finish(1e5 * bar[np.searchsorted(tops, dn, side="left")], nominal_size)


def pe100_temperature_factor(temperature):
    """Fraction of a PE100 pipe's rated pressure allowed at a water temperature
    (:data:`PE100_TEMPERATURE_RERATING`, linear between its temperatures).

    Parameters
    ----------
    temperature : numeric
        Water (pipe wall) temperature, at most 50 degC. [degC]

    Returns
    -------
    numeric
        Re-rating factor, 1 up to 25 degC. [-]
    """
    t = np.asarray(temperature, dtype=float)
    if np.any(~np.isfinite(t)):
        raise ValueError("temperature must be finite [degC].")
    tt = np.array([a for a, _ in PE100_TEMPERATURE_RERATING])
    ff = np.array([f for _, f in PE100_TEMPERATURE_RERATING])
    if np.any(t > tt[-1]):
        raise ValueError(f"temperature above {tt[-1]:g} degC is beyond PE100's re-rating "
                         "table [degC].")
    return _finish(np.interp(t, tt, ff), temperature)


def rated_head(rated_pressure, density=1000.0):
    """Pressure head a class carries: :math:`p / (\\rho g)`. [m]

    Parameters
    ----------
    rated_pressure : numeric
        Rated pressure of the class (PN, PFA). [Pa]
    density : numeric
        Water density. [kg/m^3]

    Returns
    -------
    numeric
        Head. [m]
    """
    p = _array("rated_pressure", rated_pressure, positive=True, unit="Pa")
    rho = _array("density", density, positive=True, unit="kg/m^3")
    return _finish(p / (rho * GRAVITY), rated_pressure, density)


def lowest_class(head, class_heads):
    """Index of the lowest class carrying each design head.

    Parameters
    ----------
    head : array_like
        Design pressure heads (negative heads need no class). [m]
    class_heads : array_like
        Heads the classes carry, strictly ascending. [m]

    Returns
    -------
    numpy.ndarray of int
        Index into ``class_heads`` for each head; ``len(class_heads)`` where the head is
        above the highest class. [-]
    """
    h = np.asarray(head, dtype=float)
    c = np.asarray(class_heads, dtype=float)
    if c.ndim != 1 or c.size == 0 or np.any(np.diff(c) <= 0):
        raise ValueError("class_heads must be a non-empty, strictly ascending 1-D array.")
    if np.any(np.isnan(h)):
        raise ValueError("head holds NaN; expected finite design heads [m].")
    return np.searchsorted(c, h, side="left")


def reach_classes(node_head, class_heads, least=0):
    """The class of each reach between route nodes: the one its more loaded end needs.

    Parameters
    ----------
    node_head : array_like
        Design pressure head at each node of the route, n values. [m]
    class_heads : array_like
        Heads the classes carry, strictly ascending. [m]
    least : int or array_like of int
        Lowest class allowed (e.g. the lightest class that stands full vacuum), one value
        or one per reach. [-]

    Returns
    -------
    numpy.ndarray of int
        n - 1 class indices; ``len(class_heads)`` where the head is above the highest
        class. [-]
    """
    k = lowest_class(node_head, class_heads)
    if k.ndim != 1 or k.size < 2:
        raise ValueError("node_head needs at least two nodes.")
    return np.maximum(np.maximum(k[:-1], k[1:]), np.asarray(least, dtype=int))


def tube_mass_per_metre(bore, wall, density):
    """Mass of a tube per metre of length, :math:`\\rho \\pi (D + e) e`. [kg/m]

    Parameters
    ----------
    bore : numeric
        Inside diameter. [m]
    wall : numeric
        Wall thickness. [m]
    density : numeric
        Density of the wall material. [kg/m^3]

    Returns
    -------
    numeric
        Mass per metre. [kg/m]
    """
    d = _array("bore", bore, positive=True, unit="m")
    e = _array("wall", wall, nonnegative=True, unit="m")
    rho = _array("density", density, positive=True, unit="kg/m^3")
    return _finish(rho * np.pi * (d + e) * e, bore, wall, density)


def illustrative_price_per_metre(kind, bore, wall, density, steel_price):
    """An illustrative delivered price of a pipe per metre, NOT a price.

    Parameters
    ----------
    kind : str
        ``"hdpe"`` or ``"ductile_iron"``. [-]
    bore, wall : numeric
        Inside diameter and wall. [m]
    density : numeric
        Density of the wall material. [kg/m^3]
    steel_price : numeric
        The case's steel plate price. [currency/kg]

    Returns
    -------
    numeric
        :data:`ILLUSTRATIVE_PRICE_RATIO` × steel price × mass per metre. [currency/m]

    Notes
    -----
    Placeholders scaled on the case's own steel price so that they follow its currency;
    a comparison of materials means nothing until they are replaced by quotations.
    """
    if kind not in ILLUSTRATIVE_PRICE_RATIO:
        raise ValueError(f"no illustrative price for {kind!r}; expected one of "
                         f"{sorted(ILLUSTRATIVE_PRICE_RATIO)}.")
    return ILLUSTRATIVE_PRICE_RATIO[kind] * np.asarray(steel_price, float) * \
        np.asarray(tube_mass_per_metre(bore, wall, density))
