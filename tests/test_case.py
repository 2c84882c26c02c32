"""Tests of the case loader (penstock.case) through the library and the command line.

Unit conversion factors used below, all exact by definition:

* foot = 0.3048 m and inch = 0.0254 m: the international yard and pound agreement
  (1959); NIST SP 811 (2008), Appendix B.8.
* pound-force = 0.45359237 kg x 9.80665 m/s^2 = 4.4482216152605 N, so
  psi = 4.4482216152605 N / (0.0254 m)^2 = 6894.757293168361 Pa and kip = 1000 lbf:
  NIST SP 811 (2008), Appendix B.8 (pound, standard acceleration of gravity).
* t/degC = (t/degF - 32) / 1.8: NIST SP 811 (2008), Appendix B.8 and section 4.2.1.1.
* degree of angle = pi/180 rad: NIST SP 811 (2008), Table 6.
"""

from __future__ import annotations

import csv
import dataclasses
import math
import re
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from conftest import CASES, DEMO_CASES, copy_demo, edit_file, run_cli

import penstock
from penstock.case import CaseError, load_case

# --------------------------------------------------------------------- exact factors
FOOT = 0.3048                      # m; international foot (1959), NIST SP 811 App. B.8
INCH = 0.0254                      # m; international inch (1959), NIST SP 811 App. B.8
POUND_FORCE = 0.45359237 * 9.80665  # N; NIST SP 811 App. B.8
PSI = POUND_FORCE / INCH**2        # Pa = 6894.757293168361
REL = 1e-14   # exact definitions: only floating-point rounding (a few ulp) is allowed


# --------------------------------------------------------------------- SI conversion
@pytest.fixture(scope="module")
def loaded():
    """Each demo case loaded once."""
    return {name: load_case(CASES / name) for name in DEMO_CASES}


def test_us_case_converts_lengths(loaded):
    c = loaded["cedar-fork-us-units"]
    # 2452 ft x 0.3048 m/ft (international foot, 1959; NIST SP 811 App. B.8)
    assert c.headwater == pytest.approx(2452 * FOOT, rel=REL)
    assert c.headwater == pytest.approx(747.3696, rel=REL)
    assert c.headwater_min == pytest.approx(2446 * FOOT, rel=REL)
    assert c.tailwater == pytest.approx(664.7688, rel=REL)          # 2181 ft
    assert c.pressure_margin == pytest.approx(2.4384, rel=REL)      # 8 ft
    assert c.altitude == pytest.approx(731.52, rel=REL)             # 2400 ft
    # 72 in and 66 in x 0.0254 m/in (international inch, 1959; NIST SP 811 App. B.8)
    assert c.segments[0].diameter == pytest.approx(1.8288, rel=REL)
    assert c.segments[1].diameter == pytest.approx(1.6764, rel=REL)
    assert c.segments[0].wall_thickness == pytest.approx(0.009525, rel=REL)  # 0.375 in
    assert c.segments[1].start == pytest.approx(792.48, rel=REL)   # 2600 ft
    assert c.losses[3].at == pytest.approx(1036.32, rel=REL)       # bend at 3400 ft
    assert c.losses[0].params["bar_thickness"] == pytest.approx(0.0127, rel=REL)  # 0.5 in
    # 120 ft^2 x 0.09290304 m^2/ft^2 (0.3048^2, exact)
    assert c.losses[0].params["rack_area"] == pytest.approx(11.1483648, rel=REL)


def test_us_case_converts_flows_temperature_and_stress(loaded):
    c = loaded["cedar-fork-us-units"]
    # 160 ft^3/s x 0.3048^3 m^3/ft^3 (international foot, NIST SP 811 App. B.8)
    assert c.design_flow == pytest.approx(4.530695454719999, rel=REL)
    assert c.maximum_flow == pytest.approx(170 * FOOT**3, rel=REL)
    assert c.residual_flow == pytest.approx(10 * FOOT**3, rel=REL)
    assert c.extra_flows == pytest.approx([80 * FOOT**3], rel=REL)
    # 50 degF -> (50 - 32) / 1.8 = 10 degC (NIST SP 811 App. B.8)
    assert c.temperature == pytest.approx(10.0, rel=REL)
    # 30000 kip/in^2 = 3e7 psi x 6894.757293168361 Pa/psi (NIST SP 811 App. B.8)
    assert c.surge["pipe_modulus"] == pytest.approx(3e7 * PSI, rel=REL)
    assert c.surge["pipe_modulus"] == pytest.approx(206842718795.05083, rel=REL)
    # 12 deg x pi/180 (NIST SP 811 Table 6)
    assert c.losses[2].params["angle"] == pytest.approx(math.radians(12.0), rel=REL)
    assert c.surge["allowable_rise"] == pytest.approx(0.30, rel=REL)   # "30 %"
    assert c.economics["discount_rate"] == pytest.approx(0.075, rel=REL)  # "7.5 %"


def test_us_case_converts_csv_columns(loaded):
    c = loaded["cedar-fork-us-units"]
    # profile.csv in ft (0.3048 m/ft); flows.csv in cfs (0.3048^3 m^3/s per cfs)
    assert c.profile["chainage"].iloc[-1] == pytest.approx(4900 * FOOT, rel=REL)
    assert c.profile["chainage"].iloc[-1] == pytest.approx(1493.52, rel=REL)
    assert c.profile["elevation"].iloc[0] == pytest.approx(2438 * FOOT, rel=REL)
    assert c.profile["ground"].iloc[0] == pytest.approx(2440 * FOOT, rel=REL)
    assert c.flow_record.iloc[0] == pytest.approx(142.8108 * FOOT**3, rel=REL)
    assert c.flow_record.index[0] == pd.Timestamp("2008-01-01")
    assert len(c.flow_record) == 4383            # 2008-01-01 .. 2019-12-31, daily
    assert c.flow_record.attrs["step_hours"] == 24.0


