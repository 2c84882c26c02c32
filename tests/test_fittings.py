"""Tests for penstock.fittings: local loss coefficients.

Reference values come from Crane TP-410 (2009 edition, Appendix A), Kirschmer (1926)
and the `fluids` library (fluids.fittings, version 1.x), which is used here only.
"""

import doctest
import inspect
import math

import fluids.fittings as ff
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import fittings
from penstock.fittings import (
    LOSS_KINDS,
    bend,
    bifurcation,
    bifurcation_symmetric,
    contraction_gradual,
    contraction_sudden,
    custom,
    entrance,
    exit_loss,
    expansion_gradual,
    expansion_sudden,
    fully_turbulent_friction_factor,
    loss_coefficient,
    refer_to_velocity,
    trashrack_kirschmer,
    valve_open,
)

DEG = math.pi / 180.0
FAST = settings(max_examples=60, deadline=None)


# ------------------------------------------------------- fully turbulent friction fT
# Crane TP-410 (2009), App. A "Friction factor for clean commercial steel pipe with
# flow in zone of complete turbulence" (p. A-26, from memory), given to 2-3 decimals.
# Inside diameters are ASME B36.10M schedule 40. The table is rounded and the
# formula is the rough-pipe Colebrook limit, so the check is +-5 %.
CRANE_FT_TABLE = [
    # (nominal size, schedule 40 inside diameter [m], fT)
    ("1/2 in", 0.01580, 0.027),
    ("1 in", 0.02664, 0.023),
    ("2 in", 0.05250, 0.019),
    ("3 in", 0.07793, 0.018),
    ("4 in", 0.10226, 0.017),
    ("6 in", 0.15405, 0.015),
    ("8 in", 0.20272, 0.014),
    ("12 in", 0.30323, 0.013),
    ("24 in", 0.57465, 0.012),
]


@pytest.mark.parametrize("size, diameter, ft", CRANE_FT_TABLE)
def test_ft_against_crane_table(size, diameter, ft):
    assert fully_turbulent_friction_factor(diameter) == pytest.approx(ft, rel=0.05)


@pytest.mark.parametrize("diameter", [0.05, 0.1, 0.3, 0.6, 1.5, 4.0])
def test_ft_against_fluids(diameter):
    # fluids.ft_Crane fits the same Crane table by a different route; +-2 %.
    assert fully_turbulent_friction_factor(diameter) == pytest.approx(
        ff.ft_Crane(diameter), rel=0.02)


def test_ft_falls_with_diameter():
    ft = fully_turbulent_friction_factor(np.array([0.1, 0.5, 1.0, 3.0]))
    assert np.all(np.diff(ft) < 0.0)


# ------------------------------------------------------------------------- entrance
@pytest.mark.parametrize("shape, k, reference", [
    ("sharp", 0.50, ff.entrance_sharp(method="Crane")),         # Crane TP-410 p. A-30
    ("reentrant", 0.78, ff.entrance_distance(0.5, t=0.01, method="Crane")),  # p. A-30
    ("bellmouth", 0.04, ff.entrance_rounded(0.5, 0.1, method="Crane")),      # r/d >= 0.15
])
def test_entrance_fixed_shapes(shape, k, reference):
    # Crane gives these to two decimals; exact here.
    assert entrance(shape) == pytest.approx(k, abs=1e-12)
    assert entrance(shape) == pytest.approx(reference, abs=1e-12)


# Crane TP-410 (2009) App. A p. A-30, "Pipe entrance, flush, rounded": r/d -> K.
@pytest.mark.parametrize("radius_ratio, k", [
    (0.02, 0.28), (0.04, 0.24), (0.06, 0.15), (0.10, 0.09), (0.15, 0.04), (0.30, 0.04)])
def test_entrance_rounded_crane_table(radius_ratio, k):
    assert entrance("rounded", radius_ratio) == pytest.approx(k, abs=1e-12)


