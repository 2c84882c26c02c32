"""Tests for penstock.pipewall against published formulas and independent solutions."""


import numpy as np
import pandas as pd
import pint
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from penstock import pipewall
from penstock.constants import GRAVITY, P_ATM_SEA_LEVEL
from penstock.materials import MATERIALS
from penstock.pipewall import (
    buckling_check,
    buckling_thickness,
    critical_buckling_pressure,
    external_pressure_from_minimum_head,
    hoop_thickness,
    minimum_handling_thickness,
    round_up_to_plates,
    select_pressure_class,
    standard_plate_thicknesses,
    steel_mass,
    wall_along_route,
)

UREG = pint.UnitRegistry()


# ---------------------------------------------------------------------------- hoop


def test_hoop_thickness_in_awwa_m11_units():
    # AWWA M11 5th ed. (2017) Eq. 4-1, t = p d / (2 s), evaluated in its own US units
    # (psi, in) and converted with pint: 150 psi, d = 48 in, s = 18 000 psi -> 0.200 in.
    p = (150.0 * UREG.psi).to("Pa").magnitude
    d = (48.0 * UREG.inch).to("m").magnitude
    s = (18_000.0 * UREG.psi).to("Pa").magnitude
    t = hoop_thickness(p, d, s)
    assert isinstance(t, float)
    assert (t * UREG.m).to("inch").magnitude == pytest.approx(150.0 * 48.0 / (2 * 18_000.0))


def test_hoop_thickness_with_joint_efficiency_and_allowance():
    # ASCE MOP 79 (2012): t = p D / (2 sigma E) + c.
    t = hoop_thickness(2.0e6, 1.5, 150e6, joint_efficiency=0.85, corrosion_allowance=1.5e-3)
    assert t == pytest.approx(2.0e6 * 1.5 / (2 * 150e6 * 0.85) + 1.5e-3, rel=1e-14)


@pytest.mark.parametrize("d_over_t", [20.0, 50.0, 200.0])
def test_hoop_stress_equals_lame_mean_stress(d_over_t):
    # Lame thick-cylinder solution (Timoshenko, "Strength of Materials" Part II, 3rd ed.
    # 1956, Art. 52): sigma_h(r) = p ri^2/(ro^2-ri^2) (1 + ro^2/r^2). Its mean across the
    # wall equals p D_i / (2 t) exactly (equilibrium of half a ring), the value the hoop
    # formula uses with the inside diameter.
    d = 2.0
    sigma = 160e6
    p = 2.0 * sigma / d_over_t  # pressure that makes D/t = d_over_t
    t = hoop_thickness(p, d, sigma)
    assert d / t == pytest.approx(d_over_t)
    ri, ro = d / 2, d / 2 + t
    mean, _ = quad(lambda r: p * ri**2 / (ro**2 - ri**2) * (1 + ro**2 / r**2), ri, ro)
    assert mean / t == pytest.approx(sigma, rel=1e-10)
    # The peak (inner-fibre) Lame stress exceeds the mean by about t/D (thin-wall error).
    peak = p * (ro**2 + ri**2) / (ro**2 - ri**2)
    assert peak / sigma - 1.0 == pytest.approx(1.0 / d_over_t, rel=0.06)


def test_hoop_zero_pressure_gives_allowance_only():
    assert hoop_thickness(0.0, 2.0, 150e6, corrosion_allowance=2e-3) == pytest.approx(2e-3)


def test_hoop_array_equals_loop_and_series_keeps_index():
    p = np.array([0.5e6, 1.0e6, 3.0e6])
    d = np.array([1.0, 1.5, 2.5])
    arr = hoop_thickness(p, d, 150e6, 0.9, 1e-3)
    loop = [hoop_thickness(a, b, 150e6, 0.9, 1e-3) for a, b in zip(p, d, strict=True)]
    np.testing.assert_array_equal(arr, loop)
    s = pd.Series(p, index=["a", "b", "c"])
    out = hoop_thickness(s, d, 150e6)
    assert isinstance(out, pd.Series)
    assert list(out.index) == ["a", "b", "c"]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"pressure": -1.0}, "pressure must be >= 0"),
        ({"diameter": 0.0}, "diameter must be positive"),
        ({"allowable_stress": -5.0}, "allowable_stress must be positive"),
        ({"joint_efficiency": 1.2}, "joint_efficiency"),
        ({"corrosion_allowance": -1e-3}, "corrosion_allowance"),
    ],
)
def test_hoop_bad_input(kwargs, match):
    args = {"pressure": 1e6, "diameter": 1.0, "allowable_stress": 150e6} | kwargs
    with pytest.raises(ValueError, match=match):
        hoop_thickness(**args)


