"""Thrust on bends and reducers: the force an anchor block or a restraint must take.

Pure functions of SI numbers and numpy arrays (scalars give floats). The force is the
momentum balance of the water between the two ends of the fitting, in the plane of the
bend; the weight of the water and of the pipe in a vertical bend is not included.
"""

from __future__ import annotations

import numpy as np

from ._numeric import checked_array as _array
from ._numeric import same_kind as _finish
from .constants import GRAVITY

__all__ = ["fitting_thrust", "fitting_thrust_at_heads"]


def fitting_thrust(pressure_in, area_in, angle, *, flow=0.0, density=1000.0,
                   pressure_out=None, area_out=None):
    """Resultant force of the water on a bend, a reducer or a reducing bend.

    Parameters
    ----------
    pressure_in : numeric
        Gauge pressure at the inlet of the fitting. [Pa]
    area_in : numeric
        Bore area at the inlet. [m^2]
    angle : numeric
        Deflection of the flow, 0 for a straight reducer, in [0, pi]. [rad]
    flow : numeric, default 0
        Discharge through the fitting (0 for a pressure-only load case, such as the
        static head plus a surge after a closure). [m^3/s]
    density : numeric, default 1000
        Water density. [kg/m^3]
    pressure_out, area_out : numeric, optional
        Gauge pressure and bore area at the outlet; the inlet's by default. [Pa], [m^2]

    Returns
    -------
    numeric
        Magnitude of the resultant force on the fitting. [N]

    Notes
    -----
    With :math:`a = p_1 A_1 + \\rho Q V_1` along the inlet axis and
    :math:`b = p_2 A_2 + \\rho Q V_2` along the outlet axis, turned by :math:`\\theta`,
    the linear-momentum balance of the water in the fitting gives a force on the
    fitting of

    .. math:: R = \\sqrt{a^2 + b^2 - 2ab\\cos\\theta}

    which is :math:`2 (pA + \\rho Q V) \\sin(\\theta/2)` for a bend of one bore and
    :math:`|p_1 A_1 - p_2 A_2 + \\rho Q (V_1 - V_2)|` for a straight reducer. The
    weight of the water and the pipe (vertical bends), friction in the fitting and
    the forces of pipe wall stresses carried across expansion joints are not included.

    References
    ----------
    .. [1] The linear-momentum (impulse-momentum) equation for a control volume, e.g.
       F. M. White, "Fluid Mechanics", McGraw-Hill, ch. 3 (from memory).
    .. [2] AWWA Manual M11, "Steel Pipe - A Guide for Design and Installation", thrust
       restraint chapter: :math:`T = 2 p A \\sin(\\Delta/2)` (from memory).
    """
    p1 = _array("pressure_in", pressure_in, unit="Pa")
    a1 = _array("area_in", area_in, positive=True, unit="m^2")
    theta = _array("angle", angle, nonnegative=True, unit="rad")
    if np.any(theta > np.pi + 1e-12):
        raise ValueError("angle must lie in [0, pi] [rad].")
    q = _array("flow", flow, nonnegative=True, unit="m^3/s")
    rho = _array("density", density, positive=True, unit="kg/m^3")
    p2 = p1 if pressure_out is None else _array("pressure_out", pressure_out, unit="Pa")
    a2 = a1 if area_out is None else _array("area_out", area_out, positive=True, unit="m^2")
    a = p1 * a1 + rho * q * q / a1
    b = p2 * a2 + rho * q * q / a2
    # a^2 + b^2 - 2ab cos(theta), written without the cancellation of a small angle
    out = np.sqrt((a - b) ** 2 + 4.0 * a * b * np.sin(0.5 * theta) ** 2)
    return _finish(out, pressure_in, area_in, angle)


def fitting_thrust_at_heads(head_in, area_in, angle, *, flow=0.0, density=1000.0,
                            head_out=None, area_out=None):
    """:func:`fitting_thrust` with the pressures given as heads of water.

    Parameters
    ----------
    head_in : numeric
        Gauge pressure head at the inlet, :math:`p_1 / (\\rho g)`. [m]
    area_in, angle, flow, density
        As :func:`fitting_thrust`. [m^2], [rad], [m^3/s], [kg/m^3]
    head_out : numeric, optional
        Gauge pressure head at the outlet; the inlet's by default. [m]
    area_out : numeric, optional
        Bore area at the outlet; the inlet's by default. [m^2]

    Returns
    -------
    numeric
        Magnitude of the resultant force on the fitting. [N]
    """
    rho = _array("density", density, positive=True, unit="kg/m^3")
    h1 = _array("head_in", head_in, unit="m")
    p2 = None if head_out is None else rho * GRAVITY * _array("head_out", head_out, unit="m")
    return fitting_thrust(rho * GRAVITY * h1, area_in, angle, flow=flow, density=density,
                          pressure_out=p2, area_out=area_out)
