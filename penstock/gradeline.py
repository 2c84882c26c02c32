"""Energy and hydraulic grade lines along a penstock, and the pressure checks on them.

The route is a chain of *elements* between *nodes*.  An element is either a
uniform pipe reach (a length with a diameter and a roughness) or a local loss (a
coefficient ``K`` on the velocity through a reference area, with zero length).
Nodes carry a chainage, the pipe centreline elevation and the pipe area there.
A local loss sits between two nodes at the same chainage, so that the grade lines
draw it as a step.

Everything here is vectorized over flows: an array of ``n_flow`` flows gives
arrays of shape ``(n_flow, n_node)``.

Conventions
-----------
* The energy grade line (EGL) starts at the headwater level: the reservoir
  surface, where velocity and gauge pressure are zero.
* HGL = EGL − V²/(2g) at every node, V being the velocity in the pipe at that node.
* Pressure head is HGL minus the centreline elevation (gauge, relative to the
  local atmosphere).  Absolute pressure head adds p_atm/(ρg).
* Friction uses the length along the pipe, ``sqrt(Δchainage² + Δelevation²)``:
  chainage is horizontal distance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import friction
from .constants import GRAVITY


def mean_velocity(flow, diameter):
    """Mean velocity of a flow in a full circular pipe.

    Parameters
    ----------
    flow : array_like
        Flow. [m^3/s]
    diameter : array_like
        Inside diameter. [m]

    Returns
    -------
    numpy.ndarray or float
        :math:`V = 4Q/(\\pi D^2)` (continuity). [m/s]
    """
    d = np.asarray(diameter, dtype=float)
    v = np.asarray(flow, dtype=float) / (np.pi * d**2 / 4.0)
    return float(v) if v.ndim == 0 else v


def velocity_head(flow, area):
    """Velocity head V²/(2g) of a flow through an area.

    Parameters
    ----------
    flow : numeric
        Volumetric flow rate. [m^3/s]
    area : numeric
        Flow area. [m^2]

    Returns
    -------
    numeric
        Velocity head. [m]
    """
    v = np.asarray(flow, dtype=float) / np.asarray(area, dtype=float)
    out = v * np.abs(v) / (2.0 * GRAVITY)
    return out if np.ndim(out) else float(out)


def element_losses(flow, length, diameter, roughness, k, reference_area, kinematic_viscosity,
                   method="colebrook"):
    """Head loss across each element of a route, for each flow.

    Parameters
    ----------
    flow : array_like, shape (n_flow,)
        Flows through the route. [m^3/s]
    length : array_like, shape (n_element,)
        Pipe length of each element; zero for a local loss. [m]
    diameter : array_like, shape (n_element,)
        Inside diameter of each element (for a local loss, the pipe at it). [m]
    roughness : array_like, shape (n_element,)
        Absolute roughness of each element. [m]
    k : array_like, shape (n_element,)
        Local loss coefficient of each element; zero for a pipe reach. [-]
    reference_area : array_like, shape (n_element,)
        Area whose velocity ``k`` refers to. [m^2]
    kinematic_viscosity : float
        Kinematic viscosity of the water. [m^2/s]
    method : str, default "colebrook"
        Friction-factor method, see :func:`penstock.friction.friction_factor`. [-]

    Returns
    -------
    friction_loss, local_loss : ndarray, shape (n_flow, n_element)
        Darcy–Weisbach friction loss and local loss of each element. [m]

    Notes
    -----
    Friction: h_f = f·L/D·V²/(2g) (Darcy–Weisbach); local: h_k = K·V_ref²/(2g).
    """
    q = np.atleast_1d(np.asarray(flow, dtype=float))[:, None]
    length = np.asarray(length, dtype=float)[None, :]
    diameter = np.asarray(diameter, dtype=float)[None, :]
    is_reach = length > 0
    hf = np.zeros(np.broadcast_shapes(q.shape, length.shape))
    if np.any(is_reach):
        cols = np.flatnonzero(is_reach[0])
        hf[:, cols] = friction.head_loss(q, diameter[:, cols], length[:, cols],
                                         np.asarray(roughness, dtype=float)[None, cols],
                                         kinematic_viscosity, method=method)
    hk = np.asarray(k, dtype=float)[None, :] * velocity_head(q, np.asarray(reference_area)[None, :])
    return hf, hk


@dataclass
class GradeLines:
    """Grade lines at the nodes of a route for a set of flows. Arrays (n_flow, n_node) [m]."""

    flow: np.ndarray
    chainage: np.ndarray
    elevation: np.ndarray
    energy: np.ndarray
    hydraulic: np.ndarray
    velocity_head: np.ndarray
    pressure_head: np.ndarray
    friction_loss: np.ndarray   # per element (n_flow, n_element)
    local_loss: np.ndarray      # per element (n_flow, n_element)


def grade_lines(flow, headwater, chainage, elevation, node_area, length, diameter, roughness,
                k, reference_area, kinematic_viscosity, method="colebrook") -> GradeLines:
    """Energy and hydraulic grade lines along a route.

    Parameters
    ----------
    flow : array_like, shape (n_flow,)
        Flows. [m^3/s]
    headwater : float
        Headwater (reservoir surface) level, where both lines start. [m]
    chainage, elevation, node_area : array_like, shape (n_node,)
        Chainage, pipe centreline elevation and pipe area at each node. [m], [m], [m^2]
    length, diameter, roughness, k, reference_area : array_like, shape (n_node - 1,)
        The elements between consecutive nodes, see :func:`element_losses`.
        [m], [m], [m], [-], [m^2]
    kinematic_viscosity : float
        Kinematic viscosity of the water. [m^2/s]
    method : str, default "colebrook"
        Friction-factor method. [-]

    Returns
    -------
    GradeLines
    """
    q = np.atleast_1d(np.asarray(flow, dtype=float))
    hf, hk = element_losses(q, length, diameter, roughness, k, reference_area,
                            kinematic_viscosity, method)
    drop = np.cumsum(hf + hk, axis=1)
    egl = np.concatenate([np.full((q.size, 1), float(headwater)), headwater - drop], axis=1)
    hv = velocity_head(q[:, None], np.asarray(node_area, dtype=float)[None, :])
    hgl = egl - hv
    z = np.asarray(elevation, dtype=float)
    return GradeLines(q, np.asarray(chainage, dtype=float), z, egl, hgl, hv, hgl - z[None, :],
                      hf, hk)


def quadratic_loss_interpolant(flow, head_loss):
    """A head loss tabulated at flows, as a vectorized function of any flow.

    Parameters
    ----------
    flow : array_like, shape (n,)
        Positive flows of the table, rising. [m^3/s]
    head_loss : array_like, shape (n,)
        Head loss at each flow. [m]

    Returns
    -------
    callable
        ``loss(q)`` -> head loss [m] for any array of flows ``q`` [m^3/s], with the sign of
        the flow; 0 at zero flow.

    Notes
    -----
    Written as :math:`h(Q) = c(Q)\\,Q|Q|`, the loss coefficient :math:`c = h/Q^2` of a
    Darcy–Weisbach pipe with local losses varies only through the friction factor,
    slowly with the Reynolds number; :math:`c` is interpolated linearly in
    :math:`\\ln|Q|` and held at the table's end values beyond it. On a geometric grid of
    a few hundred flows the relative error stays below 1e-5 (checked against direct
    evaluation in the tests). A loss exactly proportional to :math:`Q^2` is reproduced
    exactly.

    References
    ----------
    .. [1] Darcy–Weisbach and local losses, see :func:`element_losses`.
    """
    q = np.asarray(flow, dtype=float)
    h = np.asarray(head_loss, dtype=float)
    if q.ndim != 1 or q.shape != h.shape or q.size < 2 or np.any(q <= 0) or np.any(
            np.diff(q) <= 0):
        raise ValueError("flow: expected rising positive flows, one per head loss")
    log_q = np.log(q)
    coeff = h / q**2

    def loss(total_flow):
        x = np.asarray(total_flow, dtype=float)
        a = np.abs(x)
        with np.errstate(divide="ignore"):
            c = np.interp(np.log(np.where(a > 0, a, q[0])), log_q, coeff)
        return c * x * a

    return loss


# --------------------------------------------------------------------------- checks
def crown_pressure_head(pressure_head, diameter, drawdown=0.0):
    """Gauge pressure head at the pipe crown, from the head at the centreline.

    Parameters
    ----------
    pressure_head : array_like
        Gauge pressure head at the pipe centreline (hydraulic grade line less the
        centreline elevation). [m]
    diameter : array_like
        Pipe inside diameter at the same points. [m]
    drawdown : float or array_like, default 0
        How far the headwater lies below the level the grade line was drawn from
        (for instance normal less minimum headwater), >= 0. Head losses do not depend
        on the headwater level, so the whole line falls by this amount. [m]

    Returns
    -------
    numpy.ndarray
        Gauge pressure head at the crown. [m]

    Notes
    -----
    .. math:: h_{crown} = h_{centre} - D/2 - \\Delta z_{hw}

    Hydrostatics across the section: in a full pipe the piezometric head is uniform
    over a cross-section (straight, parallel streamlines), so the pressure head falls
    by the height above the centreline, D/2 at the crown, where the pressure is least.
    Checking there, with the headwater at its minimum, is the conservative basis of
    every pressure check in penstock.

    References
    ----------
    .. [1] Streeter, V.L., Wylie, E.B. & Bedford, K.W. (1998). Fluid Mechanics, 9th
       ed., McGraw-Hill, ch. 3 (pressure variation in a fluid at rest and across
       parallel streamlines) (from memory).
    """
    p = np.asarray(pressure_head, dtype=float)
    d = np.asarray(diameter, dtype=float)
    dz = np.asarray(drawdown, dtype=float)
    if np.any(d <= 0.0) or not np.all(np.isfinite(d)):
        raise ValueError("diameter must be finite and positive [m].")
    if np.any(dz < 0.0):
        raise ValueError("drawdown must be >= 0 [m].")
    return p - 0.5 * d - dz


def flagged_stretches(chainage, value, threshold):
    """Stretches of a route where a value falls below a threshold.

    Crossing points are found by linear interpolation between nodes.

    Parameters
    ----------
    chainage : array_like, shape (n,)
        Node chainages, non-decreasing. [m]
    value : array_like, shape (n,)
        The quantity checked at the nodes (e.g. pressure head). [m]
    threshold : float or array_like, shape (n,)
        The limit; a node is flagged where ``value < threshold``. [m]

    Returns
    -------
    list of tuple
        ``(start_chainage, end_chainage, lowest_value, chainage_of_lowest)`` per stretch.
    """
    x = np.asarray(chainage, dtype=float)
    d = np.asarray(value, dtype=float) - np.broadcast_to(np.asarray(threshold, float), x.shape)
    bad = d < 0
    if not bad.any():
        return []
    edges = np.diff(np.concatenate([[0], bad.astype(int), [0]]))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1
    out = []
    val = np.asarray(value, dtype=float)
    for s, e in zip(starts, ends):
        x0 = x[s] if s == 0 else _cross(x[s - 1], x[s], d[s - 1], d[s])
        x1 = x[e] if e == len(x) - 1 else _cross(x[e], x[e + 1], d[e], d[e + 1])
        i = s + int(np.argmin(val[s:e + 1]))
        out.append((float(x0), float(x1), float(val[i]), float(x[i])))
    return out


def _cross(xa, xb, da, db):
    if xb == xa or da == db:
        return xa
    return xa + (xb - xa) * da / (da - db)


def submergence_gordon(velocity, diameter, approach="symmetric"):
    """Minimum intake submergence to avoid air-entraining vortices, after Gordon (1970).

    Parameters
    ----------
    velocity : numeric
        Velocity in the intake opening. [m/s]
    diameter : numeric
        Height (diameter) of the intake opening. [m]
    approach : {"symmetric", "asymmetric"}
        Flow approach to the intake. [-]

    Returns
    -------
    numeric
        Required submergence of the intake crown below the water surface. [m]

    Notes
    -----
    S = c·V·√D with c = 0.5434 s/m^0.5 for a symmetric and 0.7245 for an
    asymmetric approach (SI form of Gordon's coefficients 0.3 and 0.4 in ft-s units).

    References
    ----------
    Gordon, J.L. (1970). "Vortices at intakes." Water Power 22(4), 137–138.
    """
    c = {"symmetric": 0.5434, "asymmetric": 0.7245}[approach]
    out = c * np.asarray(velocity, float) * np.sqrt(np.asarray(diameter, float))
    return out if np.ndim(out) else float(out)



def discharge_to_atmosphere(headwater, chainage, elevation, node_area, length, diameter,
                            roughness, k, reference_area, kinematic_viscosity,
                            method="colebrook"):
    """Flow of a route that discharges a free jet to the atmosphere at its last node.

    Solves for the flow at which the pressure head at the outlet is zero, i.e. the
    hydraulic grade line meets the pipe centreline there (common practice for a
    free outlet: the jet leaves at atmospheric pressure).

    Parameters
    ----------
    headwater : float
        Reservoir level. [m]
    chainage, elevation, node_area, length, diameter, roughness, k, reference_area : array_like
        The route, as for :func:`grade_lines`. [m, m, m^2, m, m, m, -, m^2]
    kinematic_viscosity : float
        Kinematic viscosity of the water. [m^2/s]
    method : str, default "colebrook"
        Friction-factor method. [-]

    Returns
    -------
    float
        The discharge. [m^3/s]

    Raises
    ------
    ValueError
        If the outlet is not below the headwater level.
    """
    from scipy.optimize import brentq

    z_out = float(np.asarray(elevation)[-1])
    if not headwater > z_out:
        raise ValueError(f"outlet elevation {z_out:g} m is not below the headwater "
                         f"{headwater:g} m; no free discharge")

    def outlet_pressure(q):
        g = grade_lines([q], headwater, chainage, elevation, node_area, length, diameter,
                        roughness, k, reference_area, kinematic_viscosity, method)
        return float(g.pressure_head[0, -1])

    a_out = float(np.asarray(node_area)[-1])
    q_hi = a_out * np.sqrt(2 * GRAVITY * (headwater - z_out))  # no losses at all
    return float(brentq(outlet_pressure, q_hi * 1e-9, q_hi, xtol=1e-14, rtol=1e-13))
