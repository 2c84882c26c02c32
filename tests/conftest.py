"""Shared fixtures for the case-loader and command-line tests.

* :func:`copy_demo` / the ``demo_case_dir`` fixture copy a bundled demo case into a
  temporary folder, so a test can break it without touching ``cases/``.
* the ``demo_run`` fixture runs each bundled demo once per test session (and worker):
  ``demo_run(name, samples=None)`` gives ``(case, results)``, shared, to be read only.
* :func:`study_parts` runs a demo's steady, energy and wave-speed stages and builds its
  diameter model, for tests of the diameter study's pieces.
* :func:`write_case` writes a case folder from a TOML text and CSV texts.
* :func:`run_cli` runs ``penstock.cli.main(argv)`` in-process and returns
  ``(exit code, stdout, stderr)``.  An exception escaping ``main`` is caught and its
  traceback put in the returned stderr (exit code ``None``), so that a test asserting
  "exit 2, one line, no Traceback" fails with the traceback shown.
"""

from __future__ import annotations

import contextlib
import io
import os
import shutil
import traceback
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
CASES = REPO / "cases"
DEMO_CASES = ("alder-gorge-high-head", "cedar-fork-us-units", "millrace-flats-low-head")


def study_parts(name: str, energy_basis: bool = True):
    """``(case, props, steady, production, model, warns, methods)`` of a demo: its steady
    and energy stages and the diameter study's model (roughness of the energy basis, or
    new with ``energy_basis=False``), with a methods table that records nothing."""
    import penstock
    from penstock import surge, water
    from penstock.model import hammer, production, sizing
    from penstock.model import steady as steady_stage

    case = penstock.load_case(CASES / name)
    props = water.water_properties(case.temperature, case.altitude)
    warns, methods = [], type("M", (), {"add": lambda *a: None})()
    st_ = steady_stage.run(case, props, warns, methods, lambda n: None)
    prod = production.run(case, props, st_, warns, methods, lambda n: None)
    speeds, table = hammer.wave_speeds(case, props, warns, methods)
    lengths = (table["to chainage [m]"] - table["from chainage [m]"]).to_numpy()
    model = sizing.DiameterModel(
        case, props, prod, case_loss=st_.head_loss,
        roughness_years=st_.energy_roughness_years if energy_basis else None,
        wave_speed=surge.equivalent_wave_speed(lengths, speeds))
    return case, props, st_, prod, model, warns, methods


def copy_demo(name: str, dest: Path) -> Path:
    """Copy the demo case ``cases/<name>`` to ``dest/<name>`` and return the copy."""
    target = Path(dest) / name
    shutil.copytree(CASES / name, target)
    return target


@pytest.fixture
def demo_case_dir(tmp_path):
    """A factory: ``demo_case_dir(name)`` copies ``cases/<name>`` into ``tmp_path``."""

    def make(name: str = "alder-gorge-high-head") -> Path:
        return copy_demo(name, tmp_path)

    return make


@pytest.fixture(scope="session")
def demo_run():
    """``demo_run(name, samples=None) -> (case, results)``, each run once per session.

    The pair is shared by every module that asks for it: read it, never change it (copy a
    case with :func:`copy.copy` before editing one of its attributes).
    """
    import penstock

    cache = {}

    def get(name: str, samples: int | None = None):
        key = (name, samples)
        if key not in cache:
            case = penstock.load_case(CASES / name)
            cache[key] = (case, penstock.run_case(case, samples=samples))
        return cache[key]

    return get


def write_case(folder: Path, toml_text: str, files: dict[str, str] | None = None) -> Path:
    """Write ``site.toml`` and the given files (name -> text) into ``folder``."""
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "site.toml").write_text(toml_text, encoding="utf-8")
    for name, text in (files or {}).items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder


def edit_file(path: Path, old: str, new: str, count: int = 1) -> None:
    """Replace ``old`` by ``new`` in a text file; fail loudly if ``old`` is absent.

    Guards the malformed-case catalogue against a mutation that silently does nothing.
    """
    path = Path(path)
    text = path.read_text(encoding="utf-8")
    found = text.count(old)
    assert found >= count, f"{path.name}: {old!r} found {found} times, expected {count}"
    path.write_text(text.replace(old, new, count), encoding="utf-8")


def run_cli(args, cwd=None) -> tuple[int | None, str, str]:
    """Run ``penstock <args>`` in-process; return (exit code, stdout, stderr)."""
    from penstock import cli

    out, err = io.StringIO(), io.StringIO()
    saved = os.environ.pop("PENSTOCK_DEBUG", None)
    try:
        with contextlib.ExitStack() as stack:
            if cwd is not None:
                stack.enter_context(contextlib.chdir(cwd))
            stack.enter_context(contextlib.redirect_stdout(out))
            stack.enter_context(contextlib.redirect_stderr(err))
            try:
                code = cli.main([str(a) for a in args])
            except SystemExit as exc:  # argparse: --help, usage errors
                code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
            except BaseException:  # noqa: B036 - report any escape as a failed run
                err.write(traceback.format_exc())
                code = None
    finally:
        if saved is not None:
            os.environ["PENSTOCK_DEBUG"] = saved
    return code, out.getvalue(), err.getvalue()


def folder_listing(folder: Path) -> dict[str, bytes]:
    """Every file below ``folder`` (relative name -> bytes)."""
    folder = Path(folder)
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}