# ---------------------------------------------------------------------------- handling


@pytest.mark.parametrize(
    ("d_in", "rule", "t_in"),
    [
        (72.0, "usbr", (72.0 + 20.0) / 400.0),  # USBR: t = (D + 20)/400 [in] (from memory)
        (120.0, "usbr", 0.35),  # (120 + 20)/400 = 0.35 in
        (72.0, "pge", 0.25),  # PG&E: t = D/288 [in] (from memory): 72/288 = 0.25 in
        (144.0, "pge", 0.5),
    ],
)
def test_handling_thickness_rules_in_inches(d_in, rule, t_in):
    d = (d_in * UREG.inch).to("m").magnitude
    t = minimum_handling_thickness(d, rule)
    assert (t * UREG.m).to("inch").magnitude == pytest.approx(t_in, rel=1e-12)


def test_handling_array_and_bad_rule():
    d = np.array([0.5, 1.0, 3.0])
    np.testing.assert_array_equal(
        minimum_handling_thickness(d), [minimum_handling_thickness(x) for x in d]
    )
    with pytest.raises(ValueError, match="rule="):
        minimum_handling_thickness(1.0, rule="rule_of_thumb")


# ---------------------------------------------------------------------------- plates


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(0.0, 0.05, allow_nan=False), min_size=1, max_size=20),
)
def test_rounding_never_below_required_and_is_next_plate(required):
    plates = standard_plate_thicknesses()
    t = np.array(required)
    chosen = round_up_to_plates(t, plates)
    assert np.all(chosen >= t)
    assert np.all(np.isin(chosen, plates))
    # no smaller plate would do
    idx = np.searchsorted(plates, chosen)
    smaller = np.where(idx > 0, plates[np.maximum(idx - 1, 0)], -np.inf)
    assert np.all(smaller < t)


def test_rounding_exact_plate_and_unsorted_list():
    assert round_up_to_plates(0.012, [0.016, 0.010, 0.012]) == 0.012
    assert round_up_to_plates(0.0121, [0.016, 0.010, 0.012]) == 0.016
    with pytest.raises(ValueError, match="largest available plate"):
        round_up_to_plates(0.051, standard_plate_thicknesses())
    with pytest.raises(ValueError, match="available must be positive"):
        round_up_to_plates(0.01, [0.0, 0.01])


def test_select_pressure_class():
    classes = MATERIALS["ductile_iron_en545"].pressure_classes
    # EN 545: 27 bar needs class C30; 25 bar exactly fits C25.
    assert select_pressure_class(27e5, classes) == pytest.approx(30e5)
    assert select_pressure_class(25e5, classes) == pytest.approx(25e5)
    with pytest.raises(ValueError, match="highest pressure class"):
        select_pressure_class(120e5, classes)


# ---------------------------------------------------------------------------- route


def test_wall_along_route_steps():
    steel = MATERIALS["astm_a516_gr70"]
    x = np.linspace(0.0, 1000.0, 11)
    head = np.linspace(20.0, 400.0, 11)
    prof = wall_along_route(x, head, 1.8, steel, corrosion_allowance=1.5e-3)
    p = 1000.0 * GRAVITY * head
    np.testing.assert_allclose(prof.pressure, p)
    np.testing.assert_allclose(
        prof.hoop_thickness, p * 1.8 / (2 * steel.allowable_stress) + 1.5e-3
    )
    assert np.all(prof.plate_thickness >= prof.required_thickness)
    assert np.all(prof.required_thickness >= prof.handling_thickness)
    assert np.all(np.diff(prof.plate_thickness) >= 0)  # head rises -> never thinner
    assert prof.steps[0][0] == 0.0 and prof.steps[-1][1] == 1000.0
    for (_, end, _), (start, _, _) in zip(prof.steps, prof.steps[1:], strict=False):
        assert end == start
    # Near the top the handling minimum governs: USBR (1.8 + 0.508)/400 = 5.77 mm -> 6 mm.
    assert prof.plate_thickness[0] == pytest.approx(0.006)


