"""Unit parsing at the input edge and unit conversion at the output edge.

pint lives here, in :mod:`penstock.case` and in the report writers only.  Every
other module computes in SI floats and numpy arrays.

Quantities in a case are written as text with their unit, e.g. ``"350 m"``,
``"12 ft"``, ``"4.5 m^3/s"`` or ``"160 cfs"``.  :func:`parse_quantity` turns such a
text into an SI float after checking that its dimension is the one expected.
"""

from __future__ import annotations

import functools
import re

import pint

#: Dimension names used by the case schema and the loss registry, mapped to the
#: SI unit every value of that dimension is converted to.
SI_UNITS: dict[str, str] = {
    "length": "m",
    "area": "m^2",
    "flow": "m^3/s",
    "velocity": "m/s",
    "angle": "rad",
    "time": "s",
    "age": "year",
    "temperature": "degC",
    "pressure": "Pa",
    "power": "W",
    "energy": "J",
    "stress": "Pa",
    "density": "kg/m^3",
    "moment_of_inertia": "kg*m^2",
    "rotational_speed": "rpm",
    "frequency": "Hz",
    "dimensionless": "",
    "fraction": "",
    # money is carried as a bare number in the case's currency; the unit is "per"
    "price_per_energy": "1/kWh",
    "price_per_mass": "1/t",
    "price_per_length": "1/m",
    "price_per_area": "1/m^2",
    "roughness_growth": "m/year",
}

#: Units for the report in each unit system, by dimension.
REPORT_UNITS: dict[str, dict[str, str]] = {
    "si": {
        "length": "m", "small_length": "mm", "flow": "m^3/s", "velocity": "m/s",
        "power": "kW", "energy": "MWh", "pressure": "kPa", "mass": "t", "area": "m^2",
        "temperature": "degC", "time": "s",
    },
    "us": {
        "length": "ft", "small_length": "in", "flow": "ft^3/s", "velocity": "ft/s",
        "power": "kW", "energy": "MWh", "pressure": "psi", "mass": "ton", "area": "ft^2",
        "temperature": "degF", "time": "s",
    },
}

#: How units print in report column headers.
UNIT_LABELS: dict[str, str] = {
    "m^3/s": "m³/s", "ft^3/s": "ft³/s", "m^2": "m²", "ft^2": "ft²", "degC": "°C",
    "degF": "°F", "ton": "short ton", "kg/m^3": "kg/m³", "lb/ft^3": "lb/ft³",
}


@functools.lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The package's single pint registry, with a few trade units added."""
    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    # cfs and cumecs are common in hydrology; pint knows neither by default.
    ureg.define("cfs = foot ** 3 / second")
    ureg.define("cumec = meter ** 3 / second = cumecs")
    if "ksi" not in ureg:
        ureg.define("ksi = 1000 * psi")
    return ureg


class UnitError(ValueError):
    """A quantity is missing its unit, has the wrong dimension or cannot be parsed."""


#: Longest quantity or unit text accepted: a bound on the work the parser may do.
MAX_TEXT = 64

# The bounded grammar of a quantity: a decimal number, then a unit made of names with
# small whole exponents joined by "*", "/", "·" or a space, e.g. "4.5 m^3/s", "25000
# kg*m^2", "0.08 /kWh".  No arithmetic on numbers (so "10**10**10 m" is refused before
# anything is evaluated), no nesting, at most MAX_TEXT characters.
_NUMBER = r"[-+]?(?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d{1,3})?|(?i:nan|inf(?:inity)?))"
_NAME = r"[A-Za-z_°µμΩ%]++"
_EXPONENT = r"(?:(?:\^|\*\*)[-+]?\d{1,2}|[²³])"
_TERM = rf"{_NAME}{_EXPONENT}?+"
_OPERATOR = r"(?:\s*+[*/·]\s*+|\s++)"
_UNIT_TEXT = re.compile(rf"(?:1\s*+)?(?:/\s*+)?{_TERM}(?:{_OPERATOR}{_TERM})*+")
_QUANTITY_TEXT = re.compile(rf"\s*+(?P<number>{_NUMBER})\s*+(?P<unit>.*?)\s*")
_NUMBER_ONLY = re.compile(rf"\s*{_NUMBER}\s*")


