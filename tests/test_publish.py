"""Publishing reports (penstock.report.publish): outputs never touch inputs, all or nothing.

The checks here are the project's own invariants, not published values:

* no output path is, holds or lies inside a case folder, and nothing penstock did not
  write is ever replaced (a manifest lists what it wrote, with SHA-256 digests);
* a fault or an interrupt at any step of writing leaves either the whole old report or
  the whole new one, the message says which, and the next run tidies any leftovers;
* two runs on one report cannot write at once; a lock never outlives a killed run.
"""

from __future__ import annotations

import errno
import os
import pickle
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from conftest import CASES, copy_demo, folder_listing, run_cli

import penstock.report as report
from penstock.report import atomic, publish
from penstock.report.publish import (
    MANIFEST,
    ReportError,
    ReportInterrupted,
    ReportLock,
    check_report_folder,
    clean_leftovers,
    read_manifest,
    replaceable,
)

LOW_HEAD = "millrace-flats-low-head"


def _one_line_error(code, out, err, *needles):
    assert code == 2, err
    assert out == "" and len(err.strip().splitlines()) == 1 and "Traceback" not in err, err
    for n in needles:
        assert str(n) in err, (n, err)


def _hidden(parent: Path) -> list[str]:
    return sorted(p.name for p in parent.iterdir() if p.name.startswith("."))


# --------------------------------------------------------------------------- fixtures
@pytest.fixture(scope="module")
def results(demo_run):
    """One run of the low-head demo, shared: the tests here are about writing."""
    return demo_run(LOW_HEAD)[1]


def _fast_figures(results, folder, system):
    """A stand-in for the PNG writer (matplotlib is slow and not under test here)."""
    (Path(folder) / "figure.png").write_bytes(b"\x89PNG stand-in " + os.urandom(8))
    return ["figure.png"]


@pytest.fixture
def fast_figures(monkeypatch):
    import penstock.report.figures as figures

    monkeypatch.setattr(figures, "write_figures", _fast_figures)


# --------------------------------------------------------------------------- outputs vs cases
@pytest.mark.parametrize("how", ["is the case", "inside the case", "workbook name"])
def test_report_path_never_touches_the_case(tmp_path, how):
    case = copy_demo(LOW_HEAD, tmp_path)
    before = folder_listing(case)
    out = {"is the case": case, "inside the case": case / "reports" / "x",
           "workbook name": tmp_path / f"{LOW_HEAD}.xlsx"}[how]
    code, o, err = run_cli(["run", case, "--out", out])
    _one_line_error(code, o, err, "--out" if how == "workbook name" else case)
    assert folder_listing(case) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == [LOW_HEAD]


def test_a_case_kept_under_reports_is_not_its_own_report(tmp_path):
    case = copy_demo(LOW_HEAD, tmp_path / "reports")
    before = folder_listing(case)
    code, o, err = run_cli(["run", case], cwd=tmp_path)    # default --out: reports/<case>
    _one_line_error(code, o, err, "reports", "case folder")
    assert folder_listing(case) == before


def test_report_folder_holding_a_case_is_refused(tmp_path):
    case = copy_demo(LOW_HEAD, tmp_path / "outer" / "nested")
    with pytest.raises(ReportError, match="holds the case folder"):
        check_report_folder(tmp_path / "outer", [case])


@pytest.mark.parametrize("thing", ["file", "foreign folder", "added file", "edited workbook",
                                   "symlink"])
