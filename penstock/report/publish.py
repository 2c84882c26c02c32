"""Publishing reports: all or nothing, and never over anything penstock did not write.

A report is one folder::

    reports/<name>/
        <name>.xlsx               the client workbook
        *.csv, *.png              the tables and figures
        penstock-manifest.json    what penstock wrote here: each file with its SHA-256

How a report is published
-------------------------
1. A lock file ``reports/.<name>.penstock-lock`` is taken (an advisory ``flock``,
   released by the system when the process dies, so a killed run never leaves a
   stale lock).  A second run on the same report stops with a message naming it.
2. Leftovers of killed runs of the same report (hidden ``.<name>.penstock-*``
   folders, each marked by its manifest) are removed.
3. Everything is written into a hidden staging folder beside the target, its
   manifest last; each file and the folder are flushed to disk (``fsync``).
4. The staging folder takes the report's name in **one step**:

   * no report yet: a rename that refuses to replace anything;
   * a report already there: the two folders are *exchanged* atomically
     (``renameat2(RENAME_EXCHANGE)`` on Linux, ``renamex_np(RENAME_SWAP)`` on
     macOS), then the old one, now under the hidden name, is removed.

   Interrupt signals are held back during that step, so an interrupt or a kill at
   any moment leaves either the whole old report or the whole new one in place.
   Where the system has no atomic exchange (Windows; some network file systems)
   the old folder is first renamed aside; a kill between the two renames leaves
   it under its hidden name, and the next run of the report puts it back.

   The old report is checked once more after the exchange: if anything changed in
   it while the new one was being written (a file added or saved meanwhile), the two
   are exchanged back and the run stops, so that nothing it did not write is removed.

What is replaced
----------------
Only a folder whose manifest matches its contents exactly (the same files, each
unchanged since penstock wrote it; the desktop's own index files such as
``.DS_Store`` aside), or an empty folder.  Anything else in the way (a file, a
folder without a manifest, a workbook edited since, a file added by hand) is an
error naming the path, and nothing is touched.  No output may be, contain or lie
inside a case folder (a folder holding ``site.toml``), nor lie inside a report
folder.  A single workbook (a comparison, a portfolio) carries the SHA-256 of its
own parts in a document property, and is replaced only while that still matches.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import glob
import hashlib
import json
import os
import re
import secrets
import shutil
import zipfile
from pathlib import Path

from ..schema import CASE_FILE
from .atomic import (
    TAG,
    ReportError,
    ReportInterrupted,
    ReportLock,
    exchange,
    fsync_dir,
    fsync_file,
    fsync_tree,
    os_problem,
    rename_new,
    replace_file,
    signals_held,
)

__all__ = ["MANIFEST", "ReportError", "ReportInterrupted", "ReportLock", "check_not_in_a_case",
           "check_output_file", "check_report_folder", "clean_leftovers", "enclosing_case",
           "enclosing_report", "exchange", "fsync_tree", "new_staging", "os_problem",
           "publish_folder", "read_manifest", "replaceable", "run_info", "spreadsheet_lock",
           "write_manifest", "write_workbook_file", "written_by_penstock"]

#: Name of the manifest file in every report folder.
MANIFEST = "penstock-manifest.json"
#: Files a desktop writes into any folder it shows; not the user's work, so they never
#: stop a report from being replaced.
DESKTOP_FILES = {".DS_Store", "Thumbs.db", "desktop.ini", ".directory"}
#: Name of the document property holding a single workbook's own digest.
DIGEST_PROPERTY = "penstock-digest"
#: What the writer puts in that property before the digest is known.
DIGEST_PLACEHOLDER = "0" * 64


def _user_mode(path: Path, folder: bool = False) -> None:
    """Give a file or folder penstock wrote the user's usual permissions (the umask)."""
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(path, (0o777 if folder else 0o666) & ~umask)


# --------------------------------------------------------------------------- cases, reports
def enclosing_case(path) -> Path | None:
    """The case folder (holding ``site.toml``) that ``path`` is or lies inside, if any."""
    p = Path(os.path.abspath(path))
    for q in (p, *p.parents):
        with contextlib.suppress(OSError):
            if (q / CASE_FILE).exists():
                return q
    return None


def enclosing_report(path, include_self: bool = True) -> Path | None:
    """The penstock report folder (holding its manifest) that ``path`` is or lies inside."""
    p = Path(os.path.abspath(path))
    for q in ((p,) if include_self else ()) + tuple(p.parents):
        with contextlib.suppress(OSError):
            if (q / MANIFEST).is_file():
                return q
    return None