@settings(max_examples=50, deadline=None)
@given(heads=st.lists(st.floats(0.0, 900.0), min_size=2, max_size=40))
def test_wall_along_route_steps_are_the_runs_of_equal_plate(heads):
    """The plate runs are the maximal stretches of equal reach plate, run by run."""
    steel = MATERIALS["astm_a516_gr70"]
    x = np.arange(len(heads), dtype=float) * 25.0
    prof = wall_along_route(x, heads, 1.2, steel, beyond_plates="keep")
    expected = []
    for j, t in enumerate(prof.reach_plate):
        if expected and expected[-1][2] == t:
            expected[-1] = (expected[-1][0], x[j + 1], t)
        else:
            expected.append((x[j], x[j + 1], t))
    assert [tuple(map(float, s)) for s in prof.steps] == [tuple(map(float, e))
                                                           for e in expected]


def test_wall_along_route_bad_input():
    steel = MATERIALS["astm_a36"]
    with pytest.raises(ValueError, match="ascending"):
        wall_along_route([0.0, 10.0, 5.0], [1.0, 2.0, 3.0], 1.0, steel)
    with pytest.raises(ValueError, match="one value per chainage"):
        wall_along_route([0.0, 10.0], [1.0], 1.0, steel)


# ---------------------------------------------------------------------------- mass


@pytest.mark.parametrize(("d", "t"), [(0.5, 0.006), (1.5, 0.012), (3.0, 0.030)])
def test_steel_mass_equals_annulus_and_thin_wall_limit(d, t):
    rho, length = 7850.0, 100.0
    m = steel_mass(d, t, length, rho)
    # exact annulus: pi/4 ((D + 2t)^2 - D^2)
    assert m == pytest.approx(rho * np.pi / 4 * ((d + 2 * t) ** 2 - d**2) * length, rel=1e-12)
    # thin-wall geometry rho pi D t L differs by exactly the factor (1 + t/D)
    thin = rho * np.pi * d * t * length
    assert m / thin == pytest.approx(1.0 + t / d, rel=1e-12)
    assert abs(m / thin - 1.0) <= 0.0125  # all cases here have D/t >= 80


def test_steel_mass_hand_value_and_array():
    # 1 m of D = 1 m, t = 10 mm steel: 7850 pi 1.01 0.01 = 249.08 kg.
    assert steel_mass(1.0, 0.01, 1.0, 7850.0) == pytest.approx(249.08, abs=0.01)
    d = np.array([1.0, 2.0])
    np.testing.assert_array_equal(
        steel_mass(d, 0.01, 1.0, 7850.0), [steel_mass(x, 0.01, 1.0, 7850.0) for x in d]
    )


# ---------------------------------------------------------------------------- buckling


@pytest.mark.parametrize(
    ("e", "nu", "t", "d"), [(206.8e9, 0.3, 0.012, 2.0), (1.1e9, 0.45, 0.05, 0.8)]
)
def test_buckling_matches_ring_formula(e, nu, t, d):
    # Bresse's ring q_cr = 3 E I / R^3 (Timoshenko & Gere 1961, ch. 7) with the plate
    # stiffness of a long tube, E I -> E t^3 / (12 (1 - nu^2)) per unit length.
    r = d / 2
    ring = 3 * (e * t**3 / (12 * (1 - nu**2))) / r**3
    assert critical_buckling_pressure(e, nu, t, d) == pytest.approx(ring, rel=1e-12)


def test_buckling_thickness_is_inverse_and_check_flags():
    e, nu, d = 206.8e9, 0.3, 2.0
    t = buckling_thickness(P_ATM_SEA_LEVEL, d, e, nu, safety_factor=1.5)
    assert critical_buckling_pressure(e, nu, t, d) == pytest.approx(1.5 * P_ATM_SEA_LEVEL)
    # D/t at full vacuum with SF 1.5: (2E/((1 - nu^2) 1.5 p_atm))^(1/3) = 144.1
    assert d / t == pytest.approx((2 * e / (0.91 * 1.5 * P_ATM_SEA_LEVEL)) ** (1 / 3))
    thin = buckling_check(0.8 * t, d, e, nu)
    thick = buckling_check(1.2 * t, d, e, nu)
    assert thin["needs_stiffeners"] is True and thin["utilisation"] > 1
    assert thick["needs_stiffeners"] is False and thick["utilisation"] < 1
    arr = buckling_check(np.array([0.8 * t, 1.2 * t]), d, e, nu)
    np.testing.assert_array_equal(arr["needs_stiffeners"], [True, False])


