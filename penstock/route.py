"""The penstock route as a chain of nodes and elements, built from a case.

This is the light-object layer between the case and the grade-line functions: it
places the profile points, the segment boundaries and the local losses in order
of chainage, and gives each element its length, diameter, roughness and loss
coefficient.  See :mod:`penstock.gradeline` for the conventions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import fittings, friction

#: Parameters a case gives for a loss beyond the fittings registry's own.
EXTRA_PARAMETERS = {
    "trashrack": {"rack_area": ("area", None, "gross area of the rack face")},
}

#: Cone angle assumed for a diameter change the case gives no loss for (common practice
#: for penstock reducers: a 10–15 degree total cone).
DEFAULT_TRANSITION_ANGLE = math.radians(15.0)


def case_parameters(kind: str) -> dict[str, tuple[str, object, str]]:
    """The keys a ``[[loss]]`` table of this kind may hold, beyond kind, at, label and k."""
    spec = fittings.LOSS_KINDS[kind]
    params = {n: p for n, p in spec.parameters.items() if not (kind == "custom" and n == "k")}
    params.update(EXTRA_PARAMETERS.get(kind, {}))
    return params


def loss_k_and_area(kind: str, params: dict, upstream_diameter: float,
                    downstream_diameter: float, k: float | None = None):
    """Loss coefficient and the area its velocity refers to, for a loss on the route.

    Parameters
    ----------
    kind : str
        Loss kind (a key of :data:`penstock.fittings.LOSS_KINDS`).
    params : dict
        The case's parameters for the loss, SI units.
    upstream_diameter, downstream_diameter : float
        Pipe diameters just upstream and downstream of the loss. [m]
    k : float, optional
        A user-given coefficient, which overrides the published method. [-]

    Returns
    -------
    k : float
        Loss coefficient. [-]
    reference_area : float
        Area whose velocity ``k`` refers to. [m^2]
    """
    spec = fittings.LOSS_KINDS[kind]
    if spec.reference_velocity == "approach":
        area = params["rack_area"]
    else:
        d = {"pipe": upstream_diameter, "upstream": upstream_diameter,
             "downstream": downstream_diameter}[spec.reference_velocity]
        area = math.pi * d**2 / 4.0
    if k is None:
        own = {n: v for n, v in params.items() if n in spec.parameters}
        args = fittings.complete_parameters(kind, own, diameter=upstream_diameter,
                                            upstream_diameter=upstream_diameter,
                                            downstream_diameter=downstream_diameter)
        k = float(spec.function(**args))
    return k, area


@dataclass
class Route:
    """Nodes and elements of a route, SI units."""

    chainage: np.ndarray       # (n_node,)
    elevation: np.ndarray      # (n_node,)
    node_area: np.ndarray      # (n_node,), inf at the reservoir and past an exit
    node_diameter: np.ndarray  # (n_node,) pipe inside diameter, nan at the reservoir
    node_label: np.ndarray     # (n_node,) text
    is_reservoir: np.ndarray   # (n_node,) bool
    length: np.ndarray         # (n_element,)
    diameter: np.ndarray
    roughness: np.ndarray
    k: np.ndarray
    reference_area: np.ndarray
    element_segment: np.ndarray  # (n_element,) segment index of a reach, -1 for a local loss
    element_group: list        # (n_element,) breakdown component of each element
    group_kind: dict           # component -> "friction" or "local"
    intake_diameter: float
    intake_elevation: float

    def grade_lines(self, flow, headwater, kinematic_viscosity, roughness=None):
        """Grade lines of this route at ``flow`` [m^3/s], see :func:`gradeline.grade_lines`.

        ``roughness`` replaces the elements' roughness (e.g. aged or sampled). [m]
        """
        from . import gradeline

        return gradeline.grade_lines(
            flow, headwater, self.chainage, self.elevation, self.node_area, self.length,
            self.diameter, self.roughness if roughness is None else roughness, self.k,
            self.reference_area, kinematic_viscosity)

    def total_head_loss(self, flow, kinematic_viscosity, roughness=None):
        """Total head loss of the route [m] at each of ``flow`` [m^3/s], lumped.

        Equal, to rounding, to the sum over the elements of :meth:`grade_lines`'
        friction and local losses, at a cost independent of the number of profile
        points: the reaches of one diameter and roughness share the friction factor at a
        flow, so their Darcy–Weisbach loss is that of their summed length; each local
        loss adds :math:`K V^2/(2g)` on its reference area. ``roughness`` replaces the
        elements' roughness (e.g. aged or sampled). [m]
        """
        from . import gradeline

        q = np.atleast_1d(np.asarray(flow, dtype=float))
        rough = self.roughness if roughness is None else np.asarray(roughness, dtype=float)
        reach = self.length > 0
        # the (diameter, roughness) pairs as one complex key: a 1-D unique, ordered as the
        # rows would be, many times quicker than a unique over rows
        pairs, group = np.unique(self.diameter[reach] + 1j * rough[reach],
                                 return_inverse=True)
        length = np.bincount(group.ravel(), weights=self.length[reach],
                             minlength=len(pairs))
        hf = friction.head_loss(q[:, None], pairs.real[None, :], length[None, :],
                                pairs.imag[None, :], kinematic_viscosity).sum(axis=1)
        local = ~reach & (self.k != 0.0)
        hk = (self.k[local][None, :] * gradeline.velocity_head(
            q[:, None], self.reference_area[local][None, :])).sum(axis=1)
        return hf + hk

    def aged_roughness(self, segments, years: float) -> np.ndarray:
        """Element roughness after ``years`` of service (Colebrook & White linear growth)."""
        out = self.roughness.copy()
        for i, seg in enumerate(segments):
            if seg.roughness_growth:
                out[self.element_segment == i] = friction.aged_roughness(
                    seg.roughness, years, seg.roughness_growth)
        return out


@dataclass(frozen=True)
class UniformPipe:
    """A case's route with every pipe segment at one inside diameter, lumped for speed.

    With one diameter along the route the velocity, and so the friction factor, is the
    same on every reach of a segment (whose roughness is one), so the friction loss of a
    segment is that of its whole length; each local loss depends on the diameter only
    through its coefficient and its reference area. The head loss of the route then costs
    one Darcy–Weisbach evaluation per segment and one per local loss, whatever the number
    of profile points. :meth:`head_loss` equals the sum over the elements of
    :func:`build_route` of the uniform case, to rounding.
    """

    segment_length: np.ndarray   # pipe length of each segment along its axis [m]
    losses: tuple                # (kind, params, k) of each of the case's local losses

    def head_loss(self, flow, diameter, segment_roughness, kinematic_viscosity):
        """Total head loss [m] at each of ``flow`` [m^3/s] for the inside ``diameter`` [m]
        and the roughness of each segment [m]."""
        from . import gradeline

        q = np.atleast_1d(np.asarray(flow, dtype=float))
        d = float(diameter)
        reach = self.segment_length > 0
        hf = friction.head_loss(q[:, None], d, self.segment_length[None, reach],
                                np.asarray(segment_roughness, dtype=float)[None, reach],
                                kinematic_viscosity).sum(axis=1)
        hk = np.zeros_like(q)
        for kind, params, k_given in self.losses:
            k, area = loss_k_and_area(kind, params, d, d, k_given)
            hk = hk + k * gradeline.velocity_head(q, area)
        return hf + hk


def uniform_pipe(case) -> UniformPipe:
    """The lumped :class:`UniformPipe` of a case's route (built once, for any diameter)."""
    route = build_route(case)
    reach = route.length > 0
    n = len(case.segments)
    lengths = np.bincount(route.element_segment[reach], weights=route.length[reach],
                          minlength=n)
    return UniformPipe(segment_length=lengths,
                       losses=tuple((ls.kind, ls.params, ls.k) for ls in case.losses))


