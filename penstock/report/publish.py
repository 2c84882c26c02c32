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

What is replaced
----------------
Only a folder whose manifest matches its contents exactly (the same files, each
unchanged since penstock wrote it), or an empty folder.  Anything else in the
way (a file, a folder without a manifest, a workbook edited since, a file added
by hand) is an error naming the path, and nothing is touched.  No output may be,
contain or lie inside a case folder (a folder holding ``site.toml``).
"""

from __future__ import annotations

import contextlib
import ctypes
import datetime as _dt
import errno
import hashlib
import json
import os
import secrets
import shutil
import signal
import sys
import threading
import zipfile
from pathlib import Path

from ..schema import CASE_FILE

#: Name of the manifest file in every report folder.
MANIFEST = "penstock-manifest.json"
#: Marks hidden staging and aside folders and the lock file of a report.
_TAG = "penstock"


class ReportError(OSError):
    """The report could not be written; the message names the path (exit status 2)."""


class ReportInterrupted(KeyboardInterrupt):
    """An interrupt while writing a report; ``published`` tells whether the new one landed."""

    def __init__(self, folder, published: bool):
        super().__init__(str(folder))
        self.folder = Path(folder)
        self.published = published


def os_problem(exc: OSError) -> str:
    """A short reading of an operating-system error for a one-line message."""
    if exc.errno == errno.ENOSPC:
        return "the disk is full"
    if exc.errno == getattr(errno, "EDQUOT", None):
        return "the disk quota is exceeded"
    if exc.errno in (errno.EACCES, errno.EPERM):
        return "permission denied"
    if exc.errno == errno.EROFS:
        return "the file system is read-only"
    return exc.strerror or str(exc) or type(exc).__name__


# --------------------------------------------------------------------------- case folders
def enclosing_case(path) -> Path | None:
    """The case folder (holding ``site.toml``) that ``path`` is or lies inside, if any."""
    p = Path(os.path.abspath(path))
    for q in (p, *p.parents):
        with contextlib.suppress(OSError):
            if (q / CASE_FILE).exists():
                return q
    return None


def _inside(a: Path, b: Path) -> bool:
    """``a`` is ``b`` or lies inside it (both absolute and resolved)."""
    return a == b or b in a.parents


def _real(path) -> Path:
    return Path(os.path.realpath(os.path.abspath(path)))


def enclosing_report(path, include_self: bool = True) -> Path | None:
    """The penstock report folder (holding its manifest) that ``path`` is or lies inside."""
    p = Path(os.path.abspath(path))
    for q in ((p,) if include_self else ()) + tuple(p.parents):
        with contextlib.suppress(OSError):
            if (q / MANIFEST).is_file():
                return q
    return None


def check_not_in_a_case(path, what: str, case_folders=(), holds: bool = True,
                        report_itself: bool = False) -> None:
    """Refuse an output ``path`` that is, lies inside or (with ``holds``) contains a case.

    ``case_folders`` are the cases being run; any folder holding ``site.toml`` counts
    as a case too.  A folder that is replaced or filled (a report, a batch's reports
    folder) may not hold a case either; a single file only may not lie in one.
    """
    real = _real(path)
    case = enclosing_case(real)
    if case is not None:
        where = "is" if case == real else "lies inside"
        raise ReportError(f"{path}: the {what} {where} the case folder {case} (it holds "
                          f"{CASE_FILE}); expected an output path outside every case folder, "
                          "e.g. --out reports/<name>")
    for c in case_folders if holds else ():
        rc = _real(c)
        if _inside(rc, real):
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
    if not isinstance(doc, dict) or doc.get("written_by") != _TAG:
        return None
    return doc


def write_manifest(folder: Path, info: dict, status: str = "complete") -> dict:
    """Write the manifest of ``folder``: every file in it with its SHA-256."""
    files = {}
    if status == "complete":
        for p in sorted(Path(folder).iterdir()):
            if p.name != MANIFEST:
                files[p.name] = _sha256(p)
    doc = {"written_by": _TAG, "format": 1, "status": status, **info, "files": files}
    (Path(folder) / MANIFEST).write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n",
                                         encoding="utf-8")
    return doc


def replaceable(folder: Path) -> str | None:
    """Why ``folder`` may not be replaced by a new report, or None if it may.

    A folder may be replaced when it is empty, or when it holds exactly the files its
    manifest lists, each unchanged since penstock wrote it.
    """
    folder = Path(folder)
    if folder.is_symlink():
        return "is a symbolic link, not a report folder written by penstock"
    if not folder.exists():
        return None
    if not folder.is_dir():
        return "is a file, not a report folder written by penstock"
    try:
        names = sorted(os.listdir(folder))
    except OSError as exc:
        return f"cannot be read ({exc.strerror})"
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
            return f"holds {p.name}, which cannot be read ({exc.strerror})"
        if not same:
            return (f"holds {p.name}, which has changed since penstock wrote it; keep your "
                    "edits by moving it away, or choose another --out")
    return None


def check_report_folder(folder, case_folders=()) -> None:
    """Raise :class:`ReportError` unless a new report may be published at ``folder``."""
    folder = Path(folder)
    check_not_in_a_case(folder, "report folder", case_folders, report_itself=True)
    book = folder / f"{folder.name}.xlsx"
    lock = spreadsheet_lock(book) if folder.is_dir() else None
    if lock is not None:
        raise ReportError(f"{book}: the workbook is open in a spreadsheet application (lock "
                          f"file {lock.name}); close it and run again")
    why = replaceable(folder)
    if why:
        raise ReportError(f"{folder}: {why}")


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
        if p.exists():
            return p
    return None


def written_by_penstock(path: Path) -> bool:
    """Whether an existing .xlsx file was written by penstock and not saved since by anyone."""
    try:
        with zipfile.ZipFile(path) as z:
            core = z.read("docProps/core.xml").decode("utf-8", "replace")
    except (OSError, KeyError, zipfile.BadZipFile, ValueError):
        return False
    return ("<dc:creator>penstock" in core and
            "<cp:lastModifiedBy>penstock</cp:lastModifiedBy>" in core)


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
        raise ReportError(f"{path}: exists and was not written by penstock (or was saved "
                          "since); move it away or choose another name")
    lock = spreadsheet_lock(path)
    if lock is not None:
        raise ReportError(f"{path}: the workbook is open in a spreadsheet application (lock "
                          f"file {lock.name}); close it and run again")


# --------------------------------------------------------------------------- the lock
class ReportLock:
    """An exclusive lock on one report name in one folder, held while it is written."""

    def __init__(self, parent: Path, name: str):
        self.path = Path(parent) / f".{name}.{_TAG}-lock"
        self.report = Path(parent) / name
        self.fd = None

    def __enter__(self):
        for _ in range(20):
            try:
                fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
            except OSError as exc:
                raise ReportError(f"{self.report}: cannot write in {self.path.parent} "
                                  f"({os_problem(exc)}); no report was changed") from None
            try:
                free = _try_lock(fd)
            except OSError as exc:
                os.close(fd)
                raise ReportError(f"{self.report}: cannot take the report lock "
                                  f"{self.path.name} ({os_problem(exc)}); no report was "
                                  "changed") from None
            except BaseException:
                os.close(fd)
                raise
            if not free:
                os.close(fd)
                raise ReportError(f"{self.report}: another penstock run is writing this "
                                  f"report (lock file {self.path}); wait for it to finish, "
                                  "or choose another --out")
            # the holder before us may have removed the file after we opened it
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(self.path))
            except OSError:
                same = False
            if same:
                self.fd = fd
                with contextlib.suppress(OSError):
                    os.ftruncate(fd, 0)
                    os.write(fd, f"{os.getpid()}\n".encode())
                return self
            os.close(fd)
        raise ReportError(f"{self.path}: cannot take the report lock; try again")

    def __exit__(self, *exc):
        if self.fd is not None:
            with contextlib.suppress(OSError):
                os.unlink(self.path)
            os.close(self.fd)   # closing releases the lock
            self.fd = None
        return False


def _try_lock(fd: int) -> bool:
    try:
        import fcntl
    except ImportError:   # Windows
        import msvcrt

        try:
            msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
            return True
        except OSError:
            return False
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        return True
    except OSError as exc:
        if exc.errno in (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK):
            return False
        raise


# --------------------------------------------------------------------------- staging
def _hidden(parent: Path, name: str, kind: str) -> Path:
    return Path(parent) / f".{name}.{_TAG}-{kind}-{secrets.token_hex(4)}"


def clean_leftovers(parent: Path, name: str) -> list[Path]:
    """Remove what killed runs of the report ``name`` left in ``parent`` (lock held).

    A folder set aside by the two-rename fallback is put back first when the report
    itself is missing.  Returns the paths removed or restored.
    """
    parent = Path(parent)
    done = []
    try:
        entries = sorted(parent.iterdir())
    except OSError:
        return done
    prefix = f".{name}.{_TAG}-"
    ours = [p for p in entries if p.name.startswith(prefix) and p.is_dir()
            and not p.is_symlink() and read_manifest(p) is not None]
    target = parent / name
    if not target.exists() and not target.is_symlink():
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


def fsync_tree(folder: Path) -> None:
    """Flush every file of ``folder`` and the folder itself to disk."""
    for p in Path(folder).iterdir():
        fd = os.open(p, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
    fsync_dir(folder)


def fsync_dir(folder: Path) -> None:
    """Flush a folder's entries (a no-op where folders cannot be opened, e.g. Windows)."""
    if os.name != "posix":
        return
    fd = os.open(folder, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


# --------------------------------------------------------------------------- one-step rename
_RENAME_NOREPLACE, _RENAME_EXCHANGE = 1, 2          # linux/fs.h
_MAC_RENAME_SWAP, _MAC_RENAME_EXCL = 0x2, 0x4        # sys/stdio.h
_UNSUPPORTED = {errno.EINVAL, errno.ENOSYS, getattr(errno, "ENOTSUP", 95),
                getattr(errno, "EOPNOTSUPP", 95)}


def _libc():
    try:
        return ctypes.CDLL(None, use_errno=True)
    except OSError:
        return None


def _rename_flags(src: Path, dst: Path, flags: str) -> bool:
    """Rename with flags ('exchange' or 'noreplace'); False when the system cannot."""
    libc = _libc()
    if libc is None:
        return False
    a, b = os.fsencode(os.fspath(src)), os.fsencode(os.fspath(dst))
    if sys.platform.startswith("linux") and hasattr(libc, "renameat2"):
        fn = libc.renameat2
        fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p,
                       ctypes.c_uint]
        fn.restype = ctypes.c_int
        at_fdcwd = -100
        flag = _RENAME_EXCHANGE if flags == "exchange" else _RENAME_NOREPLACE
        rc = fn(at_fdcwd, a, at_fdcwd, b, flag)
    elif sys.platform == "darwin" and hasattr(libc, "renamex_np"):
        fn = libc.renamex_np
        fn.argtypes = [ctypes.c_char_p, ctypes.c_char_p, ctypes.c_uint]
        fn.restype = ctypes.c_int
        rc = fn(a, b, _MAC_RENAME_SWAP if flags == "exchange" else _MAC_RENAME_EXCL)
    else:
        return False
    if rc == 0:
        return True
    err = ctypes.get_errno()
    if err in _UNSUPPORTED:
        return False
    raise OSError(err, os.strerror(err), os.fspath(dst))