def test_only_what_penstock_wrote_is_replaced(tmp_path, thing, results, fast_figures):
    folder = tmp_path / "reports" / "site"
    if thing == "file":
        folder.parent.mkdir()
        folder.write_text("my notes", encoding="utf-8")
    elif thing == "foreign folder":
        folder.mkdir(parents=True)
        (folder / "notes.txt").write_text("mine", encoding="utf-8")
    elif thing == "symlink":
        folder.parent.mkdir()
        (tmp_path / "elsewhere").mkdir()
        folder.symlink_to(tmp_path / "elsewhere")
    else:
        report.write_reports(results, folder)
        if thing == "added file":
            (folder / "my-notes.docx").write_bytes(b"mine")
        else:
            with open(folder / "site.xlsx", "ab") as fh:
                fh.write(b"\0")                      # as a save by someone else would
    before = folder_listing(folder.parent)
    with pytest.raises(ReportError, match=r"not written by penstock|did not write|changed since|"
                                          r"symbolic link|is a file") as info:
        report.write_reports(results, folder)
    assert str(folder) in str(info.value) and "\n" not in str(info.value)
    assert folder_listing(folder.parent) == before
    assert _hidden(folder.parent) == []


def test_an_empty_folder_may_take_the_report(tmp_path, results, fast_figures):
    folder = tmp_path / "site"
    folder.mkdir()
    report.write_reports(results, folder)
    assert replaceable(folder) is None and (folder / "site.xlsx").is_file()


def test_the_manifest_lists_every_file_with_its_digest(tmp_path, results, fast_figures):
    folder = tmp_path / "site"
    written = report.write_reports(results, folder)
    doc = read_manifest(folder)
    assert doc["status"] == "complete" and doc["workbook"] == "site.xlsx"
    assert sorted(doc["files"]) == sorted(written["files"])
    assert sorted(doc["files"]) == sorted(p.name for p in folder.iterdir() if p.name != MANIFEST)
    import hashlib

    for name, digest in doc["files"].items():
        assert hashlib.sha256((folder / name).read_bytes()).hexdigest() == digest
    assert doc["case_folder"] == os.path.abspath(results.case.folder)


# --------------------------------------------------------------------------- the lock
def test_a_second_run_on_the_same_report_is_refused(tmp_path):
    case = copy_demo(LOW_HEAD, tmp_path / "cases")
    out = tmp_path / "reports" / "site"
    out.parent.mkdir()
    with ReportLock(out.parent, "site") as lock:
        code, o, err = run_cli(["run", case, "--out", out])
        _one_line_error(code, o, err, "another penstock run", lock.path)
    assert not out.exists()
    assert _hidden(out.parent) == []           # the lock file goes with its holder


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_a_killed_holder_leaves_no_stale_lock(tmp_path):
    script = textwrap.dedent(f"""
        import time
        from pathlib import Path
        from penstock.report.publish import ReportLock
        with ReportLock(Path({str(tmp_path)!r}), "site"):
            Path({str(tmp_path / "held")!r}).touch()
            time.sleep(60)
    """)
    proc = subprocess.Popen([sys.executable, "-c", script])
    try:
        deadline = time.time() + 30
        while not (tmp_path / "held").exists() and time.time() < deadline:
            time.sleep(0.02)
        with pytest.raises(ReportError, match="another penstock run"):
            with ReportLock(tmp_path, "site"):
                pass
    finally:
        proc.kill()
        proc.wait()
    with ReportLock(tmp_path, "site"):       # the system released the killed holder's lock
        pass


# --------------------------------------------------------------------------- leftovers
def test_leftovers_of_a_killed_run_are_tidied_and_nothing_else(tmp_path, results,
                                                               fast_figures):
    folder = tmp_path / "site"
    report.write_reports(results, folder)
    staging = publish.new_staging(tmp_path, "site", {"version": "x"})
    (staging / "half.csv").write_text("1,2", encoding="utf-8")
    stranger = tmp_path / ".site.penstock-staging-mine"     # hidden, but no manifest
    stranger.mkdir()
    other = publish.new_staging(tmp_path, "other", {"version": "x"})   # another report's
    report.write_reports(results, folder)
    assert not staging.exists()
    assert stranger.is_dir() and other.is_dir()