@pytest.mark.parametrize("radius_ratio", [0.0, 0.01, 0.03, 0.05, 0.08, 0.12, 0.2])
def test_entrance_rounded_against_fluids(radius_ratio):
    # fluids interpolates the same Crane table linearly.
    expected = ff.entrance_rounded(Di=2.0, rc=2.0 * radius_ratio, method="Crane")
    assert entrance("rounded", radius_ratio) == pytest.approx(expected, rel=1e-9)


def test_entrance_rounded_zero_radius_is_sharp():
    assert entrance("rounded", 0.0) == entrance("sharp")


def test_entrance_errors():
    with pytest.raises(ValueError, match=r"entrance shape 'square' .*'sharp', 'reentrant'"):
        entrance("square")
    with pytest.raises(ValueError, match="radius_ratio must be 0 for entrance shape 'sharp'"):
        entrance("sharp", radius_ratio=0.1)
    with pytest.raises(ValueError, match="radius_ratio must be non-negative"):
        entrance("rounded", radius_ratio=-0.1)


# ------------------------------------------------------------------------ trashrack
# Kirschmer (1926) shape factors beta, as reproduced in hydropower design texts
# (from memory); the formula is exact, so the tolerance is round-off.
KIRSCHMER_BETA = {
    "rectangular": 2.42, "rectangular_rounded_front": 1.83, "rounded_both": 1.67,
    "rounded_front_tapered_back": 1.035, "tapered_both": 0.92, "circular": 1.79,
    "airfoil": 0.76,
}


@pytest.mark.parametrize("shape, beta", KIRSCHMER_BETA.items())
@pytest.mark.parametrize("s, b, alpha", [(0.012, 0.060, 90 * DEG), (0.02, 0.1, 70 * DEG),
                                         (0.01, 0.03, 45 * DEG)])
def test_kirschmer_formula(shape, beta, s, b, alpha):
    expected = beta * (s / b) ** (4.0 / 3.0) * math.sin(alpha)
    assert trashrack_kirschmer(shape, s, b, alpha) == pytest.approx(expected, rel=1e-12)


def test_kirschmer_shape_set_is_the_published_one():
    assert fittings.KIRSCHMER_SHAPE_FACTORS == KIRSCHMER_BETA


def test_kirschmer_blockage_allowance():
    # Common practice: K / (1 - p)^2 with p the blocked fraction.
    clean = trashrack_kirschmer("circular", 0.015, 0.05)
    assert trashrack_kirschmer("circular", 0.015, 0.05, blockage=0.25) == pytest.approx(
        clean / 0.75**2, rel=1e-12)


@FAST
@given(a1=st.floats(1 * DEG, 90 * DEG), a2=st.floats(1 * DEG, 90 * DEG),
       p1=st.floats(0.0, 0.9), p2=st.floats(0.0, 0.9))
def test_kirschmer_monotonic(a1, a2, p1, p2):
    (a_lo, a_hi), (p_lo, p_hi) = sorted((a1, a2)), sorted((p1, p2))
    k = trashrack_kirschmer
    assert k("rectangular", 0.01, 0.05, a_lo, p_lo) <= k("rectangular", 0.01, 0.05, a_hi, p_lo)
    assert k("rectangular", 0.01, 0.05, a_lo, p_lo) <= k("rectangular", 0.01, 0.05, a_lo, p_hi)


def test_kirschmer_errors():
    with pytest.raises(ValueError, match=r"bar_shape 'square' .*'rectangular'"):
        trashrack_kirschmer("square", 0.01, 0.05)
    with pytest.raises(ValueError, match=r"inclination must be in \(0, pi/2\]"):
        trashrack_kirschmer("rectangular", 0.01, 0.05, inclination=100 * DEG)
    with pytest.raises(ValueError, match=r"blockage must be a fraction in \[0, 1\)"):
        trashrack_kirschmer("rectangular", 0.01, 0.05, blockage=1.0)
    with pytest.raises(ValueError, match="bar_spacing must be positive"):
        trashrack_kirschmer("rectangular", 0.01, 0.0)


