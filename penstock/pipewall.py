"""Pipe wall design: hoop thickness, handling minimum, plate rounding, mass and buckling.

Pure functions of SI numbers and numpy arrays. Each returns the same kind it is given:
scalars give a float, arrays give an array, a pandas Series gives a Series with its index.

Diameter convention: ``diameter`` is the inside diameter of the pipe unless a docstring
says otherwise. The hoop formula applied at the inside diameter is the thin-wall
(Barlow/Mariotte) form used by ASCE MOP 79 and AWWA M11; for a thick wall it slightly
under-estimates the peak (inner-fibre) hoop stress given by Lame's solution.

Not covered here: ring-stiffened shells under external pressure (von Mises' formula for
the shell between stiffeners and the stiffener ring check) and embedded liners (Amstutz,
Jacobsen). :func:`buckling_check` flags where the unstiffened pipe is not enough, so that
stiffeners or a thicker wall must be designed outside this module.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from penstock.constants import GRAVITY, INCH, P_ATM_SEA_LEVEL

from ._numeric import checked_array as _array
from ._numeric import same_kind as _finish

__all__ = [
    "HANDLING_RULES",
    "WallProfile",
    "buckling_check",
    "buckling_thickness",
    "critical_buckling_pressure",
    "external_pressure_from_minimum_head",
    "hoop_thickness",
    "minimum_handling_thickness",
    "round_up_to_plates",
    "select_pressure_class",
    "standard_plate_thicknesses",
    "steel_mass",
    "vacuum_check",
    "vacuum_thickness",
    "wall_along_route",
    "WALL_RATING_BASIS",
    "wall_pressure_rating",
    "wall_head_rating",
    "class_for_head",
    "class_head",
]

_INCH = INCH
_WATER_DENSITY = 1000.0  # kg/m^3, conventional density for pressure heads of water


# --------------------------------------------------------------------------------------
# Internal pressure
# --------------------------------------------------------------------------------------


def _hoop_inputs(diameter, allowable_stress, joint_efficiency, corrosion_allowance):
    """The hoop relation's inputs as checked arrays: (D, sigma, E_j, c)."""
    d = _array("diameter", diameter, positive=True, unit="m")
    s = _array("allowable_stress", allowable_stress, positive=True, unit="Pa")
    e = _array("joint_efficiency", joint_efficiency, positive=True, unit="-")
    if np.any(e > 1.0):
        raise ValueError("joint_efficiency must lie in (0, 1] [-].")
    c = _array("corrosion_allowance", corrosion_allowance, nonnegative=True, unit="m")
    return d, s, e, c


def hoop_thickness(
    pressure, diameter, allowable_stress, joint_efficiency=1.0, corrosion_allowance=0.0
):
    """Wall thickness that carries an internal pressure in hoop tension (thin wall).

    Parameters
    ----------
    pressure : numeric
        Internal design pressure (gauge), static plus transient. [Pa]
    diameter : numeric
        Inside diameter. [m]
    allowable_stress : numeric
        Allowable hoop stress of the wall material. [Pa]
    joint_efficiency : numeric
        Longitudinal weld joint efficiency, in (0, 1]. [-]
    corrosion_allowance : numeric
        Extra thickness added for corrosion and abrasion. [m]

    Returns
    -------
    numeric
        Required wall thickness. [m]

    Notes
    -----
    .. math:: t = \\frac{p D}{2 \\sigma_a E_j} + c

    the Barlow/Mariotte hoop-stress relation :math:`\\sigma = p D / (2 t)` solved for
    :math:`t`, with joint efficiency :math:`E_j` and corrosion allowance :math:`c`.

    Examples
    --------
    3 MPa in a 2 m pipe at 150 MPa allowable, 0.9 joint efficiency, 2 mm allowance:

    >>> round(hoop_thickness(3.0e6, 2.0, 150e6, 0.9, 2e-3) * 1e3, 2)
    24.22

    References
    ----------
    .. [1] AWWA, "Steel Pipe - A Guide for Design and Installation", Manual M11, 5th ed.,
       2017, ch. 4, Eq. 4-1 (:math:`t = p d / 2 s`) (equation number from memory).
    .. [2] ASCE, "Steel Penstocks", MOP 79, 2nd ed., 2012, ch. 3 (hoop stress with joint
       efficiency). DOI 10.1061/9780784411711
    """
    p = _array("pressure", pressure, nonnegative=True, unit="Pa")
    d, s, e, c = _hoop_inputs(diameter, allowable_stress, joint_efficiency,
                              corrosion_allowance)
    t = p * d / (2.0 * s * e) + c
    return _finish(t, pressure, diameter, allowable_stress, joint_efficiency, corrosion_allowance)


