"""Draft tube: conical diffuser recovery, exit loss, Thoma cavitation and setting.

Pure functions, SI units; cone angles are total included angles in radians
(Gibson's table is kept in degrees, as published, and converted).
"""

from __future__ import annotations

import numpy as np

from penstock.constants import GRAVITY
from penstock.hydrology import _same_kind
from penstock.turbines import TURBINE_TYPES

__all__ = [
    "GIBSON_CONE_TABLE",
    "THOMA_CORRELATIONS",
    "IMPULSE_CLEARANCE",
    "diffuser_loss_coefficient_gibson",
    "diffuser_efficiency_gibson",
    "abrupt_exit_loss",
    "velocity_head_recovery",
    "thoma_sigma",
    "allowable_suction_head",
    "cavitation_margin",
    "impulse_clearance_margin",
]

#: Gibson's loss factor k of a conical expansion against total cone angle [deg]:
#: loss = k (V1 - V2)^2 / (2 g). Gibson (1910), Proc. R. Soc. Lond. A 83, curve of
#: loss against angle; read from figure, from memory, +-0.05 absolute. Minimum near
#: 5.5-6 deg, about 1 (an abrupt enlargement) near 45 deg, above 1 around 50-90 deg.
GIBSON_CONE_TABLE = (
    (5.5, 0.135), (7.5, 0.15), (10.0, 0.18), (15.0, 0.28), (20.0, 0.43), (30.0, 0.72),
    (40.0, 0.95), (50.0, 1.10), (60.0, 1.18), (90.0, 1.10), (120.0, 1.05), (180.0, 1.00),
)

_DE_SIERVO_FRANCIS = ("de Siervo, F. and de Leva, F. (1976). Modern trends in selecting and "
                      "designing Francis turbines. Water Power & Dam Construction 28(8), 28-35. "
                      "Coefficients from memory (as quoted in ESHA 2004, Chapter 6).")
_DE_SIERVO_KAPLAN = ("de Siervo, F. and de Leva, F. (1977). Modern trends in selecting and "
                     "designing Kaplan turbines. Water Power & Dam Construction 29(12), 51-56. "
                     "Coefficients from memory (as quoted in ESHA 2004, Chapter 6).")

#: Thoma sigma against metric specific speed, sigma = coefficient * n_s**exponent.
#: Validity: the type's ``specific_speed_range`` in ``TURBINE_TYPES`` (kept there only).
THOMA_CORRELATIONS = {
    "francis": {"coefficient": 7.54e-5, "exponent": 1.41, "source": _DE_SIERVO_FRANCIS},
    "kaplan": {"coefficient": 6.40e-5, "exponent": 1.46, "source": _DE_SIERVO_KAPLAN},
    "propeller": {"coefficient": 6.40e-5, "exponent": 1.46, "source": _DE_SIERVO_KAPLAN},
}

#: Minimum height of an impulse runner's centreline above the maximum tailwater
#: level [m]. Common practice, from memory (order of magnitude; the runner must
#: run in air at flood tailwater). Confirm with the manufacturer.
IMPULSE_CLEARANCE = {"pelton": 1.0, "turgo": 1.0, "crossflow": 0.5}


def diffuser_loss_coefficient_gibson(cone_angle):
    """Gibson's loss factor of a conical diffuser against cone angle.

    Parameters
    ----------
    cone_angle : numeric
        Total included angle of the cone, 5.5 to 180 deg (0.096 to pi rad). [rad]

    Returns
    -------
    k : numeric
        Loss factor on the velocity difference head (1 for an abrupt
        enlargement). [-]

    Notes
    -----
    .. math:: h_d = k \\frac{(V_1 - V_2)^2}{2 g}

    Piecewise-linear interpolation of :data:`GIBSON_CONE_TABLE` (values read
    from Gibson's curve, from memory, +-0.05).

    References
    ----------
    .. [1] Gibson, A. H. (1910). On the flow of water through pipes and passages
       having converging or diverging boundaries. Proceedings of the Royal
       Society of London, Series A 83(563), 366-378. doi:10.1098/rspa.1910.0025
    """
    angle = np.degrees(np.asarray(cone_angle, dtype=float))
    table = np.asarray(GIBSON_CONE_TABLE)
    tol = 1e-9
    if np.any(~np.isfinite(angle)) or np.any((angle < table[0, 0] - tol)
                                             | (angle > table[-1, 0] + tol)):
        raise ValueError(f"cone_angle: expected a total cone angle in [{table[0, 0]}, "
                         f"{table[-1, 0]}] deg, i.e. [{np.radians(table[0, 0]):.4f}, "
                         f"{np.pi:.4f}] rad (range of Gibson's tests), got {cone_angle} rad")
    angle = np.clip(angle, table[0, 0], table[-1, 0])
    return _same_kind(cone_angle, np.interp(angle, table[:, 0], table[:, 1]))