# ----------------------------------------------------------------------------- bends
# Crane TP-410 (2009) App. A p. A-29, 90 deg pipe bends: K = multiplier x fT.
CRANE_BEND = [(1, 20), (1.5, 14), (2, 12), (3, 12), (4, 14), (6, 17), (8, 24), (10, 30),
              (12, 34), (14, 38), (16, 42), (20, 50)]


@pytest.mark.parametrize("radius_ratio, multiplier", CRANE_BEND)
def test_bend_crane_90_table(radius_ratio, multiplier):
    k = bend(90 * DEG, radius_ratio, 0.3, friction_factor=0.013, method="crane")
    assert k == pytest.approx(multiplier * 0.013, rel=1e-12)


def test_bend_crane_180_rule():
    # Crane TP-410 (2009) p. A-29: K_B = (n - 1)(0.25 pi fT r/d + 0.5 K1) + K1, n = 2.
    ft, r = 0.012, 4.0
    k1 = 14 * ft
    expected = (0.25 * math.pi * ft * r + 0.5 * k1) + k1
    assert bend(math.pi, r, 0.6, friction_factor=ft, method="crane") == pytest.approx(
        expected, rel=1e-12)


@pytest.mark.parametrize("angle_deg", [30, 45, 90, 135, 180])
@pytest.mark.parametrize("radius_ratio", [1, 2, 3, 6, 10, 20])
def test_bend_crane_against_fluids(angle_deg, radius_ratio):
    # fluids fits the Crane multiplier table with a smooth curve (within ~1 % of the
    # table at its points); the angle rule is the same. Same fT passed to both: +-1.5 %.
    diameter = 0.4
    expected = ff.bend_rounded(Di=diameter, angle=angle_deg, bend_diameters=radius_ratio,
                               method="Crane")
    k = bend(angle_deg * DEG, radius_ratio, diameter, friction_factor=ff.ft_Crane(diameter),
             method="crane")
    assert k == pytest.approx(expected, rel=0.015)


@pytest.mark.parametrize("angle_deg", [5, 20, 45, 90, 180])
@pytest.mark.parametrize("radius_ratio", [1, 2.5, 5, 15])
def test_bend_rennels_against_fluids(angle_deg, radius_ratio):
    # Rennels & Hudson (2012) smooth-bend formula, as coded in fluids.bend_rounded.
    fd = 0.011
    expected = ff.bend_rounded(Di=1.0, angle=angle_deg, fd=fd, bend_diameters=radius_ratio,
                               method="Rennels")
    k = bend(angle_deg * DEG, radius_ratio, 1.0, friction_factor=fd)
    assert k == pytest.approx(expected, rel=1e-10)


def test_bend_rennels_vanishes_at_zero_deflection():
    # Leading term 6.6 f sqrt(alpha / 2) -> 0 as alpha -> 0.
    ft = fully_turbulent_friction_factor(1.0)
    for alpha in (1e-6, 1e-9, 1e-12):
        k = bend(alpha, 3.0, 1.0)
        assert k == pytest.approx(6.6 * ft * math.sqrt(alpha / 2), rel=0.01)


@FAST
@given(a1=st.floats(0.5 * DEG, 180 * DEG), a2=st.floats(0.5 * DEG, 180 * DEG),
       radius_ratio=st.floats(1.0, 20.0), diameter=st.floats(0.2, 6.0),
       method=st.sampled_from(sorted(fittings.BEND_METHODS)))
def test_bend_increases_with_angle(a1, a2, radius_ratio, diameter, method):
    lo, hi = sorted((a1, a2))
    k_lo = bend(lo, radius_ratio, diameter, method=method)
    k_hi = bend(hi, radius_ratio, diameter, method=method)
    assert 0.0 <= k_lo <= k_hi + 1e-15