def exchange(src: Path, dst: Path) -> bool:
    """Swap two existing folders in one step; False where the system cannot."""
    return _rename_flags(src, dst, "exchange")


def rename_new(src: Path, dst: Path) -> None:
    """Rename ``src`` to ``dst``, which must not exist, in one step."""
    if not _rename_flags(src, dst, "noreplace"):
        if os.path.lexists(dst):
            raise FileExistsError(errno.EEXIST, "exists", os.fspath(dst))
        os.rename(src, dst)


@contextlib.contextmanager
def signals_held():
    """Hold back SIGINT and SIGTERM for the duration; act on them on exit.

    The Python-level handlers are swapped for one that only records the signal (a
    signal mask would not do: the system may hand a signal to any thread that does not
    block it, such as a numerical library's, and Python then acts on it in the main
    thread at once).  On exit the handlers are put back and a recorded signal is
    acted on as it would have been.
    """
    names = [n for n in ("SIGINT", "SIGTERM") if hasattr(signal, n)]
    if threading.current_thread() is not threading.main_thread():
        yield   # only the main thread ever receives Python's signal handlers
        return
    pending: list[int] = []

    def hold(signum, frame):
        pending.append(signum)

    saved = {}
    for n in names:
        sig = getattr(signal, n)
        saved[sig] = signal.signal(sig, hold)
    try:
        yield
    finally:
        for sig, handler in saved.items():
            signal.signal(sig, handler)
        if pending:
            sig = pending[0]
            handler = saved[sig]
            if callable(handler):
                handler(sig, None)          # e.g. raises KeyboardInterrupt
            elif handler == signal.SIG_DFL:
                os.kill(os.getpid(), sig)   # the default action, now that we are done