def test_a_report_set_aside_by_the_fallback_is_put_back(tmp_path, results, fast_figures):
    folder = tmp_path / "site"
    report.write_reports(results, folder)
    old = folder_listing(folder)
    aside = tmp_path / ".site.penstock-aside-0000"
    os.rename(folder, aside)                 # a kill between the fallback's two renames
    with ReportLock(tmp_path, "site"):
        assert clean_leftovers(tmp_path, "site") == [folder]
    assert folder_listing(folder) == old and not aside.exists()


# --------------------------------------------------------------------------- faults, in-process
#: The steps of writing a report, in order: (name, where to patch, attribute, when it
#: happens: "always", "over" an old report, or on the "first" report).
STEPS = [
    ("lock", atomic, "_try_lock", "always"),
    ("staging", report, "new_staging", "always"),
    ("workbook", "penstock.report.workbook", "write_workbook", "always"),
    ("tables", report, "write_tables", "always"),
    ("figures", "penstock.report.figures", "write_figures", "always"),
    ("manifest", report, "write_manifest", "always"),
    ("flush", report, "fsync_tree", "always"),
    ("exchange", publish, "exchange", "over"),
    ("rename", publish, "rename_new", "first"),
    ("flush folder", publish, "fsync_dir", "always"),   # after the new report is in place
    ("remove old", shutil, "rmtree", "over"),            # the old one, after the exchange
]
CASES_OF_FAULTS = [(name, existing) for name, _, _, when in STEPS
                   for existing in (True, False)
                   if when == "always" or (when == "over") == existing]


def _target(where):
    import importlib

    return importlib.import_module(where) if isinstance(where, str) else where


def _inject(monkeypatch, where, attr, fault, only=None):
    """Make ``where.attr`` raise ``fault`` instead of working; return the count of faults.

    ``only(args)`` limits the fault to the calls it accepts.
    """
    module = _target(where)
    original = getattr(module, attr)
    fired = []

    def faulty(*args, **kwargs):
        if only is not None and not only(args):
            return original(*args, **kwargs)
        fired.append(args)
        raise fault

    monkeypatch.setattr(module, attr, faulty)
    return fired


@pytest.mark.parametrize("fault", ["disk full", "interrupt"])
@pytest.mark.parametrize("step, existing", CASES_OF_FAULTS,
                         ids=[f"{n}-{'over an old report' if e else 'first report'}"
                              for n, e in CASES_OF_FAULTS])
def test_a_fault_at_any_step_leaves_the_old_report_or_the_new(tmp_path, monkeypatch, results,
                                                               fast_figures, step, fault,
                                                               existing):
    folder = tmp_path / "site"
    if existing:
        report.write_reports(results, folder)
    old = folder_listing(folder) if existing else None
    err = (OSError(errno.ENOSPC, "No space left on device") if fault == "disk full"
           else KeyboardInterrupt())
    where, attr = next((w, a) for n, w, a, _ in STEPS if n == step)
    only = (lambda args: ".penstock-" in str(args[0])) if step == "remove old" else None
    fired = _inject(monkeypatch, where, attr, err, only)
    try:
        report.write_reports(results, folder)
        outcome = "done"
    except ReportInterrupted as exc:
        outcome = "new" if exc.published else "old"
    except ReportError as exc:
        outcome = "new" if "was written" in str(exc) else "old"
        assert str(folder) in str(exc) and "\n" not in str(exc)
        if fault == "disk full" and outcome == "old":
            assert "disk is full" in str(exc)
            assert "no report was changed" in str(exc) or "nothing was changed" in str(exc)
    except OSError:
        outcome = "raw"
    assert outcome != "raw", "an OS error escaped without the report path"
    assert fired, f"the fault at '{step}' never fired"
    monkeypatch.undo()
    # whatever happened, the report folder is whole: the old one or the new one
    if outcome == "old":
        if existing:
            assert folder_listing(folder) == old
        else:
            assert not folder.exists()
    else:
        assert replaceable(folder) is None and read_manifest(folder)["status"] == "complete"
        if existing:
            assert folder_listing(folder) != old
    # the next run tidies up whatever a fault left
    report.write_reports(results, folder)
    assert _hidden(tmp_path) == []
    assert replaceable(folder) is None


