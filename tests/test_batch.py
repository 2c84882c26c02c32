"""Batch runs: identical results to single runs, failures isolated, clean interruption.

Checked against the project's own single-case runs (no published source is involved).
"""

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
    assert (out / f"{DEMOS[1]}.xlsx").is_file()
    assert not (out / "broken.xlsx").exists()
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
    while time.time() < deadline and not list(out.glob("site*.xlsx")):
        time.sleep(0.05)
    assert list(out.glob("site*.xlsx")), "no case finished in time"
    os.killpg(proc.pid, signal.SIGINT)     # as Ctrl-C does: the whole process group
    proc.communicate(timeout=120)
    assert proc.returncode != 0
    finished = sorted(out.glob("site*.xlsx"))
    assert finished
    for book in finished:
        openpyxl.load_workbook(book)          # intact
        assert (out / book.stem).is_dir()
        pd.read_csv(out / book.stem / "summary.csv")
    leftovers = [p.name for p in out.iterdir() if p.name.startswith(".")]
    assert leftovers == []
