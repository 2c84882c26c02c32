"""Tests of penstock.wavespeed against published forms and independent derivations."""

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from penstock import wavespeed as ws
from penstock.constants import P_ATM_SEA_LEVEL

PSI = 6894.757293168  # Pa per lbf/in^2 (NIST SP 811, 2008, Appendix B.8)
FT = 0.3048           # m per ft (exact)

K_WATER = 2.19e9      # bulk modulus of water near 20 degC, handbook value [Pa]
RHO_WATER = 998.2     # density of water at 20 degC [kg/m^3]


# --------------------------------------------------------------------------- Korteweg
@pytest.mark.parametrize("d_over_t", [50.0, 100.0, 200.0, 400.0])
def test_korteweg_steel_against_awwa_m11(d_over_t):
    # AWWA Manual M11 "Steel Pipe - A Guide for Design and Installation", chapter on water
    # hammer (also USBR Engineering Monograph No. 3 "Welded Steel Penstocks"):
    #   a = 4660 / sqrt(1 + k d/t) ft/s, k = K/E = 0.01 for steel (from memory).
    # Our inputs: K = 300 000 psi, E = 30e6 psi (k = 0.01), water 62.4 lb/ft^3. The
    # published constant 4660 ft/s implies K/rho about 2.6 % below ours, so the absolute
    # values agree to 2 %; the ratio to the rigid-pipe speed must agree to 1e-9.
    published = 4660.0 / math.sqrt(1.0 + 0.01 * d_over_t) * FT
    k, e_pipe, rho = 300_000 * PSI, 30e6 * PSI, 999.6
    a = ws.korteweg(k, rho, 1.0, 1.0 / d_over_t, e_pipe)
    assert a == pytest.approx(published, rel=0.02)
    rigid = math.sqrt(k / rho)
    assert a / rigid == pytest.approx(published / (4660.0 * FT), rel=1e-9)


def test_korteweg_rigid_pipe_limit_is_free_field_speed():
    # Limit case from the physics: an infinitely stiff wall leaves a = sqrt(K/rho).
    a = ws.korteweg(K_WATER, RHO_WATER, 1.0, 1.0, 1e30)
    assert a == pytest.approx(math.sqrt(K_WATER / RHO_WATER), rel=1e-12)


@pytest.mark.parametrize(
    ("case", "expected"),
    [("upstream_anchor", 0.85), ("anchored", 0.91), ("expansion_joints", 1.0)],
)
def test_thin_wall_restraint_factors(case, expected):
    # Wylie & Streeter (1993) section 2.6, cases a, b, c with nu = 0.3: 1 - nu/2, 1 - nu^2,
    # 1 (from memory); exact arithmetic.
    assert ws.restraint_factor(0.3, case) == pytest.approx(expected, rel=1e-12)


def _lame_psi(d, e, nu, case):
    """Hoop strain at the bore of a thick cylinder under internal pressure p, as 2 E eps / p.

    Lame solution (S. Timoshenko, "Strength of Materials", Part II, 3rd ed., 1956, thick-
    walled cylinders): sigma_r = A - B/r^2, sigma_t = A + B/r^2, A = p ri^2/(ro^2 - ri^2).
    Axial stress: closed-end thrust (case a), plane strain (case b) or none (case c).
    """
    ri, ro = d / 2.0, d / 2.0 + e
    a_ = ri**2 / (ro**2 - ri**2)                       # A / p
    sigma_t = (ro**2 + ri**2) / (ro**2 - ri**2)        # sigma_theta(ri) / p
    sigma_r = -1.0
    sigma_z = {"upstream_anchor": a_, "anchored": nu * 2.0 * a_, "expansion_joints": 0.0}[case]
    eps_t = sigma_t - nu * (sigma_r + sigma_z)         # E eps_theta / p
    return 2.0 * eps_t


@pytest.mark.parametrize("case", list(ws.RESTRAINT_CASES))
@pytest.mark.parametrize("d_over_e", [3.0, 8.0, 20.0, 60.0])
def test_thick_wall_restraint_matches_lame_cylinder(case, d_over_e):
    # Wylie & Streeter thick-wall forms equal c = psi e / D with psi from Lame (see helper).
    d, nu = 2.0, 0.3
    e = d / d_over_e
    c = ws.restraint_factor(nu, case, thick=True, diameter=d, wall_thickness=e)
    assert c == pytest.approx(_lame_psi(d, e, nu, case) * e / d, rel=1e-12)


@pytest.mark.parametrize("case", list(ws.RESTRAINT_CASES))
def test_thick_wall_tends_to_thin_wall(case):
    thin = ws.restraint_factor(0.3, case)
    thick = ws.restraint_factor(0.3, case, thick=True, diameter=1.0, wall_thickness=1e-5)
    assert thick == pytest.approx(thin, rel=1e-4)


