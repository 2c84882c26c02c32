"""Read and validate a site case folder.

A case folder holds ``site.toml`` (the scalar inputs, each with its unit) and the
CSV tables it names (route profile, flow record, optional tailwater rating).
:func:`load_case` checks every field, converts everything to SI floats and
returns a :class:`Case`.  Any problem raises :class:`CaseError`, whose text names
the file, the key or the CSV row, what is wrong and what is expected.

The keys themselves are declared once, in :mod:`penstock.schema`.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from . import csvfile, fittings, friction, route, units
from .errors import CaseError
from .schema import CASE_FILE, COLUMN_BOUNDS, SECTIONS, SECTIONS_BY_NAME, Field, Section


# --------------------------------------------------------------------------- case objects
@dataclass(frozen=True)
class Segment:
    """A uniform pipe segment between two chainages. SI units."""

    start: float
    end: float
    diameter: float
    material: str
    roughness: float
    wall_thickness: float | None = None
    roughness_growth: float | None = None

    @property
    def area(self) -> float:
        return math.pi * self.diameter**2 / 4.0


@dataclass(frozen=True)
class LocalLoss:
    """One local loss at a chainage, with its kind-specific parameters (SI)."""

    kind: str
    at: float
    label: str
    k: float | None
    params: dict


@dataclass
class Case:
    """A validated site case, everything in SI floats and pandas objects."""

    folder: Path
    name: str
    note: str
    unit_system: str
    temperature: float
    altitude: float
    headwater: float
    headwater_min: float
    headwater_max: float | None
    tailwater: float | None
    tailwater_rating: pd.DataFrame | None
    headwater_rating: pd.DataFrame | None
    headwater_series: pd.Series | None
    profile: pd.DataFrame          # columns: chainage, elevation (+ ground)
    pressure_margin: float
    intake_approach: str
    service_life: float
    segments: list[Segment]
    losses: list[LocalLoss]
    flow_record: pd.Series | None  # river flow [m^3/s] on a DatetimeIndex
    design_flow: float
    maximum_flow: float
    minimum_flow: float | None
    extra_flows: list[float]
    residual_flow: float
    gap_method: str
    residual_monthly: list[float]
    residual_percent: float
    firm_exceedance: float
    turbine: dict
    draft_tube: dict | None
    economics: dict
    surge: dict
    wall: dict = field(default_factory=dict)
    costs: dict = field(default_factory=dict)
    diameter_study: dict = field(default_factory=dict)
    uncertainty: dict = field(default_factory=dict)
    echo: list[dict] = field(default_factory=list)
    profile_file: str = "profile.csv"   # the route profile's file name, for messages

    @property
    def slug(self) -> str:
        """File-system name of the case: its folder's own name (also when given as '.')."""
        return self.folder.resolve().name

    def headwater_at(self, river_flow, index=None):
        """Headwater level at each step [m]: series, rating at the river flow, or constant."""
        q = np.asarray(river_flow, dtype=float)
        if self.headwater_series is not None:
            return self.headwater_series.reindex(index).to_numpy(dtype=float)
        if self.headwater_rating is not None:
            r = self.headwater_rating
            return np.interp(q, r["flow"].to_numpy(), r["level"].to_numpy())
        return np.full_like(q, self.headwater, dtype=float)

    def tailwater_at(self, river_flow):
        """Tailwater level for a river flow [m]; constant when no rating is given."""
        q = np.asarray(river_flow, dtype=float)
        if self.tailwater_rating is None:
            return np.full_like(q, self.tailwater, dtype=float) if q.ndim else float(self.tailwater)
        r = self.tailwater_rating
        out = np.interp(q, r["flow"].to_numpy(), r["level"].to_numpy())
        return out if q.ndim else float(out)


# --------------------------------------------------------------------------- helpers
_HEADER = re.compile(r"^\s*([^\[\]]+?)\s*(?:\[\s*([^\[\]]*?)\s*\])?\s*$")
_DECIMAL = r"[-+]?(?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d{1,3})?|(?i:inf(?:inity)?))"
#: Cell texts that spreadsheets and data systems write for a missing value.
_MISSING = {"na", "n/a", "#n/a", "nan", "null", "none", "-", "--", "?"}
_COMMA_DECIMAL = re.compile(r"[-+]?\d*,\d+")
_ISO_DATE = r"\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?)?"
_UTC_OFFSET = r"(?<=\d)(Z|[+-]\d{2}:?\d{2})$"
#: Characters refused in case text: the C0 and C1 control characters (tabs and line
#: breaks are allowed in the free-text note only).
_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")
_DIMENSIONLESS_UNITS = {"-", "1", "", "%"}


#: Other names of the trade for a choice, offered as hints.
ALIASES = {"banki": "crossflow", "banki-michell": "crossflow", "michell-banki": "crossflow",
           "cross-flow": "crossflow", "cross_flow": "crossflow", "impulse": "pelton"}