def build_route(case, warns=None, methods=None) -> Route:
    """Build the node/element chain of a case's penstock.

    Parameters
    ----------
    case : penstock.case.Case
    warns : list, optional
        Notes about assumptions (e.g. automatic transitions) are appended here.
    methods : object with ``add(topic, method, reference)``, optional
        Collects the local-loss methods used.

    Returns
    -------
    Route
    """
    from .cautions import Say, Warning_

    say = Say(case.unit_system)

    prof = case.profile
    px, pz = prof["chainage"].to_numpy(float), prof["elevation"].to_numpy(float)
    segs = case.segments
    xs = np.unique(np.concatenate([px, [s.start for s in segs[1:]],
                                   [ls.at for ls in case.losses]]))
    zs = np.interp(xs, px, pz)
    starts = np.array([s.start for s in segs])
    last_seg = len(segs) - 1
    # the segment downstream and upstream of each point, and the segment of each reach
    # (its midpoint), the reach lengths along the pipe: once for all points
    down_of = np.clip(np.searchsorted(starts, xs, side="right") - 1, 0, last_seg).tolist()
    up_of = np.clip(np.searchsorted(starts, xs, side="left") - 1, 0, last_seg).tolist()
    reach_seg = np.clip(np.searchsorted(starts, 0.5 * (xs[:-1] + xs[1:]), side="right") - 1,
                        0, last_seg).tolist()
    reach_len = [math.hypot(dx, dz) for dx, dz in zip(np.diff(xs).tolist(),
                                                      np.diff(zs).tolist(), strict=True)]
    x_list = xs.tolist()
    seg_d = np.array([s.diameter for s in segs])
    seg_r = np.array([s.roughness for s in segs])
    seg_a = np.array([s.area for s in segs])
    reach_name = [f"friction, pipe {i + 1} ({say.ch(s.start)} to {say.ch(s.end)}, "
                  f"D {say.m(s.diameter, 3)})" for i, s in enumerate(segs)]

    losses_at: dict[int, list] = {}
    for ls in case.losses:
        losses_at.setdefault(int(np.argmin(np.abs(xs - ls.at))), []).append(ls)
    changes = {segs[i + 1].start: (segs[i].diameter, segs[i + 1].diameter)
               for i in range(len(segs) - 1) if segs[i + 1].diameter != segs[i].diameter}

    # The chain: the reservoir node, then for each point its local losses (steps: an
    # element of no length and the node after it, at the same place) and the reach to the
    # next point. The steps are few and built one by one; the reaches, one per profile
    # interval, are built as arrays; a stable sort by (point, step before reach) orders
    # them. Past an exit the water is in the tailwater (infinite area) but the pipe is
    # still there.
    steps = []   # (point, length, diameter, roughness, k, ref area, name, segment,
    #              node area, node diameter)

    def step(j, k, ref_area, name, new_area, diameter, node_diameter):
        steps.append((j, 0.0, diameter, 0.0, k, ref_area, name, -1, new_area, node_diameter))

    special = sorted(set(losses_at) | {0} | {j for j, x in enumerate(x_list) if x in changes})
    for j in special:
        x = x_list[j]
        down = down_of[j]
        up = up_of[j] if j > 0 else down
        here = losses_at.get(j, [])
        if j == 0 and not any(ls.kind in ("entrance", "trashrack") for ls in here):
            step(0, 0.0, segs[down].area, "entrance (none given)", segs[down].area,
                 segs[down].diameter, segs[down].diameter)
            if warns is not None:
                warns.append(Warning_("losses", "no entrance or trashrack loss is given at the "
                                      "intake; none is counted", chainage=float(x),
                                      severity="note"))
        for ls in here:
            d_up, d_down = segs[up].diameter, segs[down].diameter
            if ls.kind == "exit":
                d_down = d_up
            k, ref_area = loss_k_and_area(ls.kind, ls.params, d_up, d_down, ls.k)
            step(j, k, ref_area, ls.label,
                 math.inf if ls.kind == "exit" else segs[down].area, d_up, d_down)
            if methods is not None:
                methods.add("Local losses", *_method_of(ls))
        if x in changes and not any(ls.kind in ("contraction", "expansion") for ls in here):
            d1, d2 = changes[x]
            kind = "contraction" if d2 < d1 else "expansion"
            k, ref_area = loss_k_and_area(kind, {"angle": DEFAULT_TRANSITION_ANGLE}, d1, d2)
            name = f"{kind} at {say.ch(x)} (assumed 15° cone)"
            step(j, k, ref_area, name, segs[down].area, d1, d2)
            if warns is not None:
                warns.append(Warning_("losses", f"diameter changes from {say.m(d1, 3)} to "
                                      f"{say.m(d2, 3)} at {say.ch(x)} with no transition loss "
                                      f"given; a 15° conical {kind} is assumed (K = {k:.3f})",
                                      chainage=float(x), severity="note"))

    rs = np.asarray(reach_seg, dtype=int)             # the segment of each reach
    sp = list(zip(*steps, strict=True)) if steps else [()] * 10
    s_point = np.array(sp[0], dtype=int)
    # order: a point's steps (in the order made), then its reach
    key = np.concatenate([2 * s_point, 2 * np.arange(xs.size - 1) + 1])
    order = np.argsort(key, kind="stable")

    def chain(step_values, reach_values, dtype=float):
        return np.concatenate([np.asarray(step_values, dtype=dtype),
                               np.asarray(reach_values, dtype=dtype)])[order]

    el = chain(sp[1], np.asarray(reach_len))
    ed = chain(sp[2], seg_d[rs])
    er = chain(sp[3], seg_r[rs])
    ek = chain(sp[4], np.zeros(rs.size))
    ea = chain(sp[5], seg_a[rs])
    es = chain(sp[7], rs, dtype=int)
    names = np.array(reach_name, dtype=object)
    eg = chain(sp[6], names[rs], dtype=object)
    # the node after each element: a step's at its own point, a reach's at the next point
    nx = np.concatenate([[xs[0]], chain(xs[s_point], xs[1:])])
    nz = np.concatenate([[zs[0]], chain(zs[s_point], zs[1:])])
    na = np.concatenate([[math.inf], chain(sp[8], seg_a[rs])])
    nd = np.concatenate([[math.nan], chain(sp[9], seg_d[rs])])
    nl = np.concatenate([np.array(["reservoir"], dtype=object),
                         chain(sp[6], np.full(rs.size, "profile", dtype=object),
                               dtype=object)])
    nr = np.zeros(nx.size, dtype=bool)
    nr[0] = True
    if nl[-1] == "profile":
        nl[-1] = "penstock end"
    # each component, in route order of first appearance
    first_seen = np.unique(eg.astype(str), return_index=True)[1]
    group_kind = {eg[i]: "friction" if es[i] >= 0 else "local" for i in sorted(first_seen)}
    first = down_of[0]
    return Route(
        chainage=nx, elevation=nz, node_area=na, node_diameter=nd,
        node_label=nl, is_reservoir=nr,
        length=el, diameter=ed, roughness=er, k=ek,
        reference_area=ea, element_segment=es, element_group=list(eg),
        group_kind=group_kind,
        intake_diameter=segs[first].diameter, intake_elevation=float(zs[0]),
    )


def _method_of(ls) -> tuple[str, str]:
    if ls.k is not None:
        return (f"{ls.kind}: coefficient given by the user", "case input")
    fn = fittings.LOSS_KINDS[ls.kind].function
    doc = (fn.__doc__ or "").strip().splitlines()[0]
    refs = _references(fn)
    return (f"{ls.kind}: {doc}", refs)


def _references(fn) -> str:
    doc = fn.__doc__ or ""
    if "References" not in doc:
        return "see penstock.fittings"
    block = doc.split("References", 1)[1].split("Examples", 1)[0].split("\n\n", 2)
    text = " ".join(line.strip() for line in "\n\n".join(block[:2]).splitlines()
                    if line.strip() and not set(line.strip()) <= {"-"})
    return text[:400]