#: Diameter at which each wall family's hoop rating is taken: its design rule's own.
WALL_RATING_BASIS = {
    # the tool's own steel design (hoop_thickness, ASCE MOP 79 / AWWA M11 at the inside
    # diameter), so that a wall it designs passes its own check
    "steel": "inside",
    # ISO 4427-2: p = 2 sigma_s / (SDR - 1), the hoop relation at the mean diameter
    "hdpe": "mean",
    # AWWA C150 / EN 545 wall design uses the outside diameter (from memory)
    "ductile_iron": "outside",
}


def wall_pressure_rating(thickness, diameter, allowable_stress, basis="inside",
                         joint_efficiency=1.0, corrosion_allowance=0.0):
    """Internal pressure a wall carries at its allowable hoop stress (thin wall).

    Parameters
    ----------
    thickness : numeric
        Wall thickness as built (nominal). [m]
    diameter : numeric
        Inside diameter. [m]
    allowable_stress : numeric
        Allowable hoop stress of the wall material (for PE, the design stress MRS/C). [Pa]
    basis : {"inside", "mean", "outside"}
        Diameter of the hoop relation: the inside diameter :math:`D` (as
        :func:`hoop_thickness`), the mean :math:`D + t` or the outside :math:`D + 2t`;
        see :data:`WALL_RATING_BASIS`. [-]
    joint_efficiency : numeric
        Longitudinal joint efficiency, in (0, 1]. [-]
    corrosion_allowance : numeric
        Part of the wall not counted on (corrosion, abrasion). [m]

    Returns
    -------
    numeric
        Allowable internal pressure (gauge); 0 where the allowance takes the whole wall.
        [Pa]

    Notes
    -----
    .. math:: p_a = \\frac{2 \\sigma_a E_j (t - c)}{D_b}

    the Barlow/Mariotte relation :math:`\\sigma = p D_b / (2 t)` with
    :math:`D_b = D`, :math:`D + t` or :math:`D + 2t`. At the inside diameter it inverts
    :func:`hoop_thickness` exactly. At the mean diameter, with :math:`c = 0` and
    :math:`E_j = 1`, it is ISO 4427-2's rating of a PE pipe,
    :math:`p = 2\\sigma_s / (SDR - 1)` with :math:`SDR = (D + 2t)/t`
    (:func:`penstock.materials.sdr_pressure_rating`).

    References
    ----------
    .. [1] ASCE, "Steel Penstocks", MOP 79, 2nd ed., 2012, ch. 3 (hoop stress with joint
       efficiency). DOI 10.1061/9780784411711
    .. [2] ISO 4427-2:2019, Plastics piping systems for water supply - Polyethylene (PE) -
       Part 2: Pipes (PN, MRS, C and SDR).
    """
    t = _array("thickness", thickness, positive=True, unit="m")
    d, s, e, c = _hoop_inputs(diameter, allowable_stress, joint_efficiency,
                              corrosion_allowance)
    factor = {"inside": 0.0, "mean": 1.0, "outside": 2.0}.get(basis)
    if factor is None:
        raise ValueError(f"basis must be 'inside', 'mean' or 'outside'; got {basis!r}")
    out = 2.0 * s * e * np.maximum(t - c, 0.0) / (d + factor * t)
    return _finish(out, thickness, diameter, allowable_stress)


def wall_head_rating(thickness, diameter, allowable_stress, basis="inside",
                     joint_efficiency=1.0, corrosion_allowance=0.0,
                     water_density=_WATER_DENSITY):
    """:func:`wall_pressure_rating` as a head of water.

    Parameters
    ----------
    thickness, diameter, allowable_stress, basis, joint_efficiency, corrosion_allowance
        As :func:`wall_pressure_rating`. [m], [m], [Pa], [-], [-], [m]
    water_density : numeric
        Density of the water the head is measured in. [kg/m^3]

    Returns
    -------
    numeric
        Allowable internal pressure head :math:`p_a / (\\rho g)`. [m]
    """
    rho = _array("water_density", water_density, positive=True, unit="kg/m^3")
    p = wall_pressure_rating(thickness, diameter, allowable_stress, basis, joint_efficiency,
                             corrosion_allowance)
    return _finish(np.asarray(p) / (rho * GRAVITY), thickness, diameter, allowable_stress)