def _dimensionality(kind: str):
    ureg = registry()
    si = SI_UNITS[kind]
    return ureg.Quantity(1.0, si).dimensionality if si else ureg.Quantity(1.0).dimensionality


def _unit_text(text: str, kind: str, whole: str) -> str:
    """Check a unit text against the bounded grammar; return it as pint reads it."""
    if not _UNIT_TEXT.fullmatch(text):
        raise UnitError(f"cannot read '{whole}': expected a number and a unit such as "
                        f"{_example(kind)} (unit names with whole exponents, joined by * or "
                        "/; no arithmetic)")
    return "1" + text if text.startswith("/") else text


def parse_quantity(value, kind: str) -> float:
    """Parse a quantity written with its unit and return it in SI units.

    The text must follow a small bounded grammar: a decimal number, then a unit made of
    unit names with whole exponents of at most two digits, joined by ``*``, ``/``,
    ``·`` or a space, in at most :data:`MAX_TEXT` characters.  Nothing is evaluated
    before the text has passed that check, so no input can make the parser hang.

    Parameters
    ----------
    value : str or number
        The text from the case, e.g. ``"350 m"``.  A bare number is accepted only
        for dimensionless kinds.
    kind : str
        A key of :data:`SI_UNITS` naming the expected dimension.

    Returns
    -------
    float
        The value in the SI unit of :data:`SI_UNITS` ``[kind]``.

    Raises
    ------
    UnitError
        If the text is too long or outside the grammar, or the unit is missing,
        unknown or of the wrong dimension.
    """
    ureg = registry()
    si = SI_UNITS[kind]
    if isinstance(value, bool):
        raise UnitError(f"expected {_a(kind)}, got {value!r}")
    if isinstance(value, (int, float)):
        if si == "":
            return float(value)
        raise UnitError(f"{value!r} has no unit; expected {_a(kind)}, e.g. {_example(kind)}")
    if not isinstance(value, str):
        raise UnitError(f"expected text with a unit such as {_example(kind)}, got {value!r}")
    text = value.strip()
    if not text:
        raise UnitError(f"is empty; expected {_a(kind)}, e.g. {_example(kind)}")
    if len(text) > MAX_TEXT:
        raise UnitError(f"'{text[:20]}...' is {len(text)} characters long; expected at most "
                        f"{MAX_TEXT}, e.g. {_example(kind)}")
    if _NUMBER_ONLY.fullmatch(text) and si != "":
        raise UnitError(f"'{text}' has no unit; expected {_a(kind)}, e.g. {_example(kind)}")
    m = _QUANTITY_TEXT.fullmatch(text)
    if m is None:
        raise UnitError(f"cannot read '{text}': expected a number first, then its unit, "
                        f"e.g. {_example(kind)}")
    number = float(m.group("number"))
    unit = m.group("unit")
    try:
        if unit:
            q = ureg.Quantity(number, _unit_text(unit, kind, text))
        else:
            q = ureg.Quantity(number)
    except UnitError:
        raise
    except Exception as exc:  # pint raises several unrelated exception types
        raise UnitError(f"cannot read '{text}' as a quantity ({type(exc).__name__}); "
                        f"expected e.g. {_example(kind)}") from None
    if q.dimensionality != _dimensionality(kind):
        if kind == "temperature" and text.rstrip().endswith((" F", " C")):
            raise UnitError(f"'{text}' is read as farads or coulombs; expected a temperature "
                            "such as \"50 degF\" or \"10 degC\"")
        raise UnitError(f"'{text}' is not {_a(kind)} (its dimension is "
                        f"{q.dimensionality}); expected e.g. {_example(kind)}")
    try:
        out = float(q.to(si).magnitude) if si else float(q.to("dimensionless").magnitude)
    except Exception:
        raise UnitError(f"cannot convert '{text}' to {si}") from None
    if kind == "temperature":
        # °F -> °C leaves float noise (50 °F -> 10.000000000000057 °C); the water-property
        # solvers turn it into 1e-10 differences, so keep temperatures to 1e-9 degC
        out = round(out, 9)
    return out


