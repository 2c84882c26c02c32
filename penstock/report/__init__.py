"""Report writers: the client workbook, CSV tables and PNG figures.

Writers only read a results object.  :func:`write_reports` writes all of them
atomically: into temporary files first, then renamed into place, so that a failed
or interrupted run leaves any earlier report untouched.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from pathlib import Path

from .figures import write_figures
from .units import convert_table
from .workbook import write_workbook


class ReportError(OSError):
    """The report could not be written (e.g. the target is locked or not writable)."""


def write_tables(results, folder: Path, system: str) -> list[str]:
    """Write every result table as CSV (units in the headers) into ``folder``."""
    names = []
    for name, df in results.tables().items():
        fname = f"{name}.csv"
        # 14 significant digits: every digit that means anything, without conversion noise
        convert_table(df, system).to_csv(folder / fname, index=False, encoding="utf-8",
                                         float_format="%.14g")
        names.append(fname)
    return names


def write_reports(results, workbook_path, system: str | None = None) -> dict:
    """Write the workbook and, beside it, a folder of CSV tables and PNG figures.

    Parameters
    ----------
    results : penstock.model.Results
    workbook_path : path-like
        The workbook, e.g. ``reports/<case>.xlsx``; tables and figures go to
        ``reports/<case>/``.
    system : {"si", "us"}, optional
        Unit system; defaults to the case's.

    Returns
    -------
    dict
        ``{"workbook": Path, "folder": Path, "files": [...]}``
    """
    system = system or results.case.unit_system
    book = Path(workbook_path)
    folder = book.with_suffix("")
    book.parent.mkdir(parents=True, exist_ok=True)
    lock = book.parent / f".~lock.{book.name}#"
    if lock.exists():
        raise ReportError(f"{book}: the workbook is open in a spreadsheet application "
                          f"(lock file {lock.name}); close it and run again")
    if book.exists() and not os.access(book, os.W_OK):
        raise ReportError(f"{book}: the existing workbook is read-only; expected a writable file")
    try:
        tmp_dir = Path(tempfile.mkdtemp(prefix=f".{folder.name}.", dir=book.parent))
    except OSError as exc:
        raise ReportError(f"{book.parent}: cannot write the reports there "
                          f"({exc.strerror}); expected a writable folder") from None
    try:
        fd, tmp_book = tempfile.mkstemp(prefix=f".{book.stem}.", suffix=".tmp.xlsx",
                                        dir=book.parent)
    except OSError as exc:
        shutil.rmtree(tmp_dir, ignore_errors=True)
        raise ReportError(f"{book.parent}: cannot write the reports there "
                          f"({exc.strerror}); expected a writable folder") from None
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    try:
        write_workbook(results, tmp_book, system)
        files = write_tables(results, tmp_dir, system) + write_figures(results, tmp_dir, system)
        # temporary files are private (0600/0700); give the reports the user's usual mode
        os.chmod(tmp_book, 0o666 & ~umask)
        os.chmod(tmp_dir, 0o777 & ~umask)
        old = None
        if folder.exists():
            old = Path(tempfile.mkdtemp(prefix=f".{folder.name}.old.", dir=book.parent))
            os.rmdir(old)
            os.replace(folder, old)
        os.replace(tmp_dir, folder)
        os.replace(tmp_book, book)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
    except PermissionError as exc:
        shutil.rmtree(tmp_dir, ignore_errors=True)
        Path(tmp_book).unlink(missing_ok=True)
        raise ReportError(f"{book}: cannot replace the report ({exc.strerror}); is it open "
                          "or read-only?") from None
    except BaseException:
        shutil.rmtree(tmp_dir, ignore_errors=True)
        Path(tmp_book).unlink(missing_ok=True)
        raise
    return {"workbook": book, "folder": folder, "files": files}