def select_pressure_class(pressure, pressure_classes):
    """Lowest pressure class whose rating is at least the design pressure.

    Parameters
    ----------
    pressure : numeric
        Design pressure (gauge). [Pa]
    pressure_classes : array_like
        Ratings of the available classes (any order). [Pa]

    Returns
    -------
    numeric
        The rating of the selected class. [Pa]

    Raises
    ------
    ValueError
        If a pressure exceeds the highest class.

    Notes
    -----
    Index :math:`k = \\min\\{k : P_k \\ge p\\}` over the sorted class ratings.
    """
    p = _array("pressure", pressure, nonnegative=True, unit="Pa")
    classes = np.sort(_array("pressure_classes", pressure_classes, positive=True, unit="Pa"))
    if classes.ndim != 1 or classes.size == 0:
        raise ValueError("pressure_classes must be a non-empty 1-D list [Pa].")
    if np.any(p > classes[-1]):
        raise ValueError(
            f"pressure {p.max():.4g} Pa exceeds the highest pressure class "
            f"{classes[-1]:.4g} Pa; choose a stronger material or class."
        )
    return _finish(classes[np.searchsorted(classes, p, side="left")], pressure)


def class_head(pressure_class, water_density=_WATER_DENSITY):
    """Head of water a pressure class carries.

    Parameters
    ----------
    pressure_class : numeric
        Rating of the class (gauge). [Pa]
    water_density : float
        Density of the water the head is measured in. [kg/m^3]

    Returns
    -------
    numeric
        :math:`p / (\\rho g)`. [m]
    """
    p = _array("pressure_class", pressure_class, nonnegative=True, unit="Pa")
    return _finish(p / (float(water_density) * GRAVITY), pressure_class)


def class_for_head(head, pressure_classes, labels, water_density=_WATER_DENSITY):
    """Name of the lowest pressure class carrying a design pressure head, or None.

    Parameters
    ----------
    head : float
        Design pressure head (gauge), static plus transient. [m]
    pressure_classes : array_like
        Ratings of the available classes, in the order of ``labels``. [Pa]
    labels : sequence of str
        Name of each class (``"PN10"``, ``"C40"``, ...). [-]
    water_density : float
        Density of the water the head is measured in. [kg/m^3]

    Returns
    -------
    str or None
        The label of :func:`select_pressure_class`'s class for
        :math:`p = \\rho g h`; None when the head is above the highest class. [-]
    """
    classes = np.asarray(pressure_classes, dtype=float)
    if len(labels) != classes.size:
        raise ValueError("labels must name each of the pressure_classes [-].")
    p = float(water_density) * GRAVITY * max(float(head), 0.0)
    if classes.size == 0 or p > classes.max():
        return None
    rating = float(select_pressure_class(p, classes))
    return labels[int(np.flatnonzero(classes == rating)[0])]


# --------------------------------------------------------------------------------------
# Handling minimum
# --------------------------------------------------------------------------------------


def _handling_pge(diameter):
    return diameter / 288.0


def _handling_usbr(diameter):
    return (diameter + 20.0 * _INCH) / 400.0


#: Minimum wall thickness for handling and erection: key -> function and source.
HANDLING_RULES = {
    "pge": {
        "function": _handling_pge,
        "equation": "t = D / 288 (any consistent unit)",
        "reference": "Pacific Gas & Electric Co. rule, quoted in ASCE MOP 79 2nd ed. (2012) "
        "ch. 3 and AWWA M11 5th ed. (2017) ch. 4 (attribution from memory)",
    },
    "usbr": {
        "function": _handling_usbr,
        "equation": "t [in] = (D [in] + 20) / 400, i.e. t = (D + 0.508 m) / 400",
        "reference": "U.S. Bureau of Reclamation rule, quoted in ASCE MOP 79 2nd ed. (2012) "
        "ch. 3 and AWWA M11 5th ed. (2017) ch. 4 (attribution from memory)",
    },
}