_EXAMPLES = {
    "length": '"350 m" or "12 ft"', "area": '"4 m^2"', "flow": '"4.5 m^3/s" or "160 cfs"',
    "velocity": '"3 m/s"', "angle": '"30 deg"', "time": '"8 s"', "age": '"40 year"',
    "temperature": '"10 degC" or "50 degF"', "pressure": '"1.2 MPa" or "150 psi"',
    "power": '"5 MW"', "energy": '"20 GWh"', "stress": '"160 MPa"', "density": '"7850 kg/m^3"',
    "moment_of_inertia": '"25000 kg*m^2"', "rotational_speed": '"600 rpm"', "frequency": '"50 Hz"',
    "dimensionless": "0.9", "fraction": '0.92 or "92 %"',
    "price_per_energy": '"0.08 /kWh"', "price_per_mass": '"2500 /t"',
    "price_per_length": '"150 /m"', "price_per_area": '"400 /m^2"', "roughness_growth": '"0.02 mm/year"',
}


def _example(kind: str) -> str:
    return _EXAMPLES.get(kind, SI_UNITS[kind])


def _a(kind: str) -> str:
    """The description of a kind with its article ("a length", "an area")."""
    what = _describe(kind)
    return f"{'an' if what[0] in 'aeiou' else 'a'} {what}"


def _describe(kind: str) -> str:
    return {
        "flow": "flow rate", "dimensionless": "number", "fraction": "fraction",
        "price_per_energy": "price per unit energy", "price_per_mass": "price per unit mass",
        "price_per_length": "price per unit length", "price_per_area": "price per unit area", "roughness_growth": "roughness growth rate",
        "moment_of_inertia": "moment of inertia", "rotational_speed": "rotational speed",
    }.get(kind, kind)


def parse_unit(text: str, kind: str) -> str:
    """Check that a unit name from a CSV header has the expected dimension.

    Returns the unit text unchanged, so the caller can convert a column with
    :func:`to_si`.
    """
    ureg = registry()
    if len(text) > MAX_TEXT or not _UNIT_TEXT.fullmatch(text):
        raise UnitError(f"cannot read the unit '{text[:MAX_TEXT]}'; expected a unit such as "
                        f"{_example(kind)}")
    try:
        q = ureg.Quantity(1.0, "1" + text if text.startswith("/") else text)
    except Exception:
        raise UnitError(f"unknown unit '{text}'; expected e.g. {_example(kind)}") from None
    if q.dimensionality != _dimensionality(kind):
        raise UnitError(f"unit '{text}' is not {_a(kind)}; expected e.g. {_example(kind)}")
    return text


def to_si(values, unit: str, kind: str):
    """Convert numbers given in ``unit`` to the SI unit of ``kind``."""
    ureg = registry()
    si = SI_UNITS[kind]
    q = ureg.Quantity(values, "1" + unit if unit.startswith("/") else unit)   # "/m", "/ft"
    return q.to(si).magnitude if si else q.to("dimensionless").magnitude


def from_si(values, kind: str, unit: str):
    """Convert SI numbers of ``kind`` into ``unit`` for a report."""
    ureg = registry()
    si = SI_UNITS.get(kind, kind)
    return ureg.Quantity(values, si).to(unit).magnitude


def convert(values, from_unit: str, to_unit: str):
    """Convert numbers between two units (report edge only)."""
    ureg = registry()
    return ureg.Quantity(values, from_unit).to(to_unit).magnitude


def label(unit: str) -> str:
    """A readable unit label for a report header, e.g. ``m³/s``."""
    return UNIT_LABELS.get(unit, unit)