def test_without_an_atomic_exchange_the_fallback_still_publishes(tmp_path, monkeypatch,
                                                                 results, fast_figures):
    folder = tmp_path / "site"
    report.write_reports(results, folder)
    monkeypatch.setattr(publish, "exchange", lambda a, b: False)
    first = read_manifest(folder)["files"]["figure.png"]
    report.write_reports(results, folder)
    assert read_manifest(folder)["files"]["figure.png"] != first
    assert _hidden(tmp_path) == []


def test_this_system_swaps_folders_in_one_step(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    a.mkdir()
    b.mkdir()
    (a / "new").touch()
    (b / "old").touch()
    if not publish.exchange(a, b):
        pytest.skip("no atomic exchange on this file system; the fallback is tested above")
    assert os.listdir(b) == ["new"] and os.listdir(a) == ["old"]


# --------------------------------------------------------------------------- the CLI's words
@pytest.mark.parametrize("published, words", [(False, "no report was changed"),
                                              (True, "is complete")])
def test_the_interrupt_message_tells_the_truth(tmp_path, monkeypatch, published, words):
    import penstock.report

    def interrupted(results, folder, system=None):
        raise ReportInterrupted(folder, published)

    monkeypatch.setattr(penstock.report, "write_reports", interrupted)
    code, out, err = run_cli(["run", CASES / LOW_HEAD, "--out", tmp_path / "x"])
    assert code == 130 and words in err and len(err.strip().splitlines()) == 1


# --------------------------------------------------------------------------- real signals
SLOW_STEP = """
import os, pickle, sys, time
from pathlib import Path
import penstock.model, penstock.report
from penstock import cli
from penstock.report import publish
import penstock.report.figures as figures

with open(sys.argv[1], "rb") as fh:
    results = pickle.load(fh)
penstock.model.run_case = lambda *a, **k: results
marker, step = Path(sys.argv[2]), sys.argv[3]
figures.write_figures = lambda r, folder, system: (
    (Path(folder) / "figure.png").write_bytes(os.urandom(16)), ["figure.png"])[1]
if step != "none":
    module = {"exchange": publish, "fsync_tree": penstock.report,
              "write_tables": penstock.report}[step]
    original = getattr(module, step)

    def slow(*args, **kwargs):
        marker.touch()
        time.sleep(float(sys.argv[6]))
        return original(*args, **kwargs)

    setattr(module, step, slow)
sys.exit(cli.main(["run", sys.argv[4], "--out", sys.argv[5]]))
"""


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
@pytest.mark.parametrize("step, sig, expect", [
    ("write_tables", signal.SIGINT, "old"),
    ("fsync_tree", signal.SIGTERM, "old"),
    ("write_tables", signal.SIGKILL, "old"),
    ("exchange", signal.SIGKILL, "old"),
    ("exchange", signal.SIGINT, "new"),      # held back until the new report is in place
])
def test_a_real_signal_while_writing(tmp_path, results, step, sig, expect):
    pickled = tmp_path / "results.pickle"
    pickled.write_bytes(pickle.dumps(results))
    script = tmp_path / "slow.py"
    script.write_text(SLOW_STEP, encoding="utf-8")
    out = tmp_path / "reports" / "site"
    env = {**os.environ, "CI": "1"}
    marker = tmp_path / "at-step"

    def run(step_name, sleep=30.0):
        return subprocess.Popen([sys.executable, str(script), str(pickled), str(marker),
                                 step_name, str(CASES / LOW_HEAD), str(out), str(sleep)],
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)

    first = run("none")                     # a first, whole report
    assert first.wait(timeout=90) == 0, first.stderr.read().decode()
    old = folder_listing(out)

    # signals are held back during the exchange: that step sleeps only briefly
    proc = run(step, sleep=2.0 if step == "exchange" else 30.0)
    deadline = time.time() + 60
    while not marker.exists() and time.time() < deadline and proc.poll() is None:
        time.sleep(0.02)
    assert marker.exists(), proc.stderr.read().decode()
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=90)
    err = err.decode()
    if sig == signal.SIGKILL:
        assert proc.returncode == -signal.SIGKILL
    else:
        assert proc.returncode == 130 and "Traceback" not in err, err
        assert ("no report was changed" if expect == "old" else "is complete") in err, err
    if expect == "old":
        assert folder_listing(out) == old
    else:
        assert replaceable(out) is None and folder_listing(out) != old
    # the next run tidies whatever the signal left, and publishes
    again = run("none")
    assert again.wait(timeout=90) == 0, again.stderr.read().decode()
    assert replaceable(out) is None
    assert _hidden(out.parent) == []


