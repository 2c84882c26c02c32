"""Command line: thin commands over the library.

Exit status: 0 success; 2 bad input (one line naming the file and the field, no
traceback, no report written); 1 an internal error (set PENSTOCK_DEBUG=1 for the
traceback).
"""

from __future__ import annotations

import argparse
import os
import sys
import textwrap
from pathlib import Path

from . import __version__
from .constants import J_PER_MWH
from .errors import CaseError
from .schema import SECTIONS_BY_NAME

EXAMPLES = {
    "run": """\
examples:
  penstock run cases/alder-gorge-high-head
  penstock run cases/cedar-fork-us-units --units si --out reports/cedar-si
  penstock run my-site --quiet
  penstock run cases/alder-gorge-high-head --samples 2000   # P50/P90 energy
  penstock run cases/* --workers 2            # a batch, with reports/portfolio.xlsx
""",
    "check": """\
examples:
  penstock check cases/millrace-flats-low-head
  penstock check my-site && echo "inputs are valid"
""",
    "compare": """\
examples:
  penstock compare cases/alder-gorge-high-head --diameters 1.0,1.1,1.2
  penstock compare cases/cedar-fork-us-units --diameters "60 in,66 in,72 in" --out cmp.xlsx
  penstock compare cases/millrace-flats-low-head --designs
  penstock compare cases/alder-gorge-high-head my-variant --out variants.xlsx
""",
    "new": """\
examples:
  penstock new my-site          # then edit my-site/site.toml and its CSV files
  penstock check my-site
""",
}


def _progress(quiet: bool):
    """A progress callback: a bar on an interactive terminal, silent under CI or --quiet."""
    if quiet or os.environ.get("CI") or not sys.stderr.isatty():
        return None, lambda: None
    from tqdm import tqdm

    bar = tqdm(total=None, desc="penstock", unit=" step", leave=False, file=sys.stderr,
               bar_format="{desc}: {postfix}")

    def tick(name):
        bar.set_postfix_str(name)
        bar.update()

    return tick, bar.close


def load_case(path):
    """:func:`penstock.case.load_case`, imported on first use (pandas and pint load with
    it), so that ``--help`` and ``new`` start quickly."""
    from .case import load_case as load

    return load(path)


def _say(quiet: bool, text: str):
    if not quiet:
        print(text)


def cmd_check(args) -> int:
    from .model import check_case

    case = load_case(args.case)
    check_case(case, proceed=args.run_anyway)
    _say(args.quiet, f"{args.case}: valid ({len(case.segments)} pipe segments, "
         f"{len(case.losses)} local losses, {len(case.profile)} profile points)")
    return 0


def cmd_run(args) -> int:
    from .batch import expand

    if args.out is not None and not args.out.strip():
        raise CaseError("--out", "", "is empty; expected a folder, e.g. --out reports/my-site")
    folders = expand(args.case)
    if len(folders) > 1 or args.workers or args.scheduler != "process":
        return _run_batch(args, folders)
    args.case = str(folders[0])
    return _run_single(args)