@pytest.mark.parametrize(
    ("h_min", "expected"),
    [
        (10.0, 0.0),  # above atmospheric: no net external pressure
        (-5.0, 5.0 * 1000.0 * GRAVITY),
        (-50.0, P_ATM_SEA_LEVEL),  # cannot exceed full vacuum
    ],
)
def test_external_pressure_from_minimum_head(h_min, expected):
    assert external_pressure_from_minimum_head(h_min) == pytest.approx(expected)


def test_buckling_check_zero_thickness_and_series():
    out = buckling_check(0.0, 1.0, 206.8e9, 0.3)
    assert out["needs_stiffeners"] is True and out["utilisation"] == np.inf
    s = pd.Series([0.005, 0.02], index=["upper", "lower"])
    res = buckling_check(s, 1.0, 206.8e9, 0.3)
    assert list(res["needs_stiffeners"]) == [True, False]
    assert list(res["critical_pressure"].index) == ["upper", "lower"]


# Docstring parameters against signatures: tests/test_docstrings.py, for every module.


# ----------------------------------------------------------------- vacuum, reach rule
def test_vacuum_check_uses_net_plate_on_mean_diameter():
    """8 mm plate with 1.5 mm corrosion allowance on 1.05 m inside: the load-bearing
    6.5 mm on the 1.058 m mean diameter, p_cr = 2E/(1-nu^2)(t/D)^3 (Timoshenko & Gere
    1961, ch. 7, from memory) = 105 kPa, not the 201 kPa of the full plate on the inside
    diameter."""
    e, nu = 207e9, 0.3
    chk = pipewall.vacuum_check(0.008, 1.05, e, nu, 101_325.0, 1.0, 1.5e-3)
    by_hand = 2 * e / (1 - nu**2) * (0.0065 / 1.058) ** 3
    assert float(chk["critical_pressure"]) == pytest.approx(by_hand, rel=1e-12)
    assert float(chk["critical_pressure"]) == pytest.approx(105.5e3, rel=1e-3)
    # with the common-practice safety factor of 1.5 it fails under full vacuum
    chk15 = pipewall.vacuum_check(0.008, 1.05, e, nu, 101_325.0, 1.5, 1.5e-3)
    assert bool(chk15["needs_stiffeners"]) is True
    full = critical_buckling_pressure(e, nu, 0.008, 1.05)
    assert full == pytest.approx(201.2e3, rel=1e-3)


@pytest.mark.parametrize("d", [0.3, 1.05, 2.4])
@pytest.mark.parametrize("ca", [0.0, 1.5e-3, 3e-3])
def test_vacuum_thickness_is_the_inverse_of_vacuum_check(d, ca):
    t = pipewall.vacuum_thickness(d, 207e9, 0.3, 85_000.0, 1.5, ca)
    chk = pipewall.vacuum_check(t, d, 207e9, 0.3, 85_000.0, 1.5, ca)
    assert float(chk["utilisation"]) == pytest.approx(1.0, rel=1e-12)


def test_wall_along_route_reach_takes_its_thicker_end():
    steel = MATERIALS["astm_a516_gr70"]
    x = np.array([0.0, 100.0, 200.0])
    head = np.array([50.0, 300.0, 310.0])
    prof = wall_along_route(x, head, 1.2, steel)
    assert prof.reach_plate.tolist() == [max(prof.plate_thickness[:2]),
                                         max(prof.plate_thickness[1:])]
    # the first reach is one run of plate: the downstream end's pressure governs it
    assert prof.reach_plate[0] == prof.plate_thickness[1] > prof.plate_thickness[0]
    assert prof.steps[0][2] == prof.reach_plate[0]


def test_wall_along_route_vacuum_and_beyond_plates():
    steel = MATERIALS["astm_a516_gr70"]
    x = np.array([0.0, 100.0])
    prof = wall_along_route(x, [5.0, 5.0], 2.0, steel, external_pressure=85_000.0,
                            buckling_safety=1.5, corrosion_allowance=1.5e-3)
    t_vac = pipewall.vacuum_thickness(2.0, steel.elastic_modulus, steel.poisson_ratio,
                                      85_000.0, 1.5, 1.5e-3)
    np.testing.assert_allclose(prof.vacuum_thickness, t_vac)
    assert np.all(prof.required_thickness >= t_vac)
    thin = [0.006, 0.008]
    with pytest.raises(ValueError):
        wall_along_route(x, [900.0, 900.0], 2.0, steel, plates=thin)
    kept = wall_along_route(x, [900.0, 900.0], 2.0, steel, plates=thin, beyond_plates="keep")
    assert kept.beyond_plates.all()
    np.testing.assert_allclose(kept.plate_thickness, kept.required_thickness)


