"""Unit conversion of result tables at the output edge.

Result tables name their SI unit in brackets in each column header
(``chainage [m]``).  :func:`convert_table` rewrites such a table into the
report's unit system, header and values together.
"""

from __future__ import annotations

import re

import pandas as pd

from .. import units

_BRACKET = re.compile(r"^(.*)\[([^\[\]]+)\]\s*$")

#: SI unit in a header -> (US customary unit, how it prints)
US_UNITS = {
    "m": "ft", "mm": "in", "m^2": "ft^2", "m^3/s": "ft^3/s", "m/s": "ft/s",
    "kPa": "psi", "MPa": "psi", "GPa": "ksi", "degC": "degF", "t": "ton", "kg/m^3": "lb/ft^3",
    "m/year": "ft/year", "kg*m^2": "lb*ft^2", "kN": "kip",
}


def report_unit(si_unit: str, system: str) -> str:
    """The unit a quantity given in ``si_unit`` is reported in."""
    if system == "us":
        return US_UNITS.get(si_unit, si_unit)
    return si_unit


def convert_value(value, si_unit: str, system: str):
    """Convert one number (or array) from ``si_unit`` into the report system."""
    target = report_unit(si_unit, system)
    if target == si_unit or value is None:
        return value
    return units.convert(value, si_unit, target)


def split_header(header: str) -> tuple[str, str | None]:
    """``"chainage [m]"`` -> ``("chainage", "m")``; no unit -> ``(header, None)``."""
    m = _BRACKET.match(str(header))
    if not m:
        return str(header), None
    return m.group(1).strip(), m.group(2).strip()


def convert_table(df: pd.DataFrame, system: str) -> pd.DataFrame:
    """A copy of a result table in the report's unit system, headers relabelled.

    A table with a ``unit`` column (e.g. the summary) has its ``value`` column
    converted row by row.
    """
    out = {}
    for col in df.columns:
        name, unit = split_header(col)
        series = df[col]
        if unit is not None:
            target = report_unit(unit, system)
            if target != unit:
                series = pd.Series(units.convert(series.to_numpy(dtype=float), unit, target),
                                   index=df.index)
            out[f"{name} [{units.label(target)}]"] = series
        else:
            out[col] = series
    res = pd.DataFrame(out, index=df.index)
    if {"value", "unit"} <= set(df.columns):
        labs = [units.label(report_unit(u, system)) if u else "" for u in df["unit"]]
        for col in [c for c in VALUE_COLUMNS if c in df.columns]:
            vals = []
            for v, u in zip(df[col], df["unit"]):
                if u and isinstance(v, (int, float)) and not isinstance(v, bool) \
                        and v == v:
                    t = report_unit(u, system)
                    vals.append(units.convert(float(v), u, t) if t != u else v)
                else:
                    vals.append(v)
            res[col] = pd.Series(vals, index=df.index, dtype=object)
        res["unit"] = labs
    return res


#: Columns of a (quantity, value, unit) table that hold values in the row's unit.
VALUE_COLUMNS = ("value", "recommended uniform pipe")


def header_label(header: str) -> str:
    """A header with a readable unit label (``flow [m³/s]``)."""
    name, unit = split_header(header)
    return header if unit is None else f"{name} [{units.label(unit)}]"