def _inside(a: Path, b: Path) -> bool:
    """``a`` is ``b`` or lies inside it (both absolute and resolved)."""
    return a == b or b in a.parents


def _real(path) -> Path:
    return Path(os.path.realpath(os.path.abspath(path)))


def _outside(case: Path, name: str) -> str:
    """A suggested output path beside a case folder, relative to where the user is."""
    try:
        return os.path.relpath(case.parent / "reports" / name)
    except ValueError:   # another drive (Windows)
        return str(case.parent / "reports" / name)


def check_not_in_a_case(path, what: str, case_folders=(), holds: bool = True,
                        report_itself: bool = False) -> None:
    """Refuse an output ``path`` that is, lies inside or (with ``holds``) contains a case.

    ``case_folders`` are the cases being run; any folder holding ``site.toml`` counts
    as a case too.  A folder that is replaced or filled (a report, a batch's reports
    folder) may not hold a case either; a single file only may not lie in one.  No
    output may lie inside a report folder (nor be one, unless ``report_itself``).
    """
    real = _real(path)
    case = enclosing_case(real)
    if case is not None:
        where = "is" if case == real else "lies inside"
        raise ReportError(f"{path}: the {what} {where} the case folder {case} (it holds "
                          f"{CASE_FILE}); expected an output path outside every case folder, "
                          f"e.g. --out {_outside(case, Path(path).name or case.name)}")
    for c in case_folders if holds else ():
        if _inside(_real(c), real):
            raise ReportError(f"{path}: the {what} holds the case folder {c}; expected an "
                              "output path outside every case folder")
    report = enclosing_report(real, include_self=not report_itself)
    if report is not None:
        where = "is" if report == real else "lies inside"
        raise ReportError(f"{path}: the {what} {where} the report folder {report} (it holds "
                          f"{MANIFEST}), which penstock replaces whole; expected an output "
                          "path outside every report folder")


# --------------------------------------------------------------------------- manifests
def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def read_manifest(folder: Path) -> dict | None:
    """The manifest of a report folder, or None when it has none (or not a valid one)."""
    path = Path(folder) / MANIFEST
    try:
        if not path.is_file() or path.is_symlink() or path.stat().st_size > 1 << 20:
            return None
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError):
        return None
    if not isinstance(doc, dict) or doc.get("written_by") != TAG:
        return None
    return doc


def write_manifest(folder: Path, info: dict, status: str = "complete") -> dict:
    """Write the manifest of ``folder``: every file in it with its SHA-256."""
    files = {}
    if status == "complete":
        for p in sorted(Path(folder).iterdir()):
            if p.name != MANIFEST:
                files[p.name] = _sha256(p)
    doc = {"written_by": TAG, "format": 1, "status": status, **info, "files": files}
    (Path(folder) / MANIFEST).write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n",
                                         encoding="utf-8")
    return doc


def replaceable(folder: Path) -> str | None:
    """Why ``folder`` may not be replaced by a new report, or None if it may.

    A folder may be replaced when it is empty, or when it holds exactly the files its
    manifest lists, each unchanged since penstock wrote it (desktop index files such as
    ``.DS_Store`` aside).
    """
    folder = Path(folder)
    if folder.is_symlink():
        return "is a symbolic link, not a report folder written by penstock"
    if not folder.exists():
        return None
    if not folder.is_dir():
        return "is a file, not a report folder written by penstock"
    try:
        names = sorted(n for n in os.listdir(folder) if n not in DESKTOP_FILES)
    except OSError as exc:
        return f"cannot be read ({os_problem(exc)})"
    if not names:
        return None
    doc = read_manifest(folder)
    if doc is None or doc.get("status") != "complete" or not isinstance(doc.get("files"), dict):
        return (f"exists and was not written by penstock (it has no {MANIFEST}); move it "
                "away or choose another --out")
    listed = doc["files"]
    for name in names:
        if name == MANIFEST:
            continue
        p = folder / name
        if name not in listed or p.is_symlink() or not p.is_file():
            return (f"holds {p.name}, which penstock did not write; move it out of the "
                    "report folder or choose another --out")
        try:
            same = _sha256(p) == listed[name]
        except OSError as exc:
            return f"holds {p.name}, which cannot be read ({os_problem(exc)})"
        if not same:
            return (f"holds {p.name}, which has changed since penstock wrote it; keep your "
                    "edits by moving it away, or choose another --out")
    return None


def spreadsheet_lock(book: Path) -> Path | None:
    """A lock or owner file that a spreadsheet application keeps beside an open workbook."""
    book = Path(book)
    # LibreOffice's lock file; the owner file of the most common desktop spreadsheet,
    # "~$" before the name or in place of its first one or two letters (which, depends on
    # the name's length: all three are looked for)
    names = [f".~lock.{book.name}#", f"~${book.name}", f"~${book.name[1:]}",
             f"~${book.name[2:]}"]
    for name in names:
        p = book.parent / name
        if os.path.lexists(p):
            return p
    return None