def minimum_handling_thickness(diameter, rule="usbr"):
    """Minimum wall thickness for handling, transport and erection of steel pipe.

    Parameters
    ----------
    diameter : numeric
        Pipe diameter. [m]
    rule : str
        ``"usbr"`` or ``"pge"`` (keys of :data:`HANDLING_RULES`). [-]

    Returns
    -------
    numeric
        Minimum wall thickness. [m]

    Notes
    -----
    Pacific Gas & Electric: :math:`t = D / 288`.
    U.S. Bureau of Reclamation: :math:`t = (D + 20) / 400` with D and t in inches,
    i.e. :math:`t = (D + 0.508\\,\\mathrm{m}) / 400` in metres.
    Which organisation uses which form is recalled from memory; M11 applies D/288 to
    smaller pipe and (D+20)/400 to larger pipe.

    References
    ----------
    .. [1] ASCE, "Steel Penstocks", MOP 79, 2nd ed., 2012, ch. 3 (minimum thickness).
    .. [2] AWWA, "Steel Pipe - A Guide for Design and Installation", M11, 5th ed., 2017,
       ch. 4 (minimum wall thickness for handling).
    """
    if rule not in HANDLING_RULES:
        raise ValueError(f"rule={rule!r} is unknown; expected one of {sorted(HANDLING_RULES)}.")
    d = _array("diameter", diameter, positive=True, unit="m")
    return _finish(HANDLING_RULES[rule]["function"](d), diameter)


# --------------------------------------------------------------------------------------
# Plate rounding and route schedule
# --------------------------------------------------------------------------------------


def standard_plate_thicknesses():
    """Commonly stocked steel plate thicknesses (common practice, mill lists vary).

    Returns
    -------
    numpy.ndarray
        Ascending thicknesses 6 mm to 50 mm. [m]
    """
    mm = [6, 8, 10, 12, 14, 15, 16, 18, 20, 22, 25, 28, 30, 32, 35, 38, 40, 45, 50]
    return np.asarray(mm, dtype=float) * 1.0e-3


def round_up_to_plates(thickness, available):
    """Next available plate thickness at or above each required thickness.

    Parameters
    ----------
    thickness : numeric
        Required thickness. [m]
    available : array_like
        Available plate thicknesses (any order, positive). [m]

    Returns
    -------
    numeric
        Chosen plate thickness, never less than ``thickness``. [m]

    Raises
    ------
    ValueError
        If ``available`` is empty or not positive, or a thickness exceeds the largest plate.

    Notes
    -----
    :math:`t_k = \\min\\{a_j : a_j \\ge t\\}` by ``numpy.searchsorted`` on the sorted list.
    """
    t = _array("thickness", thickness, nonnegative=True, unit="m")
    plates = np.unique(_array("available", available, positive=True, unit="m"))
    if plates.size == 0:
        raise ValueError("available plate thicknesses must be a non-empty list [m].")
    if np.any(t > plates[-1]):
        raise ValueError(
            f"thickness {t.max() * 1e3:.2f} mm exceeds the largest available plate "
            f"{plates[-1] * 1e3:.2f} mm; add thicker plates or use a stronger steel."
        )
    return _finish(plates[np.searchsorted(plates, t, side="left")], thickness)


@dataclasses.dataclass(frozen=True)
class WallProfile:
    """Wall thickness along a route (all arrays share the chainage points).

    Attributes
    ----------
    chainage : numpy.ndarray
        Stations along the route. [m]
    pressure : numpy.ndarray
        Internal design pressure. [Pa]
    hoop_thickness : numpy.ndarray
        Thickness for internal pressure, including corrosion allowance. [m]
    handling_thickness : numpy.ndarray
        Handling minimum. [m]
    required_thickness : numpy.ndarray
        Larger of the two. [m]
    plate_thickness : numpy.ndarray
        Required thickness rounded up to an available plate. [m]
    vacuum_thickness : numpy.ndarray
        Plate that resists the external pressure unstiffened (zero when none is given),
        see :func:`vacuum_thickness`. [m]
    beyond_plates : numpy.ndarray of bool
        Stations whose required thickness exceeds the thickest plate; their
        ``plate_thickness`` is the required thickness itself. [-]
    reach_required, reach_plate : numpy.ndarray
        Per reach between consecutive stations (one fewer than the stations): the
        larger of its two ends, since a reach is one run of plate. [m]
    steps : tuple of (float, float, float)
        Runs of constant plate thickness: (start chainage, end chainage, thickness),
        from the reaches. [m]
    """

    chainage: np.ndarray
    pressure: np.ndarray
    hoop_thickness: np.ndarray
    handling_thickness: np.ndarray
    required_thickness: np.ndarray
    plate_thickness: np.ndarray
    steps: tuple
    vacuum_thickness: np.ndarray = None
    beyond_plates: np.ndarray = None
    reach_required: np.ndarray = None
    reach_plate: np.ndarray = None


