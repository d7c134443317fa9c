"""Command line: ``pertbook convert | check | template | watch``.

A thin layer over :mod:`converter.api`: it parses arguments, prints problems and
turns results into exit codes (0 ok, 2 invalid input, 1 the tool's own fault).
"""

from __future__ import annotations

import argparse
import sys
import time
import traceback
from pathlib import Path

from converter import __version__
from converter.api import ConvertOptions, PertbookError, check, convert, output_paths
from converter.model import DISTRIBUTIONS, ERROR

EXIT_OK, EXIT_FAULT, EXIT_INVALID = 0, 1, 2
#: A fault outranks invalid input, which outranks success, when several files are given.
_RANK = {EXIT_OK: 0, EXIT_INVALID: 1, EXIT_FAULT: 2}

EPILOG_CONVERT = """example:
  pertbook convert samples/warehouse-fitout.xlsx --due 60 --json --outdir out
  (writes out/warehouse-fitout.analysis.xlsx and out/warehouse-fitout.analysis.json)
"""
EPILOG_CHECK = """example:
  pertbook check samples/*.xlsx samples/*.csv
"""
EPILOG_TEMPLATE = """example:
  pertbook template my-schedule.xlsx
"""
EPILOG_WATCH = """example:
  pertbook watch /srv/share/schedules --interval 10
  pertbook watch /srv/share/schedules --once      (for cron or a scheduled task)
"""


def _number_or_date(text: str) -> str | float:
    try:
        return float(text)
    except ValueError:
        return text


def _confidence_list(text: str) -> tuple[float, ...]:
    out = []
    for part in text.replace(";", ",").split(","):
        part = part.strip()
        if not part:
            continue
        value = float(part[:-1]) / 100 if part.endswith("%") else float(part)
        if not 0 < value < 1:
            raise argparse.ArgumentTypeError(f"confidence {part} is outside (0, 1)")
        out.append(value)
    if not out:
        raise argparse.ArgumentTypeError("no confidence levels")
    return tuple(out)