def test_si_case_values_pass_through(loaded):
    c = loaded["alder-gorge-high-head"]
    assert c.headwater == 1412.0
    assert c.headwater_min == 1410.5
    assert c.temperature == pytest.approx(8.0, rel=REL)
    # 12 mm = 0.012 m (SI prefix milli, NIST SP 811 Table 5)
    assert c.losses[0].params["bar_thickness"] == pytest.approx(0.012, rel=REL)
    assert c.losses[0].params["inclination"] == pytest.approx(math.radians(75), rel=REL)
    assert c.surge["pipe_modulus"] == pytest.approx(207e9, rel=REL)   # "207 GPa"
    assert c.surge["closure_time"] == 30.0
    assert c.economics["discount_rate"] == pytest.approx(0.07, rel=REL)   # "7 %"
    assert c.economics["energy_price"] == pytest.approx(0.085, rel=REL)
    assert {k: c.turbine[k] for k in ("type", "units", "peak_efficiency",
                                      "generator_efficiency", "transformer_efficiency")} == {
        "type": "pelton", "units": 2, "peak_efficiency": 0.90, "generator_efficiency": 0.97,
        "transformer_efficiency": 0.99}
    assert [s.diameter for s in c.segments] == [1.2, 1.0]
    assert c.profile["chainage"].iloc[-1] == 3100.0
    assert c.flow_record.iloc[0] == pytest.approx(0.7637, rel=REL)
    # the material table gives the roughness when the case gives none
    assert all(s.roughness > 0 for s in c.segments)
    assert any(row["key"] == "pipe 1.roughness" and row["source"] == "material table"
               for row in c.echo)


def test_tailwater_rating_loaded(loaded):
    c = loaded["millrace-flats-low-head"]
    r = c.tailwater_rating
    assert list(r["flow"]) == [0.0, 10.0, 20.0, 40.0, 80.0, 160.0]
    assert list(r["level"]) == [100.2, 100.4, 100.6, 101.1, 102.0, 103.4]
    assert c.tailwater_at(30.0) == pytest.approx(100.85, rel=1e-12)  # linear between rows
    assert c.tailwater_at(np.array([0.0, 160.0])) == pytest.approx([100.2, 103.4])


def test_load_case_accepts_the_toml_path(loaded):
    c = load_case(CASES / "millrace-flats-low-head" / "site.toml")
    assert c.design_flow == loaded["millrace-flats-low-head"].design_flow


# --------------------------------------------------------------------- SI <-> US equivalence
_QUANTITY = re.compile(r'"([-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?) ([^"]+)"')
#: units left as they are (not length, area, flow, temperature or stress)
_UNCHANGED = {"deg", "%", "s", "year", "/kWh", "Hz", "rpm"}

TO_US = {
    "m": ("ft", lambda v: v / FOOT),
    "mm": ("in", lambda v: v / 1000.0 / INCH),
    "m^2": ("ft^2", lambda v: v / FOOT**2),
    "m^3/s": ("cfs", lambda v: v / FOOT**3),
    "degC": ("degF", lambda v: v * 1.8 + 32.0),
    "GPa": ("psi", lambda v: v * 1e9 / PSI),
    "m/s": ("ft/s", lambda v: v / FOOT),
    "mm/year": ("in/year", lambda v: v / 1000.0 / INCH),
    # the international pound 0.45359237 kg exactly (NIST SP 811, B.8)
    "kg*m^2": ("lb*ft^2", lambda v: v / 0.45359237 / FOOT**2),
}
TO_SI = {
    "ft": ("m", lambda v: v * FOOT),
    "in": ("mm", lambda v: v * INCH * 1000.0),
    "ft^2": ("m^2", lambda v: v * FOOT**2),
    "cfs": ("m^3/s", lambda v: v * FOOT**3),
    "degF": ("degC", lambda v: (v - 32.0) / 1.8),
    "kip/in^2": ("Pa", lambda v: v * 1000.0 * PSI),
    "psi": ("Pa", lambda v: v * PSI),
    "ft/s": ("m/s", lambda v: v * FOOT),
    "in/year": ("mm/year", lambda v: v * INCH * 1000.0),
    "lb*ft^2": ("kg*m^2", lambda v: v * 0.45359237 * FOOT**2),
}


def _convert_toml(text: str, table: dict, system: str) -> str:
    def sub(m):
        value, unit = float(m.group(1)), m.group(2)
        if unit in table:
            new_unit, f = table[unit]
            return f'"{f(value)!r} {new_unit}"'
        assert unit in _UNCHANGED, f"no conversion for unit {unit!r}"
        return m.group(0)

    out = _QUANTITY.sub(sub, text)
    old = "si" if system == "us" else "us"
    return out.replace(f'units = "{old}"', f'units = "{system}"')


def _convert_csv(src: Path, dst: Path, table: dict) -> None:
    lines = src.read_text(encoding="utf-8").splitlines()
    comments = [ln for ln in lines if ln.startswith("#")]
    rows = list(csv.reader(ln for ln in lines if not ln.startswith("#")))
    header, data = rows[0], rows[1:]
    convs = []
    new_header = []
    for h in header:
        m = re.match(r"^(.*?)\s*\[(.+)\]$", h)
        if m and m.group(2) in table:
            unit, f = table[m.group(2)]
            new_header.append(f"{m.group(1)} [{unit}]")
            convs.append(f)
        else:
            assert m is None, f"no conversion for column {h!r}"
            new_header.append(h)
            convs.append(None)
    with dst.open("w", encoding="utf-8", newline="") as fh:
        for c in comments:
            fh.write(c + "\n")
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(new_header)
        for row in data:
            w.writerow([repr(f(float(v))) if f else v for v, f in zip(row, convs, strict=True)])