def test_bend_errors():
    with pytest.raises(ValueError, match=r"bend method 'ito' .*'rennels', 'crane'"):
        bend(1.0, 3.0, 1.0, method="ito")
    with pytest.raises(ValueError, match=r"radius_ratio must be within \[1, 20\]"):
        bend(1.0, 0.5, 1.0)
    with pytest.raises(ValueError, match=r"angle must be a deflection in \(0, pi\]"):
        bend(4.0, 3.0, 1.0)
    with pytest.raises(ValueError, match="diameter must be positive"):
        bend(1.0, 3.0, -1.0)
    with pytest.raises(ValueError, match="friction_factor must be a Darcy factor"):
        bend(1.0, 3.0, 1.0, friction_factor=-0.01)


# ---------------------------------------------------------------------------- valves
# Crane TP-410 (2009) App. A pp., full-bore valves: K = n fT.
@pytest.mark.parametrize("diameter", [0.1, 0.3, 0.5, 1.2])
@pytest.mark.parametrize("kind, n, reference", [
    ("gate", 8, lambda d, fd: ff.K_gate_valve_Crane(d, d, 0.0, fd=fd)),
    ("ball", 3, lambda d, fd: ff.K_ball_valve_Crane(d, d, 0.0, fd=fd)),
    ("spherical", 3, lambda d, fd: ff.K_ball_valve_Crane(d, d, 0.0, fd=fd)),
    ("plug", 18, lambda d, fd: ff.K_plug_valve_Crane(d, d, 0.0, fd=fd, style=0)),
    ("globe", 340, lambda d, fd: ff.K_globe_valve_Crane(d, d, fd=fd)),
])
def test_valves_single_multiplier(diameter, kind, n, reference):
    ft = fully_turbulent_friction_factor(diameter)
    assert valve_open(kind, diameter) == pytest.approx(n * ft, rel=1e-12)
    assert valve_open(kind, diameter) == pytest.approx(reference(diameter, ft), rel=1e-12)


# Crane TP-410 (2009) p. A-28 butterfly multipliers by size band (2-8, 10-14, 16-24 in).
@pytest.mark.parametrize("kind, style, multipliers", [
    ("butterfly", 0, (45, 35, 25)),
    ("butterfly_double_offset", 1, (74, 52, 43)),
    ("butterfly_triple_offset", 2, (218, 96, 55)),
])
@pytest.mark.parametrize("diameter, band", [(0.15, 0), (0.2286, 0), (0.30, 1), (0.381, 1),
                                            (0.50, 2), (2.5, 2)])
def test_butterfly_bands(kind, style, multipliers, diameter, band):
    ft = fully_turbulent_friction_factor(diameter)
    k = valve_open(kind, diameter)
    assert k == pytest.approx(multipliers[band] * ft, rel=1e-12)
    assert k == pytest.approx(ff.K_butterfly_valve_Crane(diameter, fd=ft, style=style),
                              rel=1e-12)


def test_valve_errors():
    with pytest.raises(ValueError, match=r"valve_type 'needle' .*'gate', 'ball'"):
        valve_open("needle", 1.0)
    with pytest.raises(ValueError, match="diameter must be positive"):
        valve_open("gate", 0.0)


# -------------------------------------------------------- contractions and expansions
@pytest.mark.parametrize("d1, d2", [(1.0, 0.5), (2.0, 1.6), (1.2, 0.3)])
def test_contraction_sudden(d1, d2):
    # Crane TP-410 (2009) p. A-26 Formula 2 at theta = 180 deg: K = 0.5 (1 - beta^2).
    expected = 0.5 * (1.0 - (d2 / d1) ** 2)
    assert contraction_sudden(d1, d2) == pytest.approx(expected, rel=1e-12)
    assert contraction_sudden(d1, d2) == pytest.approx(
        ff.contraction_conical_Crane(d1, d2, angle=180.0), rel=1e-12)


@pytest.mark.parametrize("angle_deg", [5, 15, 30, 40, 50, 75, 120, 179])
@pytest.mark.parametrize("d1, d2", [(1.0, 0.5), (2.0, 1.6)])
def test_contraction_gradual_against_fluids(angle_deg, d1, d2):
    # Crane TP-410 (2009) p. A-26 Formulas 1 and 2, referred to the smaller pipe.
    expected = ff.contraction_conical_Crane(d1, d2, angle=angle_deg)
    assert contraction_gradual(d1, d2, angle_deg * DEG) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("d1, d2", [(0.5, 1.0), (1.6, 2.0), (0.3, 1.2)])