def add_analysis_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("--due", type=_number_or_date, metavar="DUE",
                   help="due date: a duration in the schedule's time unit (e.g. 60) or a date "
                        "YYYY-MM-DD (needs a start date)")
    p.add_argument("--json", action="store_true",
                   help="also write <stem>.analysis.json (also for invalid input)")
    p.add_argument("--iterations", type=int, metavar="N",
                   help="Monte Carlo iterations (default 10000)")
    p.add_argument("--seed", type=int, metavar="S",
                   help="random seed (default fixed, written into the output)")
    p.add_argument("--distribution", choices=DISTRIBUTIONS,
                   help="duration distribution for the simulation (default pert)")
    p.add_argument("--correlation", type=float, metavar="RHO",
                   help="rank correlation among activities of the same group (default 0)")
    p.add_argument("--paths", type=int, metavar="K",
                   help="how many of the longest paths to list (default 10)")
    p.add_argument("--confidence", type=_confidence_list, metavar="LEVELS",
                   help='confidence levels, e.g. "50%%,80%%,90%%" (default 50,80,90,95%%)')
    p.add_argument("--start-date", metavar="YYYY-MM-DD",
                   help="project start date (overrides the settings sheet)")
    p.add_argument("--no-simulation", action="store_true",
                   help="skip the Monte Carlo simulation")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="pertbook",
        description="Activity sheet in, auditable schedule-risk workbook out.",
    )
    parser.add_argument("--version", action="version", version=f"pertbook {__version__}")
    parser.add_argument("--debug", action="store_true",
                        help="show the traceback of an internal fault")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("convert", help="analyse schedules and write analysis workbooks",
                       epilog=EPILOG_CONVERT, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("inputs", nargs="+", metavar="INPUT", help=".xlsx .xlsm .xls .ods or .csv")
    p.add_argument("--outdir", metavar="DIR", help="output folder (default: beside each input)")
    p.add_argument("--quiet", action="store_true", help="print problems only")
    add_analysis_options(p)

    p = sub.add_parser("check", help="validate schedules only (exit 0 valid, 2 invalid)",
                       epilog=EPILOG_CHECK, formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("inputs", nargs="+", metavar="INPUT")

    p = sub.add_parser("template", help="write a blank input workbook to fill in",
                       epilog=EPILOG_TEMPLATE,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("output", metavar="OUT.xlsx")
    p.add_argument("--force", action="store_true", help="replace OUT.xlsx if it exists")

    from converter.drop import add_watch_arguments

    p = sub.add_parser("watch", help="convert every sheet dropped into FOLDER/inbox",
                       epilog=EPILOG_WATCH, formatter_class=argparse.RawDescriptionHelpFormatter)
    add_analysis_options(p)
    add_watch_arguments(p)
    return parser


def options_from(args) -> ConvertOptions:
    return ConvertOptions(
        due=args.due,
        json=args.json,
        iterations=args.iterations,
        seed=args.seed,
        distribution=args.distribution,
        correlation=args.correlation,
        paths=args.paths,
        confidence=args.confidence,
        start_date=args.start_date,
        simulate=not args.no_simulation,
    )


class ProgressBar:
    """A one-line bar on a terminal, drawn only once a run has taken over a second."""

    def __init__(self, stream=sys.stderr, label: str = "simulating"):
        self.stream = stream
        self.label = label
        self.start = time.monotonic()
        self.drawn = False

    def __call__(self, done: int, total: int) -> None:
        if time.monotonic() - self.start < 1.0 and done < total:
            return
        if not self.drawn and done >= total:
            return
        width = 30
        filled = int(width * done / max(total, 1))
        self.stream.write(f"\r{self.label} [{'#' * filled}{'.' * (width - filled)}] "
                          f"{done:,}/{total:,}")
        self.drawn = True
        if done >= total:
            self.stream.write("\n")
        self.stream.flush()


#: Warnings printed per file; errors are always printed in full.
WARNINGS_SHOWN = 20


def _print_problems(path: str, problems, stream) -> None:
    warnings = 0
    for p in problems:
        if p.severity != ERROR:
            warnings += 1
            if warnings > WARNINGS_SHOWN:
                continue
        stream.write(f"{path}: {p}\n")
    if warnings > WARNINGS_SHOWN:
        stream.write(f"{path}: ... and {warnings - WARNINGS_SHOWN} more warning(s), all listed "
                     "on the workbook's Warnings sheet\n")


def cmd_convert(args) -> int:
    worst = EXIT_OK
    options = options_from(args)
    written: set[Path] = set()
    for name in args.inputs:
        if sys.stderr.isatty() and not args.quiet:
            options.progress = ProgressBar()
        code = EXIT_OK
        xlsx, js = output_paths(Path(name), Path(args.outdir) if args.outdir else None)
        if xlsx.resolve() in written:  # plan.xlsx and plan.csv in one run: keep both
            tag = Path(name).suffix.lstrip(".").lower()
            xlsx = xlsx.with_name(f"{Path(name).stem}-{tag}.analysis.xlsx")
            js = js.with_name(f"{Path(name).stem}-{tag}.analysis.json")
            sys.stderr.write(f"{name}: another input has the same name; writing {xlsx.name}\n")
        written.add(xlsx.resolve())
        try:
            result = convert(name, options, workbook_path=xlsx, json_path=js)
            _print_problems(name, result.problems, sys.stderr)
            if result.ok:
                if not args.quiet:
                    h = result.headline
                    line = (f"{name}: wrote {result.workbook} (expected finish "
                            f"{h.get('expected_duration'):g}, sd {h.get('sd'):g}")
                    if "p_meet_due" in h:
                        line += f", chance of meeting the due date {h['p_meet_due']:.1%}"
                    print(line + ")")
                    if result.json_path:
                        print(f"{name}: wrote {result.json_path}")
            else:
                code = EXIT_INVALID
                n = sum(1 for p in result.problems if p.severity == ERROR)
                sys.stderr.write(f"{name}: invalid input ({n} problem(s)); no workbook written\n")
        except OSError as exc:  # the output folder or disk, not the schedule
            code = EXIT_FAULT
            sys.stderr.write(f"{name}: cannot write the results: {exc}\n")
            if args.debug:
                traceback.print_exc()
        except (PertbookError, Exception) as exc:  # noqa: BLE001 - the tool's own fault
            code = EXIT_FAULT
            sys.stderr.write(f"{name}: internal error: {type(exc).__name__}: {exc}\n")
            if args.debug:
                traceback.print_exc()
            else:
                sys.stderr.write("(run with --debug for the traceback; please report it)\n")
        if _RANK[code] > _RANK[worst]:
            worst = code
    return worst


def cmd_check(args) -> int:
    worst = EXIT_OK
    for name in args.inputs:
        try:
            result = check(name)
            _print_problems(name, result.problems, sys.stderr)
            code = EXIT_OK if result.ok else EXIT_INVALID
            print(f"{name}: {'valid' if result.ok else 'INVALID'}"
                  + (f" (activity sheet {result.sheet})" if result.sheet else ""))
        except Exception as exc:  # noqa: BLE001
            code = EXIT_FAULT
            sys.stderr.write(f"{name}: internal error: {type(exc).__name__}: {exc}\n")
            if args.debug:
                traceback.print_exc()
        if _RANK[code] > _RANK[worst]:
            worst = code
    return worst


def cmd_template(args) -> int:
    from converter.write.template import write_template

    out = Path(args.output)
    if out.exists() and not args.force:
        sys.stderr.write(f"{out} exists; not overwritten (use --force to replace it)\n")
        return EXIT_INVALID
    if out.suffix.lower() != ".xlsx":
        sys.stderr.write(f"{out}: the template is an .xlsx workbook; name it *.xlsx\n")
        return EXIT_INVALID
    write_template(out)
    print(f"wrote {out}")
    return EXIT_OK


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_INVALID
    if args.command == "convert":
        return cmd_convert(args)
    if args.command == "check":
        return cmd_check(args)
    if args.command == "template":
        return cmd_template(args)
    from converter.drop import run_watch

    return run_watch(args, options_from(args))


if __name__ == "__main__":
    raise SystemExit(main())