def wall_along_route(
    chainage,
    design_head,
    diameter,
    material,
    plates=None,
    *,
    joint_efficiency=1.0,
    corrosion_allowance=0.0,
    handling_rule="usbr",
    water_density=_WATER_DENSITY,
    external_pressure=None,
    buckling_safety=1.5,
    beyond_plates="raise",
):
    """Steel wall thickness at each station of a route, rounded to available plates.

    Parameters
    ----------
    chainage : array_like
        Stations along the route, ascending. [m]
    design_head : array_like
        Internal design pressure head at each station (static plus transient). [m]
    diameter : numeric or array_like
        Inside diameter, one value or one per station. [m]
    material : penstock.materials.Material
        Wall material; must have ``allowable_stress``. [-]
    plates : array_like, optional
        Available plate thicknesses; default :func:`standard_plate_thicknesses`. [m]
    joint_efficiency : float
        Longitudinal weld joint efficiency. [-]
    corrosion_allowance : float
        Added to the hoop thickness. [m]
    handling_rule : str or None
        Key of :data:`HANDLING_RULES`, or None for no handling minimum. [-]
    water_density : float
        Density used to turn head into pressure. [kg/m^3]
    external_pressure : float, optional
        Net external pressure the unstiffened wall must also resist, e.g. full vacuum
        (the local atmospheric pressure); needs the material's ``elastic_modulus`` and
        ``poisson_ratio``. Default: no external-pressure rule. [Pa]
    buckling_safety : float, default 1.5
        Safety factor on the critical buckling pressure (common practice, from
        memory). [-]
    beyond_plates : {"raise", "keep"}, default "raise"
        Where no plate is thick enough: raise ``ValueError``, or keep the required
        thickness and flag the station in ``beyond_plates``. [-]

    Returns
    -------
    WallProfile

    Notes
    -----
    :math:`p = \\rho g h`, :math:`t = \\max(p D / (2 \\sigma_a E_j) + c,\\ t_{min},
    t_{vac})`, rounded up with :func:`round_up_to_plates`; :math:`t_{vac}` from
    :func:`vacuum_thickness`. A reach between two stations is one run of plate, so it
    takes the thicker of its two ends (the conservative choice where the pressure
    rises along the reach).
    """
    material.require("allowable_stress", purpose="wall_along_route (hoop thickness)")
    x = _array("chainage", chainage, unit="m")
    h = _array("design_head", design_head, nonnegative=True, unit="m")
    if x.ndim != 1 or x.size == 0:
        raise ValueError("chainage must be a non-empty 1-D array [m].")
    if h.shape != x.shape:
        raise ValueError("design_head must have one value per chainage point [m].")
    if np.any(np.diff(x) < 0.0):
        raise ValueError("chainage must be ascending [m].")
    d = np.broadcast_to(_array("diameter", diameter, positive=True, unit="m"), x.shape)
    plates = standard_plate_thicknesses() if plates is None else plates
    p = water_density * GRAVITY * h
    t_hoop = np.asarray(
        hoop_thickness(p, d, material.allowable_stress, joint_efficiency, corrosion_allowance)
    )
    if handling_rule is None:
        t_min = np.zeros_like(x)
    else:
        t_min = np.asarray(minimum_handling_thickness(d, handling_rule))
    if external_pressure is None:
        t_vac = np.zeros_like(x)
    else:
        material.require("elastic_modulus", purpose="wall_along_route (vacuum buckling)")
        t_vac = np.asarray(vacuum_thickness(
            d, material.elastic_modulus, material.poisson_ratio, external_pressure,
            buckling_safety, corrosion_allowance), dtype=float) * np.ones_like(x)
    t_req = np.maximum(np.maximum(t_hoop, t_min), t_vac)
    if beyond_plates not in ("raise", "keep"):
        raise ValueError("beyond_plates must be 'raise' or 'keep' [-].")
    plates = np.sort(np.asarray(plates, dtype=float))
    beyond = t_req > plates[-1] * (1.0 + 1e-12)
    if beyond_plates == "keep":
        rounded = np.asarray(round_up_to_plates(np.minimum(t_req, plates[-1]), plates))
        t_plate = np.where(beyond, t_req, rounded)
    else:
        t_plate = np.asarray(round_up_to_plates(t_req, plates))
    if x.size > 1:
        reach_req = np.maximum(t_req[:-1], t_req[1:])
        reach_plate = np.maximum(t_plate[:-1], t_plate[1:])
    else:
        reach_req = reach_plate = np.empty(0)
    if x.size == 1:
        steps = [(float(x[0]), float(x[0]), float(t_plate[0]))]
    else:   # runs of equal plate: a new run starts where the plate changes
        first = np.concatenate([[0], np.flatnonzero(reach_plate[1:] != reach_plate[:-1]) + 1])
        last = np.concatenate([first[1:] - 1, [reach_plate.size - 1]])
        steps = list(zip(x[first].tolist(), x[last + 1].tolist(),
                         reach_plate[first].tolist(), strict=True))
    return WallProfile(
        chainage=x,
        pressure=p,
        hoop_thickness=t_hoop,
        handling_thickness=t_min,
        required_thickness=t_req,
        plate_thickness=t_plate,
        steps=tuple(steps),
        vacuum_thickness=t_vac,
        beyond_plates=beyond,
        reach_required=reach_req,
        reach_plate=reach_plate,
    )