# --------------------------------------------------------------------------- wall rating
def test_inside_rating_inverts_the_hoop_thickness():
    # hoop_thickness's own example: 3 MPa, 2 m, 150 MPa, E_j 0.9, 2 mm -> 24.22 mm
    t = hoop_thickness(3.0e6, 2.0, 150e6, 0.9, 2e-3)
    assert pipewall.wall_pressure_rating(t, 2.0, 150e6, "inside", 0.9, 2e-3) == \
        pytest.approx(3.0e6, rel=1e-12)


@pytest.mark.parametrize("outside_mm, wall_mm, pn_bar", [
    # PE100 pipes of 250 mm outside diameter with their minimum walls, VESBO HDPE
    # brochure p. 3 ("Pipe Sizing of PE100 Pipes", to ISO 4427): SDR 17 PN 10,
    # SDR 11 PN 16, SDR 7.4 PN 25
    (250.0, 14.8, 10.0), (250.0, 22.7, 16.0), (250.0, 34.2, 25.0),
    (110.0, 6.6, 10.0), (110.0, 10.0, 16.0), (110.0, 15.1, 25.0),
])
def test_pe100_mean_diameter_rating_is_the_published_class(outside_mm, wall_mm, pn_bar):
    # design stress MRS / C = 10 MPa / 1.25 (ISO 12162 PE100; ISO 4427-1, C for water)
    sigma = MATERIALS["hdpe_pe100"].allowable_stress
    inside = (outside_mm - 2 * wall_mm) * 1e-3
    p = pipewall.wall_pressure_rating(wall_mm * 1e-3, inside, sigma, "mean")
    # the table's minimum walls are given to 0.1 mm (and are not below dn / SDR by more
    # than that rounding): the rating is the class, within the rounding, or a little above
    assert pn_bar * 1e5 * (1 - 5e-3) <= p <= pn_bar * 1e5 * 1.03
    # and it is ISO 4427-2's 2 sigma / (SDR - 1) at the same wall
    from penstock.materials import sdr_pressure_rating

    assert p == pytest.approx(sdr_pressure_rating(outside_mm / wall_mm, sigma), rel=1e-12)


@settings(max_examples=50, deadline=None)
@given(st.floats(1e-3, 0.1), st.floats(0.1, 5.0), st.floats(0.0, 0.5))
def test_wall_rating_orders_its_bases_and_grows_with_the_wall(t, d, c_share):
    c = c_share * t
    r = {b: pipewall.wall_pressure_rating(t, d, 150e6, b, 0.9, c)
         for b in ("inside", "mean", "outside")}
    assert r["inside"] >= r["mean"] >= r["outside"] >= 0.0
    assert pipewall.wall_pressure_rating(1.1 * t, d, 150e6, "mean", 0.9, c) > r["mean"]
    head = pipewall.wall_head_rating(t, d, 150e6, "mean", 0.9, c, water_density=999.0)
    assert head == pytest.approx(r["mean"] / (999.0 * GRAVITY), rel=1e-12)


def test_wall_rating_refuses_an_unknown_basis():
    with pytest.raises(ValueError, match="basis"):
        pipewall.wall_pressure_rating(0.01, 1.0, 150e6, "middle")


def test_class_for_head_names_the_lowest_class_that_carries_it():
    # PE100 classes (ISO 4427-2 PN series, penstock.materials): 95 m of water at
    # 1000 kg/m^3 is 0.932 MPa -> PN10; nothing -> the lowest; 400 m (3.9 MPa) -> none
    pe = MATERIALS["hdpe_pe100"]
    pick = lambda h: pipewall.class_for_head(h, pe.pressure_classes,  # noqa: E731
                                             pe.pressure_class_labels, 1000.0)
    assert pick(95.0) == "PN10"
    assert pick(0.0) == "PN4"
    assert pick(1e5 * 10 / (1000.0 * GRAVITY)) == "PN10"      # exactly 10 bar
    assert pick(400.0) is None
    with pytest.raises(ValueError, match="labels"):
        pipewall.class_for_head(10.0, (1e5, 2e5), ("PN1",))