def _convert_case(src: Path, dst: Path, system: str) -> Path:
    table = TO_US if system == "us" else TO_SI
    dst.mkdir(parents=True)
    text = (src / "site.toml").read_text(encoding="utf-8")
    (dst / "site.toml").write_text(_convert_toml(text, table, system), encoding="utf-8")
    for csv_file in src.glob("*.csv"):
        _convert_csv(csv_file, dst / csv_file.name, table)
    return dst


def _is_number(v) -> bool:
    return isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool)


#: Text columns that quote quantities in the case's unit system (compared as numbers
#: elsewhere in the tables).
TEXT_WITH_QUANTITIES = {"message", "component", "point", "rejection from", "note", "fitting"}


def _assert_tables_equal(a: dict, b: dict):
    assert list(a) == list(b)
    for name in a:
        ta, tb = a[name], b[name]
        assert list(ta.columns) == list(tb.columns), name
        assert ta.shape == tb.shape, name
        for col in ta.columns:
            va, vb = ta[col].to_numpy(), tb[col].to_numpy()
            if ta[col].dtype.kind in "fiu" and tb[col].dtype.kind in "fiu":
                np.testing.assert_allclose(vb.astype(float), va.astype(float), rtol=1e-9,
                                           atol=1e-9, err_msg=f"{name}: {col}")
                continue
            num_a = np.array([_is_number(v) for v in va], dtype=bool)
            num_b = np.array([_is_number(v) for v in vb], dtype=bool)
            assert (num_a == num_b).all(), f"{name}: {col}: numbers in different rows"
            if num_a.any():
                np.testing.assert_allclose(vb[num_b].astype(float), va[num_a].astype(float),
                                           rtol=1e-9, atol=1e-9, err_msg=f"{name}: {col}")
            if name == "inputs" and col == "as written":
                continue   # written in the other unit system, by construction
            if col in TEXT_WITH_QUANTITIES:
                continue   # cautions and labels quote quantities in the case's own units
            keys = ta["key"].to_numpy() if name == "inputs" else None
            quantities = ta["quantity"].to_numpy() if "quantity" in ta.columns else None
            for i in np.flatnonzero(~num_a):
                if keys is not None and keys[i] == "site.units":
                    continue
                if quantities is not None and "thinnest to thickest" in str(quantities[i]):
                    continue   # a wall range written in the case's units
                assert va[i] == vb[i] or (pd.isna(va[i]) and pd.isna(vb[i])), \
                    f"{name}: {col}, row {i}: {va[i]!r} != {vb[i]!r}"


@pytest.mark.parametrize("name, system", [
    ("alder-gorge-high-head", "us"),
    # a flow computed as exactly the turbine minimum once rounded below it in one unit
    # system only; the minimum-flow comparisons now carry a relative tolerance
    ("cedar-fork-us-units", "si"),
])
def test_same_site_in_other_units_gives_same_results(tmp_path, name, system):
    src = CASES / name
    dst = _convert_case(src, tmp_path / f"{name}-{system}", system)
    text = (dst / "site.toml").read_text(encoding="utf-8")
    # the copy really is in the other system
    if system == "us":
        assert " m\"" not in text and "m^3/s" not in text and "degC" not in text
        assert "[ft]" in (dst / "profile.csv").read_text() and "[cfs]" in (
            dst / "flows.csv").read_text()
    else:
        assert " ft\"" not in text and "cfs" not in text and "degF" not in text
    case_a, case_b = load_case(src), load_case(dst)
    assert case_b.unit_system == system
    res_a, res_b = penstock.run_case(case_a), penstock.run_case(case_b)
    _assert_tables_equal(res_a.tables(), res_b.tables())
    head_b = dataclasses.asdict(res_b.headline)
    for key, value in dataclasses.asdict(res_a.headline).items():
        if key == "optimum_relative_derivative":   # a diagnostic of the optimizer, ~0 by design
            assert abs(head_b[key]) < 1e-5 and abs(value) < 1e-5
            continue
        if value is None or isinstance(value, (str, bool)):
            assert head_b[key] == value, key
            continue
        if isinstance(value, dict):   # the recommended candidate's row
            for k, v in value.items():
                if isinstance(v, float):
                    assert head_b[key][k] == pytest.approx(v, rel=1e-9, abs=1e-12), k
                else:
                    assert head_b[key][k] == v, k
            continue
        assert head_b[key] == pytest.approx(value, rel=1e-9, abs=1e-12), key


# --------------------------------------------------------------------- malformed cases
ALDER, CEDAR, MILLRACE = DEMO_CASES[0], DEMO_CASES[1], DEMO_CASES[2]
TOML = "site.toml"


def _toml_line(name: str, text: str) -> int:
    lines = (CASES / name / TOML).read_text(encoding="utf-8").splitlines()
    return next(i for i, ln in enumerate(lines, start=1) if ln == text)


def _rm(fname: str):
    return lambda d: (d / fname).unlink()


def _ed(fname: str, old: str, new: str):
    return lambda d: edit_file(d / fname, old, new)


def _put(fname: str, text: str):
    return lambda d: (d / fname).write_text(text, encoding="utf-8")