def _did_you_mean(word: str, options) -> str:
    alias = ALIASES.get(str(word).strip().lower())
    if alias in options:
        return f"; did you mean '{alias}'?"
    close = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f"; did you mean '{close[0]}'?" if close else ""


def _column_example(cname: str, kind: str) -> str:
    """How a column is headed: 'date', or 'name [unit]' with an example unit."""
    if kind == "date":
        return f"'{cname}'"
    return f"'{cname} [unit]', e.g. '{cname} [{units.SI_UNITS[kind] or '-'}]'"


def _fmt_si(value: float, kind: str) -> str:
    unit = units.SI_UNITS.get(kind, "")
    return f"{value:g} {unit}".strip()


class _Reader:
    """Reads one case folder, accumulating the inputs echo."""

    def __init__(self, folder: Path):
        self.folder = folder
        self.file = CASE_FILE
        self.echo: list[dict] = []
        self.lines: dict[str, list[int]] = {}
        self.units: dict[str, dict[str, str]] = {}   # file -> column -> unit as written
        self.say = None   # set once [site] is read: formats chainages in the case's units

    def line(self, name: str, row: int) -> int:
        """The file's line number of data row ``row`` (0-based) of a CSV read by :meth:`table`."""
        lines = self.lines.get(name)
        return lines[row] if lines and row < len(lines) else row + 2

    # ---------------------------------------------------------------- scalar fields
    def value(self, section: str, table: dict, f: Field, where: str):
        """Validate and convert one field of a TOML table."""
        key = f"{where}{f.name}"
        if f.name in table:
            raw = table[f.name]
            given = True
        else:
            if f.required:
                raise CaseError(self.file, key, f"is missing; expected {self._expect(f)}")
            if f.default is None:
                return None
            raw = f.default
            given = False
        val = self._convert(raw, f, key)
        if f.kind != "file":
            self.echo.append({
                "section": section, "key": key, "as written": _as_written(raw),
                "value (SI)": _echo_value(val), "SI unit": units.SI_UNITS.get(f.kind, ""),
                "source": self.file if given else "default",
            })
        return val

    def _expect(self, f: Field) -> str:
        if f.kind == "choice":
            return "one of " + ", ".join(f"'{c}'" for c in f.choices)
        if f.kind == "text":
            return "text"
        if f.kind == "file":
            return "the name of a CSV file inside the case folder"
        if f.kind == "integer":
            return "a whole number"
        if f.kind == "choice_list":
            return ("a list of distinct names among " + ", ".join(f"'{c}'" for c in f.choices)
                    + f", e.g. [\"{f.choices[0]}\"]")
        if f.kind.endswith("_list"):
            example = {"flow_list": '["1.0 m^3/s", "2.0 m^3/s"]', "length_list": '["500 m"]',
                       "time_list": '["5 s", "10 s"]'}[f.kind]
            return f"a list, e.g. {example}"
        what = units._describe(f.kind)
        article = "an" if what[0] in "aeiou" else "a"
        return f"{article} {what} with its unit, e.g. {units._example(f.kind)}"

    def _convert(self, raw, f: Field, key: str):
        kind = f.kind
        if kind == "text":
            if not isinstance(raw, str):
                raise CaseError(self.file, key, f"{raw!r} is not text; expected text in quotes")
            allowed = "\t\n\r" if f.name == "note" else ""
            bad = next((c for c in _CONTROL.findall(raw) if c not in allowed), None)
            if bad is not None:
                raise CaseError(self.file, key, f"holds the control character "
                                f"U+{ord(bad):04X}; expected printable text")
            if len(raw) > f.max_chars:
                raise CaseError(self.file, key, f"is {len(raw)} characters long; expected at "
                                f"most {f.max_chars}")
            if f.required and not raw.strip():
                raise CaseError(self.file, key, "is empty; expected "
                                + ("the site's name" if f.name == "name" else "some text"))
            return raw
        if kind == "choice":
            if not isinstance(raw, str) or raw.strip().lower() not in f.choices:
                hint = _did_you_mean(str(raw), f.choices)
                raise CaseError(self.file, key, f"{raw!r} is not allowed; expected "
                                f"{self._expect(f)}{hint}")
            return raw.strip().lower()
        if kind == "file":
            return self._path(raw, key)
        if kind == "integer":
            if isinstance(raw, bool) or not isinstance(raw, int):
                raise CaseError(self.file, key, f"{raw!r} is not a whole number")
            self._range(float(raw), f, key, raw)
            return int(raw)
        if kind == "choice_list":
            if not isinstance(raw, list) or not raw:
                raise CaseError(self.file, key, f"{raw!r} is not a non-empty list; expected "
                                f"{self._expect(f)}")
            out = []
            for i, item in enumerate(raw):
                name = item.strip().lower() if isinstance(item, str) else None
                if name not in f.choices:
                    hint = _did_you_mean(str(item), f.choices)
                    raise CaseError(self.file, f"{key}[{i + 1}]", f"{item!r} is not allowed; "
                                    f"expected one of " + ", ".join(f"'{c}'" for c in f.choices)
                                    + hint)
                if name in out:
                    raise CaseError(self.file, f"{key}[{i + 1}]", f"{item!r} is listed twice; "
                                    "expected each name once")
                out.append(name)
            return out
        if kind.endswith("_list"):
            item_kind = kind[:-5]
            if not isinstance(raw, list):
                raise CaseError(self.file, key, f"{raw!r} is not a list; expected "
                                f"{self._expect(f)}")
            if len(raw) > f.max_items:
                raise CaseError(self.file, key, f"has {len(raw)} items; expected at most "
                                f"{f.max_items}")
            out = []
            for i, item in enumerate(raw):
                try:
                    q = units.parse_quantity(item, item_kind)
                except units.UnitError as exc:
                    raise CaseError(self.file, f"{key}[{i + 1}]", str(exc)) from None
                if not math.isfinite(q):
                    raise CaseError(self.file, f"{key}[{i + 1}]", f"{item!r} is not a finite "
                                    "number")
                if not q > 0 and not (item_kind == "length" and f.name == "record_at"):
                    raise CaseError(self.file, f"{key}[{i + 1}]", f"{item!r} must be above zero")
                if f.maximum is not None and q > f.maximum:
                    raise CaseError(self.file, f"{key}[{i + 1}]", f"{item!r} is out of range; "
                                    f"expected at most {_fmt_si(f.maximum, item_kind)}")
                out.append(q)
            return out
        try:
            val = units.parse_quantity(raw, kind)
        except units.UnitError as exc:
            raise CaseError(self.file, key, str(exc)) from None
        if not math.isfinite(val):
            raise CaseError(self.file, key, f"{raw!r} is not a finite number")
        self._range(val, f, key, raw)
        return val

    def _range(self, val: float, f: Field, key: str, raw=None):
        shown = raw if raw is not None else val
        lo, hi = f.minimum, f.maximum
        if lo is not None and (val < lo or (f.exclusive_minimum and val <= lo)):
            op = "above" if f.exclusive_minimum else "at least"
            hint = ""
            if f.kind == "fraction" and 0 < val < lo and lo <= 100 * val <= (hi or 1.0):
                hint = f" (did you mean {100 * val:g}, that is \"{1e4 * val:g} %\"?)"
            raise CaseError(self.file, key, f"{shown!r} is out of range; expected {op} "
                            f"{_fmt_si(lo, f.kind)}{hint}")
        if hi is not None and val > hi:
            hint = ""
            if f.kind == "fraction" and hi <= 1.0 and 1.0 < val <= 100.0:
                hint = f" (did you mean {val / 100:g} or \"{val:g} %\"?)"
            raise CaseError(self.file, key, f"{shown!r} is out of range; expected at most "
                            f"{_fmt_si(hi, f.kind)}{hint}")

    def _path(self, raw, key: str) -> Path:
        if not isinstance(raw, str) or not raw.strip():
            raise CaseError(self.file, key, f"{raw!r} is not a file name; expected the name of "
                            "a CSV file inside the case folder")
        bad = _CONTROL.search(raw)
        if bad or len(raw) > 255:
            raise CaseError(self.file, key, f"{raw[:40]!r} is not a usable file name ("
                            + (f"it holds U+{ord(bad.group()):04X}" if bad else
                               "longer than 255 characters")
                            + "); expected the name of a CSV file inside the case folder")
        try:
            root = self.folder.resolve()
            path = (self.folder / raw).resolve()
        except RuntimeError:   # Python's word for a symbolic link loop
            raise CaseError(self.file, key, f"'{raw}' is a symbolic link loop; expected a "
                            "CSV file inside the case folder") from None
        except (OSError, ValueError) as exc:
            raise CaseError(self.file, key, f"'{raw}' cannot be resolved ("
                            f"{getattr(exc, 'strerror', None) or exc}); expected a CSV file "
                            "inside the case folder") from None
        if root != path and root not in path.parents:
            raise CaseError(self.file, key, f"'{raw}' lies outside the case folder; expected a "
                            "file inside it")
        try:
            what = csvfile.file_problem(path)
        except OSError as exc:
            what = f"cannot be read ({exc.strerror})"
        if what:
            raise CaseError(self.file, key, f"'{raw}' {what}")
        return path

    def check_keys(self, table: dict, section: Section, where: str, allowed=None):
        names = set(section.fields_by_name) | set(allowed or ())
        for key in table:
            if key not in names:
                raise CaseError(self.file, f"{where}{key}", "unknown key" +
                                (_did_you_mean(key, names) or
                                 "; expected one of " + ", ".join(sorted(names))))

    # ---------------------------------------------------------------- CSV tables
    def table(self, path: Path, columns: tuple[tuple[str, str], ...], optional=(),
              max_rows: int = 10_000) -> pd.DataFrame:
        """Read a CSV whose headers carry units, e.g. ``chainage [m]``; return SI columns.

        The file is read strictly (:mod:`penstock.csvfile`): every row has the header's
        number of fields; unknown columns are errors; values must lie within the
        column's bounds (:data:`penstock.schema.COLUMN_BOUNDS`).
        """
        name = path.name
        try:
            raw = csvfile.read_csv(path, max_rows)
        except csvfile.CsvFormatError as exc:
            raise CaseError(name, exc.where, exc.problem) from None
        self.lines[name] = raw.lines
        wanted = list(columns) + [(c, k) for c, k in optional]
        wanted_names = [c for c, _ in wanted]
        headers = {}
        for j, col in enumerate(raw.header):
            m = _HEADER.match(col)
            if not m:
                raise CaseError(name, f"column '{col}'", "cannot read the header; expected "
                                "'name [unit]', e.g. 'chainage [m]'")
            key = m.group(1).strip().lower()
            if key in headers:
                raise CaseError(name, f"column '{col}'", f"repeats the quantity of column "
                                f"'{headers[key][0]}'; expected each quantity once")
            headers[key] = (col, m.group(2), j)
        unknown = [k for k in headers if k not in wanted_names]
        for cname, kind in columns:
            if cname not in headers:
                found = (f" (the column '{headers[unknown[0]][0]}' is not one of this table"
                         f"{_did_you_mean(unknown[0], [cname]).replace('; ', ': ')})"
                         if unknown else "")
                raise CaseError(name, f"column '{cname}'", "is missing; expected a column "
                                f"headed {_column_example(cname, kind)}" + found)
        if unknown:
            listed = ", ".join(f"'{c}'" for c in wanted_names)
            raise CaseError(name, f"column '{headers[unknown[0]][0]}'", "is not a column of this "
                            f"table; expected {listed}" + _did_you_mean(unknown[0], wanted_names))
        out = {}
        for cname, kind in wanted:
            if cname not in headers:
                continue   # an optional column (the required ones were checked above)
            col, unit, j = headers[cname]
            series = pd.Series([r[j] for r in raw.rows], dtype=object)
            if kind == "date":
                if unit is not None:
                    raise CaseError(name, f"column '{col}'", "a date column takes no unit; "
                                    f"expected the header '{cname}'")
                out[cname] = self._dates(series, name, col)
                continue
            self.units.setdefault(name, {})[cname] = unit
            values = self._numbers(series, name, col, unit, kind)
            self._column_bounds(values, name, col, cname, kind)
            out[cname] = values
        return pd.DataFrame(out)

    def _column_bounds(self, values: np.ndarray, name: str, col: str, cname: str, kind: str):
        """Refuse absurd values: each column has bounds in SI (schema.COLUMN_BOUNDS)."""
        lo, hi = COLUMN_BOUNDS.get(cname, (None, None))
        for bound, bad in ((lo, values < lo if lo is not None else None),
                           (hi, values > hi if hi is not None else None)):
            if bad is not None and bad.any():
                row = int(np.flatnonzero(bad)[0])
                side = "at least" if bound is lo else "at most"
                raise CaseError(name, f"row {self.line(name, row)}, column '{col}'",
                                f"{values[row]:g} {units.SI_UNITS[kind]} (in SI) is out of "
                                f"range; expected {side} {_fmt_si(bound, kind)}".replace(
                                    "  ", " "))

    def _numbers(self, series: pd.Series, name: str, col: str, unit, kind: str) -> np.ndarray:
        if unit is None:
            raise CaseError(name, f"column '{col}'", "has no unit; expected e.g. "
                            f"'{col} [{units.SI_UNITS[kind] or '-'}]'")
        text = series.astype(str).str.strip()
        values = pd.to_numeric(text.where(text.str.fullmatch(_DECIMAL), ""), errors="coerce")
        bad = values.isna()
        if bad.any():
            row = int(np.flatnonzero(bad.to_numpy())[0])
            cell = text.iloc[row]
            if not cell:
                what = "is empty; expected a number"
            elif cell.lower() in _MISSING:
                what = f"{cell!r} marks a missing value; expected a number"
            elif _COMMA_DECIMAL.fullmatch(cell):
                what = (f"{cell!r} uses a comma as the decimal mark; expected a point, e.g. "
                        f"{cell.replace(',', '.')}")
            else:
                what = f"{cell!r} is not a number; expected a number such as 12.5 or 1.2e3"
            raise CaseError(name, f"row {self.line(name, row)}, column '{col}'", what)
        arr = values.to_numpy(dtype=float)
        if not np.all(np.isfinite(arr)):
            row = int(np.flatnonzero(~np.isfinite(arr))[0])
            raise CaseError(name, f"row {self.line(name, row)}, column '{col}'",
                            "is not a finite number")
        si = units.SI_UNITS[kind]
        if si == "":
            if unit not in _DIMENSIONLESS_UNITS:
                raise CaseError(name, f"column '{col}'", f"unit '{unit}' is not dimensionless; "
                                "expected '[-]' or '[%]'")
            if unit == "%" and np.all((arr >= 0) & (arr <= 1)):
                raise CaseError(name, f"column '{col}'", "every value lies between 0 and 1 "
                                "although the column is in [%], so they would read as 0 % to "
                                "1 %; if they are fractions, head the column "
                                f"'{col.split('[')[0].strip()} [-]'; if they are percentages, "
                                "write them as such (e.g. 50 for 50 %)")
            return arr / 100.0 if unit == "%" else arr
        try:
            units.parse_unit(unit, kind)
        except units.UnitError as exc:
            raise CaseError(name, f"column '{col}'", str(exc)) from None
        return np.asarray(units.to_si(arr, unit, kind), dtype=float)

    def _dates(self, series: pd.Series, name: str, col: str) -> pd.DatetimeIndex:
        text = series.astype(str).str.strip()
        offset = text.str.extract(_UTC_OFFSET, expand=False)
        has = offset.notna()
        if has.any():
            first = offset[has].iloc[0]
            differs = (offset != first) | ~has
            if differs.any():
                row = int(np.flatnonzero(differs.to_numpy())[0])
                raise CaseError(name, f"row {self.line(name, row)}, column '{col}'",
                                f"{series.iloc[row]!r} has another UTC offset than the first "
                                f"dated row ({first}); expected every date in one time zone "
                                "offset, or none")
            text = text.str.replace(_UTC_OFFSET, "", regex=True)   # local wall-clock time
        parsed = pd.to_datetime(text.where(text.str.fullmatch(_ISO_DATE), ""),
                                errors="coerce", format="ISO8601")
        bad = parsed.isna()
        if bad.any():
            row = int(np.flatnonzero(bad.to_numpy())[0])
            raise CaseError(name, f"row {self.line(name, row)}, column '{col}'",
                            f"{series.iloc[row]!r} is not a date; expected ISO form "
                            "YYYY-MM-DD or YYYY-MM-DD HH:MM")
        return pd.DatetimeIndex(parsed)