# --------------------------------------------------------------------------- single workbooks
def test_a_single_workbook_replaces_only_its_own_kind(tmp_path):
    import pandas as pd

    from penstock.report.compare import write_comparison_workbook
    from penstock.report.publish import write_workbook_file

    table = pd.DataFrame({"quantity": ["a"], "D = 1.000": [1.0]})
    target = tmp_path / "cmp.xlsx"
    leftover = tmp_path / ".cmp.penstock-file-dead.xlsx"      # from a killed earlier run
    leftover.write_bytes(b"half")

    def write(path):
        write_comparison_workbook(table, path, "t", "site", "0", [])

    write_workbook_file(target, write)
    assert publish.written_by_penstock(target) and not leftover.exists()
    write_workbook_file(target, write)                      # its own kind: replaced, no error
    assert publish.written_by_penstock(target)
    # saved by someone else since (the last-modified-by field changes): refused
    import openpyxl

    wb = openpyxl.load_workbook(target)
    wb.properties.lastModifiedBy = "an engineer"
    wb.save(target)
    kept = target.read_bytes()
    with pytest.raises(ReportError, match="not written by penstock"):
        write_workbook_file(target, write)
    assert target.read_bytes() == kept
    assert _hidden(tmp_path) == []


def test_a_report_changed_while_the_new_one_is_written_is_left_alone(tmp_path, monkeypatch,
                                                                     results):
    folder = tmp_path / "site"
    import penstock.report.figures as figures

    monkeypatch.setattr(figures, "write_figures", _fast_figures)
    report.write_reports(results, folder)

    def figures_and_a_user(results_, staging, system):
        (folder / "notes.txt").write_text("saved meanwhile", encoding="utf-8")
        return _fast_figures(results_, staging, system)

    monkeypatch.setattr(figures, "write_figures", figures_and_a_user)
    before = folder_listing(folder)
    with pytest.raises(ReportError, match="changed while the new report was being written"):
        report.write_reports(results, folder)
    after = folder_listing(folder)
    assert after.pop("notes.txt") == b"saved meanwhile"      # the user's file is kept
    assert after == before                                   # and the old report with it
    assert _hidden(tmp_path) == []


@pytest.mark.parametrize("exchange_works", [True, False], ids=["exchange", "fallback"])
def test_the_check_after_the_exchange_holds_in_the_fallback_too(tmp_path, monkeypatch,
                                                                results, fast_figures,
                                                                exchange_works):
    folder = tmp_path / "site"
    report.write_reports(results, folder)
    if not exchange_works:
        monkeypatch.setattr(publish, "exchange", lambda a, b: False)
    real = publish.replaceable
    calls = []

    def changed_late(path):
        calls.append(path)
        if len(calls) == 3:   # the check at the publication: on the old report, set aside
            Path(path).joinpath("late.txt").write_text("mine")
        return real(path)

    monkeypatch.setattr(publish, "replaceable", changed_late)
    with pytest.raises(ReportError, match="changed while"):
        report.write_reports(results, folder)
    assert (folder / "late.txt").read_text() == "mine"
    assert _hidden(tmp_path) == []


