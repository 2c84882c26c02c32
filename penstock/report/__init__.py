"""Report writers: the client workbook, CSV tables and PNG figures.

Writers only read a results object.  :func:`write_reports` publishes all of them as
one report folder, all or nothing (see :mod:`penstock.report.publish`), and never
over anything penstock did not write.
"""

from __future__ import annotations

import shutil
from pathlib import Path

from .publish import (
    MANIFEST,
    ReportError,
    ReportInterrupted,
    ReportLock,
    _user_mode,
    check_report_folder,
    clean_leftovers,
    fsync_tree,
    new_staging,
    os_problem,
    publish_folder,
    run_info,
    write_manifest,
)

__all__ = ["MANIFEST", "ReportError", "ReportInterrupted", "safe_text", "write_csv",
           "write_reports", "write_tables"]

#: First characters that make a spreadsheet read a cell as a formula: equals, plus,
#: minus, at, tab, carriage return (OWASP, "CSV Injection") and NUL (OWASP ASVS 5.0,
#: requirement 1.2.10).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r", "\0")


def safe_text(value):
    """A text cell made safe for a spreadsheet, after the OWASP CSV-injection guidance.

    Text that begins with ``=``, ``+``, ``-``, ``@``, a tab, a carriage return or a NUL
    gets a leading single quote, so that a spreadsheet shows it as text and never
    evaluates it.  Anything else passes unchanged.

    References
    ----------
    OWASP Foundation, "CSV Injection", https://owasp.org/www-community/attacks/CSV_Injection
    OWASP Application Security Verification Standard 5.0 (2025), requirement 1.2.10.
    """
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


def _quoted(text: str) -> str:
    """A text field in double quotes, inner quotes doubled (RFC 4180, sections 2.6-2.7)."""
    return '"' + safe_text(text).replace('"', '""') + '"'


def _number(v) -> str:
    """A number as a CSV field: 14 significant digits; infinities kept, NaN empty."""
    v = float(v)
    if v != v:
        return ""
    if v in (float("inf"), float("-inf")):
        return "inf" if v > 0 else "-inf"
    return f"{v:.14g}"


def _column_fields(series) -> list[str]:
    """The CSV fields of one column: numbers bare (14 significant digits), text quoted.

    Missing values (NaN, None, NaT, pandas' NA) are empty fields; datetimes and
    durations are written as text in ISO form.
    """
    import numpy as np
    import pandas as pd

    missing = series.isna().to_numpy()
    kind = series.dtype.kind
    # plain numpy columns (the long ones): one pass, no type test per value
    if kind in "fiub" and isinstance(series.dtype, np.dtype):
        if kind == "f":
            out = [f"{v:.14g}" for v in series.to_numpy().tolist()]   # 'inf', '-inf' kept
        elif kind == "b":
            out = ["TRUE" if v else "FALSE" for v in series.to_numpy().tolist()]
        else:
            out = [str(v) for v in series.to_numpy().tolist()]
        for i in np.flatnonzero(missing):
            out[i] = ""
        return out
    values = series.to_numpy(dtype=object)
    out = []
    for v, na in zip(values, missing, strict=True):
        if na:
            out.append("")
        elif kind == "b" or isinstance(v, (bool, np.bool_)):
            out.append("TRUE" if v else "FALSE")
        elif isinstance(v, (int, np.integer)):
            out.append(str(int(v)))
        elif isinstance(v, (float, np.floating)):
            out.append(_number(v))
        elif isinstance(v, (pd.Timestamp, np.datetime64)):
            out.append(_quoted(pd.Timestamp(v).isoformat()))
        elif isinstance(v, (pd.Timedelta, np.timedelta64)):
            out.append(_quoted(pd.Timedelta(v).isoformat()))
        else:
            out.append(_quoted(str(v)))
    return out


def write_csv(df, path) -> None:
    """Write a table as CSV: text quoted and made safe (:func:`safe_text`), numbers bare."""
    header = ",".join(_quoted(str(c)) for c in df.columns)
    columns = [_column_fields(df[c]) for c in df.columns] if len(df.columns) else []
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.write(header + "\n")
        for row in zip(*columns, strict=True):
            fh.write(",".join(row) + "\n")