def _escape(d: Path):
    (d.parent / "x.csv").write_bytes((d / "profile.csv").read_bytes())
    edit_file(d / TOML, 'profile = "profile.csv"', 'profile = "../x.csv"')


def _di_prices(rows: str):
    """A ductile-iron price table with these data rows, named by the case."""
    def mutate(d: Path):
        (d / "di.csv").write_text("size [mm],class [bar],price [/m]\n" + rows,
                                  encoding="utf-8")
        edit_file(d / TOML, "[economics]", '[diameter_study]\nductile_iron_prices = "di.csv"'
                  "\n\n[economics]")
    return mutate


def _prices(rows: str):
    """A PE100 price table with these data rows, named by the case."""
    def mutate(d: Path):
        (d / "pe.csv").write_text("size [mm],class [bar],price [/m]\n" + rows,
                                  encoding="utf-8")
        edit_file(d / TOML, "[economics]", '[diameter_study]\npe100_prices = "pe.csv"\n\n'
                  "[economics]")
    return mutate


def _cp1252_flow_header(d: Path):
    """A header saved by a spreadsheet in Windows-1252: 'flow [m\xb3/s]' (superscript 3)."""
    p = d / "flows.csv"
    p.write_bytes(p.read_bytes().replace(b"flow [m^3/s]", b"flow [m\xb3/s]"))


@dataclass
class Bad:
    id: str
    base: str
    mutate: Callable[[Path], None]
    file: str                          # the file the message must name
    where: tuple[str, ...]             # further substrings the message must hold
    csv_row: str | None = None         # the changed CSV line, for the row-number test
    marks: tuple = field(default_factory=tuple)


FLOW_ROW = "2008-01-03,1.0343"   # data row 3 of the Alder flow record: file line 5
HEADWATER_LINE = _toml_line(ALDER, 'headwater = "1412 m"')