def test_pipe_wave_speed_picks_thick_form_for_thick_walls():
    thin = ws.korteweg(K_WATER, RHO_WATER, 0.5, 0.05, 1.1e9,
                       ws.restraint_factor(0.45, "anchored"))
    thick = ws.korteweg(K_WATER, RHO_WATER, 0.5, 0.05, 1.1e9,
                        ws.restraint_factor(0.45, "anchored", True, 0.5, 0.05))
    auto = ws.pipe_wave_speed(K_WATER, RHO_WATER, 0.5, 0.05, 1.1e9, 0.45, "anchored")
    assert auto == pytest.approx(thick, rel=1e-12)
    assert thick != pytest.approx(thin, rel=1e-3)


@pytest.mark.parametrize("sdr", [11.0, 17.0])
def test_hdpe_wave_speed_in_published_band(sdr):
    # PE100 with the short-term modulus of about 1.1 GPa, nu = 0.45: polyethylene pipes
    # carry water hammer waves at roughly 200-450 m/s (common practice, from memory).
    d_out = 0.5
    e = d_out / sdr
    a = ws.pipe_wave_speed(K_WATER, RHO_WATER, d_out - 2 * e, e, 1.1e9, 0.45, "anchored")
    assert 200.0 <= a <= 450.0


def test_ductile_iron_and_grp_order():
    # Softer walls give slower waves: steel > ductile iron > GRP > HDPE (same D/e).
    moduli = [207e9, 170e9, 15e9, 1.1e9]
    speeds = ws.pipe_wave_speed(K_WATER, RHO_WATER, 1.0, 0.02, np.array(moduli), 0.3,
                                valid_range=(50.0, 1600.0))
    assert np.all(np.diff(speeds) < 0.0)


# --------------------------------------------------------------------------- composite walls
def test_reinforced_concrete_same_material_is_plain_thickness():
    # Transformed section: a "concrete" as stiff as steel counts at full thickness.
    e = ws.equivalent_thickness_reinforced_concrete(0.2, 200e9, 200e9, 5e-4, 0.1)
    assert e == pytest.approx(0.2 + 5e-3, rel=1e-12)


def test_reinforced_concrete_typical_pipe():
    # Chaudhry (2014) ch. 2 form e_e = (Ec/Es) e_c + As/ls (from memory); 150 mm wall,
    # Ec = 25 GPa, Es = 200 GPa, 16 mm bars at 150 mm: 18.75 mm + 1.340 mm.
    bar = math.pi * 0.016**2 / 4.0
    e = ws.equivalent_thickness_reinforced_concrete(0.15, 25e9, 200e9, bar, 0.15)
    assert e == pytest.approx(0.125 * 0.15 + bar / 0.15, rel=1e-12)
    cracked = ws.equivalent_thickness_reinforced_concrete(0.15, 25e9, 200e9, bar, 0.15, 0.0)
    assert cracked == pytest.approx(bar / 0.15, rel=1e-12)


def test_lining_raises_wave_speed():
    bare = ws.korteweg(K_WATER, RHO_WATER, 2.0, 0.016, 207e9)
    e = ws.equivalent_thickness_lined(0.016, 0.05, 30e9, 207e9)
    lined = ws.korteweg(K_WATER, RHO_WATER, 2.0, e, 207e9)
    assert lined > bare
    assert e == pytest.approx(0.016 + 0.05 * 30 / 207, rel=1e-12)


def test_viscoelastic_modulus_limits():
    # Kelvin-Voigt creep function (Covas et al. 2004): E(0) = E0, E(inf) = 1/(J0 + sum Jk).
    e0, jk, tk = 1.4e9, [1e-10, 2e-10], [0.05, 1.0]
    assert ws.viscoelastic_effective_modulus(e0, jk, tk, 0.0) == pytest.approx(e0)
    late = ws.viscoelastic_effective_modulus(e0, jk, tk, 1e6)
    assert late == pytest.approx(1.0 / (1 / e0 + 3e-10), rel=1e-12)
    mid = ws.viscoelastic_effective_modulus(e0, jk, tk, np.array([0.01, 0.1, 1.0]))
    assert np.all(np.diff(mid) < 0.0)


# --------------------------------------------------------------------------- free gas
@pytest.mark.parametrize("alpha", [1e-4, 1e-3, 1e-2, 0.1, 0.5])
def test_air_in_rigid_pipe_matches_wood_equation(alpha):
    # Wood's equation (A. B. Wood, "A Textbook of Sound", 1930, section on bubbly liquids):
    # 1/(rho_m c^2) = alpha/(n p) + (1 - alpha)/K, rho_m = alpha rho_g + (1 - alpha) rho_l.
    # Air at 20 degC, 1 atm: rho_g = p/(R T), R = 287.05 J/(kg K). Gas mass is neglected
    # in the module: relative effect alpha rho_g/(2 rho_l) < 6e-4.
    p, k = P_ATM_SEA_LEVEL, K_WATER
    a0 = math.sqrt(k / RHO_WATER)
    rho_g = p / (287.05 * 293.15)
    rho_m = alpha * rho_g + (1 - alpha) * RHO_WATER
    wood = 1.0 / math.sqrt(rho_m * (alpha / p + (1 - alpha) / k))
    a = ws.air_content_wave_speed(a0, alpha, p, RHO_WATER, bulk_modulus=k)
    assert a == pytest.approx(wood, rel=1e-3)