def publish_folder(staging: Path, target: Path, state: dict) -> Path | None:
    """Put the complete ``staging`` folder in place of ``target`` in one step.

    Sets ``state["published"]`` in the same step.  Returns the hidden path now holding
    the previous report (to be removed by the caller), or None.
    """
    staging, target = Path(staging), Path(target)
    with signals_held():
        if not os.path.lexists(target):
            rename_new(staging, target)
            state["published"] = True
            old = None
        elif exchange(staging, target):
            state["published"] = True
            old = staging                       # now holds the previous report
        else:
            # no atomic exchange here: set the old report aside, then rename the new one in
            old = _hidden(target.parent, target.name, "aside")
            os.rename(target, old)
            try:
                os.rename(staging, target)
            except BaseException:
                os.rename(old, target)
                raise
            state["published"] = True
    fsync_dir(target.parent)
    return old


def replace_file(tmp: Path, target: Path) -> None:
    """Replace a single file in one step (``os.replace`` is atomic on one file system)."""
    with signals_held():
        os.replace(tmp, target)
    with contextlib.suppress(OSError):
        fsync_dir(Path(target).parent)


def write_workbook_file(target, write, case_folders=()) -> Path:
    """Write a single workbook (a comparison, a portfolio) at ``target``, all or nothing.

    ``write(path)`` writes the workbook to a hidden temporary file beside the target,
    under the report lock of that name; the temporary file then replaces the target in
    one step.  Leftovers of killed runs are removed first.  Only a workbook penstock
    wrote and nobody saved since is replaced (:func:`check_output_file`).
    """
    import tempfile

    target = Path(target)
    check_output_file(target, case_folders)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ReportError(f"{target.parent}: cannot create the folder ({os_problem(exc)})"
                          ) from None
    prefix = f".{target.stem}.{_TAG}-file-"
    with ReportLock(target.parent, target.name):
        for p in target.parent.glob(prefix + "*.xlsx"):
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
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
            with open(tmp, "rb") as fh:
                os.fsync(fh.fileno())
            replace_file(tmp, target)
        except OSError as exc:
            tmp.unlink(missing_ok=True)
            if isinstance(exc, ReportError):
                raise
            raise ReportError(f"{target}: cannot write the workbook ({os_problem(exc)}); "
                              "nothing was changed") from None
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
    return target


def run_info(results) -> dict:
    """The provenance recorded in a report's manifest."""
    return {"version": results.version,
            "site": results.case.name,
            "case_folder": os.path.abspath(results.case.folder),
            "created": _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")}