def _run_batch(args, folders) -> int:
    from . import __version__
    from .batch import portfolio_table, run_many, write_portfolio
    from .report.publish import check_not_in_a_case, check_output_file

    out_dir = Path(args.out) if args.out is not None else Path("reports")
    if out_dir.suffix.lower() == ".xlsx":
        raise CaseError("--out", "", f"'{out_dir}' is a workbook name; for several cases "
                        "--out names the folder the report folders go to")
    check_not_in_a_case(out_dir, "reports folder", folders)
    check_output_file(out_dir / "portfolio.xlsx", folders)
    by_name: dict[str, Path] = {}
    for f in folders:
        if f.resolve().name == "portfolio.xlsx":
            raise CaseError(str(f), "", "is named like the batch's portfolio workbook; "
                            "expected a case folder of another name")
        other = by_name.setdefault(f.resolve().name, f)
        if other is not f:
            raise CaseError("--out", "", f"the cases {other} and {f} would both write the "
                            f"report {out_dir / f.name}; expected case folders with different "
                            "names, or separate runs with their own --out")
    bar = None
    if not (args.quiet or os.environ.get("CI") or not sys.stderr.isatty()):
        from tqdm import tqdm

        bar = tqdm(total=len(folders), desc="cases", unit="case", file=sys.stderr)
    done = [0]

    def tick(n):
        if bar is not None:
            bar.update(n - done[0])
        done[0] = n

    try:
        outcomes = run_many(folders, out_dir, workers=args.workers, units=args.units,
                            proceed=args.run_anyway,
                            progress=tick, scheduler=args.scheduler, address=args.dask_address)
    except KeyboardInterrupt:
        if bar is not None:
            bar.close()
        print(f"penstock: interrupted; the reports finished in {out_dir}/ are whole, the "
              "others and the portfolio were not changed", file=sys.stderr)
        return 130
    finally:
        if bar is not None:
            bar.close()
    try:
        write_portfolio(outcomes, out_dir / "portfolio.xlsx", __version__)
    except KeyboardInterrupt as exc:
        done = getattr(exc, "published", False)
        print(f"penstock: interrupted; every case report in {out_dir}/ is whole, and the "
              f"portfolio was {'written' if done else 'not changed'}", file=sys.stderr)
        return 130
    table = portfolio_table(outcomes)
    n_bad = int((table["status"] != "ok").sum())
    for o in outcomes:
        if not o.ok:
            print(f"penstock: error: {o.error}", file=sys.stderr)
    _say(args.quiet, f"{len(outcomes) - n_bad} of {len(outcomes)} cases ran; wrote "
         f"{out_dir / 'portfolio.xlsx'} and one report folder per case in {out_dir}/")
    return min(n_bad, 100)


def _run_single(args) -> int:
    from .model import run_case
    from .report import write_reports
    from .report.publish import check_report_folder

    case = load_case(args.case)
    out = Path(args.out) if args.out is not None else Path("reports") / case.slug
    if out.suffix.lower() == ".xlsx":
        raise CaseError("--out", "", f"'{out}' names a workbook; expected the report folder, "
                        f"which holds the workbook, e.g. --out {out.with_suffix('')}")
    check_report_folder(out, [case.folder])     # before the run: fail fast
    tick, close = _progress(args.quiet)
    try:
        results = run_case(case, progress=tick, samples=args.samples,
                           proceed=args.run_anyway)
        if tick:
            tick("writing reports")
        written = write_reports(results, out, args.units)
    finally:
        close()
    from .report.units import convert_value, report_unit

    n_warn = int((results.cautions["severity"] == "warning").sum())
    h = results.headline
    system = args.units or case.unit_system
    head = convert_value(h.net_head, "m", system)
    _say(args.quiet, f"{case.name}: net head {head:.2f} {report_unit('m', system)} at the "
         f"design flow, {h.installed_capacity / 1e3:,.0f} kW installed, "
         f"{h.mean_annual_energy / J_PER_MWH:,.0f} MWh a year; {n_warn} "
         f"warning{'s' if n_warn != 1 else ''} (see the Cautions sheet)")
    _say(args.quiet, f"wrote the report folder {written['folder']}/: the workbook "
         f"{written['workbook'].name} and {len(written['files']) - 1} tables and figures")
    return 0


#: Most diameters one comparison runs (each gets its own water-hammer run); the case file's
#: diameter_study.candidates has the same bound.
MAX_DIAMETERS = 20