CATALOGUE = [
    # ---- files
    Bad("missing-referenced-file", ALDER, _rm("flows.csv"), TOML,
        ("flows.record", "'flows.csv'", "does not exist")),
    Bad("missing-site-toml", ALDER, _rm(TOML), TOML, ("not found",)),
    Bad("path-escapes-folder", ALDER, _escape, TOML,
        ("route.profile", "outside the case folder")),
    Bad("absolute-path", ALDER, _ed(TOML, 'profile = "profile.csv"', 'profile = "/etc/hosts"'),
        TOML, ("route.profile", "outside the case folder")),
    Bad("toml-syntax-error", ALDER, _ed(TOML, 'headwater = "1412 m"', 'headwater = "1412 m'),
        TOML, ("TOML syntax error", f"line {HEADWATER_LINE}")),
    Bad("toml-not-utf8", ALDER, lambda d: (d / TOML).write_bytes(
        (d / TOML).read_bytes().replace(b"Alder Gorge (", b"Alder Gorge \xe9(")),
        TOML, ("UTF-8",)),
    # ---- keys and sections
    Bad("unknown-key-near-miss", ALDER, _ed(TOML, 'diameter = "1.0 m"', 'diamter = "1.0 m"'),
        TOML, ("pipe 2.diamter", "unknown key", "did you mean 'diameter'")),
    Bad("unknown-section", ALDER, _ed(TOML, "[turbine]", "[turbines]"), TOML,
        ("[turbines]", "unknown section", "did you mean 'turbine'")),
    Bad("missing-required-key", ALDER, _ed(TOML, 'design = "2.4 m^3/s"\n', ""), TOML,
        ("flows.design", "is missing")),
    Bad("pipe-as-single-table", MILLRACE, _ed(TOML, "[[pipe]]", "[pipe]"), TOML,
        ("[[pipe]]",)),
    # ---- quantities and units
    Bad("wrong-dimension", ALDER, _ed(TOML, 'headwater = "1412 m"', 'headwater = "120 kg"'),
        TOML, ("levels.headwater", "'120 kg' is not a length")),
    Bad("no-unit-in-text", ALDER, _ed(TOML, 'headwater = "1412 m"', 'headwater = "1412"'),
        TOML, ("levels.headwater", "no unit")),
    Bad("no-unit-bare-number", ALDER, _ed(TOML, 'headwater = "1412 m"', "headwater = 1412"),
        TOML, ("levels.headwater", "no unit")),
    Bad("unknown-unit", ALDER, _ed(TOML, 'altitude = "1400 m"', 'altitude = "1400 mtr"'),
        TOML, ("water.altitude", "cannot read")),
    Bad("not-finite", ALDER, _ed(TOML, 'headwater = "1412 m"', 'headwater = "nan m"'),
        TOML, ("levels.headwater", "not a finite number")),
    Bad("string-where-number-expected", ALDER,
        _ed(TOML, "peak_efficiency = 0.90", 'peak_efficiency = "high"'), TOML,
        ("turbine.peak_efficiency", "'high'")),
    Bad("integer-written-as-text", ALDER, _ed(TOML, "units = 2", 'units = "2"'), TOML,
        ("turbine.units", "not a whole number")),
    Bad("text-key-given-a-number", ALDER,
        _ed(TOML, 'name = "Alder Gorge (invented high-head demo)"', "name = 5"), TOML,
        ("site.name", "not text")),
    Bad("boolean-for-a-length", ALDER, _ed(TOML, 'wall_thickness = "10 mm"',
                                           "wall_thickness = true"), TOML,
        ("pipe 1.wall_thickness",)),
    Bad("flow-list-item-wrong-dimension", ALDER,
        _ed(TOML, 'extra = ["1.2 m^3/s"]', 'extra = ["1.2 m^3/s", "3 kg"]'), TOML,
        ("flows.extra[2]", "not a flow rate")),
    # ---- ranges
    Bad("zero-diameter", ALDER, _ed(TOML, 'diameter = "1.0 m"', 'diameter = "0 m"'), TOML,
        ("pipe 2.diameter", "out of range", "above 0 m")),
    Bad("negative-roughness", ALDER, _ed(TOML, 'wall_thickness = "10 mm"',
                                         'wall_thickness = "10 mm"\nroughness = "-0.1 mm"'),
        TOML, ("pipe 1.roughness", "out of range")),
    Bad("efficiency-above-one", ALDER,
        _ed(TOML, "peak_efficiency = 0.90", "peak_efficiency = 1.2"), TOML,
        ("turbine.peak_efficiency", "out of range", "at most 1")),
    Bad("efficiency-above-one-percent", ALDER,
        _ed(TOML, "generator_efficiency = 0.97", 'generator_efficiency = "104 %"'), TOML,
        ("turbine.generator_efficiency", "out of range")),
    Bad("units-zero", ALDER, _ed(TOML, "units = 2", "units = 0"), TOML,
        ("turbine.units", "out of range", "at least 1")),
    Bad("negative-design-flow", ALDER, _ed(TOML, 'design = "2.4 m^3/s"',
                                           'design = "-2.4 m^3/s"'), TOML,
        ("flows.design", "out of range")),
    Bad("temperature-out-of-range", ALDER, _ed(TOML, 'temperature = "8 degC"',
                                               'temperature = "60 degC"'), TOML,
        ("water.temperature", "out of range", "at most 40")),
    # ---- choices
    Bad("unknown-choice-banki", ALDER, _ed(TOML, 'type = "pelton"', 'type = "banki"'), TOML,
        ("turbine.type", "'banki' is not allowed", "'crossflow'")),
    Bad("unknown-choice-near-miss", ALDER, _ed(TOML, 'type = "pelton"', 'type = "pleton"'),
        TOML, ("turbine.type", "did you mean 'pelton'")),
    Bad("unknown-material", ALDER, _ed(TOML, 'material = "welded_steel"',
                                       'material = "welded_stel"'), TOML,
        ("pipe 1.material", "welded_stel")),
    # ---- pipe segments
    Bad("segment-gap", ALDER, _ed(TOML, 'from = "1600 m"', 'from = "1650 m"'), TOML,
        ("pipe 2.from", "a gap")),
    Bad("segment-overlap", ALDER, _ed(TOML, 'from = "1600 m"', 'from = "1500 m"'), TOML,
        ("pipe 2.from", "overlap")),
    Bad("segments-end-short", ALDER, _ed(TOML, 'to = "3100 m"', 'to = "3000 m"'), TOML,
        ("pipe 2.to", "cover the whole profile")),
    Bad("segments-start-late", ALDER, _ed(TOML, 'from = "0 m"', 'from = "100 m"'), TOML,
        ("pipe 1.from", "cover the whole profile")),
    Bad("segment-to-before-from", MILLRACE, _ed(TOML, 'to = "64 m"', 'to = "-5 m"'), TOML,
        ("pipe 1.to", "to > from")),
    # ---- local losses
    Bad("loss-off-route", ALDER, _ed(TOML, 'at = "2900 m"', 'at = "3500 m"'), TOML,
        ("loss 4.at", "off the route")),
    Bad("unknown-loss-kind", ALDER, _ed(TOML, 'kind = "bend"\nat = "1650 m"',
                                        'kind = "elbow"\nat = "1650 m"'), TOML,
        ("loss 3.kind", "'elbow' is not a loss kind", "bend")),
    Bad("missing-loss-parameter", ALDER, _ed(TOML, 'angle = "35 deg"\n', ""), TOML,
        ("loss 3.angle", "is missing")),
    Bad("missing-rack-area", ALDER, _ed(TOML, 'rack_area = "6 m^2"\n', ""), TOML,
        ("loss 1.rack_area", "is missing")),
    Bad("unknown-loss-key", ALDER,
        _ed(TOML, "radius_ratio = 3\n", "radius_ratio = 3\nradius = 3\n"), TOML,
        ("loss 3.radius", "unknown key")),
    Bad("loss-parameter-wrong-dimension", ALDER, _ed(TOML, 'angle = "35 deg"',
                                                     'angle = "35 m"'), TOML,
        ("loss 3.angle",)),
    Bad("custom-loss-without-k", MILLRACE, _ed(TOML, "[flows]",
                                               '[[loss]]\nkind = "custom"\nat = "30 m"\n\n'
                                               "[flows]"), TOML,
        ("loss 5.k", "is missing")),
    # ---- levels and flows
    Bad("headwater-below-tailwater", ALDER, _ed(TOML, 'tailwater = "1085 m"',
                                                'tailwater = "1500 m"'), TOML,
        ("levels", "tailwater 1500 m is not below the minimum headwater")),
    Bad("headwater-min-above-headwater", ALDER,
        _ed(TOML, 'headwater_min = "1410.5 m"', 'headwater_min = "1413 m"'), TOML,
        ("levels.headwater_min", "above the headwater")),
    Bad("maximum-below-design", ALDER, _ed(TOML, 'maximum = "2.6 m^3/s"',
                                           'maximum = "2.0 m^3/s"'), TOML,
        ("flows.maximum", "below the design flow")),
    Bad("minimum-above-design", ALDER, _ed(TOML, 'residual = "0.15 m^3/s"',
                                           'residual = "0.15 m^3/s"\nminimum = "3 m^3/s"'),
        TOML, ("flows.minimum", "not below the design")),
    # ---- route profile CSV
    Bad("chainage-backwards", ALDER, _ed("profile.csv", "\n400,1402.5,1404.0",
                                         "\n100,1402.5,1404.0"), "profile.csv",
        ("column 'chainage'", "does not increase"), csv_row="100,1402.5,1404.0"),
    Bad("csv-column-without-unit", ALDER, _ed("profile.csv", "chainage [m],", "chainage,"),
        "profile.csv", ("column 'chainage'", "no unit")),
    Bad("csv-column-wrong-dimension", ALDER, _ed("profile.csv", "elevation [m]",
                                                 "elevation [kg]"), "profile.csv",
        ("column 'elevation [kg]'", "not a length")),
    Bad("csv-missing-column", ALDER, _ed("profile.csv", "elevation [m]", "height [m]"),
        "profile.csv", ("column 'elevation'", "is missing")),
    Bad("csv-infinite-value", ALDER, _ed("profile.csv", "\n400,1402.5,", "\n400,inf,"),
        "profile.csv", ("column 'elevation [m]'", "not a finite number"),
        csv_row="400,inf,1404.0"),
    Bad("profile-one-point", MILLRACE, _put("profile.csv", "chainage [m],elevation [m]\n0,107\n"),
        "profile.csv", ("at least two points",)),
    Bad("csv-not-utf8", ALDER, _cp1252_flow_header, "flows.csv", ("cannot be read", "UTF-8")),
    # ---- flow record CSV
    Bad("negative-flow", ALDER, _ed("flows.csv", FLOW_ROW, "2008-01-03,-1.0343"), "flows.csv",
        ("column 'flow'", "-1.0343", "negative"), csv_row="2008-01-03,-1.0343"),
    Bad("empty-flow-file", ALDER, _put("flows.csv", ""), "flows.csv", ("empty",)),
    Bad("flow-file-header-only", ALDER, _put("flows.csv", "date,flow [m^3/s]\n"), "flows.csv",
        ("no data rows",)),
    Bad("duplicate-dates", ALDER, _ed("flows.csv", FLOW_ROW, "2008-01-02,1.0343"), "flows.csv",
        ("column 'date'", "2008-01-02", "twice"), csv_row="2008-01-02,1.0343"),
    Bad("dates-out-of-order", ALDER, _ed("flows.csv", "2008-01-03,1.0343\n2008-01-04,",
                                         "2008-01-04,1.0343\n2008-01-03,"), "flows.csv",
        ("column 'date'", "comes before"), csv_row="2008-01-03,0.9705"),
    Bad("non-date", ALDER, _ed("flows.csv", FLOW_ROW, "2008-01-32,1.0343"), "flows.csv",
        ("column 'date'", "'2008-01-32' is not a date"), csv_row="2008-01-32,1.0343"),
    Bad("non-numeric-flow", ALDER, _ed("flows.csv", FLOW_ROW, "2008-01-03,1.03x"), "flows.csv",
        ("column 'flow [m^3/s]'", "'1.03x' is not a number"), csv_row="2008-01-03,1.03x"),
    Bad("empty-flow-cell", ALDER, _ed("flows.csv", FLOW_ROW, "2008-01-03,"), "flows.csv",
        ("column 'flow [m^3/s]'", "is empty"), csv_row="2008-01-03,"),
    Bad("flow-gap-refused", ALDER, lambda d: (edit_file(d / "flows.csv", FLOW_ROW + "\n", ""),
                                              edit_file(d / TOML, "[flows]\n",
                                                        '[flows]\ngaps = "refuse"\n')),
        "flows.csv", ("1 time step is missing", "2008-01-03", 'flows.gaps = "linear"')),
    Bad("flow-record-not-daily", ALDER,
        _put("flows.csv", "date,flow [m^3/s]\n2008-01-01,1\n2008-01-08,2\n2008-01-15,3\n"),
        "flows.csv", ("column 'date'", "daily or hourly")),
    Bad("flow-column-unit-wrong-dimension", ALDER, _ed("flows.csv", "flow [m^3/s]",
                                                       "flow [m^3]"), "flows.csv",
        ("column 'flow [m^3]'", "not a flow rate")),
    # ---- tailwater rating CSV
    Bad("tailwater-rating-not-monotone", MILLRACE, _ed("tailwater.csv", "40,101.1", "40,100.5"),
        "tailwater.csv", ("column 'level'", "does not increase"), csv_row="40,100.5"),
    Bad("tailwater-rating-negative-flow", MILLRACE, _ed("tailwater.csv", "\n0,100.2",
                                                        "\n-5,100.2"), "tailwater.csv",
        ("column 'flow'", "negative"), csv_row="-5,100.2"),
    Bad("csv-same-quantity-twice", ALDER, _ed("profile.csv", "ground [m]", "elevation [ft]"),
        "profile.csv", ("column 'elevation", "repeats the quantity")),
    Bad("negative-rack-area", ALDER, _ed(TOML, 'rack_area = "6 m^2"', 'rack_area = "-6 m^2"'),
        TOML, ("loss 1.rack_area", "out of range")),
    # ---- the materials of the diameter study (a list of names)
    Bad("study-material-unknown", ALDER, _ed(TOML, "[uncertainty]", '[diameter_study]\n'
        'materials = ["welded_steel", "grp"]\n\n[uncertainty]'), TOML,
        ("diameter_study.materials[2]", "'grp' is not allowed", "'hdpe'")),
    Bad("study-material-twice", ALDER, _ed(TOML, "[uncertainty]", '[diameter_study]\n'
        'materials = ["hdpe", "HDPE"]\n\n[uncertainty]'), TOML,
        ("diameter_study.materials[2]", "listed twice")),
    Bad("study-materials-empty", ALDER, _ed(TOML, "[uncertainty]", '[diameter_study]\n'
        'materials = []\n\n[uncertainty]'), TOML,
        ("diameter_study.materials", "not a non-empty list")),
    Bad("study-materials-not-a-list", ALDER, _ed(TOML, "[uncertainty]", '[diameter_study]\n'
        'materials = "hdpe"\n\n[uncertainty]'), TOML,
        ("diameter_study.materials", "not a non-empty list", "e.g. [")),
    Bad("stepped-material-not-compared", ALDER, _ed(TOML, "[uncertainty]", '[diameter_study]\n'
        'materials = ["welded_steel", "hdpe"]\nstepped_materials = ["welded_steel", '
        '"ductile_iron"]\n\n[uncertainty]'), TOML,
        ("diameter_study.stepped_materials[2]", "'ductile_iron' is not among "
         "diameter_study.materials")),
    Bad("stepped-material-unknown", ALDER, _ed(TOML, "[uncertainty]", '[diameter_study]\n'
        'stepped_materials = ["welded_steel", "grp"]\n\n[uncertainty]'), TOML,
        ("diameter_study.stepped_materials[2]", "'grp' is not allowed")),
    # ---- a price table of the material comparison
    Bad("price-size-not-in-series", MILLRACE, _prices("1800,6.3,2100\n650,10,900\n"),
        "pe.csv", ("row 3", "column 'size'", "650 mm is not a PE100 outside diameter"),
        csv_row="650,10,900"),
    Bad("price-class-not-a-class", MILLRACE, _prices("1800,11,2100\n"), "pe.csv",
        ("row 2", "column 'class'", "11 bar is not a class"), csv_row="1800,11,2100"),
    Bad("price-classes-not-increasing", MILLRACE,
        _prices("1800,10,3300\n1800,6.3,2100\n"), "pe.csv",
        ("row 3", "column 'class'", "does not increase"), csv_row="1800,6.3,2100"),
    Bad("price-size-missing", MILLRACE, _prices("1800,6.3,2100\n,10,3300\n"), "pe.csv",
        ("row 3", "column 'size [mm]'", "is empty"), csv_row=",10,3300"),
    Bad("price-table-for-unlisted-material", MILLRACE, lambda d: (
        (d / "di.csv").write_text("size [mm],class [bar],price [/m]\n600,40,900\n",
                                  encoding="utf-8"),
        edit_file(d / TOML, "[economics]", '[diameter_study]\nmaterials = ["welded_steel", '
                  '"hdpe"]\nductile_iron_prices = "di.csv"\n\n[economics]')), TOML,
        ("diameter_study.ductile_iron_prices", "'ductile_iron' is not among")),
    Bad("price-class-above-the-dn-range", MILLRACE, _di_prices("1200,30,900\n1200,64,1500\n"),
        "di.csv", ("row 3", "column 'class'", "64 bar is above the highest class of DN 1200",
                   "C40"), csv_row="1200,64,1500"),
    Bad("minimum-reach-longer-than-route", MILLRACE, _ed(TOML, "[economics]",
        '[diameter_study]\nminimum_reach = "2 km"\n\n[economics]'), TOML,
        ("diameter_study.minimum_reach", "longer than the route")),
    Bad("tailwater-rating-above-headwater", MILLRACE,
        _put("tailwater.csv", "flow [m^3/s],level [m]\n0,112.0\n200,115.0\n"), TOML,
        ("levels", "not below the minimum headwater")),
]

