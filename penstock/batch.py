"""Batch runs: many case folders, one workbook each, and a portfolio workbook.

Cases run in a process pool (or, with the optional ``dask`` extra, on a Dask
cluster); each writes its reports atomically, so an interrupted batch leaves the
finished workbooks intact and no partial files.  One case's bad input is reported
and the others still run.
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import os
import sys
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from .case import CaseError
from .constants import J_PER_MWH
from .schema import CASE_FILE

#: Columns of the portfolio table, from each case's headline.
PORTFOLIO = [
    ("net head at design flow [m]", "net_head", 1.0),
    ("installed capacity [kW]", "installed_capacity", 1e-3),
    ("mean annual energy [MWh]", "mean_annual_energy", 1 / J_PER_MWH),
    ("capacity factor [%]", "capacity_factor", 100.0),
    ("recommended diameter [m]", "selected_diameter", 1.0),
    ("maximum transient rise [m]", "max_surge_rise", 1.0),
    ("minimum steady pressure head [m]", "min_pressure_head", 1.0),
    ("minimum transient pressure head [m]", "min_transient_pressure_head", 1.0),
]


@dataclass
class Outcome:
    """What one case of a batch produced."""

    folder: str
    ok: bool
    row: dict
    error: str = ""


def expand(paths) -> list[Path]:
    """Case folders named directly, or found one level inside folders that hold cases.

    Plain files among several paths (as a shell glob gives them) are passed over.
    """
    paths = list(paths)
    out = []
    for p in map(Path, paths):
        if (p / CASE_FILE).is_file() or p.name == CASE_FILE:
            out.append(p.parent if p.name == CASE_FILE else p)
        elif p.is_dir():
            inner = sorted(q for q in p.iterdir() if (q / CASE_FILE).is_file())
            if not inner:
                out.append(p)   # reported by the loader: not a case folder
            out.extend(inner)
        elif p.exists() and len(list(paths)) > 1:
            continue   # a plain file picked up by a shell glob such as cases/*
        else:
            out.append(p)
    seen, unique = set(), []
    for p in out:
        key = p.resolve()
        if key not in seen:
            seen.add(key)
            unique.append(p)
    return unique


def run_one(folder: str, out_dir: str, units: str | None, proceed: bool = False) -> Outcome:
    """Load, run and write one case; never raises for a case's own problems."""
    from . import load_case, run_case
    from .report import ReportError, write_reports
    from .report.publish import check_report_folder

    if _WORKER["stop"]:       # the batch was interrupted: start no new case
        return Outcome(str(folder), False, {}, f"{folder}: not run (the batch was "
                       "interrupted)")
    _WORKER["busy"] = True
    try:
        case = load_case(folder)
        target = Path(out_dir) / case.slug
        check_report_folder(target, [case.folder])     # before the run: fail fast
        results = run_case(case, proceed=proceed)
        write_reports(results, target, units)
    except KeyboardInterrupt as exc:
        if not _WORKER["pool"]:
            raise                      # run in the batch's own process: stop the batch
        done = getattr(exc, "published", False)
        return Outcome(str(folder), False, {}, f"{folder}: interrupted" + (
            " after its new report was published" if done else "; its report was not "
            "changed"))
    except (CaseError, ReportError) as exc:
        return Outcome(str(folder), False, {}, str(exc))
    except OSError as exc:
        from .report.atomic import os_problem

        where = exc.filename if exc.filename is not None else folder
        return Outcome(str(folder), False, {}, f"{where}: {os_problem(exc)}")
    except Exception as exc:   # an internal error in one case must not stop the batch
        return Outcome(str(folder), False, {}, f"internal error: {type(exc).__name__}: {exc}")
    finally:
        _WORKER["busy"] = False
    h = results.headline
    row = {"site": case.name, "folder": str(folder)}
    for name, key, scale in PORTFOLIO:
        v = getattr(h, key)
        row[name] = None if v is None else float(v) * scale
    row["warnings"] = int((results.cautions["severity"] == "warning").sum())
    row["notes"] = int((results.cautions["severity"] == "note").sum())
    return Outcome(str(folder), True, row)