def _diameters(text: str, case) -> list[float]:
    """``"1.2,1.4"`` (the case's length unit) or ``"48 in, 54 in"`` -> metres."""
    from . import units
    from .report.units import report_unit

    top = SECTIONS_BY_NAME["pipe"].fields_by_name["diameter"].maximum
    default = report_unit("m", case.unit_system)
    out = []
    for item in text.split(","):
        item = item.strip()
        if not item:
            continue
        try:
            value = float(item)
            item = f"{value} {default}"
        except ValueError:
            pass
        try:
            d = units.parse_quantity(item, "length")
        except units.UnitError as exc:
            raise CaseError("--diameters", "", f"{exc}") from None
        if not d > 0:
            raise CaseError("--diameters", "", f"'{item}' is not above zero; expected "
                            "positive diameters")
        if d > top:
            raise CaseError("--diameters", "", f"'{item}' is above the largest diameter the "
                            f"tool accepts ({top:g} m); expected a penstock diameter")
        out.append(d)
    if not out:
        raise CaseError("--diameters", "", "no diameter given; expected e.g. 1.2,1.4,1.6")
    if len(out) > MAX_DIAMETERS:
        raise CaseError("--diameters", "", f"{len(out)} diameters given; expected at most "
                        f"{MAX_DIAMETERS}, each with its own water-hammer run")
    return out


def cmd_compare(args) -> int:
    import pandas as pd

    from .model import run_case
    from .model.core import Say
    from .report.compare import case_comparison, design_comparison, diameter_comparison
    from .report.publish import check_output_file

    cases = [load_case(c) for c in args.case]
    if args.out is not None:
        if not args.out.strip():
            raise CaseError("--out", "", "is empty; expected a workbook name, e.g. --out "
                            "comparison.xlsx")
        check_output_file(Path(args.out), [c.folder for c in cases])   # fail fast
    if args.designs and (args.diameters or len(cases) > 1):
        raise CaseError("--designs", "", "compares the designs of one case; give one case "
                        "folder and no --diameters")
    if args.diameters and len(cases) > 1:
        raise CaseError("--diameters", "", "compares the diameters of one case; give one case "
                        "folder, or leave --diameters out to compare several cases")
    if not args.diameters and not args.designs and len(cases) < 2:
        raise CaseError("--diameters", "", "is missing; give --diameters for one case, or "
                        "two or more case folders")
    tick, close = _progress(args.quiet)
    try:
        if args.designs:
            case = cases[0]
            results = run_case(case, progress=tick, proceed=args.run_anyway)
            system = args.units or case.unit_system
            table = design_comparison(results, system)
            if table.empty:
                raise CaseError(case.slug, "", "the diameter study does not apply to this case "
                                "(see its cautions)")
            title = f"Design comparison - {case.name}"
            notes = ["Each design evaluated whole: its own water-hammer runs, walls or classes "
                     "and the steady pressure margin at the crown; the prices of materials "
                     "other than steel are illustrative unless the case gives a price table."]
            version, name = results.version, case.name
        elif args.diameters:
            case = cases[0]
            case.diameter_study = {**case.diameter_study,
                                   "candidates": _diameters(args.diameters, case)}
            results = run_case(case, progress=tick, proceed=args.run_anyway)
            if results.diameter_candidates is None:
                raise CaseError(case.slug, "", "the diameter study does not apply to this case "
                                "(see its cautions)")
            from .model.sizing import SAME_SIZE

            shown = results.diameter_candidates["diameter [m]"].to_numpy()
            for d in case.diameter_study["candidates"]:
                if not any(abs(d - x) <= SAME_SIZE * d for x in shown):
                    raise CaseError("--diameters", "", f"{Say(case.unit_system).m(d, 3)} "
                                    "loses more than half the "
                                    "gross head at the design flow, so it cannot be compared; "
                                    "expected larger diameters")
            system = args.units or case.unit_system
            table = diameter_comparison(results, system)
            title = f"Diameter comparison - {case.name}"
            notes = [f"Uniform inside diameter along the route; optimum of the study "
                     f"{results.headline.optimum_diameter:.3f} m."]
            version, name = results.version, case.name
        else:
            all_results = [run_case(c, progress=tick, proceed=args.run_anyway) for c in cases]
            table = case_comparison(all_results, args.units)
            title = "Case comparison"
            notes = []
            version, name = all_results[0].version, "case comparison"
    finally:
        close()
    if not args.quiet:
        with pd.option_context("display.width", 200, "display.max_columns", 20,
                               "display.float_format", "{:,.3f}".format):
            print(table.to_string(index=False))
    if args.out is not None:
        _write_comparison(args, cases, table, title, name, version, notes)
    return 0


