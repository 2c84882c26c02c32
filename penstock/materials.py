"""Pipe materials for penstocks: strength, stiffness, density and roughness.

Each material is a frozen :class:`Material` holding SI values and, for every value, the
standard or handbook it comes from (``Material.sources``). The registry :data:`MATERIALS`
is keyed by plain snake_case names; :func:`get_material` looks one up (optionally with
overrides) and :func:`make_material` builds a user's own material with validation.

Values marked "from memory" were recalled, not re-read from the standard; check them
against the current edition before a final design. Minimum yield of structural steel
falls with plate thickness; the values here are those of the thinnest band.

References
----------
.. [1] ASCE, "Steel Penstocks", ASCE Manuals and Reports on Engineering Practice No. 79,
   2nd ed., American Society of Civil Engineers, Reston VA, 2012. DOI 10.1061/9780784411711
.. [2] AWWA, "Steel Pipe - A Guide for Design and Installation", Manual M11, 5th ed.,
   American Water Works Association, Denver CO, 2017.
.. [3] ASTM A36/A36M, A516/A516M, A537/A537M, A572/A572M, standard specifications for
   carbon and high-strength low-alloy structural and pressure-vessel steel plate.
.. [4] EN 10025-2:2019, Hot rolled products of structural steels - Part 2: Technical
   delivery conditions for non-alloy structural steels, Table 7.
.. [5] EN 1993-1-1:2005, Eurocode 3: Design of steel structures - Part 1-1, clause 3.2.6.
.. [6] ANSI/AWWA C150/A21.50, Thickness Design of Ductile-Iron Pipe; ANSI/AWWA C151/A21.51,
   Ductile-Iron Pipe, Centrifugally Cast.
.. [7] EN 545:2010, Ductile iron pipes, fittings, accessories and their joints for water
   pipelines - Requirements and test methods.
.. [8] ANSI/AWWA C950, Fiberglass Pressure Pipe; EN 1796:2013, Plastics piping systems for
   water supply - Glass-reinforced thermosetting plastics (GRP) based on unsaturated
   polyester resin (UP).
.. [9] ISO 4427-1:2019 and ISO 4427-2:2019, Plastics piping systems for water supply -
   Polyethylene (PE), Parts 1 (General) and 2 (Pipes); ISO 12162:2009, Thermoplastics
   materials for pipes and fittings for pressure applications - Classification.
.. [10] L. F. Moody, "Friction factors for pipe flow", Transactions of the ASME 66(8),
   671-684, 1944.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Mapping
from types import MappingProxyType

import numpy as np

__all__ = [
    "ALLOWABLE_STRESS_RULES",
    "MATERIALS",
    "NUMERIC_PROPERTIES",
    "Material",
    "get_material",
    "make_material",
    "sdr_pressure_rating",
    "steel_allowable_stress",
]

_MPA = 1.0e6
_PSI = 6894.757293168  # 1 lbf/in^2 in Pa (NIST SP 811, 2008, Appendix B.8)
_KSI = 1000.0 * _PSI
_BAR = 1.0e5
_MM = 1.0e-3

#: Numeric properties a material can carry, with the unit each is stored in.
NUMERIC_PROPERTIES = {
    "elastic_modulus": "Pa",
    "density": "kg/m^3",
    "poisson_ratio": "-",
    "roughness": "m",
    "yield_strength": "Pa",
    "tensile_strength": "Pa",
    "allowable_stress": "Pa",
}


@dataclasses.dataclass(frozen=True)
class Material:
    """A pipe material with SI properties and the source of each.

    Parameters
    ----------
    name : str
        Registry key, snake_case. [-]
    kind : str
        Family: ``"steel"``, ``"ductile_iron"``, ``"grp"``, ``"hdpe"`` or a user's own. [-]
    description : str
        Human-readable name with the governing standard. [-]
    elastic_modulus : float or None
        Young's modulus (hoop direction for GRP, short-term for HDPE). [Pa]
    density : float or None
        Mass density of the wall material. [kg/m^3]
    poisson_ratio : float or None
        Poisson ratio. [-]
    roughness : float or None
        Equivalent sand roughness of the new bore. [m]
    yield_strength : float or None
        Minimum specified yield strength (0.2 % proof stress). [Pa]
    tensile_strength : float or None
        Minimum specified tensile strength. [Pa]
    allowable_stress : float or None
        Allowable hoop stress under normal operating conditions. [Pa]
    allowable_stress_rule : str
        The rule that gives ``allowable_stress``. [-]
    pressure_classes : tuple of float
        Rated pressures of the class series, ascending (empty if none). [Pa]
    pressure_class_labels : tuple of str
        Label of each pressure class as the standard writes it. [-]
    sdr_series : tuple of float
        Standard dimension ratio of each pressure class, for plastics (empty if none). [-]
    sources : mapping of str to str
        Property name -> citation of the value. [-]
    """

    name: str
    kind: str
    description: str = ""
    elastic_modulus: float | None = None
    density: float | None = None
    poisson_ratio: float | None = None
    roughness: float | None = None
    yield_strength: float | None = None
    tensile_strength: float | None = None
    allowable_stress: float | None = None
    allowable_stress_rule: str = ""
    pressure_classes: tuple[float, ...] = ()
    pressure_class_labels: tuple[str, ...] = ()
    sdr_series: tuple[float, ...] = ()
    sources: Mapping[str, str] = dataclasses.field(
        default_factory=lambda: MappingProxyType({}), compare=False, hash=False
    )

    def require(self, *properties: str, purpose: str = "this computation") -> None:
        """Raise ValueError naming the first property in ``properties`` that is missing.

        Parameters
        ----------
        *properties : str
            Property names, e.g. ``"allowable_stress"``. [-]
        purpose : str
            What the properties are needed for, quoted in the message. [-]

        Raises
        ------
        ValueError
            If a property is None (or an empty class series).
        """
        for prop in properties:
            if not hasattr(self, prop):
                raise ValueError(f"Material has no property named {prop!r}.")
            value = getattr(self, prop)
            if value is None or (isinstance(value, tuple) and len(value) == 0):
                raise ValueError(
                    f"material {self.name!r} lacks property {prop!r}, needed for {purpose}; "
                    f"give it with get_material({self.name!r}, overrides={{{prop!r}: ...}}) "
                    "or make_material(...)."
                )

    def source(self, prop: str) -> str:
        """Citation of the value of ``prop`` (empty string if none recorded)."""
        return self.sources.get(prop, "")


# --------------------------------------------------------------------------------------
# Allowable stress rules for steel
# --------------------------------------------------------------------------------------


def _mop79_normal(yield_strength, tensile_strength):
    return np.minimum(yield_strength * 2.0 / 3.0, tensile_strength / 3.0)


def _m11_working(yield_strength, tensile_strength):
    return 0.5 * yield_strength + 0.0 * tensile_strength


def _m11_transient(yield_strength, tensile_strength):
    return 0.75 * yield_strength + 0.0 * tensile_strength


#: Allowable hoop stress rules for steel: key -> function and the source of the rule.
ALLOWABLE_STRESS_RULES = {
    "asce_mop79_normal": {
        "function": _mop79_normal,
        "equation": "min(2/3 * yield_strength, 1/3 * tensile_strength)",
        "reference": "ASCE MOP 79 'Steel Penstocks' 2nd ed. (2012), basic allowable stress "
        "for normal operating conditions (from memory)",
    },
    "awwa_m11_working": {
        "function": _m11_working,
        "equation": "0.50 * yield_strength",
        "reference": "AWWA M11 5th ed. (2017), ch. 4, design stress at working pressure "
        "(from memory)",
    },
    "awwa_m11_transient": {
        "function": _m11_transient,
        "equation": "0.75 * yield_strength",
        "reference": "AWWA M11 5th ed. (2017), ch. 4, design stress at working plus "
        "transient pressure (from memory)",
    },
}


def steel_allowable_stress(yield_strength, tensile_strength, rule="asce_mop79_normal"):
    """Allowable hoop stress of steel by a named design rule.

    Parameters
    ----------
    yield_strength : numeric
        Minimum specified yield strength. [Pa]
    tensile_strength : numeric
        Minimum specified tensile strength. [Pa]
    rule : str
        Key of :data:`ALLOWABLE_STRESS_RULES`. [-]

    Returns
    -------
    numeric
        Allowable stress, same kind as the inputs. [Pa]

    Notes
    -----
    ``asce_mop79_normal``: :math:`\\sigma_a = \\min(2 f_y / 3,\\ f_u / 3)`;
    ``awwa_m11_working``: :math:`\\sigma_a = 0.50 f_y`;
    ``awwa_m11_transient``: :math:`\\sigma_a = 0.75 f_y`.

    References
    ----------
    .. [1] ASCE MOP 79 "Steel Penstocks", 2nd ed., 2012, ch. 3 (allowable stresses).
    .. [2] AWWA M11 "Steel Pipe - A Guide for Design and Installation", 5th ed., 2017, ch. 4.
    """
    if rule not in ALLOWABLE_STRESS_RULES:
        raise ValueError(
            f"rule={rule!r} is unknown; expected one of {sorted(ALLOWABLE_STRESS_RULES)}."
        )
    fy = np.asarray(yield_strength, dtype=float)
    fu = np.asarray(tensile_strength, dtype=float)
    if np.any(~(fy > 0)) or np.any(~(fu > 0)):
        raise ValueError("yield_strength and tensile_strength must be positive [Pa].")
    if np.any(fy > fu):
        raise ValueError("yield_strength must not exceed tensile_strength.")
    out = ALLOWABLE_STRESS_RULES[rule]["function"](fy, fu)
    if np.ndim(yield_strength) == 0 and np.ndim(tensile_strength) == 0:
        return float(out)
    return out


def sdr_pressure_rating(sdr, design_stress):
    """Allowable internal pressure of a thermoplastic pipe from its SDR (ISO 4427).

    Parameters
    ----------
    sdr : numeric
        Standard dimension ratio, outside diameter / nominal wall thickness. [-]
    design_stress : numeric
        Design stress MRS/C. [Pa]

    Returns
    -------
    numeric
        Allowable operating pressure before rounding to the nominal PN series. [Pa]

    Notes
    -----
    :math:`p = 2\\sigma_s / (SDR - 1)`, the mean-diameter hoop relation
    :math:`\\sigma_s = p (d_n - e_n) / (2 e_n)` with :math:`SDR = d_n / e_n`.

    References
    ----------
    .. [1] ISO 4427-2:2019, Plastics piping systems for water supply - Polyethylene (PE) -
       Part 2: Pipes, clause on the relation between PN, MRS, C and SDR.
    """
    s = np.asarray(sdr, dtype=float)
    if np.any(~(s > 1.0)):
        raise ValueError("sdr must be greater than 1 (outside diameter / wall thickness).")
    out = 2.0 * np.asarray(design_stress, dtype=float) / (s - 1.0)
    if np.ndim(sdr) == 0 and np.ndim(design_stress) == 0:
        return float(out)
    return out


# --------------------------------------------------------------------------------------
# Construction and validation
# --------------------------------------------------------------------------------------

_NAME_RE = re.compile(r"^[a-z][a-z0-9_]*$")


def _check_positive(prop, value):
    if value is None:
        return None
    try:
        value = float(value)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{prop} must be a number [{NUMERIC_PROPERTIES[prop]}].") from exc
    if not math.isfinite(value) or value <= 0.0:
        raise ValueError(
            f"{prop} must be positive and finite [{NUMERIC_PROPERTIES[prop]}], got {value}."
        )
    return value


def make_material(
    name,
    kind,
    *,
    description="",
    elastic_modulus=None,
    density=None,
    poisson_ratio=None,
    roughness=None,
    yield_strength=None,
    tensile_strength=None,
    allowable_stress=None,
    allowable_stress_rule="",
    pressure_classes=(),
    pressure_class_labels=(),
    sdr_series=(),
    sources=None,
):
    """Build a validated :class:`Material` (a user's own or a registry entry).

    Parameters
    ----------
    name : str
        snake_case identifier. [-]
    kind : str
        Material family, e.g. ``"steel"``. [-]
    description : str
        Free text. [-]
    elastic_modulus : float, optional
        Young's modulus. [Pa]
    density : float, optional
        Mass density. [kg/m^3]
    poisson_ratio : float, optional
        Poisson ratio, in (0, 0.5). [-]
    roughness : float, optional
        Equivalent sand roughness, new. [m]
    yield_strength : float, optional
        Minimum yield strength. [Pa]
    tensile_strength : float, optional
        Minimum tensile strength. [Pa]
    allowable_stress : float, optional
        Allowable hoop stress, normal conditions. [Pa]
    allowable_stress_rule : str
        Where ``allowable_stress`` comes from. [-]
    pressure_classes : sequence of float
        Rated pressures of the class series. [Pa]
    pressure_class_labels : sequence of str
        Labels of the classes, same length as ``pressure_classes`` (or empty). [-]
    sdr_series : sequence of float
        SDR of each class (plastics), same length as ``pressure_classes`` (or empty). [-]
    sources : mapping, optional
        Property name -> citation. [-]

    Returns
    -------
    Material

    Raises
    ------
    ValueError
        On a bad name, a non-positive property, a Poisson ratio outside (0, 0.5),
        allowable stress above yield, yield above tensile strength, or class series of
        unequal lengths.
    """
    if not isinstance(name, str) or not _NAME_RE.match(name):
        raise ValueError(f"name must be a snake_case string, got {name!r}.")
    if not isinstance(kind, str) or not kind:
        raise ValueError("kind must be a non-empty string, e.g. 'steel'.")
    values = {
        prop: _check_positive(prop, val)
        for prop, val in {
            "elastic_modulus": elastic_modulus,
            "density": density,
            "roughness": roughness,
            "yield_strength": yield_strength,
            "tensile_strength": tensile_strength,
            "allowable_stress": allowable_stress,
        }.items()
    }
    if poisson_ratio is not None:
        poisson_ratio = float(poisson_ratio)
        if not 0.0 < poisson_ratio < 0.5:
            raise ValueError(f"poisson_ratio must lie in (0, 0.5), got {poisson_ratio}.")
    fy, fu, sa = values["yield_strength"], values["tensile_strength"], values["allowable_stress"]
    if fy is not None and fu is not None and fy > fu:
        raise ValueError("yield_strength must not exceed tensile_strength.")
    if sa is not None and fy is not None and sa > fy:
        raise ValueError("allowable_stress must not exceed yield_strength.")

    classes = tuple(float(p) for p in pressure_classes)
    if any(not math.isfinite(p) or p <= 0.0 for p in classes):
        raise ValueError("pressure_classes must be positive and finite [Pa].")
    if any(b <= a for a, b in zip(classes, classes[1:], strict=False)):
        raise ValueError("pressure_classes must be strictly ascending [Pa].")
    labels = tuple(str(lab) for lab in pressure_class_labels)
    sdrs = tuple(float(s) for s in sdr_series)
    for label, seq in (("pressure_class_labels", labels), ("sdr_series", sdrs)):
        if seq and len(seq) != len(classes):
            raise ValueError(f"{label} must have one entry per pressure class.")
    if any(s <= 1.0 for s in sdrs):
        raise ValueError("sdr_series entries must be greater than 1.")
    src = MappingProxyType(dict(sources or {}))
    return Material(
        name=name,
        kind=kind,
        description=str(description),
        poisson_ratio=poisson_ratio,
        allowable_stress_rule=str(allowable_stress_rule),
        pressure_classes=classes,
        pressure_class_labels=labels,
        sdr_series=sdrs,
        sources=src,
        **values,
    )


# --------------------------------------------------------------------------------------
# Registry
# --------------------------------------------------------------------------------------

_STEEL_ASTM_COMMON = {
    # AWWA M11 5th ed. (2017), ch. 4: E = 30 000 000 psi, nu = 0.30 (from memory).
    "elastic_modulus": 30.0e6 * _PSI,
    "poisson_ratio": 0.30,
    # EN 1991-1-1:2002 Table A.4: steel 77.0-78.5 kN/m^3; 7850 kg/m^3 is the usual value.
    "density": 7850.0,
    # Moody (1944): commercial steel / wrought iron 0.00015 ft = 0.045 mm.
    "roughness": 0.045 * _MM,
}
_STEEL_ASTM_SOURCES = {
    "elastic_modulus": "AWWA M11 5th ed. (2017), ch. 4: E = 30e6 psi (from memory)",
    "poisson_ratio": "AWWA M11 5th ed. (2017): nu = 0.30 (from memory)",
    "density": "EN 1991-1-1:2002 Table A.4, steel 77.0-78.5 kN/m^3 (from memory)",
    "roughness": "Moody (1944) Trans. ASME 66(8): commercial steel 0.00015 ft",
    "allowable_stress": ALLOWABLE_STRESS_RULES["asce_mop79_normal"]["reference"],
}
_STEEL_EN_COMMON = dict(_STEEL_ASTM_COMMON, elastic_modulus=210.0e9)
_STEEL_EN_SOURCES = dict(
    _STEEL_ASTM_SOURCES,
    elastic_modulus="EN 1993-1-1:2005 clause 3.2.6: E = 210 000 N/mm^2",
    poisson_ratio="EN 1993-1-1:2005 clause 3.2.6: nu = 0.3",
)


def _steel(name, description, fy, fu, standard, en=False):
    common = _STEEL_EN_COMMON if en else _STEEL_ASTM_COMMON
    sources = dict(_STEEL_EN_SOURCES if en else _STEEL_ASTM_SOURCES)
    sources["yield_strength"] = standard
    sources["tensile_strength"] = standard
    return make_material(
        name,
        "steel",
        description=description,
        yield_strength=fy,
        tensile_strength=fu,
        allowable_stress=steel_allowable_stress(fy, fu, "asce_mop79_normal"),
        allowable_stress_rule=ALLOWABLE_STRESS_RULES["asce_mop79_normal"]["equation"],
        sources=sources,
        **common,
    )


def _registry():
    mats = [
        _steel(
            "astm_a36",
            "Structural carbon steel plate, ASTM A36/A36M",
            36.0 * _KSI,
            58.0 * _KSI,
            "ASTM A36/A36M: Fy >= 36 ksi [250 MPa], Fu 58-80 ksi [400-550 MPa], plates "
            "<= 8 in (from memory)",
        ),
        _steel(
            "astm_a516_gr70",
            "Pressure-vessel carbon steel plate, ASTM A516/A516M Grade 70",
            38.0 * _KSI,
            70.0 * _KSI,
            "ASTM A516/A516M Gr 70: Fy >= 38 ksi [260 MPa], Fu 70-90 ksi [485-620 MPa] "
            "(from memory)",
        ),
        _steel(
            "astm_a537_cl1",
            "Heat-treated C-Mn-Si steel plate, ASTM A537/A537M Class 1",
            50.0 * _KSI,
            70.0 * _KSI,
            "ASTM A537/A537M Cl 1: Fy >= 50 ksi [345 MPa] for t <= 2.5 in, Fu 70-90 ksi "
            "[485-620 MPa] (from memory)",
        ),
        _steel(
            "astm_a572_gr50",
            "High-strength low-alloy steel plate, ASTM A572/A572M Grade 50",
            50.0 * _KSI,
            65.0 * _KSI,
            "ASTM A572/A572M Gr 50: Fy >= 50 ksi [345 MPa], Fu >= 65 ksi [450 MPa] "
            "(from memory)",
        ),
        _steel(
            "en_s275",
            "Non-alloy structural steel EN 10025-2 S275",
            275.0 * _MPA,
            410.0 * _MPA,
            "EN 10025-2:2019 Table 7: S275 ReH >= 275 MPa (t <= 16 mm), Rm 410-560 MPa "
            "(3 <= t <= 100 mm) (from memory)",
            en=True,
        ),
        _steel(
            "en_s355",
            "Non-alloy structural steel EN 10025-2 S355",
            355.0 * _MPA,
            470.0 * _MPA,
            "EN 10025-2:2019 Table 7: S355 ReH >= 355 MPa (t <= 16 mm), Rm 470-630 MPa "
            "(3 <= t <= 100 mm) (from memory)",
            en=True,
        ),
        make_material(
            "ductile_iron_awwa",
            "ductile_iron",
            description="Ductile-iron pipe, grade 60-42-10, ANSI/AWWA C150/C151",
            # AWWA C151: minimum tensile 60 000 psi, yield 42 000 psi (grade 60-42-10).
            yield_strength=42_000.0 * _PSI,
            tensile_strength=60_000.0 * _PSI,
            # AWWA C150: hoop stress at (working + 100 psi surge) x 2.0 <= yield.
            allowable_stress=42_000.0 * _PSI / 2.0,
            allowable_stress_rule="yield_strength / 2.0 on working + surge pressure",
            elastic_modulus=24.0e6 * _PSI,
            poisson_ratio=0.28,
            density=7050.0,
            roughness=0.26 * _MM,
            pressure_classes=tuple(p * _PSI for p in (150.0, 200.0, 250.0, 300.0, 350.0)),
            pressure_class_labels=("PC150", "PC200", "PC250", "PC300", "PC350"),
            sources={
                "yield_strength": "ANSI/AWWA C151/A21.51 grade 60-42-10 (from memory)",
                "tensile_strength": "ANSI/AWWA C151/A21.51 grade 60-42-10 (from memory)",
                "allowable_stress": "ANSI/AWWA C150/A21.50: safety factor 2.0 on yield for "
                "working + 100 psi surge allowance (from memory)",
                "elastic_modulus": "ANSI/AWWA C150/A21.50: E = 24e6 psi (from memory)",
                "poisson_ratio": "common practice 0.28 for ductile iron (from memory)",
                "density": "EN 545:2010 mass calculations use 7050 kg/m^3 (from memory)",
                "roughness": "Moody (1944): cast iron 0.00085 ft, unlined; cement-mortar "
                "lined pipe is smoother",
                "pressure_classes": "ANSI/AWWA C150/C151 pressure classes 150-350 psi "
                "(from memory)",
            },
        ),
        make_material(
            "ductile_iron_en545",
            "ductile_iron",
            description="Ductile-iron pipe to EN 545, pressure classes C20-C100",
            yield_strength=300.0 * _MPA,
            tensile_strength=420.0 * _MPA,
            allowable_stress=420.0 * _MPA / 3.0,
            allowable_stress_rule="tensile_strength / 3.0 at PFA",
            elastic_modulus=170.0e9,
            poisson_ratio=0.28,
            density=7050.0,
            roughness=0.26 * _MM,
            pressure_classes=tuple(
                p * _BAR for p in (20.0, 25.0, 30.0, 40.0, 50.0, 64.0, 100.0)
            ),
            pressure_class_labels=("C20", "C25", "C30", "C40", "C50", "C64", "C100"),
            sources={
                "yield_strength": "EN 545:2010: Rp0.2 >= 300 MPa (from memory)",
                "tensile_strength": "EN 545:2010: Rm >= 420 MPa (from memory)",
                "allowable_stress": "EN 545:2010 wall design: safety factor 3 on Rm at "
                "PFA (from memory)",
                "elastic_modulus": "EN 545:2010 informative value 170 GPa (from memory)",
                "poisson_ratio": "common practice 0.28 for ductile iron (from memory)",
                "density": "EN 545:2010 mass calculations use 7050 kg/m^3 (from memory)",
                "roughness": "Moody (1944): cast iron 0.00085 ft, unlined",
                "pressure_classes": "EN 545:2010 preferred classes C20, C25, C30, C40, C50, "
                "C64, C100 = PFA in bar (from memory)",
            },
        ),
        make_material(
            "grp_awwa_c950",
            "grp",
            description="Glass-fibre reinforced plastic pressure pipe, ANSI/AWWA C950",
            elastic_modulus=15.0e9,
            poisson_ratio=0.30,
            density=1900.0,
            roughness=0.03 * _MM,
            pressure_classes=tuple(p * _PSI for p in (50.0, 100.0, 150.0, 200.0, 250.0)),
            pressure_class_labels=("50", "100", "150", "200", "250"),
            sources={
                "elastic_modulus": "hoop modulus of filament-wound GRP, 10-25 GPa in "
                "manufacturers' data; 15 GPa taken (common practice)",
                "poisson_ratio": "common practice 0.3 (from memory)",
                "density": "common practice 1800-2100 kg/m^3 (from memory)",
                "roughness": "common practice 0.01-0.03 mm for new GRP",
                "pressure_classes": "ANSI/AWWA C950 pressure classes 50-250 psi "
                "(from memory)",
            },
        ),
        make_material(
            "grp_en1796",
            "grp",
            description="GRP-UP pressure pipe, EN 1796 nominal pressures PN 1 to PN 32",
            elastic_modulus=15.0e9,
            poisson_ratio=0.30,
            density=1900.0,
            roughness=0.03 * _MM,
            pressure_classes=tuple(
                p * _BAR for p in (1.0, 2.5, 4.0, 6.0, 10.0, 12.5, 16.0, 20.0, 25.0, 32.0)
            ),
            pressure_class_labels=(
                "PN1", "PN2.5", "PN4", "PN6", "PN10", "PN12.5", "PN16", "PN20", "PN25", "PN32",
            ),
            sources={
                "elastic_modulus": "hoop modulus of filament-wound GRP, 10-25 GPa in "
                "manufacturers' data; 15 GPa taken (common practice)",
                "poisson_ratio": "common practice 0.3 (from memory)",
                "density": "common practice 1800-2100 kg/m^3 (from memory)",
                "roughness": "common practice 0.01-0.03 mm for new GRP",
                "pressure_classes": "EN 1796:2013 nominal pressures PN 1-32 (from memory)",
            },
        ),
        make_material(
            "hdpe_pe100",
            "hdpe",
            description="Polyethylene PE100 pressure pipe, ISO 4427, design coefficient 1.25",
            # ISO 12162: PE100 has MRS = 10 MPa; ISO 4427-1: C >= 1.25 for water.
            allowable_stress=10.0 * _MPA / 1.25,
            allowable_stress_rule="MRS / C = 10 MPa / 1.25",
            elastic_modulus=1.1e9,
            poisson_ratio=0.45,
            density=960.0,
            roughness=0.007 * _MM,
            # ISO 4427-2 nominal PN for PE100, C = 1.25 (formula value rounded down to R10),
            # up to PN25: the standard's pipes are for an allowable operating pressure of at
            # most 25 bar (EN 12201-2:2024, its European counterpart, scope as published by
            # BSI), so SDR 6 (PN32 by the formula) is not offered.
            pressure_classes=tuple(
                p * _BAR for p in (4.0, 5.0, 6.3, 8.0, 10.0, 12.5, 16.0, 20.0, 25.0)
            ),
            pressure_class_labels=(
                "PN4", "PN5", "PN6.3", "PN8", "PN10", "PN12.5", "PN16", "PN20", "PN25",
            ),
            sdr_series=(41.0, 33.0, 26.0, 21.0, 17.0, 13.6, 11.0, 9.0, 7.4),
            sources={
                "allowable_stress": "ISO 12162:2009 (PE100: MRS = 10 MPa) and ISO 4427-1:2019 "
                "(C >= 1.25 for water)",
                "elastic_modulus": "short-term modulus of PE100 at 20 degC, about 1.0-1.4 GPa; "
                "long-term about 0.2 GPa (from memory)",
                "poisson_ratio": "common practice 0.45 for PE (from memory)",
                "density": "PE100 black compound 950-960 kg/m^3 (from memory)",
                "roughness": "common practice 0.0015-0.007 mm for new PE",
                "pressure_classes": "ISO 4427-2:2019 SDR series and PN for PE100, C = 1.25, "
                "to PN25 (PFA up to 25 bar: EN 12201-2:2024 scope, BSI)",
                "sdr_series": "ISO 4427-2:2019 SDR 41 to SDR 7.4",
            },
        ),
    ]
    return MappingProxyType({m.name: m for m in mats})


#: Built-in materials keyed by snake_case name (read-only).
MATERIALS: Mapping[str, Material] = _registry()

_FIELDS = {f.name for f in dataclasses.fields(Material)}


def get_material(name, overrides=None):
    """Look up a built-in material, optionally replacing some of its properties.

    Parameters
    ----------
    name : str
        Key of :data:`MATERIALS`, e.g. ``"astm_a516_gr70"``. [-]
    overrides : mapping, optional
        Property name -> new value (SI), e.g. ``{"roughness": 0.1e-3}``. The result is
        re-validated; a ``sources`` entry ``"user override"`` is recorded for each.
        Derived values are not recomputed: overriding ``yield_strength`` leaves
        ``allowable_stress`` as it was, so override both when needed. [-]

    Returns
    -------
    Material

    Raises
    ------
    ValueError
        Unknown material name or unknown/invalid override.
    """
    if name not in MATERIALS:
        raise ValueError(f"material {name!r} is unknown; expected one of {sorted(MATERIALS)}.")
    base = MATERIALS[name]
    if not overrides:
        return base
    unknown = set(overrides) - (_FIELDS - {"sources"})
    if unknown:
        raise ValueError(
            f"overrides names unknown properties {sorted(unknown)}; expected among "
            f"{sorted(_FIELDS - {'sources'})}."
        )
    kwargs = {f: getattr(base, f) for f in _FIELDS}
    sources = dict(base.sources)
    for key, value in overrides.items():
        kwargs[key] = value
        sources[key] = "user override"
    kwargs["sources"] = sources
    return make_material(kwargs.pop("name"), kwargs.pop("kind"), **kwargs)


#: Pipe materials (of the roughness table) that are steel: the diameter study covers
#: them, and their handling minimum may stand in for a missing wall thickness.
STEEL_PIPE_MATERIALS = ("welded_steel", "riveted_steel")

#: Registry material standing for each pipe material of the roughness table, for the
#: wall modulus of the wave speed; None where the registry holds no such material.
_MODULUS_SOURCE = {
    "welded_steel": "astm_a36",
    "riveted_steel": "astm_a36",
    # cement-lined ductile iron as the AWWA standards make it (classes to PC350); EN 545
    # pipes (classes to C100), which the diameter study's ductile iron uses, are a pipe
    # material of their own
    "ductile_iron_cement_lined": "ductile_iron_awwa",
    "ductile_iron_en545": "ductile_iron_en545",
    "grp": "grp_awwa_c950",
    "hdpe": "hdpe_pe100",
}

#: Wall moduli for pipe materials the registry does not hold (common practice, from
#: memory): PVC short-term modulus, and uncracked concrete. [Pa]
_MODULUS_FALLBACK = {
    "pvc": 3.0e9,
    "concrete_smooth": 30e9,
    "concrete_rough": 30e9,
}


def pipe_wall_material(pipe_material):
    """Registry material standing for a pipe material of the case, or None.

    Parameters
    ----------
    pipe_material : str
        A material of the roughness table (``welded_steel``, ``hdpe``, ...). [-]

    Returns
    -------
    Material or None
        The registry's material for the wall's strength and classes (steel: ASTM A36,
        which a case's own steel grade replaces); None where the registry holds none
        (PVC, concrete). [-]
    """
    name = _MODULUS_SOURCE.get(pipe_material)
    return MATERIALS[name] if name is not None else None


#: Poisson ratio of a pipe wall whose material the registry does not hold (common
#: practice for steel, from memory; PVC and concrete pipes fall back on it). [-]
DEFAULT_POISSON_RATIO = 0.3


def pipe_wall_poisson_ratio(pipe_material):
    r"""Poisson ratio of a pipe wall, by the case's pipe material name.

    Parameters
    ----------
    pipe_material : str
        A material of the roughness table (``welded_steel``, ``hdpe``, ...). [-]

    Returns
    -------
    float
        The registry material's value (PE100 0.45, ductile iron 0.28, steel 0.3), else
        :data:`DEFAULT_POISSON_RATIO`. [-]

    Notes
    -----
    A higher ratio gives a higher wave speed in an anchored pipe (Wylie & Streeter's
    restraint factors :math:`1 - \nu^2` and :math:`1 - \nu/2`), so a plastic pipe taken
    at steel's 0.3 has its rise understated.
    """
    material = pipe_wall_material(pipe_material)
    if material is not None and material.poisson_ratio is not None:
        return float(material.poisson_ratio)
    return DEFAULT_POISSON_RATIO


def pipe_wall_modulus(pipe_material):
    """Young's modulus of a pipe wall, by the case's pipe material name.

    Parameters
    ----------
    pipe_material : str
        A material of the roughness table (``welded_steel``, ``hdpe``, ...). [-]

    Returns
    -------
    float
        Modulus from :data:`MATERIALS` where the registry holds the material, else a
        common-practice value; steel's for an unknown name. [Pa]
    """
    material = pipe_wall_material(pipe_material)
    if material is not None:
        return float(material.elastic_modulus)
    if pipe_material in _MODULUS_FALLBACK:
        return _MODULUS_FALLBACK[pipe_material]
    return float(MATERIALS[_MODULUS_SOURCE["welded_steel"]].elastic_modulus)