def _as_written(raw) -> str:
    if isinstance(raw, list):
        return ", ".join(str(x) for x in raw) if raw else "(none)"
    return str(raw)


def _echo_value(val):
    if isinstance(val, list):
        return ", ".join(v if isinstance(v, str) else f"{v:.6g}" for v in val) if val else ""
    if isinstance(val, float):
        return float(f"{val:.9g}")   # the SI value as read, without float noise
    return val


# --------------------------------------------------------------------------- loading
def load_case(path) -> Case:
    """Read and validate a case folder.

    Parameters
    ----------
    path : str or pathlib.Path
        The case folder (holding ``site.toml``), or the ``site.toml`` file itself.

    Returns
    -------
    Case
        Every input in SI units.

    Raises
    ------
    CaseError
        On the first problem found, naming the file and the key or row.
    """
    folder = Path(path)
    if folder.is_file() and folder.name == CASE_FILE:
        folder = folder.parent
    if not folder.is_dir():
        raise CaseError(str(path), "", "is not a case folder; expected a folder holding "
                        f"{CASE_FILE}")
    toml_path = folder / CASE_FILE
    if not toml_path.exists():
        raise CaseError(CASE_FILE, "", f"not found in '{folder}'; expected a case folder "
                        f"holding {CASE_FILE} (write one with 'penstock new')")
    try:
        text = csvfile.read_text(toml_path, csvfile.MAX_TOML_BYTES)
    except csvfile.CsvFormatError as exc:
        raise CaseError(CASE_FILE, exc.where, exc.problem) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError(CASE_FILE, "", f"TOML syntax error: {exc}") from None
    except RecursionError:
        raise CaseError(CASE_FILE, "", "is nested too deeply to read; expected plain "
                        "[section] tables of keys") from None

    rd = _Reader(folder)
    for key in doc:
        if key not in SECTIONS_BY_NAME:
            raise CaseError(CASE_FILE, f"[{key}]", "unknown section" +
                            (_did_you_mean(key, SECTIONS_BY_NAME) or
                             "; expected one of " + ", ".join(SECTIONS_BY_NAME)))
    values: dict[str, dict] = {}
    for sec in SECTIONS:
        if sec.array:
            continue
        table = doc.get(sec.name)
        if table is None:
            if sec.required:
                raise CaseError(CASE_FILE, f"[{sec.name}]", "section is missing")
            if any(f.required for f in sec.fields):
                values[sec.name] = None   # an optional section with required keys: absent
                continue
            table = {}
        if not isinstance(table, dict):
            raise CaseError(CASE_FILE, f"[{sec.name}]", "must be a table ([name]), not a list "
                            "or a value")
        rd.check_keys(table, sec, f"{sec.name}.")
        values[sec.name] = {f.name: rd.value(sec.name, table, f, f"{sec.name}.")
                            for f in sec.fields}

    site, water, levels, route = (values[k] for k in ("site", "water", "levels", "route"))
    from .cautions import Say

    rd.say = Say(site["units"])
    flows, turbine = values["flows"], values["turbine"]

    # ---- profile
    pfield = SECTIONS_BY_NAME["route"].fields_by_name["profile"]
    profile = rd.table(route["profile"], pfield.columns, optional=(("ground", "length"),),
                       max_rows=pfield.max_rows)
    pname = route["profile"].name
    ch = profile["chainage"].to_numpy()
    if len(ch) < 2:
        raise CaseError(pname, "", "needs at least two points")
    steps = np.diff(ch)
    if np.any(steps <= 0):
        row = int(np.flatnonzero(steps <= 0)[0]) + 1
        raise CaseError(pname, f"row {rd.line(pname, row)}, column 'chainage'",
                        f"chainage {ch[row]:g} m does not increase from {ch[row - 1]:g} m; "
                        "expected strictly increasing chainage")
    rd.echo.append({"section": "route", "key": "route.profile", "as written": pname,
                    "value (SI)": f"{len(ch)} points, {ch[0]:g} to {ch[-1]:g}",
                    "SI unit": "m", "source": pname})

    from .casetables import (
        _duration_record,
        _efficiency_table,
        _flow_record,
        _level_series,
        _levels_not_below,
        _price_table,
        _rating,
        _surge,
    )

    # ---- pipe segments
    segments = _segments(doc, rd, ch)
    # ---- local losses
    losses = _losses(doc, rd, ch)

    # ---- levels
    hw = levels["headwater"]
    hw_min = levels["headwater_min"] if levels["headwater_min"] is not None else hw
    if hw_min > hw:
        raise CaseError(CASE_FILE, "levels.headwater_min", f"{hw_min:g} m is above the "
                        f"headwater level {hw:g} m; expected at most the normal level")
    hw_max = levels["headwater_max"]
    if hw_max is not None and hw_max < hw:
        raise CaseError(CASE_FILE, "levels.headwater_max", f"{hw_max:g} m is below the "
                        f"headwater level {hw:g} m; expected at least the normal level")
    rating = _rating(rd, levels["tailwater_rating"], "tailwater") \
        if levels["tailwater_rating"] is not None else None
    if rating is not None and levels["tailwater"] is not None:
        raise CaseError(CASE_FILE, "levels.tailwater", "is given together with "
                        "tailwater_rating; expected one of the two (with a rating, the "
                        "reference tailwater is the rating at the design flow)")
    if rating is None and levels["tailwater"] is None:
        raise CaseError(CASE_FILE, "levels.tailwater", "is missing; expected a tailwater "
                        "level, e.g. \"1180 m\", or a tailwater_rating file")
    hw_rating = _rating(rd, levels["headwater_rating"], "headwater") \
        if levels["headwater_rating"] is not None else None
    if hw_rating is not None and levels["headwater_series"] is not None:
        raise CaseError(CASE_FILE, "levels.headwater_series", "is given together with "
                        "headwater_rating; expected one of the two")

    # ---- flows
    q_design = flows["design"]
    q_max = flows["maximum"] if flows["maximum"] is not None else q_design
    if q_max < q_design:
        raise CaseError(CASE_FILE, "flows.maximum", f"{q_max:g} m^3/s is below the design "
                        f"flow {q_design:g} m^3/s; expected at least the design flow")
    q_min = flows["minimum"]
    if q_min is not None and q_min >= q_design:
        raise CaseError(CASE_FILE, "flows.minimum", f"{q_min:g} m^3/s is not below the design "
                        f"flow {q_design:g} m^3/s")
    record = None
    if flows["record"] is not None and flows["duration_table"] is not None:
        raise CaseError(CASE_FILE, "flows.duration_table", "is given together with "
                        "flows.record; expected one of the two")
    if flows["record"] is not None:
        record = _flow_record(rd, flows["record"], flows["gaps"])
    elif flows["duration_table"] is not None:
        record = _duration_record(rd, flows["duration_table"])
    else:
        raise CaseError(CASE_FILE, "flows.record", "is missing; expected a flow record CSV "
                        "(or a flows.duration_table)")
    hw_series = None
    if levels["headwater_series"] is not None:
        hw_series = _level_series(rd, levels["headwater_series"], record.index)
        _levels_not_below(rd, levels["headwater_series"].name, hw_series.to_numpy(), hw_min,
                          "headwater")
    if hw_rating is not None:
        _levels_not_below(rd, levels["headwater_rating"].name,
                          hw_rating["level"].to_numpy(), hw_min, "headwater")
    if flows["residual_monthly"] and len(flows["residual_monthly"]) != 12:
        raise CaseError(CASE_FILE, "flows.residual_monthly", f"has "
                        f"{len(flows['residual_monthly'])} values; expected 12, January to "
                        "December")
    if levels["tailwater"] is None:
        # the reference tailwater of the steady study is the rating at the design flow
        levels["tailwater"] = float(np.interp(q_design + flows["residual"],
                                              rating["flow"], rating["level"]))
    tw_top = levels["tailwater"] if rating is None else max(
        levels["tailwater"], float(np.interp(float(record.max()), rating["flow"],
                                             rating["level"])))
    if tw_top >= hw_min:
        raise CaseError(CASE_FILE, "levels", f"the highest tailwater {tw_top:g} m is not below "
                        f"the minimum headwater {hw_min:g} m; expected headwater above "
                        "tailwater")
    turbine = dict(turbine)
    if turbine["efficiency_table"] is None and q_min is not None:
        from .turbines import TURBINE_TYPES

        start = TURBINE_TYPES[turbine["type"]]["efficiency_table"][0][0]
        rel = q_min * turbine["units"] / q_design
        if rel < start * (1 - 1e-9):
            raise CaseError(CASE_FILE, "flows.minimum", f"{q_min:g} m^3/s is {100 * rel:.0f} % of "
                            f"one unit's design flow, below the {100 * start:.0f} % where the "
                            f"typical {turbine['type']} efficiency curve starts; expected a "
                            "larger minimum, or a turbine.efficiency_table that covers it")
    study = values["diameter_study"]
    if study["minimum"] is not None and study["maximum"] is not None and \
            study["minimum"] >= study["maximum"]:
        raise CaseError(CASE_FILE, "diameter_study.maximum", f"{study['maximum']:g} m is not "
                        f"above the minimum {study['minimum']:g} m")
    for i, family in enumerate(study["stepped_materials"], start=1):
        if family not in study["materials"]:
            raise CaseError(CASE_FILE, f"diameter_study.stepped_materials[{i}]", f"'{family}' "
                            "is not among diameter_study.materials; expected a material the "
                            "study compares")
    for family, key in (("hdpe", "pe100_prices"), ("ductile_iron", "ductile_iron_prices")):
        if study[key] is None:
            continue
        if family not in study["materials"]:
            raise CaseError(CASE_FILE, f"diameter_study.{key}", f"is given but '{family}' is not "
                            "among diameter_study.materials; expected the material listed there, "
                            "or no price table")
        study[key] = _price_table(rd, study[key], family)
    given = doc.get("diameter_study")
    if isinstance(given, dict) and "minimum_reach" in given:
        z = profile["elevation"].to_numpy()
        along = float(np.sum(np.hypot(np.diff(ch), np.diff(z))))
        if study["minimum_reach"] > along:
            raise CaseError(CASE_FILE, "diameter_study.minimum_reach", f"{study['minimum_reach']:g}"
                            f" m is longer than the route ({along:.1f} m along the pipe); "
                            "expected at most the route's length")
    if turbine["efficiency_table"] is not None:
        from .turbines import TURBINE_TYPES

        minimum = (q_min * turbine["units"] / q_design if q_min is not None
                   else TURBINE_TYPES[turbine["type"]]["minimum_relative_flow"])
        turbine["efficiency_table"] = _efficiency_table(rd, turbine["efficiency_table"], minimum)
    surge = _surge(rd, dict(values["surge"]), ch)
    surge["section_given"] = isinstance(doc.get("surge"), dict)
    draft = values.get("draft_tube")
    if draft is not None and turbine["type"] in ("pelton", "turgo", "crossflow"):
        raise CaseError(CASE_FILE, "[draft_tube]", f"is given for an impulse turbine "
                        f"({turbine['type']}); expected a draft tube only for francis, kaplan "
                        "or propeller units")

    return Case(
        folder=folder, name=site["name"], note=site["note"], unit_system=site["units"],
        temperature=water["temperature"], altitude=water["altitude"],
        headwater=hw, headwater_min=hw_min, headwater_max=hw_max,
        tailwater=levels["tailwater"],
        tailwater_rating=rating, headwater_rating=hw_rating, headwater_series=hw_series,
        profile=profile, pressure_margin=route["pressure_margin"],
        intake_approach=route["intake_approach"], service_life=route["service_life"],
        segments=segments, losses=losses,
        flow_record=record, design_flow=q_design, maximum_flow=q_max, minimum_flow=q_min,
        extra_flows=list(flows["extra"]), residual_flow=flows["residual"],
        gap_method=flows["gaps"], residual_monthly=list(flows["residual_monthly"]),
        residual_percent=flows["residual_percent"], firm_exceedance=flows["firm_exceedance"],
        turbine=turbine, draft_tube=draft, economics=values["economics"],
        surge=surge, wall=values["wall"], costs=values["costs"],
        diameter_study=values["diameter_study"], uncertainty=values["uncertainty"],
        echo=rd.echo, profile_file=pname,
    )