def _write_comparison(args, cases, table, title, name, version, notes) -> None:
    """The comparison workbook, replaced in one step, never over a file penstock did not write."""
    from .report.compare import write_comparison_workbook
    from .report.publish import write_workbook_file

    out = write_workbook_file(
        args.out, lambda path: write_comparison_workbook(table, path, title, name, version,
                                                         notes),
        [c.folder for c in cases])
    _say(args.quiet, f"wrote {out}")


def cmd_new(args) -> int:
    from .template import write_template

    folder = write_template(args.case)
    _say(args.quiet, f"wrote a template case in {folder}/; edit site.toml and the CSV files, "
         f"then run 'penstock check {args.case}'")
    return 0


#: Bounds of the command-line counts (the case file's own keys are bounded in the schema).
MAX_WORKERS = 256
_MAX_SAMPLES = int(SECTIONS_BY_NAME["uncertainty"].fields_by_name["samples"].maximum)


def _bounded_int(option: str, lo: int, hi: int):
    """An argparse type: a whole number from lo to hi, else a one-line usage error."""

    def parse(text: str) -> int:
        try:
            value = int(text.strip())
        except ValueError:
            raise argparse.ArgumentTypeError(f"'{text}' is not a whole number") from None
        if not lo <= value <= hi:
            raise argparse.ArgumentTypeError(f"{value} is out of range; expected {lo} to "
                                             f"{hi:,}")
        return value

    parse.__name__ = option
    return parse


