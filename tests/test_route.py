"""Tests of the route chain (penstock.route.build_route).

The chain is built with arrays; these tests read it back against what it must be, point
by point, on the demo cases and on random profiles between the demo's own points:

* one node after the reservoir per element, and the chainage never goes back;
* a reach for every profile interval, with the length of the pipe between its points
  (the hypotenuse of the chainage and elevation steps) and the segment that holds it;
* every local loss of the case once, at the point nearest its chainage, before the reach
  that leaves that point, in the case's order;
* the node labels and the pipe diameter at each node.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import penstock
from penstock.route import build_route

CASES = Path(__file__).resolve().parents[1] / "cases"
DEMOS = ("alder-gorge-high-head", "cedar-fork-us-units", "millrace-flats-low-head")


def _points(case):
    """The chain's points: the profile, the segment starts and the losses, ascending."""
    px = case.profile["chainage"].to_numpy(float)
    pz = case.profile["elevation"].to_numpy(float)
    xs = np.unique(np.concatenate([px, [s.start for s in case.segments[1:]],
                                   [ls.at for ls in case.losses]]))
    return xs, np.interp(xs, px, pz)


def _check_chain(case):
    route = build_route(case)
    xs, zs = _points(case)
    n_el = route.length.size
    assert route.chainage.size == n_el + 1
    assert route.is_reservoir[0] and not route.is_reservoir[1:].any()
    assert np.all(np.diff(route.chainage) >= 0)
    reach = route.length > 0
    # one reach per profile interval, in order, with the pipe's length between its points
    assert reach.sum() == xs.size - 1
    expected = [math.hypot(x1 - x0, z1 - z0)
                for x0, x1, z0, z1 in zip(xs[:-1], xs[1:], zs[:-1], zs[1:], strict=True)]
    np.testing.assert_array_equal(route.length[reach], expected)
    np.testing.assert_array_equal(route.chainage[1:][reach], xs[1:])
    starts = np.array([s.start for s in case.segments])
    mid = 0.5 * (xs[:-1] + xs[1:])
    seg = np.clip(np.searchsorted(starts, mid, side="right") - 1, 0, len(starts) - 1)
    np.testing.assert_array_equal(route.element_segment[reach], seg)
    np.testing.assert_array_equal(route.diameter[reach],
                                  [case.segments[i].diameter for i in seg])
    np.testing.assert_array_equal(route.node_diameter[1:][reach], route.diameter[reach])
    # local losses: no length, no segment, placed at a point, before that point's reach
    steps = np.flatnonzero(~reach)
    assert (route.element_segment[steps] == -1).all()
    labels = [route.element_group[i] for i in steps]
    for ls in case.losses:
        assert labels.count(ls.label) >= 1
    given = [g for g in labels if g in {ls.label for ls in case.losses}]
    order = sorted(case.losses, key=lambda ls: (xs[np.argmin(np.abs(xs - ls.at))],
                                                case.losses.index(ls)))
    assert given == [ls.label for ls in order]
    for i in steps:
        x = route.chainage[i + 1]
        assert x == route.chainage[i]          # a step stays at its point
        if i + 1 < n_el and reach[i + 1]:
            assert route.chainage[i + 2] > x   # the reach leaving the point comes after
    # labels
    assert route.node_label[0] == "reservoir"
    inner = route.node_label[1:-1][reach[:-1]]
    assert set(inner) <= {"profile"}
    if reach[-1]:
        assert route.node_label[-1] == "penstock end"
    # group kinds follow the elements
    for name, kind in route.group_kind.items():
        idx = [i for i, g in enumerate(route.element_group) if g == name]
        assert kind == ("friction" if route.element_segment[idx[0]] >= 0 else "local")
    return route


@pytest.mark.parametrize("name", DEMOS)
def test_demo_chains_read_back(name):
    _check_chain(penstock.load_case(CASES / name))


@settings(max_examples=25, deadline=None)
@given(points=st.integers(0, 300), seed=st.integers(0, 2**32 - 1),
       name=st.sampled_from(DEMOS))
def test_random_profile_chains_read_back(points, seed, name):
    base = penstock.load_case(CASES / name)
    case = copy.copy(base)
    rng = np.random.default_rng(seed)
    x0 = float(base.profile["chainage"].iloc[0])
    x1 = float(base.profile["chainage"].iloc[-1])
    x = np.unique(np.concatenate([base.profile["chainage"].to_numpy(float),
                                  rng.uniform(x0, x1, points)]))
    z = np.interp(x, base.profile["chainage"], base.profile["elevation"]) + rng.normal(
        0.0, 0.3, x.size)
    case.profile = pd.DataFrame({"chainage": x, "elevation": z})
    route = _check_chain(case)
    # more points never change the total pipe length by more than the added zig-zag
    assert route.length.sum() >= x1 - x0