def test_expansion_sudden_borda_carnot(d1, d2):
    expected = (1.0 - (d1 / d2) ** 2) ** 2  # Borda-Carnot; Crane Formula 4
    assert expansion_sudden(d1, d2) == pytest.approx(expected, rel=1e-12)
    assert expansion_sudden(d1, d2) == pytest.approx(ff.diffuser_sharp(d1, d2), rel=1e-12)


@pytest.mark.parametrize("angle_deg", [5, 15, 30, 40, 50, 75, 120, 179])
@pytest.mark.parametrize("d1, d2", [(0.5, 1.0), (1.6, 2.0)])
def test_expansion_gradual_against_fluids(angle_deg, d1, d2):
    # Crane TP-410 (2009) p. A-26 Formulas 3 and 4, referred to the smaller pipe.
    expected = ff.diffuser_conical(d1, d2, angle=angle_deg, method="Crane")
    assert expansion_gradual(d1, d2, angle_deg * DEG) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("function", [contraction_gradual, expansion_gradual])
@pytest.mark.parametrize("angle", [10 * DEG, 60 * DEG, math.pi])
def test_equal_diameters_give_no_loss(function, angle):
    assert function(1.3, 1.3, angle) == 0.0


def test_equal_diameters_sudden():
    assert contraction_sudden(0.8, 0.8) == 0.0
    assert expansion_sudden(0.8, 0.8) == 0.0


def test_180_degree_cone_is_sudden():
    assert contraction_gradual(1.0, 0.6, math.pi) == contraction_sudden(1.0, 0.6)
    assert expansion_gradual(0.6, 1.0, math.pi) == expansion_sudden(0.6, 1.0)
    # Degrees converted at the edge: 180 deg -> pi within round-off is accepted.
    assert contraction_gradual(1.0, 0.6, np.deg2rad(180.0)) == contraction_sudden(1.0, 0.6)


def test_change_errors():
    with pytest.raises(ValueError, match="downstream_diameter must be no larger"):
        contraction_sudden(0.5, 1.0)
    with pytest.raises(ValueError, match="downstream_diameter must be no smaller"):
        expansion_sudden(1.0, 0.5)
    with pytest.raises(ValueError, match=r"angle must be the total included cone angle"):
        expansion_gradual(0.5, 1.0, 0.0)
    with pytest.raises(ValueError, match="upstream_diameter must be positive"):
        contraction_sudden(-1.0, 0.5)


# ------------------------------------------------------------------ refer to velocity
@pytest.mark.parametrize("d1, d2", [(0.5, 1.0), (1.2, 0.7)])
def test_refer_to_velocity_against_fluids(d1, d2):
    a1, a2 = math.pi * d1**2 / 4, math.pi * d2**2 / 4
    assert refer_to_velocity(0.37, a1, a2) == pytest.approx(
        ff.change_K_basis(0.37, d1, d2), rel=1e-12)


def test_refer_to_velocity_matches_crane_k2():
    # Crane TP-410 (2009) p. A-26: K2 = K1 / beta^4 (K1 small pipe, K2 large pipe).
    d1, d2 = 0.6, 1.0
    k1 = expansion_sudden(d1, d2)
    k2 = refer_to_velocity(k1, math.pi * d1**2 / 4, math.pi * d2**2 / 4)
    assert k2 == pytest.approx(k1 / (d1 / d2) ** 4, rel=1e-12)
    # The head loss is the same with either reference.
    flow = 1.0
    v1, v2 = flow / (math.pi * d1**2 / 4), flow / (math.pi * d2**2 / 4)
    assert k1 * v1**2 == pytest.approx(k2 * v2**2, rel=1e-12)