def steel_mass(diameter, thickness, length, density):
    """Mass of a cylindrical pipe shell.

    Parameters
    ----------
    diameter : numeric
        Inside diameter. [m]
    thickness : numeric
        Wall thickness. [m]
    length : numeric
        Pipe length. [m]
    density : numeric
        Wall material density. [kg/m^3]

    Returns
    -------
    numeric
        Shell mass. [kg]

    Notes
    -----
    .. math:: m = \\rho \\pi (D + t) t L

    :math:`D + t` is the mid-wall diameter, so this equals the exact annulus area
    :math:`\\pi((D + 2t)^2 - D^2)/4` times :math:`L`. Stiffeners, flanges and joint
    overlaps are not included.
    """
    d = _array("diameter", diameter, positive=True, unit="m")
    t = _array("thickness", thickness, nonnegative=True, unit="m")
    length_ = _array("length", length, nonnegative=True, unit="m")
    rho = _array("density", density, positive=True, unit="kg/m^3")
    return _finish(rho * np.pi * (d + t) * t * length_, diameter, thickness, length, density)


# --------------------------------------------------------------------------------------
# External pressure (buckling)
# --------------------------------------------------------------------------------------


def critical_buckling_pressure(elastic_modulus, poisson_ratio, thickness, diameter):
    """Critical external pressure of a long unstiffened circular tube.

    Parameters
    ----------
    elastic_modulus : numeric
        Young's modulus of the wall. [Pa]
    poisson_ratio : numeric
        Poisson ratio of the wall. [-]
    thickness : numeric
        Wall thickness (less any corrosion allowance). [m]
    diameter : numeric
        Mean (mid-wall) diameter. [m]

    Returns
    -------
    numeric
        Critical external (net) pressure. [Pa]

    Notes
    -----
    .. math:: p_{cr} = \\frac{2 E}{1 - \\nu^2} \\left(\\frac{t}{D}\\right)^3

    Bresse's ring result :math:`3 E I / R^3` with the plate stiffness
    :math:`E t^3 / (12 (1 - \\nu^2))` per unit length (Bryan, 1888). Valid for a tube long
    enough that end supports and stiffeners do not raise the buckling mode, and for
    elastic buckling (the hoop stress at :math:`p_{cr}` below yield).

    References
    ----------
    .. [1] S. P. Timoshenko and J. M. Gere, "Theory of Elastic Stability", 2nd ed.,
       McGraw-Hill, 1961, ch. 7 (buckling of rings and long tubes under uniform external
       pressure) (article number not recalled).
    .. [2] AWWA M11, 5th ed., 2017, ch. 4 (external pressure on exposed pipe).
    """
    e = _array("elastic_modulus", elastic_modulus, positive=True, unit="Pa")
    nu = _array("poisson_ratio", poisson_ratio, nonnegative=True, unit="-")
    if np.any(nu >= 0.5):
        raise ValueError("poisson_ratio must be below 0.5 [-].")
    t = _array("thickness", thickness, nonnegative=True, unit="m")
    d = _array("diameter", diameter, positive=True, unit="m")
    p_cr = 2.0 * e / (1.0 - nu**2) * (t / d) ** 3
    return _finish(p_cr, elastic_modulus, poisson_ratio, thickness, diameter)


