"""Tests for penstock.materials: registry values against the standards they cite."""

import dataclasses

import numpy as np
import pytest
from fluids.friction import material_roughness

from penstock.materials import (
    ALLOWABLE_STRESS_RULES,
    MATERIALS,
    NUMERIC_PROPERTIES,
    Material,
    get_material,
    make_material,
    sdr_pressure_rating,
    steel_allowable_stress,
)
from penstock.pipewall import wall_along_route

MPA = 1.0e6
KSI = 6.894757293168e6  # NIST SP 811 (2008) B.8: 1 ksi = 6.894 757 MPa


# ASTM SI equivalents printed in the specifications (A36M, A516M, A572M); the ksi value
# converted exactly differs from the rounded SI value by up to ~1 %, hence rel=0.012.
@pytest.mark.parametrize(
    ("name", "yield_mpa", "tensile_mpa"),
    [
        ("astm_a36", 250.0, 400.0),  # ASTM A36/A36M: 36 ksi [250 MPa], 58 ksi [400 MPa]
        ("astm_a516_gr70", 260.0, 485.0),  # ASTM A516M Gr 70 [485]: 38 ksi, 70 ksi
        ("astm_a572_gr50", 345.0, 450.0),  # ASTM A572M Gr 50 [345]: 50 ksi, 65 ksi
        ("astm_a537_cl1", 345.0, 485.0),  # ASTM A537M Cl 1: 50 ksi, 70 ksi
        ("en_s275", 275.0, 410.0),  # EN 10025-2 Table 7, t <= 16 mm / 3-100 mm
        ("en_s355", 355.0, 470.0),  # EN 10025-2 Table 7, t <= 16 mm / 3-100 mm
    ],
)
def test_steel_strengths_match_standard(name, yield_mpa, tensile_mpa):
    mat = MATERIALS[name]
    assert mat.yield_strength / MPA == pytest.approx(yield_mpa, rel=0.012)
    assert mat.tensile_strength / MPA == pytest.approx(tensile_mpa, rel=0.012)
    # ASCE MOP 79 (2012) normal conditions: min(2/3 Fy, 1/3 Fu) (rule from memory)
    assert mat.allowable_stress == pytest.approx(
        min(2.0 / 3.0 * mat.yield_strength, mat.tensile_strength / 3.0), rel=1e-12
    )


def test_steel_moduli_from_cited_sources():
    # AWWA M11 (2017): E = 30 000 000 psi = 206.84 GPa; EN 1993-1-1 3.2.6: E = 210 GPa.
    assert MATERIALS["astm_a36"].elastic_modulus == pytest.approx(206.84e9, rel=1e-4)
    assert MATERIALS["en_s355"].elastic_modulus == pytest.approx(210.0e9, rel=1e-12)
    # EN 1993-1-1 3.2.6: nu = 0.3
    assert MATERIALS["en_s355"].poisson_ratio == 0.3


def test_roughness_against_fluids_library():
    # fluids (Idel'chik, Handbook of Hydraulic Resistance, 2007): welded steel tubes in
    # good condition 0.04-0.10 mm; new steel conduits in generating stations 0.012-0.03 mm
    # welded lengthwise. Our 0.045 mm (Moody 1944) lies within the first range.
    low = material_roughness("Welded steel tubes, Good condition", optimism=True)
    high = material_roughness("Welded steel tubes, Good condition", optimism=False)
    assert low <= MATERIALS["astm_a516_gr70"].roughness <= high
    # fluids "Cast iron" = 0.259 mm (Moody 1944 0.00085 ft); ours 0.26 mm, rounded.
    assert MATERIALS["ductile_iron_awwa"].roughness == pytest.approx(
        material_roughness("Cast iron"), rel=0.01
    )


def test_hdpe_pn_series_iso_4427():
    mat = MATERIALS["hdpe_pe100"]
    # ISO 4427-2: PE100, C = 1.25 -> design stress 8 MPa.
    assert mat.allowable_stress == pytest.approx(8.0 * MPA)
    formula = sdr_pressure_rating(np.array(mat.sdr_series), mat.allowable_stress)
    nominal = np.array(mat.pressure_classes)
    # ISO 4427-2 nominal PN is the formula value rounded down to the R10 series (<= 2 %).
    assert np.all(nominal <= formula * (1 + 1e-12))
    assert np.all(nominal >= 0.98 * formula)
    # ISO 4427-2: PE100 SDR 11 is PN 16, SDR 17 is PN 10 (exact).
    assert sdr_pressure_rating(11.0, 8.0 * MPA) == pytest.approx(1.6 * MPA)
    assert sdr_pressure_rating(17.0, 8.0 * MPA) == pytest.approx(1.0 * MPA)


