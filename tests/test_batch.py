"""Batch runs: identical results to single runs, failures isolated, clean interruption.

Checked against the project's own single-case runs (no published source is involved).
"""

import contextlib
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from penstock import batch
from penstock.report.publish import replaceable

ROOT = Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
DEMOS = sorted(p.name for p in CASES.iterdir() if (p / "site.toml").is_file())


def _csvs(folder: Path) -> dict:
    return {p.name: p.read_bytes() for p in sorted(folder.glob("*.csv"))}


@pytest.fixture(scope="module")
def single_runs(tmp_path_factory):
    out = tmp_path_factory.mktemp("single")
    for name in DEMOS:
        o = batch.run_one(str(CASES / name), str(out), None)
        assert o.ok, o.error
    return out


def test_batch_equals_single_runs_exactly(tmp_path, single_runs):
    outcomes = batch.run_many([CASES / n for n in DEMOS], tmp_path, workers=2)
    assert all(o.ok for o in outcomes)
    for name in DEMOS:
        assert _csvs(tmp_path / name) == _csvs(single_runs / name), name
    # outcomes come back in the order asked
    assert [Path(o.folder).name for o in outcomes] == DEMOS


def test_bad_case_is_reported_and_the_rest_run(tmp_path):
    bad = tmp_path / "broken"
    shutil.copytree(CASES / DEMOS[0], bad)
    text = (bad / "site.toml").read_text().replace('design = "', 'design = "-')
    (bad / "site.toml").write_text(text)
    out = tmp_path / "out"
    from penstock.cli import main

    code = main(["run", str(bad), str(CASES / DEMOS[1]), "--workers", "2", "--out", str(out),
                 "--quiet"])
    assert code == 1                         # one case failed
    assert (out / DEMOS[1] / f"{DEMOS[1]}.xlsx").is_file()
    assert not (out / "broken").exists()
    wb = openpyxl.load_workbook(out / "portfolio.xlsx")
    text = " ".join(str(c.value) for row in wb.active.iter_rows() for c in row if c.value)
    assert "failed" in text and "flows.design" in text
    table = batch.portfolio_table([batch.Outcome(str(bad), False, {}, "x"),
                                   batch.Outcome("y", True, {"site": "s"})])
    assert list(table["status"]) == ["failed", "ok"]


def test_folder_of_case_folders_and_globbed_files_expand():
    found = batch.expand([CASES])
    assert [p.name for p in found] == DEMOS
    globbed = batch.expand(sorted(CASES.iterdir()))    # as the shell gives cases/*
    assert [p.name for p in globbed] == DEMOS


