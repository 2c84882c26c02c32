"""File-system steps that happen whole or not at all, for :mod:`penstock.report.publish`.

* :class:`ReportLock`: an exclusive advisory lock on one report name, released by the
  system when the holder dies, so a killed run never leaves a stale lock;
* :func:`exchange` and :func:`rename_new`: one-step renames of folders (Linux
  ``renameat2``, macOS ``renamex_np``; elsewhere the caller falls back);
* :func:`replace_file`: one-step replacement of a file (``os.replace``);
* :func:`fsync_tree`, :func:`fsync_dir`: flush what was written before it is published;
* :func:`signals_held`: SIGINT and SIGTERM held back over a step that must not be cut.

The errors a user can act on are :class:`ReportError` (exit status 2, one line naming
the path) and :class:`ReportInterrupted` (an interrupt, telling whether the new output
is in place).
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import os
import signal
import stat
import sys
import threading
from pathlib import Path

#: Marks penstock's hidden staging and aside folders, temporary files and lock files.
TAG = "penstock"


class ReportError(OSError):
    """An output could not be written; the message names the path (exit status 2)."""


class ReportInterrupted(KeyboardInterrupt):
    """An interrupt while writing; ``published`` tells whether the new output is in place."""

    def __init__(self, folder, published: bool):
        super().__init__(str(folder))
        self.folder = Path(folder)
        self.published = published


def os_problem(exc: OSError) -> str:
    """A short reading of an operating-system error for a one-line message."""
    known = {errno.ENOSPC: "the disk is full", errno.EACCES: "permission denied",
             errno.EPERM: "permission denied", errno.EROFS: "the file system is read-only",
             errno.EISDIR: "is a folder, not a file",
             errno.ENOTDIR: "a part of the path is not a folder",
             errno.ENAMETOOLONG: "the name is too long",
             errno.ELOOP: "a symbolic link loop"}
    if hasattr(errno, "EDQUOT"):
        known[errno.EDQUOT] = "the disk quota is exceeded"
    return known.get(exc.errno) or exc.strerror or str(exc) or type(exc).__name__


# --------------------------------------------------------------------------- the lock
class ReportLock:
    """An exclusive lock on the output ``name`` in ``parent``, held while it is written.

    The lock file ``.<name>.penstock-lock`` is opened without following a symbolic link
    and must be a regular file; it is removed when the lock is released.
    """

    def __init__(self, parent: Path, name: str):
        self.path = Path(parent) / f".{name}.{TAG}-lock"
        self.report = Path(parent) / name
        self.fd = None

    def __enter__(self):
        flags = os.O_RDWR | os.O_CREAT | getattr(os, "O_NOFOLLOW", 0)
        for _ in range(20):
            try:
                fd = os.open(self.path, flags, 0o644)
            except OSError as exc:
                raise ReportError(f"{self.report}: cannot take the lock {self.path} "
                                  f"({os_problem(exc)}); nothing was changed") from None
            try:
                if not stat.S_ISREG(os.fstat(fd).st_mode):
                    raise ReportError(f"{self.report}: the lock {self.path} is not a regular "
                                      "file; move it away")
                free = _try_lock(fd)
            except OSError as exc:
                os.close(fd)
                if isinstance(exc, ReportError):
                    raise
                raise ReportError(f"{self.report}: cannot take the lock {self.path} "
                                  f"({os_problem(exc)}); nothing was changed") from None
            except BaseException:
                os.close(fd)
                raise
            if not free:
                os.close(fd)
                raise ReportError(f"{self.report}: another penstock run is writing it (lock "
                                  f"file {self.path}); wait for that run to finish, or choose "
                                  "another --out")
            # the holder before us may have removed the file after we opened it
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(self.path))
            except OSError:
                same = False
            if same:
                self.fd = fd
                return self
            os.close(fd)
        raise ReportError(f"{self.report}: cannot take the lock {self.path}; try again")

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


# --------------------------------------------------------------------------- flushing
def fsync_file(path) -> None:
    """Flush one file's data to disk (Windows needs a handle open for writing)."""
    fd = os.open(path, os.O_RDWR if os.name == "nt" else os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def fsync_tree(folder: Path) -> None:
    """Flush every file of ``folder``, then the folder's entries."""
    for p in Path(folder).iterdir():
        fsync_file(p)
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


# --------------------------------------------------------------------------- one-step renames
_RENAME_NOREPLACE, _RENAME_EXCHANGE = 1, 2          # linux/fs.h
_MAC_RENAME_SWAP, _MAC_RENAME_EXCL = 0x2, 0x4        # sys/stdio.h
_UNSUPPORTED = {errno.EINVAL, errno.ENOSYS, getattr(errno, "ENOTSUP", 95),
                getattr(errno, "EOPNOTSUPP", 95)}


def _rename_flags(src: Path, dst: Path, flags: str) -> bool:
    """Rename with flags ('exchange' or 'noreplace'); False where the system cannot."""
    if not (sys.platform.startswith("linux") or sys.platform == "darwin"):
        return False
    try:
        libc = ctypes.CDLL(None, use_errno=True)
    except (OSError, TypeError):
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
    """Swap two existing paths in one step; False where the system cannot."""
    return _rename_flags(src, dst, "exchange")


def rename_new(src: Path, dst: Path) -> None:
    """Rename ``src`` to ``dst``, which must not exist, in one step."""
    if not _rename_flags(src, dst, "noreplace"):
        if os.path.lexists(dst):
            raise FileExistsError(errno.EEXIST, "exists", os.fspath(dst))
        os.rename(src, dst)


def replace_file(tmp: Path, target: Path, state: dict) -> None:
    """Replace a single file in one step; ``state["published"]`` is set in the same step."""
    with signals_held():
        os.replace(tmp, target)
        state["published"] = True
    with contextlib.suppress(OSError):
        fsync_dir(Path(target).parent)


# --------------------------------------------------------------------------- signals
@contextlib.contextmanager
def signals_held(redeliver: bool = True):
    """Hold back SIGINT and SIGTERM for the duration; yields ``interrupted()``.

    The Python-level handlers are swapped for one that only records the signal (a
    signal mask would not do: the system may hand a signal to any thread that does not
    block it, such as a numerical library's, and Python then acts on it in the main
    thread at once).  On exit the handlers are put back and, with ``redeliver``, a
    recorded signal is acted on as it would have been; without it the caller acts on
    ``interrupted()`` itself.
    """
    pending: list[int] = []
    if threading.current_thread() is not threading.main_thread():
        yield lambda: False   # only the main thread ever runs Python's signal handlers
        return

    def hold(signum, frame):
        pending.append(signum)

    saved = {}
    for name in ("SIGINT", "SIGTERM"):
        sig = getattr(signal, name, None)
        if sig is not None:
            saved[sig] = signal.signal(sig, hold)
    try:
        yield lambda: bool(pending)
    finally:
        for sig, handler in saved.items():
            signal.signal(sig, handler)
        if pending and redeliver:
            sig = pending[0]
            handler = saved[sig]
            if callable(handler):
                handler(sig, None)          # e.g. raises KeyboardInterrupt
            elif handler == signal.SIG_DFL:
                os.kill(os.getpid(), sig)   # the default action, now that we are done