# ---------------------------------------------------------------------- bifurcation
def test_bifurcation_crane_example():
    # Crane TP-410 (2009) Example 7-36, as quoted in fluids.K_branch_diverging_Crane:
    # DN150 sch. 80 wye, 45 deg, 1515 L/min straight on, 950 L/min to the branch;
    # K_branch = 0.4640, given to 4 decimals after rounded intermediate steps: +-1e-4.
    q = 950.0 / (1515.0 + 950.0)
    assert bifurcation(1.0, q, 45 * DEG) == pytest.approx(0.4640, abs=1e-4)


@pytest.mark.parametrize("angle_deg", [30, 45, 55, 90])
@pytest.mark.parametrize("beta", [0.4, 0.55, 0.65, 1.0])
@pytest.mark.parametrize("q", [0.1, 0.33, 0.5, 0.7, 1.0])
def test_bifurcation_against_fluids(angle_deg, beta, q):
    # fluids codes the same Crane method; compared away from the bands where the two
    # read Crane's tee thresholds differently (2/3 < beta < 0.816 at 90 deg).
    expected = ff.K_branch_diverging_Crane(D_run=1.0, D_branch=beta, Q_run=1.0 - q,
                                           Q_branch=q, angle=angle_deg)
    assert bifurcation(beta, q, angle_deg * DEG) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("n_units", [2, 3, 4])
def test_bifurcation_symmetric(n_units):
    expected = bifurcation(0.7, 1.0 / n_units, 40 * DEG)
    assert bifurcation_symmetric(0.7, 40 * DEG, n_units) == pytest.approx(expected, rel=1e-15)


def test_bifurcation_errors():
    with pytest.raises(ValueError, match=r"angle must be in \(0, pi/3\] \(wye\) or pi/2"):
        bifurcation(1.0, 0.5, 75 * DEG)
    with pytest.raises(ValueError, match=r"flow_ratio must be a fraction in \[0, 1\]"):
        bifurcation(1.0, 1.5, 45 * DEG)
    with pytest.raises(ValueError, match=r"branch_diameter_ratio must be in \(0, 1\]"):
        bifurcation(1.2, 0.5, 45 * DEG)
    with pytest.raises(ValueError, match="n_units must be an integer of at least 2"):
        bifurcation_symmetric(1.0, 45 * DEG, n_units=1)


# ------------------------------------------------------------------- exit and custom
def test_exit_loss():
    assert exit_loss() == 1.0 == ff.exit_normal()  # Crane TP-410 p. A-30: K = 1.0


def test_custom():
    assert custom(0.35) == 0.35
    with pytest.raises(ValueError, match="k must be a finite non-negative"):
        custom(-0.1)


# -------------------------------------------------------- numeric in, same kind out
VECTOR_CASES = [
    (lambda a, b: entrance("rounded", a), (np.array([0.0, 0.03, 0.2]),)),
    (lambda a, b: trashrack_kirschmer("circular", 0.01, a, b),
     (np.array([0.03, 0.05, 0.1]), np.array([0.5, 1.0, 1.5]))),
    (lambda a, b: bend(b, a, 1.5), (np.array([1.0, 3.0, 12.0]), np.array([0.1, 1.0, 3.0]))),
    (lambda a, b: bend(b, a, 1.5, method="crane"),
     (np.array([1.0, 3.0, 12.0]), np.array([0.1, 1.0, 3.0]))),
    (lambda a, b: valve_open("butterfly", a), (np.array([0.1, 0.3, 2.0]),)),
    (lambda a, b: contraction_gradual(1.0, a, b),
     (np.array([0.5, 0.8, 1.0]), np.array([0.3, 1.0, 3.0]))),
    (lambda a, b: expansion_gradual(a, 1.0, b),
     (np.array([0.5, 0.8, 1.0]), np.array([0.3, 1.0, 3.0]))),
    (lambda a, b: bifurcation(a, b, math.pi / 2),
     (np.array([0.5, 0.7, 1.0]), np.array([0.2, 0.5, 0.9]))),
    (lambda a, b: refer_to_velocity(0.4, a, b),
     (np.array([0.5, 0.8, 1.0]), np.array([0.3, 1.0, 3.0]))),
    (lambda a, b: fully_turbulent_friction_factor(a), (np.array([0.1, 1.0, 5.0]),)),
]