def buckling_thickness(
    external_pressure, diameter, elastic_modulus, poisson_ratio, safety_factor=1.5
):
    """Unstiffened wall thickness whose buckling pressure is ``safety_factor`` x the load.

    Parameters
    ----------
    external_pressure : numeric
        Net external pressure to resist, e.g. full vacuum ``P_ATM_SEA_LEVEL``. [Pa]
    diameter : numeric
        Mean diameter. [m]
    elastic_modulus : numeric
        Young's modulus. [Pa]
    poisson_ratio : numeric
        Poisson ratio. [-]
    safety_factor : numeric
        Required ratio :math:`p_{cr} / p`; 1.5 is common practice for exposed penstocks
        (from memory), 2.0 is also used. [-]

    Returns
    -------
    numeric
        Thickness. [m]

    Notes
    -----
    Inverse of :func:`critical_buckling_pressure`:
    :math:`t = D \\left(\\frac{F p (1 - \\nu^2)}{2 E}\\right)^{1/3}`.
    """
    p = _array("external_pressure", external_pressure, nonnegative=True, unit="Pa")
    d = _array("diameter", diameter, positive=True, unit="m")
    e = _array("elastic_modulus", elastic_modulus, positive=True, unit="Pa")
    nu = _array("poisson_ratio", poisson_ratio, nonnegative=True, unit="-")
    sf = _array("safety_factor", safety_factor, positive=True, unit="-")
    t = d * np.cbrt(sf * p * (1.0 - nu**2) / (2.0 * e))
    return _finish(t, external_pressure, diameter, elastic_modulus, poisson_ratio, safety_factor)


def external_pressure_from_minimum_head(
    minimum_head, water_density=_WATER_DENSITY, atmospheric_pressure=P_ATM_SEA_LEVEL
):
    """Net external pressure on the wall from the lowest internal pressure head.

    Parameters
    ----------
    minimum_head : numeric
        Lowest internal pressure head (gauge) from the transient envelope; negative
        means sub-atmospheric. [m]
    water_density : numeric
        Water density. [kg/m^3]
    atmospheric_pressure : numeric
        Outside air pressure at the pipe. [Pa]

    Returns
    -------
    numeric
        Net external pressure, between 0 and ``atmospheric_pressure``. [Pa]

    Notes
    -----
    :math:`p_{ext} = \\min(\\max(-\\rho g h_{min}, 0), p_{atm})`: internal absolute
    pressure cannot fall below zero (in fact below the vapour pressure), so full vacuum,
    the emptying case, is the upper bound.
    """
    h = _array("minimum_head", minimum_head, unit="m")
    rho = _array("water_density", water_density, positive=True, unit="kg/m^3")
    pa = _array("atmospheric_pressure", atmospheric_pressure, positive=True, unit="Pa")
    p = np.clip(-rho * GRAVITY * h, 0.0, pa)
    return _finish(p, minimum_head, water_density, atmospheric_pressure)


def buckling_check(
    thickness,
    diameter,
    elastic_modulus,
    poisson_ratio,
    external_pressure=P_ATM_SEA_LEVEL,
    safety_factor=1.5,
):
    """Check an unstiffened wall against external pressure; flag where stiffeners are needed.

    Parameters
    ----------
    thickness : numeric
        Wall thickness (less corrosion allowance). [m]
    diameter : numeric
        Mean diameter. [m]
    elastic_modulus : numeric
        Young's modulus. [Pa]
    poisson_ratio : numeric
        Poisson ratio. [-]
    external_pressure : numeric
        Net external pressure; default full vacuum on emptying at sea level. [Pa]
    safety_factor : numeric
        Required :math:`p_{cr}/p`; 1.5 common practice (from memory). [-]

    Returns
    -------
    dict
        ``critical_pressure`` [Pa], ``allowable_pressure`` = critical / safety factor [Pa],
        ``utilisation`` = external / allowable [-], ``needs_stiffeners`` (bool or bool
        array: utilisation > 1), ``thickness_unstiffened`` [m] from
        :func:`buckling_thickness`.

    Notes
    -----
    Uses :func:`critical_buckling_pressure`. Ring-stiffened design is not covered.
    """
    p_cr = np.asarray(
        critical_buckling_pressure(elastic_modulus, poisson_ratio, thickness, diameter)
    )
    sf = _array("safety_factor", safety_factor, positive=True, unit="-")
    p_ext = _array("external_pressure", external_pressure, nonnegative=True, unit="Pa")
    allowable = p_cr / sf
    # utilisation: 0 without load, infinite for a zero-thickness wall under load
    with np.errstate(divide="ignore", invalid="ignore"):
        util = np.where(p_ext == 0.0, 0.0, p_ext / allowable)
    t_unstiffened = np.asarray(
        buckling_thickness(p_ext, diameter, elastic_modulus, poisson_ratio, sf)
    )
    args = (thickness, diameter, elastic_modulus, poisson_ratio, external_pressure, safety_factor)
    needs = _finish(util > 1.0, *args)
    needs = bool(needs) if isinstance(needs, float) else needs.astype(bool)
    return {
        "critical_pressure": _finish(p_cr, *args),
        "allowable_pressure": _finish(allowable, *args),
        "utilisation": _finish(util, *args),
        "needs_stiffeners": needs,
        "thickness_unstiffened": _finish(t_unstiffened, *args),
    }