def diffuser_efficiency_gibson(cone_angle, area_ratio):
    """Conical diffuser efficiency from Gibson's loss factor.

    Parameters
    ----------
    cone_angle : numeric
        Total included angle of the cone. [rad]
    area_ratio : numeric
        Outlet area over inlet area, A2/A1 > 1. [-]

    Returns
    -------
    efficiency : numeric
        Share of the ideal pressure recovery achieved (may be negative for wide
        angles, where the cone is worse than an abrupt enlargement). [-]

    Notes
    -----
    .. math::

        \\eta_d = 1 - \\frac{k (V_1 - V_2)^2}{V_1^2 - V_2^2}
                = 1 - k \\frac{A_r - 1}{A_r + 1}

    References
    ----------
    .. [1] Gibson, A. H. (1910). Proceedings of the Royal Society of London,
       Series A 83(563), 366-378. doi:10.1098/rspa.1910.0025
    """
    ratio = np.asarray(area_ratio, dtype=float)
    if np.any(~np.isfinite(ratio)) or np.any(ratio <= 1.0):
        raise ValueError(f"area_ratio: expected outlet/inlet area ratio > 1, got {area_ratio}")
    k = np.asarray(diffuser_loss_coefficient_gibson(cone_angle))
    return _same_kind(cone_angle if np.ndim(cone_angle) else area_ratio,
                      1.0 - k * (ratio - 1.0) / (ratio + 1.0))


def abrupt_exit_loss(flow, diameter):
    """Exit loss of a pipe discharging abruptly into the tailwater.

    Parameters
    ----------
    flow : numeric or pandas.Series
        Flow. [m^3/s]
    diameter : numeric
        Inside diameter at the exit. [m]

    Returns
    -------
    head_loss : numeric
        The whole velocity head, which is not recovered. [m]

    Notes
    -----
    .. math:: h_{exit} = \\frac{V^2}{2 g}, \\quad V = \\frac{4 Q}{\\pi D^2}
    """
    area = np.pi * np.asarray(diameter, dtype=float) ** 2 / 4.0
    velocity = np.asarray(flow, dtype=float) / area
    return _same_kind(flow, velocity ** 2 / (2.0 * GRAVITY), "head_loss")


def velocity_head_recovery(flow, inlet_diameter, area_ratio, cone_angle):
    """Head recovered by a conical draft tube compared with an abrupt exit.

    Parameters
    ----------
    flow : numeric or pandas.Series
        Flow through the draft tube. [m^3/s]
    inlet_diameter : numeric
        Cone inlet (runner outlet) diameter. [m]
    area_ratio : numeric
        Outlet over inlet area, > 1. [-]
    cone_angle : numeric
        Total cone angle. [rad]

    Returns
    -------
    recovered_head : numeric
        Gain in net head over discharging straight from the runner outlet
        (abrupt exit, which loses the whole :math:`V_1^2/2g`). [m]

    Notes
    -----
    .. math:: \\Delta H = \\eta_d \\frac{V_1^2 - V_2^2}{2 g}, \\quad V_2 = V_1 / A_r

    The draft tube still loses :math:`V_2^2/2g + k (V_1 - V_2)^2/2g`; the sum of
    that loss and :math:`\\Delta H` is the abrupt exit loss :math:`V_1^2/2g`.

    References
    ----------
    .. [1] Gibson, A. H. (1910). Proceedings of the Royal Society of London,
       Series A 83(563), 366-378. doi:10.1098/rspa.1910.0025
    """
    v1_head = np.asarray(abrupt_exit_loss(flow, inlet_diameter))
    ratio = np.asarray(area_ratio, dtype=float)
    eta = np.asarray(diffuser_efficiency_gibson(cone_angle, ratio))
    return _same_kind(flow, eta * v1_head * (1.0 - 1.0 / ratio ** 2), "recovered_head")


def thoma_sigma(specific_speed, turbine_type):
    """Plant Thoma cavitation coefficient from the metric specific speed.

    Parameters
    ----------
    specific_speed : numeric
        Metric specific speed n_s (rev/min, kW, m). [-]
    turbine_type : {"francis", "kaplan", "propeller"}
        Reaction turbine type. Impulse types have no sigma: use
        :func:`impulse_clearance_margin`. [-]

    Returns
    -------
    sigma : numeric
        Thoma coefficient. [-]

    Notes
    -----
    .. math:: \\sigma = a \\, n_s^{b}

    Francis: a = 7.54e-5, b = 1.41; Kaplan/propeller: a = 6.40e-5, b = 1.46
    (statistical fits to built machines; coefficients from memory). Valid over
    the type's specific-speed range in ``TURBINE_TYPES``.

    References
    ----------
    .. [1] de Siervo, F. and de Leva, F. (1976). Modern trends in selecting and
       designing Francis turbines. Water Power & Dam Construction 28(8), 28-35.
    .. [2] de Siervo, F. and de Leva, F. (1977). Modern trends in selecting and
       designing Kaplan turbines. Water Power & Dam Construction 29(12), 51-56.
    .. [3] ESHA (2004). Guide on How to Develop a Small Hydropower Plant.
       European Small Hydropower Association, Chapter 6, cavitation.
    """
    if turbine_type not in THOMA_CORRELATIONS:
        impulse = TURBINE_TYPES.get(turbine_type, {}).get("impulse", False)
        hint = (" (an impulse turbine: check runner clearance above tailwater with "
                "impulse_clearance_margin)") if impulse else ""
        raise ValueError(f"turbine_type: no Thoma correlation for {turbine_type!r}{hint}; "
                         f"expected one of {sorted(THOMA_CORRELATIONS)}")
    ns = np.asarray(specific_speed, dtype=float)
    low, high = TURBINE_TYPES[turbine_type]["specific_speed_range"]
    if np.any(~np.isfinite(ns)) or np.any((ns < low) | (ns > high)):
        raise ValueError(f"specific_speed: {specific_speed} outside the {turbine_type} range "
                         f"[{low}, {high}] of the correlation")
    entry = THOMA_CORRELATIONS[turbine_type]
    return _same_kind(specific_speed, entry["coefficient"] * ns ** entry["exponent"])