assert len({b.id for b in CATALOGUE}) == len(CATALOGUE)


@pytest.fixture(params=[pytest.param(b, id=b.id, marks=b.marks) for b in CATALOGUE])
def bad_case(request, tmp_path):
    """A demo case copied to ``tmp_path/case/<name>`` and broken one way."""
    bad: Bad = request.param
    folder = copy_demo(bad.base, tmp_path / "case")
    bad.mutate(folder)
    return bad, folder


def _assert_one_line_error(code, out, err, bad: Bad):
    assert code == 2, f"exit code {code}; stderr: {err}"
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    msg = lines[0]
    assert msg.startswith("penstock: error: ")
    assert bad.file in msg, msg
    for part in bad.where:
        assert part in msg, f"{part!r} not in {msg!r}"
    assert out == ""


def test_malformed_case_check_exits_2(bad_case):
    bad, folder = bad_case
    _assert_one_line_error(*run_cli(["check", folder]), bad)


def test_malformed_case_run_exits_2_and_writes_nothing(bad_case, tmp_path):
    bad, folder = bad_case
    out_dir = tmp_path / "out"
    code, out, err = run_cli(["run", folder, "--out", out_dir / "out"])
    _assert_one_line_error(code, out, err, bad)
    assert not out_dir.exists() or not any(out_dir.iterdir())