def vacuum_thickness(
    inside_diameter,
    elastic_modulus,
    poisson_ratio,
    external_pressure=P_ATM_SEA_LEVEL,
    safety_factor=1.5,
    corrosion_allowance=0.0,
):
    """Plate thickness whose unstiffened wall resists an external pressure.

    Parameters
    ----------
    inside_diameter : numeric
        Inside diameter of the pipe. [m]
    elastic_modulus : numeric
        Young's modulus of the wall. [Pa]
    poisson_ratio : numeric
        Poisson ratio of the wall. [-]
    external_pressure : numeric
        Net external pressure, e.g. full vacuum (the local atmospheric pressure). [Pa]
    safety_factor : numeric
        Required :math:`p_{cr}/p`; 1.5 common practice (from memory). [-]
    corrosion_allowance : numeric
        Part of the plate not counted on to carry load. [m]

    Returns
    -------
    numeric
        Plate thickness, corrosion allowance included. [m]

    Notes
    -----
    The load-bearing wall is the plate less the corrosion allowance,
    :math:`t_n = t - c`, on the mean diameter :math:`D_m = D_i + t`
    (:func:`critical_buckling_pressure`). With
    :math:`k = (F p (1 - \\nu^2) / (2 E))^{1/3}`, :math:`t_n = k D_m` gives

    .. math:: t = \\frac{k (D_i + c)}{1 - k} + c

    so that :func:`vacuum_check` of the result has a utilisation of exactly one.
    """
    d = _array("inside_diameter", inside_diameter, positive=True, unit="m")
    c = _array("corrosion_allowance", corrosion_allowance, nonnegative=True, unit="m")
    k = np.asarray(buckling_thickness(external_pressure, 1.0, elastic_modulus, poisson_ratio,
                                      safety_factor), dtype=float)
    t = k * (d + c) / (1.0 - k) + c
    return _finish(t, inside_diameter, elastic_modulus, poisson_ratio, external_pressure,
                   safety_factor, corrosion_allowance)


def vacuum_check(
    plate_thickness,
    inside_diameter,
    elastic_modulus,
    poisson_ratio,
    external_pressure=P_ATM_SEA_LEVEL,
    safety_factor=1.5,
    corrosion_allowance=0.0,
):
    """:func:`buckling_check` of a plate on a pipe given by its inside diameter.

    Parameters
    ----------
    plate_thickness : numeric
        Plate thickness as rolled, corrosion allowance included. [m]
    inside_diameter : numeric
        Inside diameter. [m]
    elastic_modulus, poisson_ratio : numeric
        Wall properties. [Pa], [-]
    external_pressure : numeric
        Net external pressure. [Pa]
    safety_factor : numeric
        Required :math:`p_{cr}/p`. [-]
    corrosion_allowance : numeric
        Not counted on to carry load. [m]

    Returns
    -------
    dict
        As :func:`buckling_check`.

    Notes
    -----
    Applies the convention of :func:`critical_buckling_pressure`: thickness less the
    corrosion allowance, :math:`t - c`, on the mean diameter :math:`D_i + t`.
    """
    t = _array("plate_thickness", plate_thickness, positive=True, unit="m")
    c = _array("corrosion_allowance", corrosion_allowance, nonnegative=True, unit="m")
    d = _array("inside_diameter", inside_diameter, positive=True, unit="m")
    if np.any(t <= c):
        raise ValueError("plate_thickness must exceed the corrosion_allowance [m].")
    return buckling_check(t - c, d + t, elastic_modulus, poisson_ratio, external_pressure,
                          safety_factor)