def _tables(doc: dict, sec: Section) -> list:
    """The [[name]] tables of an array section, each checked to be a table."""
    tables = doc.get(sec.name, [])
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        raise CaseError(CASE_FILE, f"[[{sec.name}]]", f"must be written as [[{sec.name}]] "
                        "tables")
    if len(tables) > sec.max_tables:
        raise CaseError(CASE_FILE, f"[[{sec.name}]]", f"{len(tables)} tables given; expected "
                        f"at most {sec.max_tables}")
    return tables


def _segments(doc: dict, rd: _Reader, chainage: np.ndarray) -> list[Segment]:
    sec = SECTIONS_BY_NAME["pipe"]
    tables = _tables(doc, sec)
    if not tables:
        raise CaseError(CASE_FILE, "[[pipe]]", "no pipe segment given; expected at least one "
                        "[[pipe]] table")
    segs = []
    for i, t in enumerate(tables, start=1):
        where = f"pipe {i}."
        rd.check_keys(t, sec, where)
        v = {f.name: rd.value("pipe", t, f, where) for f in sec.fields}
        if v["to"] <= v["from"]:
            raise CaseError(CASE_FILE, f"pipe {i}.to", f"chainage {v['to']:g} m is not beyond "
                            f"'from' {v['from']:g} m; expected to > from")
        if v["roughness"] is None:
            try:
                v["roughness"] = friction.material_roughness(v["material"], v["condition"])
            except ValueError as exc:
                raise CaseError(CASE_FILE, f"pipe {i}.material", str(exc)) from None
            rd.echo.append({"section": "pipe", "key": f"pipe {i}.roughness",
                            "as written": f"({v['material']}, {v['condition']})",
                            "value (SI)": v["roughness"], "SI unit": "m",
                            "source": "material table"})
        segs.append(Segment(v["from"], v["to"], v["diameter"], v["material"], v["roughness"],
                            v["wall_thickness"], v["roughness_growth"]))
    tol = 1e-6
    if abs(segs[0].start - chainage[0]) > tol:
        raise CaseError(CASE_FILE, "pipe 1.from", f"starts at {segs[0].start:g} m but the "
                        f"profile starts at {chainage[0]:g} m; expected the segments to cover "
                        "the whole profile")
    for i in range(1, len(segs)):
        gap = segs[i].start - segs[i - 1].end
        if abs(gap) > tol:
            what = "a gap" if gap > 0 else "an overlap"
            raise CaseError(CASE_FILE, f"pipe {i + 1}.from", f"{what} between {segs[i - 1].end:g}"
                            f" m and {segs[i].start:g} m; expected pipe {i + 1} to start where "
                            f"pipe {i} ends")
    if abs(segs[-1].end - chainage[-1]) > tol:
        raise CaseError(CASE_FILE, f"pipe {len(segs)}.to", f"ends at {segs[-1].end:g} m but "
                        f"the profile ends at {chainage[-1]:g} m; expected the segments to "
                        "cover the whole profile")
    return segs


