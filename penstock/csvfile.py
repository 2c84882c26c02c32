"""Strict reading of the text files of a case folder (``site.toml`` and the CSV tables).

The reader refuses what it cannot read rather than guess:

* only regular files are opened (a folder, a pipe or a device in a file's place is
  named as such), up to a size limit, as UTF-8 text; a UTF-8 byte-order mark is
  accepted, a UTF-16 or UTF-32 file is named, and NUL bytes are refused;
* every data row has exactly the header's number of fields, so no column can turn
  silently into a row index; a row with more fields is named, with a hint when the
  fields look like numbers written with a comma as the decimal mark;
* a header that is one field holding ``;`` or a tab names that separator;
* lines whose first non-blank character is ``#`` are comments; blank lines and rows
  of empty fields (as spreadsheets write them) are skipped; a quoted field may not
  run over a line end;
* the number of data rows is bounded.

Nothing is evaluated.  Each problem is a :class:`CsvFormatError` naming where it is
(the line as an editor numbers it) and what is expected; :mod:`penstock.case` adds
the file name.
"""

from __future__ import annotations

import codecs
import csv
import os
import re
import stat
from dataclasses import dataclass
from pathlib import Path

#: Largest CSV table read [bytes]: a century of hourly flows is about 25 MB.
MAX_CSV_BYTES = 256 * 2**20
#: Largest site.toml read [bytes].
MAX_TOML_BYTES = 2**20

_NUMBERISH = re.compile(r"\s*[-+]?\d+\s*")
_DATEISH = re.compile(r"\s*\d{4}-\d{2}-\d{2}([ T]\d{2}:\d{2}(:\d{2})?)?\s*")


class CsvFormatError(ValueError):
    """A case file that cannot be read as expected; ``where`` and ``problem`` for the user."""

    def __init__(self, where: str, problem: str):
        self.where = where
        self.problem = problem
        super().__init__(f"{where}: {problem}" if where else problem)


@dataclass
class RawTable:
    """The text fields of a CSV table as read, before any conversion."""

    header: list[str]
    rows: list[list[str]]
    lines: list[int]       # the file's line number of each data row (1-based)