def run_many(folders, out_dir="reports", workers=None, units=None, progress=None,
             scheduler="process", address=None, proceed=False) -> list[Outcome]:
    """Run many cases; outcomes come back in the order of ``folders``.

    Parameters
    ----------
    folders : list of path-like
        Case folders.
    out_dir : path-like
        Where each case's workbook and folder are written.
    workers : int, optional
        Processes (default: the machine's cores, at most the number of cases).
    units : {"si", "us"}, optional
        Report units; default each case's own.
    progress : callable, optional
        Called with the number of cases finished so far.
    scheduler : {"process", "dask"}
        ``dask`` needs the optional extra; ``address`` names a running scheduler,
        else a local cluster is started.
    proceed : bool
        Go on with cases the tool's checks call physically impossible (``--run-anyway``).
    """
    folders = [str(f) for f in folders]
    Path(out_dir).mkdir(parents=True, exist_ok=True)
    tick = progress or (lambda n: None)
    if scheduler == "dask":
        return _run_dask(folders, str(out_dir), units, address, tick, proceed)
    workers = max(1, min(workers or os.cpu_count() or 1, len(folders)))
    if workers == 1:
        out = []
        for i, f in enumerate(folders):
            out.append(run_one(f, str(out_dir), units, proceed))
            tick(i + 1)
        return out
    import multiprocessing

    from .report.atomic import signals_held

    results: dict[int, Outcome] = {}
    method = multiprocessing.get_start_method()
    pool = cf.ProcessPoolExecutor(max_workers=workers, initializer=_die_with_parent,
                                  initargs=(os.getpid(), method))
    futures = {}
    try:
        # SIGINT and SIGTERM are acted on between short waits: a KeyboardInterrupt raised
        # wherever a signal lands (inside a garbage-collector callback, say) would be
        # printed as an ignored exception with a traceback
        with signals_held(redeliver=False) as interrupted:
            futures = {pool.submit(run_one, f, str(out_dir), units, proceed): i
                       for i, f in enumerate(folders)}
            pending = set(futures)
            while pending:
                done, pending = cf.wait(pending, timeout=0.2,
                                        return_when=cf.FIRST_COMPLETED)
                for fut in done:
                    results[futures[fut]] = _outcome(fut, folders[futures[fut]])
                if done:
                    tick(len(results))
                if interrupted():
                    raise KeyboardInterrupt
    except KeyboardInterrupt:
        _stop_workers(pool)
        raise
    pool.shutdown(wait=True)
    return [results[i] for i in range(len(folders))]


def _outcome(fut, folder) -> Outcome:
    """A finished case's outcome; a worker that died (out of memory, killed) fails it alone."""
    try:
        return fut.result()
    except cf.process.BrokenProcessPool:
        return Outcome(str(folder), False, {}, f"{folder}: the process running it died (out "
                       "of memory, or killed); its report was not changed")


def _stop_workers(pool) -> None:
    """Stop a pool on an interrupt: no new case starts, the running ones tidy up and end.

    The workers ignore SIGINT; SIGTERM makes a busy worker stop its case as on Ctrl-C
    (its unfinished report is removed) and refuse any case still queued to it, and an
    idle one exit.  A worker still alive after 30 s is killed (the next run tidies up).
    """
    procs = list((getattr(pool, "_processes", None) or {}).values())   # no public access
    for proc in procs:
        with contextlib.suppress(OSError, AttributeError):
            proc.terminate()
    pool.shutdown(wait=False, cancel_futures=True)
    for proc in procs:
        with contextlib.suppress(OSError, AttributeError, AssertionError):
            proc.join(timeout=30)
            if proc.is_alive():
                proc.kill()


#: State of this process as a batch worker: started by the pool, running a case, told
#: to stop.
_WORKER = {"pool": False, "busy": False, "stop": False}


def _stop_again_when_swallowed(unraisable) -> None:
    """A worker's ``sys.unraisablehook``: the stop that SIGTERM raises as a
    KeyboardInterrupt may land inside a callback Python cannot raise from (a weakref or
    garbage-collector callback), which would print it with a traceback and go on with
    the case; the worker sends itself SIGTERM again instead, so the stop is raised at
    the next point that can take it. Anything else goes to the default hook."""
    import signal

    if isinstance(unraisable.exc_value, KeyboardInterrupt) and _WORKER["stop"]:
        os.kill(os.getpid(), signal.SIGTERM)
        return
    sys.__unraisablehook__(unraisable)