def _losses(doc: dict, rd: _Reader, chainage: np.ndarray) -> list[LocalLoss]:
    sec = SECTIONS_BY_NAME["loss"]
    tables = _tables(doc, sec)
    out = []
    for i, t in enumerate(tables, start=1):
        where = f"loss {i}."
        kind = t.get("kind")
        if kind is None:
            raise CaseError(CASE_FILE, f"{where}kind", "is missing; expected one of " +
                            ", ".join(fittings.LOSS_KINDS))
        if not isinstance(kind, str) or kind not in fittings.LOSS_KINDS:
            raise CaseError(CASE_FILE, f"{where}kind", f"{kind!r} is not a loss kind" +
                            (_did_you_mean(str(kind), fittings.LOSS_KINDS) or
                             "; expected one of " + ", ".join(fittings.LOSS_KINDS)))
        extra = {name: (Field(name, dim, desc, minimum=0.0,
                               exclusive_minimum=dim in ("length", "area")), default)
                 for name, (dim, default, desc) in route.case_parameters(kind).items()}
        rd.check_keys(t, sec, where, allowed=extra)
        v = {f.name: rd.value("loss", t, f, where) for f in sec.fields}
        if kind == "custom" and v["k"] is None:
            raise CaseError(CASE_FILE, f"{where}k", "is missing; a custom loss needs its "
                            "coefficient k")
        params = {}
        for name, (f, default) in extra.items():
            if name in t:
                params[name] = rd.value("loss", t, f, where)
            elif default is not None:
                params[name] = default
            elif v["k"] is None or name == "rack_area":
                raise CaseError(CASE_FILE, f"{where}{name}", f"is missing for a {kind} loss; "
                                f"expected {rd._expect(f)}" +
                                ("" if name == "rack_area" else " (or give k)"))
        at = v["at"]
        if at < chainage[0] - 1e-9 or at > chainage[-1] + 1e-9:
            raise CaseError(CASE_FILE, f"{where}at", f"chainage {at:g} m is off the route "
                            f"({chainage[0]:g} to {chainage[-1]:g} m); expected a chainage on it")
        if v["k"] is None:
            # validate the parameters now, on stand-in diameters in the right order
            d_up, d_down = {"contraction": (1.0, 0.8),
                            "expansion": (0.8, 1.0)}.get(kind, (1.0, 1.0))
            try:
                route.loss_k_and_area(kind, params, d_up, d_down)
            except (ValueError, TypeError) as exc:
                raise CaseError(CASE_FILE, f"loss {i} ({kind} at {at:g} m)", f"{exc}") from None
        out.append(LocalLoss(kind, at, v["label"] or f"{kind} at {rd.say.ch(at)}", v["k"],
                             params))
    return out