def test_malformed_case_raises_case_error(bad_case):
    bad, folder = bad_case
    with pytest.raises(CaseError, match=re.escape(bad.where[0])):
        load_case(folder)


@pytest.mark.parametrize("bad", [b for b in CATALOGUE if b.csv_row], ids=lambda b: b.id)
def test_csv_error_names_the_row_as_seen_in_the_file(bad, tmp_path):
    """'row N' is line N of the file, counting the '#' comment lines and the header."""
    folder = copy_demo(bad.base, tmp_path)
    bad.mutate(folder)
    lines = (folder / bad.file).read_text(encoding="utf-8").splitlines()
    row = lines.index(bad.csv_row) + 1
    with pytest.raises(CaseError, match=rf"\brow {row}\b"):
        load_case(folder)


@pytest.mark.parametrize("cell", ["", "NA"], ids=["blank", "NA"])
def test_empty_csv_cell_is_called_empty(tmp_path, cell):
    folder = copy_demo(ALDER, tmp_path)
    edit_file(folder / "flows.csv", FLOW_ROW, f"2008-01-03,{cell}")
    with pytest.raises(CaseError, match=r"column 'flow \[m\^3/s\]'") as info:
        load_case(folder)
    assert "nan" not in str(info.value)
    assert "empty" in str(info.value) or "missing" in str(info.value)