def allowable_suction_head(atmospheric_pressure, vapour_pressure, density, sigma, net_head):
    """Largest height of the runner above tailwater without cavitation.

    Parameters
    ----------
    atmospheric_pressure : numeric
        Atmospheric pressure at the plant's altitude. [Pa]
    vapour_pressure : numeric
        Vapour pressure of the water at its temperature. [Pa]
    density : numeric
        Water density. [kg/m^3]
    sigma : numeric
        Plant Thoma coefficient. [-]
    net_head : numeric
        Net head. [m]

    Returns
    -------
    suction_head : numeric
        Allowable runner (reference) elevation above tailwater; negative means
        the runner must sit below tailwater. [m]

    Notes
    -----
    .. math:: H_s = \\frac{p_{atm} - p_v}{\\rho g} - \\sigma H_n

    References
    ----------
    .. [1] ESHA (2004). Guide on How to Develop a Small Hydropower Plant.
       European Small Hydropower Association, Chapter 6, cavitation.
    """
    h = np.asarray(net_head, dtype=float)
    hs = ((np.asarray(atmospheric_pressure, dtype=float) - np.asarray(vapour_pressure,
                                                                      dtype=float))
          / (np.asarray(density, dtype=float) * GRAVITY) - np.asarray(sigma, dtype=float) * h)
    return _same_kind(net_head, hs, "suction_head")


def cavitation_margin(runner_elevation, tailwater_level, atmospheric_pressure, vapour_pressure,
                      density, sigma, net_head):
    """Margin against cavitation of a reaction runner at each operating point.

    Parameters
    ----------
    runner_elevation : float
        Elevation of the runner reference (centreline of a Francis distributor,
        blade axis of a Kaplan). [m]
    tailwater_level : numeric or pandas.Series
        Tailwater level at each flow (e.g. from
        :func:`penstock.hydrology.rating_curve`). [m]
    atmospheric_pressure : numeric
        Atmospheric pressure. [Pa]
    vapour_pressure : numeric
        Vapour pressure. [Pa]
    density : numeric
        Water density. [kg/m^3]
    sigma : numeric
        Plant Thoma coefficient. [-]
    net_head : numeric
        Net head at each flow. [m]

    Returns
    -------
    margin : numeric
        Allowable minus actual suction head; negative means cavitation risk. [m]

    Notes
    -----
    .. math:: m = H_s - (z_{runner} - z_{tailwater})
    """
    hs = np.asarray(allowable_suction_head(atmospheric_pressure, vapour_pressure, density,
                                           sigma, net_head))
    actual = runner_elevation - np.asarray(tailwater_level, dtype=float)
    return _same_kind(tailwater_level, hs - actual, "margin")


def impulse_clearance_margin(runner_elevation, tailwater_level, turbine_type="pelton",
                             clearance=None):
    """Margin of an impulse runner above the tailwater.

    Parameters
    ----------
    runner_elevation : float
        Runner centreline elevation. [m]
    tailwater_level : numeric or pandas.Series
        Tailwater level at each flow (use the flood level for the check). [m]
    turbine_type : {"pelton", "turgo", "crossflow"}, default "pelton"
        Impulse turbine type. [-]
    clearance : float, optional
        Required clearance; default :data:`IMPULSE_CLEARANCE` (common practice). [m]

    Returns
    -------
    margin : numeric
        Height above tailwater minus the required clearance; negative means the
        runner may be flooded. [m]

    Notes
    -----
    Impulse runners work in air at atmospheric pressure, so cavitation at the
    runner is not governed by the suction head: the rule is to keep the runner
    clear of the highest tailwater, :math:`m = z_{runner} - z_{tw} - c`.
    """
    if turbine_type not in IMPULSE_CLEARANCE:
        raise ValueError(f"turbine_type: {turbine_type!r} is not an impulse turbine; expected "
                         f"one of {sorted(IMPULSE_CLEARANCE)} (reaction turbines: use "
                         "cavitation_margin)")
    c = IMPULSE_CLEARANCE[turbine_type] if clearance is None else float(clearance)
    if c < 0:
        raise ValueError(f"clearance: expected a non-negative height, got {c}")
    margin = runner_elevation - np.asarray(tailwater_level, dtype=float) - c
    return _same_kind(tailwater_level, margin, "margin")