def test_ductile_iron_classes_awwa():
    mat = MATERIALS["ductile_iron_awwa"]
    # AWWA C150/C151 pressure classes 150..350 psi (from memory).
    assert np.allclose(np.array(mat.pressure_classes) / 6894.757293168, [150, 200, 250, 300, 350])
    # AWWA C150: safety factor 2.0 on 42 000 psi yield -> 21 000 psi.
    assert mat.allowable_stress == pytest.approx(21.0 * KSI, rel=1e-12)


@pytest.mark.parametrize("name", sorted(MATERIALS))
def test_every_value_has_a_source(name):
    mat = MATERIALS[name]
    for prop in NUMERIC_PROPERTIES:
        if getattr(mat, prop) is not None:
            assert mat.source(prop), f"{name}.{prop} has no source"
    if mat.pressure_classes:
        assert mat.source("pressure_classes")
    assert mat.name == name


def test_material_is_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        MATERIALS["astm_a36"].density = 1.0


def test_get_material_overrides_and_records_source():
    mat = get_material("astm_a36", overrides={"roughness": 0.1e-3})
    assert mat.roughness == 0.1e-3
    assert mat.source("roughness") == "user override"
    assert MATERIALS["astm_a36"].roughness == pytest.approx(0.045e-3)
    assert get_material("astm_a36") is MATERIALS["astm_a36"]


def test_steel_allowable_array_equals_loop():
    fy = np.array([250e6, 345e6, 355e6])
    fu = np.array([400e6, 450e6, 470e6])
    for rule in ALLOWABLE_STRESS_RULES:
        arr = steel_allowable_stress(fy, fu, rule)
        loop = [steel_allowable_stress(a, b, rule) for a, b in zip(fy, fu, strict=True)]
        assert isinstance(loop[0], float)
        np.testing.assert_allclose(arr, loop, rtol=0, atol=0)
    # AWWA M11 (2017): 50 % of yield at working pressure (from memory).
    assert steel_allowable_stress(250e6, 400e6, "awwa_m11_working") == pytest.approx(125e6)


def test_user_material_missing_property_raises():
    mat = make_material("site_steel", "steel", density=7850.0, elastic_modulus=2.0e11)
    assert isinstance(mat, Material)
    with pytest.raises(ValueError, match="allowable_stress"):
        mat.require("allowable_stress", purpose="hoop thickness")
    with pytest.raises(ValueError, match="allowable_stress"):
        wall_along_route([0.0, 100.0], [50.0, 80.0], 1.0, mat)


def test_registry_material_missing_property_raises():
    # GRP is rated by pressure class, so it carries no allowable hoop stress.
    with pytest.raises(ValueError, match="lacks property 'allowable_stress'"):
        wall_along_route([0.0, 100.0], [50.0, 80.0], 1.0, MATERIALS["grp_en1796"])
    with pytest.raises(ValueError, match="lacks property 'yield_strength'"):
        MATERIALS["hdpe_pe100"].require("yield_strength")


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"density": -1.0}, "density must be positive"),
        ({"elastic_modulus": 0.0}, "elastic_modulus must be positive"),
        ({"poisson_ratio": 0.6}, "poisson_ratio"),
        ({"yield_strength": 500e6, "tensile_strength": 400e6}, "yield_strength must not exceed"),
        ({"yield_strength": 250e6, "allowable_stress": 300e6}, "allowable_stress must not exceed"),
        ({"pressure_classes": (2e6, 1e6)}, "strictly ascending"),
        ({"pressure_classes": (1e6,), "sdr_series": (11.0, 17.0)}, "one entry per"),
        ({"roughness": "rough"}, "roughness must be a number"),
    ],
)
def test_make_material_validation(kwargs, match):
    with pytest.raises(ValueError, match=match):
        make_material("bad_pipe", "steel", **kwargs)


def test_make_material_bad_name_and_lookup_errors():
    with pytest.raises(ValueError, match="snake_case"):
        make_material("Bad Name", "steel")
    with pytest.raises(ValueError, match="unknown"):
        get_material("unobtainium")
    with pytest.raises(ValueError, match="unknown properties"):
        get_material("astm_a36", overrides={"colour": "red"})
    with pytest.raises(ValueError, match="density must be positive"):
        get_material("astm_a36", overrides={"density": -5.0})
    with pytest.raises(ValueError, match="rule="):
        steel_allowable_stress(250e6, 400e6, rule="guess")
    with pytest.raises(ValueError, match="sdr must be greater than 1"):
        sdr_pressure_rating(1.0, 8e6)


# Docstring parameters against signatures: tests/test_docstrings.py, for every module.