def test_desktop_index_files_do_not_block_a_report(tmp_path, results, fast_figures):
    folder = tmp_path / "site"
    report.write_reports(results, folder)
    (folder / ".DS_Store").write_bytes(b"\0\0\0\1Bud1")
    assert replaceable(folder) is None
    report.write_reports(results, folder)
    assert replaceable(folder) is None


def test_a_lock_file_that_is_a_link_is_never_followed(tmp_path):
    precious = tmp_path / "precious.txt"
    precious.write_text("keep", encoding="utf-8")
    (tmp_path / ".site.penstock-lock").symlink_to(precious)
    with pytest.raises(ReportError, match="cannot take the lock"):
        with ReportLock(tmp_path, "site"):
            pass
    assert precious.read_text(encoding="utf-8") == "keep"


def test_no_atomic_exchange_where_the_system_has_none(monkeypatch, tmp_path):
    monkeypatch.setattr(atomic.sys, "platform", "win32")
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    assert atomic.exchange(tmp_path / "a", tmp_path / "b") is False


def test_a_comparison_edited_by_a_script_is_not_replaced(tmp_path):
    import openpyxl
    import pandas as pd

    from penstock.report.compare import write_comparison_workbook
    from penstock.report.publish import write_workbook_file

    target = tmp_path / "cmp.xlsx"

    def write(path):
        write_comparison_workbook(pd.DataFrame({"q": ["a"], "v": [1.0]}), path, "t", "s", "0")

    write_workbook_file(target, write)
    wb = openpyxl.load_workbook(target)
    wb.active["A1"] = "my own heading"          # keeps creator and last-modified-by
    wb.save(target)
    kept = target.read_bytes()
    with pytest.raises(ReportError, match="not written by penstock"):
        write_workbook_file(target, write)
    assert target.read_bytes() == kept


@pytest.mark.skipif(sys.platform == "win32", reason="POSIX signals")
def test_a_kill_between_the_fallbacks_two_renames_is_undone_by_the_next_run(tmp_path,
                                                                             results):
    pickled = tmp_path / "results.pickle"
    pickled.write_bytes(pickle.dumps(results))
    out = tmp_path / "reports" / "site"
    marker = tmp_path / "between"
    script = tmp_path / "fallback.py"
    script.write_text(textwrap.dedent(f"""
        import os, pickle, sys, time
        from pathlib import Path
        import penstock.model
        import penstock.report.figures as figures
        from penstock import cli
        from penstock.report import publish
        with open({str(pickled)!r}, "rb") as fh:
            results = pickle.load(fh)
        penstock.model.run_case = lambda *a, **k: results
        figures.write_figures = lambda r, folder, system: (
            (Path(folder) / "figure.png").write_bytes(os.urandom(16)), ["figure.png"])[1]
        slow = sys.argv[1] == "slow"
        publish.exchange = lambda a, b: False
        real = os.rename
        def rename(src, dst):
            if slow and "staging" in str(src):      # the second rename: old already aside
                Path({str(marker)!r}).touch()
                time.sleep(30)
            return real(src, dst)
        publish.os.rename = rename
        sys.exit(cli.main(["run", {str(CASES / LOW_HEAD)!r}, "--out", {str(out)!r}]))
    """), encoding="utf-8")
    env = {**os.environ, "CI": "1"}
    assert subprocess.run([sys.executable, str(script), "fast"], env=env).returncode == 0
    old = folder_listing(out)
    proc = subprocess.Popen([sys.executable, str(script), "slow"], env=env)
    try:
        deadline = time.time() + 60
        while not marker.exists() and time.time() < deadline and proc.poll() is None:
            time.sleep(0.02)
        assert marker.exists()
    finally:
        proc.kill()
        proc.wait()
    assert not out.exists()                       # the documented window of the fallback
    with ReportLock(out.parent, "site"):
        done = clean_leftovers(out.parent, "site")
    assert done[0] == out                         # put back first, then the staging removed
    assert folder_listing(out) == old             # the old report, whole, back in place
    assert _hidden(out.parent) == []