def test_dask_gives_the_same_results_as_the_process_pool(tmp_path, single_runs):
    pytest.importorskip("dask.distributed", reason="the optional dask extra is not installed")
    out = tmp_path / "dask"
    outcomes = batch.run_many([CASES / DEMOS[0]], out, scheduler="dask")
    assert outcomes[0].ok, outcomes[0].error
    assert _csvs(out / DEMOS[0]) == _csvs(single_runs / DEMOS[0])


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_interrupted_batch_leaves_finished_workbooks_and_no_partial_files(tmp_path):
    # twelve copies of the low-head demo, run on one worker; SIGINT once the first is done
    src = CASES / "millrace-flats-low-head"
    folders = []
    for i in range(12):
        dst = tmp_path / "cases" / f"site{i:02d}"
        shutil.copytree(src, dst)
        folders.append(str(dst))
    out = tmp_path / "out"
    env = {**os.environ, "CI": "1"}
    proc = subprocess.Popen([sys.executable, "-m", "penstock.cli", "run", *folders,
                             "--workers", "2", "--out", str(out), "--quiet"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env,
                            start_new_session=True)
    deadline = time.time() + 120
    while time.time() < deadline and not list(out.glob("site*/site*.xlsx")):
        time.sleep(0.05)
    assert list(out.glob("site*/site*.xlsx")), "no case finished in time"
    os.killpg(proc.pid, signal.SIGINT)     # as Ctrl-C does: the whole process group
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 130
    assert "interrupted" in err.decode() and "Traceback" not in err.decode()
    finished = sorted(p for p in out.iterdir() if not p.name.startswith("."))
    assert finished
    assert len(finished) < 12, "the interrupt did not stop the batch"
    time.sleep(3.0)                        # no worker goes on with a queued case
    assert sorted(p for p in out.iterdir() if not p.name.startswith(".")) == finished
    for folder in finished:
        assert replaceable(folder) is None, folder   # whole: every file as its manifest says
        openpyxl.load_workbook(folder / f"{folder.name}.xlsx")
        pd.read_csv(folder / "summary.csv")
    leftovers = [p.name for p in out.iterdir() if p.name.startswith(".")]
    assert leftovers == []


def _children(pid: int) -> set[int]:
    """Process ids whose parent is ``pid`` (from /proc)."""
    out = set()
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                out.add(int(entry.name))
    return out


def _alive(pid: int) -> bool:
    try:
        state = (Path("/proc") / str(pid) / "stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_workers_die_with_a_killed_batch(tmp_path):
    src = CASES / "millrace-flats-low-head"
    folders = []
    for i in range(3):   # one more than the workers: both are busy when the batch dies
        dst = tmp_path / "cases" / f"site{i:02d}"
        shutil.copytree(src, dst)
        folders.append(str(dst))
    env = {**os.environ, "CI": "1"}
    proc = subprocess.Popen([sys.executable, "-m", "penstock.cli", "run", *folders,
                             "--workers", "2", "--out", str(tmp_path / "out"), "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env,
                            start_new_session=True)
    try:
        deadline = time.time() + 60
        workers: set[int] = set()
        while time.time() < deadline and len(workers) < 2:
            workers = {p for p in _children(proc.pid) if _alive(p)}
            time.sleep(0.05)
        assert len(workers) >= 2, "the pool did not start"
        time.sleep(1.0)                       # the workers are busy with cases now
        os.kill(proc.pid, signal.SIGKILL)     # the batch alone, not its process group
        proc.wait(timeout=10)
        deadline = time.time() + 5
        while time.time() < deadline and any(_alive(p) for p in workers):
            time.sleep(0.05)
        assert not any(_alive(p) for p in workers), "workers outlived the killed batch"
    finally:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(proc.pid, signal.SIGKILL)
    # the next run tidies what the killed one left and finishes every case
    from penstock.cli import main

    assert main(["run", *folders, "--workers", "2", "--out", str(tmp_path / "out"),
                 "--quiet"]) == 0
    names = sorted(p.name for p in (tmp_path / "out").iterdir())
    assert names == sorted([Path(f).name for f in folders] + ["portfolio.xlsx"])


def test_a_batch_never_writes_over_its_cases(tmp_path, capsys):
    from penstock.cli import main

    b = tmp_path / "b"
    for name in DEMOS[:2]:
        shutil.copytree(CASES / name, b / name)
    before = {p: p.read_bytes() for p in b.rglob("*") if p.is_file()}
    code = main(["run", *[str(b / n) for n in DEMOS[:2]], "--out", str(b), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and len(err.strip().splitlines()) == 1
    assert str(b) in err and "case folder" in err
    assert {p: p.read_bytes() for p in b.rglob("*") if p.is_file()} == before


def test_two_cases_of_one_name_are_refused(tmp_path, capsys):
    from penstock.cli import main

    a, c = tmp_path / "a" / "site", tmp_path / "c" / "site"
    shutil.copytree(CASES / DEMOS[0], a)
    shutil.copytree(CASES / DEMOS[1], c)
    code = main(["run", str(a), str(c), "--out", str(tmp_path / "out"), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "would both write" in err
    assert not (tmp_path / "out").exists()


def test_a_stop_swallowed_by_a_callback_is_raised_again(monkeypatch, capsys):
    # a worker's SIGTERM stop landing in a weakref / gc callback reaches
    # sys.unraisablehook; the worker re-sends itself SIGTERM instead of printing it
    import signal
    import types

    from penstock import batch

    sent = []
    monkeypatch.setattr(batch.os, "kill", lambda pid, sig: sent.append((pid, sig)))
    monkeypatch.setitem(batch._WORKER, "stop", True)
    hit = types.SimpleNamespace(exc_type=KeyboardInterrupt, exc_value=KeyboardInterrupt(),
                                exc_traceback=None, err_msg=None, object=None)
    batch._stop_again_when_swallowed(hit)
    assert sent == [(os.getpid(), signal.SIGTERM)]
    assert capsys.readouterr().err == ""
    # anything else, or a KeyboardInterrupt that is no stop, goes to the default hook
    other = []
    monkeypatch.setattr(batch.sys, "__unraisablehook__", other.append)
    monkeypatch.setitem(batch._WORKER, "stop", False)
    batch._stop_again_when_swallowed(hit)
    boom = types.SimpleNamespace(exc_type=ValueError, exc_value=ValueError("x"),
                                 exc_traceback=None, err_msg=None, object=None)
    batch._stop_again_when_swallowed(boom)
    assert other == [hit, boom] and len(sent) == 1