@pytest.mark.parametrize("function, arrays", VECTOR_CASES)
def test_array_equals_loop_of_scalars(function, arrays):
    padded = arrays + (arrays[0],) * (2 - len(arrays))
    result = function(*padded)
    assert isinstance(result, np.ndarray)
    loop = [function(*(float(x[i]) for x in padded)) for i in range(len(padded[0]))]
    assert all(isinstance(value, float) for value in loop)
    np.testing.assert_allclose(result, loop, rtol=1e-14)


def test_series_in_series_out():
    index = pd.Index(["P1", "P2", "P3"], name="pipe")
    diameter = pd.Series([0.3, 1.0, 2.5], index=index)
    result = valve_open("gate", diameter)
    assert isinstance(result, pd.Series)
    assert result.index.equals(index)
    result = expansion_sudden(pd.Series([0.5, 0.6, 0.7], index=index), 1.0)
    assert result.index.equals(index)


# ------------------------------------------------------------------ K >= 0 (property)
@FAST
@given(d_small=st.floats(0.1, 5.0), ratio=st.floats(1.0, 4.0),
       angle=st.floats(0.1 * DEG, 180 * DEG))
def test_area_changes_non_negative(d_small, ratio, angle):
    assert contraction_gradual(d_small * ratio, d_small, angle) >= 0.0
    assert expansion_gradual(d_small, d_small * ratio, angle) >= 0.0


@FAST
@given(beta=st.floats(0.1, 1.0), q=st.floats(0.0, 1.0),
       angle=st.one_of(st.floats(0.5 * DEG, 60 * DEG), st.just(math.pi / 2)))
def test_bifurcation_non_negative(beta, q, angle):
    assert bifurcation(beta, q, angle) >= 0.0


@FAST
@given(shape=st.sampled_from(sorted(fittings.KIRSCHMER_SHAPE_FACTORS)),
       s=st.floats(0.002, 0.05), b=st.floats(0.01, 0.3), alpha=st.floats(1 * DEG, 90 * DEG),
       p=st.floats(0.0, 0.9))
def test_trashrack_non_negative(shape, s, b, alpha, p):
    assert trashrack_kirschmer(shape, s, b, alpha, p) >= 0.0


@FAST
@given(kind=st.sampled_from(sorted(fittings.VALVE_KINDS)), diameter=st.floats(0.05, 8.0),
       radius_ratio=st.floats(0.0, 1.0), shape=st.sampled_from(sorted(fittings.ENTRANCE_SHAPES)))
def test_valves_and_entrances_non_negative(kind, diameter, radius_ratio, shape):
    assert valve_open(kind, diameter) >= 0.0
    r = radius_ratio if fittings.ENTRANCE_SHAPES[shape].uses_radius else 0.0
    assert 0.0 <= entrance(shape, r) <= 1.0


# -------------------------------------------------------------------------- registry
SAMPLE_PARAMETERS = {
    "entrance": {"shape": "rounded", "radius_ratio": 0.06},
    "trashrack": {"bar_thickness": 0.012, "bar_spacing": 0.06},
    "bend": {"angle": 30 * DEG, "radius_ratio": 3.0, "diameter": 1.8},
    "valve": {"valve_type": "butterfly", "diameter": 1.8},
    "contraction": {"upstream_diameter": 2.0, "downstream_diameter": 1.6},
    "expansion": {"upstream_diameter": 1.6, "downstream_diameter": 2.0, "angle": 20 * DEG},
    "bifurcation": {"branch_diameter_ratio": 0.7, "flow_ratio": 0.5, "angle": 45 * DEG},
    "exit": {},
    "custom": {"k": 0.2},
}
DIRECT = {
    "entrance": lambda: entrance("rounded", 0.06),
    "trashrack": lambda: trashrack_kirschmer("rectangular", 0.012, 0.06),
    "bend": lambda: bend(30 * DEG, 3.0, 1.8),
    "valve": lambda: valve_open("butterfly", 1.8),
    "contraction": lambda: contraction_sudden(2.0, 1.6),
    "expansion": lambda: expansion_gradual(1.6, 2.0, 20 * DEG),
    "bifurcation": lambda: bifurcation(0.7, 0.5, 45 * DEG),
    "exit": exit_loss,
    "custom": lambda: 0.2,
}


