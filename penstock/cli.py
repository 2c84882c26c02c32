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
from .case import CaseError, load_case

EXAMPLES = {
    "run": """\
examples:
  penstock run cases/alder-gorge-high-head
  penstock run cases/cedar-fork-us-units --units si --out reports/cedar-si.xlsx
  penstock run my-site --quiet
""",
    "check": """\
examples:
  penstock check cases/millrace-flats-low-head
  penstock check my-site && echo "inputs are valid"
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


def _say(quiet: bool, text: str):
    if not quiet:
        print(text)


def cmd_check(args) -> int:
    case = load_case(args.case)
    _say(args.quiet, f"{args.case}: valid ({len(case.segments)} pipe segments, "
         f"{len(case.losses)} local losses, {len(case.profile)} profile points)")
    return 0


def cmd_run(args) -> int:
    from .model import run_case
    from .report import write_reports

    case = load_case(args.case)
    out = Path(args.out) if args.out else Path("reports") / f"{case.slug}.xlsx"
    if out.suffix.lower() != ".xlsx":
        raise CaseError("--out", "", f"'{out}' is not an .xlsx file name")
    tick, close = _progress(args.quiet)
    try:
        results = run_case(case, progress=tick)
        if tick:
            tick("writing reports")
        written = write_reports(results, out, args.units)
    finally:
        close()
    from .report.units import convert_value, report_unit

    n_warn = int((results.warnings["severity"] == "warning").sum())
    h = results.headline
    system = args.units or case.unit_system
    head = convert_value(h["net_head"], "m", system)
    _say(args.quiet, f"{case.name}: net head {head:.2f} {report_unit('m', system)} at the "
         f"design flow, {h['installed_capacity'] / 1e3:,.0f} kW installed, "
         f"{h['mean_annual_energy'] / 3.6e9:,.0f} MWh a year; {n_warn} "
         f"warning{'s' if n_warn != 1 else ''} (see the Cautions sheet)")
    _say(args.quiet, f"wrote {written['workbook']} and {len(written['files'])} files in "
         f"{written['folder']}/")
    return 0


def cmd_new(args) -> int:
    from .template import write_template

    folder = write_template(args.case)
    _say(args.quiet, f"wrote a template case in {folder}/; edit site.toml and the CSV files, "
         f"then run 'penstock check {args.case}'")
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="penstock",
        description="Planning-level penstock hydraulics for hydropower sites: grade lines, "
                    "losses, net head, and a client workbook. Results are planning-level only; "
                    "codes, standards and a licensed engineer govern design.",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog="examples:\n  penstock new my-site\n  penstock check my-site\n"
               "  penstock run cases/alder-gorge-high-head\n",
    )
    p.add_argument("--version", action="version", version=f"penstock {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def common(sp):
        sp.add_argument("case", metavar="CASE", help="case folder (holding site.toml)")
        sp.add_argument("-q", "--quiet", action="store_true", help="print nothing on success")

    sp = sub.add_parser("run", help="run a case and write the workbook, CSV tables and figures",
                        epilog=EXAMPLES["run"], formatter_class=argparse.RawDescriptionHelpFormatter)
    common(sp)
    sp.add_argument("--out", metavar="PATH", help="workbook path (default reports/<case>.xlsx); "
                    "tables and figures go to a folder of the same name")
    sp.add_argument("--units", choices=("si", "us"), help="report units (default: the case's)")
    sp.set_defaults(func=cmd_run)

    sp = sub.add_parser("check", help="validate a case folder without running it",
                        epilog=EXAMPLES["check"],
                        formatter_class=argparse.RawDescriptionHelpFormatter)
    common(sp)
    sp.set_defaults(func=cmd_check)

    sp = sub.add_parser("new", help="write a commented template case folder",
                        epilog=EXAMPLES["new"], formatter_class=argparse.RawDescriptionHelpFormatter)
    common(sp)
    sp.set_defaults(func=cmd_new)
    return p


def main(argv=None) -> int:
    args = build_parser().parse_args(argv)
    from .report import ReportError

    try:
        return args.func(args)
    except CaseError as exc:
        print(f"penstock: error: {exc}", file=sys.stderr)
        return 2
    except ReportError as exc:
        print(f"penstock: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("penstock: interrupted; no report was changed", file=sys.stderr)
        return 130
    except Exception as exc:  # an internal error, not the user's input
        if os.environ.get("PENSTOCK_DEBUG"):
            raise
        msg = textwrap.shorten(f"{type(exc).__name__}: {exc}", 300)
        print(f"penstock: internal error: {msg} (set PENSTOCK_DEBUG=1 for details; please "
              "report it)", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