class _Parser(argparse.ArgumentParser):
    """Usage errors as one line, like every other bad input (exit status 2)."""

    def error(self, message):
        self.exit(2, f"{self.prog}: error: {message} (see {self.prog} --help)\n")


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(
        prog="penstock",
        description="Planning-level penstock hydraulics for hydropower sites: grade lines, "
                    "losses, net head, and a client workbook. Results are planning-level only; "
                    "codes, standards and a licensed engineer govern design.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="examples:\n  penstock new my-site\n  penstock check my-site\n"
               "  penstock run cases/alder-gorge-high-head\n"
               "  penstock compare cases/alder-gorge-high-head --diameters 1.0,1.1,1.2\n",
    )
    p.add_argument("--version", action="version", version=f"penstock {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def common(sp):
        sp.add_argument("case", metavar="CASE", help="case folder (holding site.toml)")
        sp.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")

    sp = sub.add_parser("run", help="run a case (or many) and write the workbook, CSV tables and "
                        "figures", epilog=EXAMPLES["run"],
                        formatter_class=argparse.RawDescriptionHelpFormatter)
    sp.add_argument("case", metavar="CASE", nargs="+", help="case folder(s), or folders holding "
                    "case folders; several run as a batch with a portfolio workbook")
    sp.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")
    sp.add_argument("--out", metavar="DIR", help="the report folder (default reports/<case>): "
                    "it holds the workbook <DIR name>.xlsx, the CSV tables and the PNG "
                    "figures. For a batch: the folder the report folders go to (default "
                    "reports/)")
    sp.add_argument("--samples", type=_bounded_int("--samples", 0, _MAX_SAMPLES), metavar="N",
                    help="Monte Carlo samples (overrides the case's uncertainty.samples; 0 for "
                    f"none; at most {_MAX_SAMPLES:,})")
    sp.add_argument("--workers", type=_bounded_int("--workers", 1, MAX_WORKERS), metavar="N",
                    help=f"processes for a batch (default: the machine's cores; at most "
                    f"{MAX_WORKERS})")
    sp.add_argument("--run-anyway", action="store_true", help="go on when the tool's own "
                    "checks find the case physically impossible (e.g. the design flow would "
                    "need an absolute pressure below vapour pressure); the results are then "
                    "marked as not physical")
    sp.add_argument("--scheduler", choices=("process", "dask"), default="process",
                    help="run a batch in a local process pool (default) or on a Dask cluster "
                    "(optional extra)")
    sp.add_argument("--dask-address", metavar="HOST:PORT", help="a running Dask scheduler; "
                    "default: start a local cluster")
    sp.add_argument("--units", choices=("si", "us"), help="report units (default: the case's)")
    sp.set_defaults(func=cmd_run)

    sp = sub.add_parser("check", help="validate a case folder without running it",
                        epilog=EXAMPLES["check"],
                        formatter_class=argparse.RawDescriptionHelpFormatter)
    common(sp)
    sp.add_argument("--run-anyway", action="store_true", help="accept a case the tool's own "
                    "checks find physically impossible, as run --run-anyway does")
    sp.set_defaults(func=cmd_check)

    sp = sub.add_parser("compare", help="compare penstock diameters of a case, or several cases",
                        epilog=EXAMPLES["compare"],
                        formatter_class=argparse.RawDescriptionHelpFormatter)
    sp.add_argument("case", metavar="CASE", nargs="+", help="case folder(s)")
    sp.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")
    sp.add_argument("--diameters", metavar="LIST", help="comma-separated inside diameters, in "
                    "the case's length unit unless written with one (e.g. 1.2,1.4 or 48 in)")
    sp.add_argument("--designs", action="store_true", help="compare the designs of one case: "
                    "the stepped diameters, the best uniform diameter, the case's own pipe and "
                    "each material of diameter_study.materials at its best size")
    sp.add_argument("--out", metavar="PATH", help="also write the comparison as a workbook")
    sp.add_argument("--run-anyway", action="store_true", help="go on with a case the tool's "
                    "own checks find physically impossible (see penstock run --help)")
    sp.add_argument("--units", choices=("si", "us"), help="report units (default: the case's)")
    sp.set_defaults(func=cmd_compare)

    sp = sub.add_parser("new", help="write a commented template case folder",
                        epilog=EXAMPLES["new"], formatter_class=argparse.RawDescriptionHelpFormatter)
    common(sp)
    sp.set_defaults(func=cmd_new)
    return p


def _os_error_line(exc: OSError) -> str:
    """One line for an operating-system error: the path first, then what went wrong."""
    from .report.atomic import os_problem

    where = exc.filename if exc.filename is not None else "penstock"
    return f"{where}: {os_problem(exc)}"


def main(argv=None) -> int:
    args = build_parser().parse_args(argv)
    import signal
    import threading

    from .report import ReportError, ReportInterrupted

    restore = None
    if threading.current_thread() is threading.main_thread() and hasattr(signal, "SIGTERM"):
        def on_term(signum, frame):   # a polite kill: tidy up as for Ctrl-C
            raise KeyboardInterrupt

        restore = signal.signal(signal.SIGTERM, on_term)
    try:
        return args.func(args)
    except (CaseError, ReportError) as exc:
        print(f"penstock: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt as exc:
        if isinstance(exc, ReportInterrupted) and exc.published:
            what = "workbook" if exc.folder.suffix.lower() == ".xlsx" else "report"
            print(f"penstock: interrupted after the new {what} was published; "
                  f"{exc.folder} is complete", file=sys.stderr)
        else:
            print("penstock: interrupted; no report was changed", file=sys.stderr)
        return 130
    except OSError as exc:   # the file system said no: the user can act on it
        print(f"penstock: error: {_os_error_line(exc)}", file=sys.stderr)
        return 2
    except Exception as exc:  # an internal error, not the user's input
        if os.environ.get("PENSTOCK_DEBUG"):
            raise
        msg = textwrap.shorten(f"{type(exc).__name__}: {exc}", 300)
        print(f"penstock: internal error: {msg} (set PENSTOCK_DEBUG=1 for details; please "
              "report it)", file=sys.stderr)
        return 1
    finally:
        if restore is not None:
            signal.signal(signal.SIGTERM, restore)


if __name__ == "__main__":
    sys.exit(main())