def file_problem(path) -> str | None:
    """What stops ``path`` being read as a case file ('does not exist', 'is a folder', ...)."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        return "does not exist in the case folder"
    if stat.S_ISDIR(st.st_mode):
        return "is a folder, not a file; expected a CSV file"
    if not stat.S_ISREG(st.st_mode):
        return "is not a regular file (a pipe, socket or device); expected a CSV file"
    if not os.access(path, os.R_OK):
        return "cannot be read (permission denied)"
    return None


def read_text(path, max_bytes: int) -> str:
    """Read a regular file of at most ``max_bytes`` as UTF-8 text (byte-order mark allowed).

    Raises
    ------
    CsvFormatError
        A folder, pipe or device in the file's place; a file too large, unreadable,
        not UTF-8 or holding NUL bytes.
    """
    path = Path(path)
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise CsvFormatError("", "does not exist") from None
    except OSError as exc:
        raise CsvFormatError("", f"cannot be read ({(exc.strerror or '').lower()})") from None
    if stat.S_ISDIR(st.st_mode):
        raise CsvFormatError("", "is a folder, not a file; expected a text file")
    if not stat.S_ISREG(st.st_mode):
        raise CsvFormatError("", "is not a regular file (a pipe, socket or device); expected "
                             "a text file")
    if st.st_size > max_bytes:
        raise CsvFormatError("", f"is {st.st_size / 2**20:,.1f} MiB; expected at most "
                             f"{max_bytes / 2**20:,.0f} MiB")
    try:
        with open(path, "rb") as fh:
            data = fh.read(max_bytes + 1)
    except OSError as exc:
        raise CsvFormatError("", f"cannot be read ({(exc.strerror or '').lower()})") from None
    if len(data) > max_bytes:
        raise CsvFormatError("", f"is larger than {max_bytes / 2**20:,.0f} MiB")
    for bom, name in ((codecs.BOM_UTF32_LE, "UTF-32"), (codecs.BOM_UTF32_BE, "UTF-32"),
                      (codecs.BOM_UTF16_LE, "UTF-16"), (codecs.BOM_UTF16_BE, "UTF-16")):
        if data.startswith(bom):
            raise CsvFormatError("", f"is {name} text; expected UTF-8 (in a spreadsheet, save "
                                 "as 'CSV UTF-8')")
    if data.startswith(codecs.BOM_UTF8):
        data = data[len(codecs.BOM_UTF8):]
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        raise CsvFormatError(f"line {line}", f"cannot be read as UTF-8 text (byte "
                             f"0x{data[exc.start]:02x}); expected UTF-8 (in a spreadsheet, "
                             "save as 'CSV UTF-8')") from None
    nul = text.find("\0")
    if nul >= 0:
        raise CsvFormatError(f"line {text.count(chr(10), 0, nul) + 1}", "holds a NUL byte; "
                             "expected a text file, not a binary one")
    return text


def _looks_like_decimal_commas(fields: list[str]) -> bool:
    return all(_NUMBERISH.fullmatch(f) or _DATEISH.fullmatch(f) for f in fields)


def parse_csv(text: str, max_rows: int) -> RawTable:
    """Split CSV text into a header and data rows of exactly the header's width."""
    kept_lines, kept_numbers = [], []
    for number, line in enumerate(text.replace("\r\n", "\n").replace("\r", "\n").split("\n"),
                                  start=1):
        stripped = line.strip()
        if stripped and not stripped.startswith("#"):
            kept_lines.append(line)
            kept_numbers.append(number)
    if not kept_lines:
        raise CsvFormatError("", "the file is empty; expected a header row and data rows")
    if len(kept_lines) - 1 > max_rows:
        raise CsvFormatError("", f"has {len(kept_lines) - 1:,} data rows; expected at most "
                             f"{max_rows:,}")
    reader = csv.reader(kept_lines, strict=True, skipinitialspace=True)
    rows: list[list[str]] = []
    lines: list[int] = []
    header: list[str] | None = None
    consumed = 0
    while True:
        start = consumed
        try:
            fields = next(reader)
        except StopIteration:
            break
        except csv.Error as exc:
            if reader.line_num - start > 1 or "end of data" in str(exc):
                raise CsvFormatError(f"line {kept_numbers[start]}", "a quoted field runs over "
                                     "the end of the line; expected each row on one line, "
                                     "with its quotes closed") from None
            at = kept_numbers[min(reader.line_num, len(kept_numbers)) - 1]
            raise CsvFormatError(f"line {at}", f"cannot be read as CSV ({exc}); expected "
                                 "comma-separated fields, text in double quotes") from None
        consumed = reader.line_num
        line = kept_numbers[start]
        if consumed - start > 1:
            raise CsvFormatError(f"line {line}", "a quoted field runs over the end of the "
                                 "line; expected each row on one line")
        if header is None:
            header = [f.strip() for f in fields]
            if len(header) == 1:
                for sep, name in ((";", "semicolons ';'"), ("\t", "tabs")):
                    if sep in header[0]:
                        raise CsvFormatError(f"line {line}", f"the columns are separated by "
                                             f"{name}; expected commas, e.g. 'chainage [m],"
                                             "elevation [m]' (and '.' as the decimal mark)")
            for j, h in enumerate(header, start=1):
                if not h:
                    raise CsvFormatError(f"line {line}", f"column {j} of the header is empty; "
                                         "expected a name and unit in every header field "
                                         "(a trailing comma?)")
            continue
        if not any(f.strip() for f in fields):
            continue   # a row of empty fields, as spreadsheets write them
        if len(fields) != len(header):
            n, m = len(header), len(fields)
            if m > n and _looks_like_decimal_commas(fields):
                hint = ("; it looks like a comma is used as the decimal mark: expected '.' "
                        "as the decimal mark and ',' between columns")
            elif m > n:
                hint = "; expected one field per column (a trailing comma, or a comma " \
                       "inside a value that is not in double quotes?)"
            else:
                hint = "; expected a value in every column"
            raise CsvFormatError(f"row {line}", f"has {m} field{'s' if m != 1 else ''} where "
                                 f"the header has {n}{hint}")
        rows.append(fields)
        lines.append(line)
    if header is None:
        raise CsvFormatError("", "the file is empty; expected a header row and data rows")
    if not rows:
        raise CsvFormatError("", "has a header but no data rows")
    return RawTable(header, rows, lines)


def read_csv(path, max_rows: int, max_bytes: int = MAX_CSV_BYTES) -> RawTable:
    """Read a case CSV table strictly (see the module notes)."""
    return parse_csv(read_text(path, max_bytes), max_rows)