def test_integer_out_of_range_is_shown_as_written(tmp_path):
    folder = copy_demo(ALDER, tmp_path)
    edit_file(folder / TOML, "units = 2", "units = 0")
    with pytest.raises(CaseError, match=r"turbine\.units: 0 is out of range"):
        load_case(folder)


def test_banki_suggests_crossflow(tmp_path):
    folder = copy_demo(ALDER, tmp_path)
    edit_file(folder / TOML, 'type = "pelton"', 'type = "banki"')
    with pytest.raises(CaseError, match=r"did you mean 'crossflow'"):
        load_case(folder)


def test_csv_row_numbers_without_comment_lines(tmp_path):
    """With no comment line, the header is row 1 and the first data row is row 2."""
    folder = copy_demo(ALDER, tmp_path)
    text = (folder / "flows.csv").read_text(encoding="utf-8")
    text = "\n".join(ln for ln in text.splitlines() if not ln.startswith("#")) + "\n"
    (folder / "flows.csv").write_text(text.replace(FLOW_ROW, "2008-01-03,-1"),
                                      encoding="utf-8")
    with pytest.raises(CaseError, match=r"flows\.csv: row 4, column 'flow'"):
        load_case(folder)


def test_cli_subprocess_error_has_no_traceback(tmp_path):
    """The real entry point, in its own process: exit 2 and one line on stderr."""
    import subprocess
    import sys

    folder = copy_demo(MILLRACE, tmp_path)
    edit_file(folder / TOML, 'headwater = "112.0 m"', 'headwater = "112 kg"')
    proc = subprocess.run([sys.executable, "-m", "penstock.cli", "check", str(folder)],
                          capture_output=True, text=True, timeout=60)
    assert proc.returncode == 2
    assert proc.stdout == ""
    assert proc.stderr.count("\n") == 1 and "Traceback" not in proc.stderr
    assert "site.toml: levels.headwater:" in proc.stderr


# --------------------------------------------------------------------- gaps filled
def test_gaps_filled_linearly_are_echoed(tmp_path):
    folder = copy_demo(ALDER, tmp_path)
    edit_file(folder / "flows.csv", "2008-01-03,1.0343\n2008-01-04,0.9705\n", "")
    edit_file(folder / TOML, "[flows]\n", '[flows]\ngaps = "linear"\n')
    case = load_case(folder)
    q = case.flow_record
    assert len(q) == 4383
    assert q.index.equals(pd.date_range("2008-01-01", "2019-12-31", freq="D"))
    # filled on a straight line between 0.9019 (Jan 2) and 0.9397 (Jan 5)
    assert q["2008-01-03"] == pytest.approx(0.9019 + (0.9397 - 0.9019) / 3, rel=1e-12)
    assert q["2008-01-04"] == pytest.approx(0.9019 + 2 * (0.9397 - 0.9019) / 3, rel=1e-12)
    assert q["2008-01-05"] == 0.9397
    echo = {row["key"]: row for row in case.echo}
    assert echo["flows.gaps"]["value (SI)"] == "linear"
    assert echo["flows.gaps"]["source"] == "site.toml"
    gaps = echo["flows.record gaps"]
    assert gaps["as written"] == "2 missing steps"
    assert "linear interpolation" in gaps["value (SI)"]
    assert gaps["source"] == "flows.csv"
    assert run_cli(["check", folder])[0] == 0


def test_no_gaps_no_gap_echo(loaded):
    assert not any(row["key"] == "flows.record gaps" for row in loaded[ALDER].echo)


# --------------------------------------------------------------------- penstock new
def test_new_template_checks_and_runs(tmp_path):
    folder = tmp_path / "my-site"
    code, out, err = run_cli(["new", folder])
    assert (code, err) == (0, "")
    assert "wrote a template case" in out
    assert sorted(p.name for p in folder.iterdir()) == ["flows.csv", "profile.csv", "site.toml"]
    text = (folder / "site.toml").read_text(encoding="utf-8")
    assert "planning-level" in text and "licensed engineer" in text
    assert run_cli(["check", folder])[0] == 0
    report = tmp_path / "reports" / "my-site"
    code, out, err = run_cli(["run", folder, "--out", report])
    assert (code, err) == (0, ""), err
    assert (report / "my-site.xlsx").is_file() and (report / "summary.csv").is_file()


def test_new_refuses_a_non_empty_folder(tmp_path):
    folder = tmp_path / "taken"
    folder.mkdir()
    (folder / "notes.txt").write_text("keep me", encoding="utf-8")
    code, out, err = run_cli(["new", folder])
    assert code == 2
    assert len(err.splitlines()) == 1 and "Traceback" not in err
    assert "not empty" in err and str(folder) in err
    assert [p.name for p in folder.iterdir()] == ["notes.txt"]
    assert (folder / "notes.txt").read_text(encoding="utf-8") == "keep me"


def test_new_into_an_existing_empty_folder(tmp_path):
    folder = tmp_path / "empty"
    folder.mkdir()
    assert run_cli(["new", folder])[0] == 0
    assert run_cli(["check", folder])[0] == 0