def _refuse_open_workbook(book: Path) -> None:
    lock = spreadsheet_lock(book)
    if lock is not None:
        raise ReportError(f"{book}: the workbook is open in a spreadsheet application (lock "
                          f"file {lock.name}); close it and run again")


def check_report_folder(folder, case_folders=()) -> None:
    """Raise :class:`ReportError` unless a new report may be published at ``folder``."""
    folder = Path(folder)
    check_not_in_a_case(folder, "report folder", case_folders, report_itself=True)
    if folder.is_dir() and not folder.is_symlink():
        _refuse_open_workbook(folder / f"{folder.name}.xlsx")
    why = replaceable(folder)
    if why:
        raise ReportError(f"{folder}: {why}")


# --------------------------------------------------------------------------- single workbooks
def _parts_digest(z: zipfile.ZipFile) -> str:
    """SHA-256 of every part of a workbook but its custom properties (where it is kept)."""
    h = hashlib.sha256()
    for name in sorted(z.namelist()):
        if name != "docProps/custom.xml":
            h.update(name.encode() + b"\0" + z.read(name) + b"\0")
    return h.hexdigest()


def stamp_workbook(path: Path) -> None:
    """Write a workbook's own digest into its placeholder document property."""
    path = Path(path)
    with zipfile.ZipFile(path) as z:
        digest = _parts_digest(z)
        custom = z.read("docProps/custom.xml").decode("utf-8")
        if DIGEST_PLACEHOLDER not in custom:
            raise ValueError(f"{path}: the workbook has no {DIGEST_PROPERTY} placeholder")
        parts = [(info, z.read(info.filename)) for info in z.infolist()]
    tmp = path.with_name(path.name + ".stamp")
    with zipfile.ZipFile(tmp, "w") as out:
        for info, data in parts:
            if info.filename == "docProps/custom.xml":
                data = custom.replace(DIGEST_PLACEHOLDER, digest).encode("utf-8")
            out.writestr(info, data)
    os.replace(tmp, path)


def written_by_penstock(path: Path) -> bool:
    """Whether an .xlsx file is a single workbook penstock wrote, unchanged since.

    Its parts must still match the digest penstock wrote into its document property.
    """
    try:
        with zipfile.ZipFile(path) as z:
            custom = z.read("docProps/custom.xml").decode("utf-8", "replace")
            digest = _parts_digest(z)
    except (OSError, KeyError, zipfile.BadZipFile, ValueError, RuntimeError):
        return False
    m = re.search(rf'name="{DIGEST_PROPERTY}".*?>([0-9a-f]{{64}})<', custom, re.S)
    return m is not None and m.group(1) == digest


def check_output_file(path, case_folders=()) -> None:
    """Raise :class:`ReportError` unless a single-file workbook may be written at ``path``."""
    path = Path(path)
    check_not_in_a_case(path.parent, "output folder", case_folders, holds=False)
    if path.is_symlink() or (path.exists() and not path.is_file()):
        raise ReportError(f"{path}: is a folder or a special file, not a workbook; expected "
                          "the name of an .xlsx file")
    if path.suffix.lower() != ".xlsx":
        raise ReportError(f"{path}: is not an .xlsx file name; expected e.g. comparison.xlsx")
    if path.exists() and not written_by_penstock(path):
        raise ReportError(f"{path}: exists and was not written by penstock (or was changed "
                          "since); move it away or choose another name")
    _refuse_open_workbook(path)