def test_air_water_minimum_speed_near_twenty_metres_per_second():
    # Isothermal air-water mixture at 1 atm: minimum sound speed about 20 m/s at 50 % void
    # (S. W. Kieffer, "Sound speed in liquid-gas mixtures: water-air and water-steam",
    # J. Geophys. Res. 82(20), 2895-2904, 1977, DOI 10.1029/JB082i020p02895; from memory,
    # read from a figure, +-10 %).
    alphas = np.linspace(0.05, 0.95, 181)
    a = ws.air_content_wave_speed(1400.0, alphas, P_ATM_SEA_LEVEL, RHO_WATER)
    assert a.min() == pytest.approx(20.0, rel=0.10)
    assert alphas[a.argmin()] == pytest.approx(0.5, abs=0.01)


def test_small_air_content_halves_wave_speed():
    # Order of magnitude (Wylie & Streeter 1993 ch. 2, from memory): at about 1 atm a void
    # fraction of ~1e-3 cuts a steel-pipe wave speed of ~1000 m/s by more than half.
    a = ws.air_content_wave_speed(1000.0, 1e-3, P_ATM_SEA_LEVEL, RHO_WATER)
    assert a < 500.0
    assert ws.air_content_wave_speed(1000.0, 0.0, P_ATM_SEA_LEVEL, RHO_WATER) == 1000.0


# --------------------------------------------------------------------------- kinds, errors
def test_array_equals_loop_of_scalars_and_series_keeps_index():
    d = np.array([0.5, 1.0, 2.0, 3.0])
    e = np.array([0.008, 0.012, 0.02, 0.03])
    arr = ws.pipe_wave_speed(K_WATER, RHO_WATER, d, e, 207e9, 0.3, "anchored")
    loop = [ws.pipe_wave_speed(K_WATER, RHO_WATER, di, ei, 207e9, 0.3, "anchored")
            for di, ei in zip(d, e, strict=True)]
    assert isinstance(loop[0], float)
    np.testing.assert_allclose(arr, loop, rtol=1e-14)
    s = pd.Series(d, index=list("abcd"))
    out = ws.korteweg(K_WATER, RHO_WATER, s, e, 207e9)
    assert isinstance(out, pd.Series)
    assert list(out.index) == list("abcd")


@settings(max_examples=40, deadline=None)
@given(st.floats(5.0, 500.0), st.floats(0.0, 0.49),
       st.sampled_from(list(ws.RESTRAINT_CASES)))
def test_wave_speed_below_free_field_and_falls_with_slenderness(d_over_e, nu, case):
    a1 = ws.pipe_wave_speed(K_WATER, RHO_WATER, 1.0, 1.0 / d_over_e, 207e9, nu, case,
                            thick=True)
    a2 = ws.pipe_wave_speed(K_WATER, RHO_WATER, 1.0, 1.0 / (1.1 * d_over_e), 207e9, nu, case,
                            thick=True)
    assert a2 < a1 < math.sqrt(K_WATER / RHO_WATER)


def test_errors():
    with pytest.raises(ValueError, match="physical range"):
        ws.korteweg(K_WATER, RHO_WATER, 1.0, 0.001, 1e8)          # about 47 m/s
    with pytest.raises(ValueError, match="physical range"):
        ws.validate_wave_speed(2000.0)
    with pytest.raises(ValueError, match="wall_thickness must be finite and > 0"):
        ws.korteweg(K_WATER, RHO_WATER, 1.0, 0.0, 207e9)
    with pytest.raises(ValueError, match="case 'fixed' is not known"):
        ws.restraint_factor(0.3, "fixed")
    with pytest.raises(ValueError, match=r"poisson must be in \[0, 0.5\)"):
        ws.restraint_factor(0.5, "anchored")
    with pytest.raises(ValueError, match="thick=True needs diameter"):
        ws.restraint_factor(0.3, "anchored", thick=True)
    with pytest.raises(ValueError, match=r"void_fraction must be in \[0, 1\)"):
        ws.air_content_wave_speed(1000.0, 1.0, P_ATM_SEA_LEVEL, RHO_WATER)
    with pytest.raises(ValueError, match="same length"):
        ws.viscoelastic_effective_modulus(1e9, [1e-10], [1.0, 2.0], 1.0)


# Docstrings against signatures and units: tests/test_docstrings.py.