def _die_with_parent(parent_pid: int, start_method: str = "fork") -> None:
    """Worker start-up: signals, and an end to this worker as soon as the batch is gone.

    Ctrl-C reaches the whole process group; a worker ignores SIGINT and leaves the
    batch process to decide.  On SIGTERM (sent by the batch when interrupted) a worker
    busy with a case stops it as on Ctrl-C, so its unfinished report is tidied away;
    an idle worker just exits.

    On Linux the kernel sends the worker SIGKILL when its parent dies
    (``prctl(PR_SET_PDEATHSIG)``; the parent is the batch, or under the forkserver start
    method the server, which ends with the batch); everywhere, a watchdog thread also
    checks every 0.2 s that the batch process still lives and exits otherwise.  A batch
    killed with SIGKILL therefore leaves no workers running on.
    """
    import signal
    import threading
    import time

    _WORKER["pool"] = True
    signal.signal(signal.SIGINT, signal.SIG_IGN)

    def on_term(signum, frame):
        _WORKER["stop"] = True
        if _WORKER["busy"]:
            raise KeyboardInterrupt
        os._exit(1)

    signal.signal(signal.SIGTERM, on_term)
    sys.unraisablehook = _stop_again_when_swallowed
    if sys.platform.startswith("linux"):
        import ctypes

        try:
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(1, int(signal.SIGKILL), 0, 0, 0)   # PR_SET_PDEATHSIG = 1
        except (OSError, AttributeError):
            pass
    def batch_alive() -> bool:
        if os.name == "nt":   # os.kill would end the process there
            import multiprocessing

            parent = multiprocessing.parent_process()
            return parent is None or parent.is_alive()
        if start_method == "fork" and os.getppid() != parent_pid:
            return False
        try:
            os.kill(parent_pid, 0)
        except ProcessLookupError:
            return False
        except OSError:
            pass   # alive, though not ours to signal
        return True

    if not batch_alive():   # the batch died before we got here
        os._exit(1)

    def watch():
        while True:
            time.sleep(0.2)
            if not batch_alive():
                os._exit(1)

    threading.Thread(target=watch, name="penstock-parent-watch", daemon=True).start()


def _run_dask(folders, out_dir, units, address, tick, proceed=False):
    try:
        from dask.distributed import Client, LocalCluster, as_completed
    except ImportError:
        raise CaseError("--scheduler", "", "dask is not installed; install the optional "
                        "extra: pip install -e \".[dask]\"") from None
    cluster = None
    if address:
        client = Client(address)
    else:
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address=None)
        client = Client(cluster)
    try:
        futs = [client.submit(run_one, f, out_dir, units, proceed, pure=False)
                for f in folders]
        done = 0
        for _ in as_completed(futs):
            done += 1
            tick(done)
        return [f.result() for f in futs]
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def portfolio_table(outcomes) -> pd.DataFrame:
    """One row per case: headline results and the warnings count, or the error."""
    rows = []
    for o in outcomes:
        row = {"site": o.row.get("site", ""), "folder": o.folder,
               "status": "ok" if o.ok else "failed", **{k: v for k, v in o.row.items()
                                                        if k not in ("site", "folder")},
               "error": o.error}
        rows.append(row)
    cols = ["site", "folder", "status"] + [c for c, _, _ in PORTFOLIO] + ["warnings", "notes",
                                                                          "error"]
    return pd.DataFrame(rows).reindex(columns=cols)


def write_portfolio(outcomes, path, version: str) -> None:
    """The portfolio workbook, replaced in one step (never a file penstock did not write)."""
    from .report.compare import write_comparison_workbook
    from .report.publish import write_workbook_file

    table = portfolio_table(outcomes)
    n_bad = int((table["status"] != "ok").sum())
    write_workbook_file(path, lambda tmp: write_comparison_workbook(
        table, tmp, "Portfolio of sites", "portfolio", version,
        notes=[f"{len(table)} cases, {n_bad} failed. Each case has its own report folder "
               "beside this workbook."]))