def write_workbook_file(target, write, case_folders=()) -> Path:
    """Write a single workbook (a comparison, a portfolio) at ``target``, all or nothing.

    ``write(path)`` writes the workbook, with a :data:`DIGEST_PLACEHOLDER` in its
    :data:`DIGEST_PROPERTY` document property, to a hidden temporary file beside the
    target, under the lock of that name; the file is stamped with its digest and then
    replaces the target in one step.  Leftovers of killed runs are removed first.  Only
    a workbook penstock wrote and nobody changed since is replaced.

    Raises
    ------
    ReportError
        Nothing was changed.
    ReportInterrupted
        ``published`` tells whether the new workbook is in place.
    """
    import tempfile

    target = Path(target)
    check_output_file(target, case_folders)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ReportError(f"{target.parent}: cannot create the folder ({os_problem(exc)})"
                          ) from None
    prefix = f".{target.stem}.{TAG}-file-"
    state = {"published": False}
    try:
        with ReportLock(target.parent, target.name):
            for p in target.parent.glob(glob.escape(prefix) + "*.xlsx"):
                with contextlib.suppress(OSError):
                    p.unlink()
            check_output_file(target, case_folders)
            try:
                fd, tmp = tempfile.mkstemp(prefix=prefix, suffix=".xlsx", dir=target.parent)
                os.close(fd)
            except OSError as exc:
                raise ReportError(f"{target}: cannot write in {target.parent} "
                                  f"({os_problem(exc)}); nothing was changed") from None
            tmp = Path(tmp)
            try:
                write(tmp)
                stamp_workbook(tmp)
                _user_mode(tmp)
                fsync_file(tmp)
                check_output_file(target, case_folders)   # nothing appeared meanwhile
                replace_file(tmp, target, state)
            except BaseException as exc:
                tmp.unlink(missing_ok=True)
                if isinstance(exc, OSError) and not isinstance(exc, ReportError):
                    raise ReportError(f"{target}: cannot write the workbook "
                                      f"({os_problem(exc)}); nothing was changed") from None
                raise
    except ReportInterrupted:
        raise
    except KeyboardInterrupt:
        raise ReportInterrupted(target, state["published"]) from None
    return target


# --------------------------------------------------------------------------- report folders
def _hidden(parent: Path, name: str, kind: str) -> Path:
    return Path(parent) / f".{name}.{TAG}-{kind}-{secrets.token_hex(4)}"


def clean_leftovers(parent: Path, name: str) -> list[Path]:
    """Remove what killed runs of the report ``name`` left in ``parent`` (lock held).

    A folder set aside by the two-rename fallback is put back first when the report
    itself is missing.  Only hidden folders of this report's name that carry a
    penstock manifest are touched.  Returns the paths removed or restored.
    """
    parent = Path(parent)
    done = []
    try:
        entries = sorted(parent.iterdir())
    except OSError:
        return done
    prefix = f".{name}.{TAG}-"
    ours = [p for p in entries if p.name.startswith(prefix) and p.is_dir()
            and not p.is_symlink() and read_manifest(p) is not None]
    target = parent / name
    if not os.path.lexists(target):
        aside = [p for p in ours if p.name.startswith(prefix + "aside-")
                 and read_manifest(p).get("status") == "complete"]
        if aside:
            os.rename(aside[-1], target)
            done.append(target)
            ours.remove(aside[-1])
    for p in ours:
        shutil.rmtree(p, ignore_errors=True)
        done.append(p)
    return done


def new_staging(parent: Path, name: str, info: dict) -> Path:
    """An empty hidden staging folder beside the report, marked as penstock's."""
    path = _hidden(parent, name, "staging")
    os.mkdir(path, 0o700)
    write_manifest(path, info, status="staging")
    return path


def publish_folder(staging: Path, target: Path, state: dict) -> Path | None:
    """Put the complete ``staging`` folder in place of ``target`` in one step.

    Sets ``state["published"]`` in the same step.  Returns the hidden path now holding
    the previous report, checked once more to be penstock's own (to be removed by the
    caller), or None.

    Raises
    ------
    ReportError
        The previous report changed while the new one was written: the two are put
        back as they were, and nothing was changed.
    """
    staging, target = Path(staging), Path(target)
    with signals_held():
        if not os.path.lexists(target):
            rename_new(staging, target)
            state["published"] = True
            old = None
        elif exchange(staging, target):
            why = replaceable(staging)          # the previous report, now under the hidden name
            if why:
                exchange(staging, target)       # put both back as they were
                raise ReportError(f"{target}: changed while the new report was being "
                                  f"written ({why.split(';')[0]}); nothing was changed")
            state["published"] = True
            old = staging
        else:
            # no atomic exchange here: set the old report aside, then rename the new one in
            old = _hidden(target.parent, target.name, "aside")
            os.rename(target, old)
            why = replaceable(old)
            try:
                if why:
                    raise ReportError(f"{target}: changed while the new report was being "
                                      f"written ({why.split(';')[0]}); nothing was changed")
                os.rename(staging, target)
            except BaseException:
                try:
                    os.rename(old, target)
                except OSError as exc:
                    raise ReportError(f"{target}: the earlier report was set aside as {old} "
                                      f"and could not be put back ({os_problem(exc)}); the "
                                      "next run puts it back") from None
                raise
            state["published"] = True
    fsync_dir(target.parent)
    return old


def run_info(results) -> dict:
    """The provenance recorded in a report's manifest."""
    return {"version": results.version,
            "site": results.case.name,
            "case_folder": os.path.abspath(results.case.folder),
            "created": _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")}