def test_registry_holds_every_kind():
    assert set(LOSS_KINDS) == {"entrance", "trashrack", "bend", "valve", "contraction",
                               "expansion", "bifurcation", "exit", "custom"}


@pytest.mark.parametrize("kind", sorted(LOSS_KINDS))
def test_every_kind_dispatches(kind):
    assert loss_coefficient(kind, **SAMPLE_PARAMETERS[kind]) == pytest.approx(
        DIRECT[kind](), rel=1e-15)


@pytest.mark.parametrize("kind", sorted(LOSS_KINDS))
def test_registry_matches_signatures(kind):
    entry = LOSS_KINDS[kind]
    assert entry.name == kind
    assert entry.reference_velocity in {"pipe", "upstream", "downstream", "approach"}
    signature = inspect.signature(entry.function).parameters
    names = set(entry.parameters) | set(entry.geometry)
    assert names <= set(signature)
    required = {n for n, p in signature.items() if p.default is inspect.Parameter.empty}
    assert required <= names
    assert set(entry.geometry) <= set(fittings.GEOMETRY_PARAMETERS)
    for name, (dimension, default, description) in entry.parameters.items():
        assert dimension in fittings.DIMENSIONS
        assert description
        if default is not None and signature[name].default is not inspect.Parameter.empty:
            assert default == signature[name].default


def test_complete_parameters_for_the_case_loader():
    arguments = fittings.complete_parameters(
        "bend", {"angle": 0.3, "radius_ratio": 4.0}, diameter=1.0, upstream_diameter=1.0,
        downstream_diameter=1.25)
    assert arguments == {"angle": 0.3, "radius_ratio": 4.0,
                         "roughness": fittings.CRANE_ROUGHNESS, "method": "rennels",
                         "diameter": 1.0}
    assert loss_coefficient("bend", **arguments) == bend(0.3, 4.0, 1.0)


def test_registry_errors():
    with pytest.raises(ValueError, match=r"loss kind 'elbow' .*'entrance', 'trashrack'"):
        loss_coefficient("elbow")
    with pytest.raises(ValueError, match=r"unknown parameter\(s\) radius for loss kind "
                                         r"'bend'; accepted: angle, radius_ratio"):
        loss_coefficient("bend", angle=0.3, radius=4.0, diameter=1.0)
    with pytest.raises(ValueError, match="parameter 'radius_ratio' is required for loss kind"):
        loss_coefficient("bend", angle=0.3, diameter=1.0)
    with pytest.raises(ValueError, match="diameter is required for loss kind 'valve'"):
        loss_coefficient("valve", valve_type="gate")
    with pytest.raises(ValueError, match=r"unknown parameter\(s\) diameter for loss kind "
                                         r"'entrance'"):
        loss_coefficient("entrance", diameter=1.0)
    with pytest.raises(ValueError, match=r"valve_type 'sluice' .*'butterfly'"):
        loss_coefficient("valve", valve_type="sluice", diameter=1.0)


# ---------------------------------------------------------------------- documentation
# Docstrings against signatures and units: tests/test_docstrings.py.


def test_doctests():
    failures, _ = doctest.testmod(fittings, optionflags=doctest.ELLIPSIS)
    assert failures == 0


def test_registry_names_do_not_shadow_loss_table_keys():
    # A [[loss]] table already uses kind, at and label (penstock.schema); "k" is the
    # user-given coefficient and is the custom kind's own parameter.
    for entry in LOSS_KINDS.values():
        assert not {"kind", "at", "label"} & set(entry.parameters)