def write_tables(results, folder: Path, system: str) -> list[str]:
    """Write every result table as CSV (units in the headers) into ``folder``.

    Text cells are quoted and neutralised against formula injection (:func:`safe_text`);
    numbers keep 14 significant digits, every digit that means anything.
    """
    from .units import convert_table

    names = []
    for name, df in results.tables().items():
        fname = f"{name}.csv"
        write_csv(convert_table(df, system), Path(folder) / fname)
        names.append(fname)
    return names


def _write_locked(results, folder: Path, book_name: str, system: str, state: dict) -> list:
    """Write and publish the report, the lock held; returns the files beside the workbook."""
    from .figures import write_figures
    from .workbook import write_workbook

    parent, name = folder.parent, folder.name
    try:
        clean_leftovers(parent, name)
    except OSError as exc:
        raise ReportError(f"{folder}: cannot tidy what an earlier killed run left in {parent} "
                          f"({os_problem(exc)}); no report was changed") from None
    check_report_folder(folder, [results.case.folder])   # again, now that the lock is held
    info = {**run_info(results), "workbook": book_name}
    try:
        staging = new_staging(parent, name, info)
    except OSError as exc:
        raise ReportError(f"{folder}: cannot write in {parent} ({os_problem(exc)}); no "
                          "report was changed") from None
    old = None
    try:
        write_workbook(results, staging / book_name, system)
        files = write_tables(results, staging, system) + write_figures(results, staging,
                                                                       system)
        write_manifest(staging, info)
        for p in staging.iterdir():
            _user_mode(p)
        _user_mode(staging, folder=True)
        fsync_tree(staging)
        old = publish_folder(staging, folder, state)
    except BaseException as exc:
        if not state["published"]:
            shutil.rmtree(staging, ignore_errors=True)
        if isinstance(exc, OSError) and not isinstance(exc, ReportError):
            if not state["published"]:
                raise ReportError(f"{folder}: cannot write the report ({os_problem(exc)}); "
                                  "no report was changed") from None
            raise ReportError(f"{folder}: the report was written, but tidying up failed "
                              f"({os_problem(exc)})") from None
        raise
    if old is not None:
        try:   # the new report is in place; whatever stays here, the next run removes
            shutil.rmtree(old, ignore_errors=True)
        except OSError:
            pass
    return files


def write_reports(results, folder, system: str | None = None) -> dict:
    """Publish the report folder: the workbook, the CSV tables and the PNG figures.

    Parameters
    ----------
    results : penstock.model.Results
    folder : path-like
        The report folder, e.g. ``reports/<case>``; the workbook inside it is
        ``<folder name>.xlsx``.  An existing folder is replaced only if penstock wrote
        it and nothing in it changed since.
    system : {"si", "us"}, optional
        Unit system; defaults to the case's.

    Returns
    -------
    dict
        ``{"folder": Path, "workbook": Path, "files": [...]}``

    Raises
    ------
    ReportError
        The target cannot be written or may not be replaced; nothing was changed.
    ReportInterrupted
        An interrupt arrived; its ``published`` attribute tells whether the new
        report is in place (whole) or the old one is untouched.
    """
    system = system or results.case.unit_system
    folder = Path(folder)
    name = folder.name
    if not name or name in (".", ".."):
        raise ReportError(f"{folder}: expected a report folder name, e.g. reports/my-site")
    parent = folder.parent
    check_report_folder(folder, [results.case.folder])
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ReportError(f"{parent}: cannot create the reports folder "
                          f"({os_problem(exc)})") from None
    book_name = f"{name}.xlsx"
    state = {"published": False}
    try:
        with ReportLock(parent, name):
            files = _write_locked(results, folder, book_name, system, state)
    except ReportInterrupted:
        raise
    except KeyboardInterrupt:
        raise ReportInterrupted(folder, state["published"]) from None
    return {"folder": folder, "workbook": folder / book_name, "files": [book_name, *files]}
