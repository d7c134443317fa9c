"""Command line: ``pertbook convert | check | template | compare | watch``.

A thin layer over :mod:`converter.api`: it parses arguments, prints problems and a short
headline, and turns results into exit codes (0 ok, 2 invalid input, 1 the tool's own
fault). ``convert`` and ``watch`` take the same conversion options
(:func:`converter.options.add_conversion_options`). The terminal output is drawn with
rich, which measures the terminal and writes plain text (no control codes) when the
output is redirected.
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from dataclasses import dataclass
from pathlib import Path

from converter import __version__
from converter.api import (
    ConvertResult,
    PertbookError,
    check,
    convert,
    output_paths,
    process_umask,
)
from converter.model import ERROR
from converter.options import add_conversion_options, options_from_args
from converter.read import suffix_list
from converter.terminal import (
    SimulationProgress,
    _print_problems,
    make_console,
    print_headline,
    say,
)

EXIT_OK, EXIT_FAULT, EXIT_INVALID = 0, 1, 2
#: A fault outranks invalid input, which outranks success, when several files are given.
_RANK = {EXIT_OK: 0, EXIT_INVALID: 1, EXIT_FAULT: 2}

EPILOG_CONVERT = """example:
  pertbook convert samples/warehouse-fitout.xlsx --due 60 --confidence 50,80,90 --json --outdir out
  (writes out/warehouse-fitout.analysis.xlsx and out/warehouse-fitout.analysis.json)
"""
EPILOG_CHECK = """example:
  pertbook check samples/*.xlsx samples/*.csv
"""
EPILOG_TEMPLATE = """example:
  pertbook template my-schedule.xlsx
"""
EPILOG_COMPARE = """example:
  pertbook compare may/plan.analysis.json june/plan.analysis.json --json
  (writes june/plan.changes.xlsx and june/plan.changes.json)
"""
EPILOG_WATCH = """example:
  pertbook watch /srv/share/schedules --interval 10
  pertbook watch /srv/share/schedules --once      (for cron or a scheduled task)
"""


# --------------------------------------------------------------------------- the parser
def _global_flags(parser: argparse.ArgumentParser, *, default) -> None:
    """Flags accepted before and after the command (``--debug``)."""
    parser.add_argument(
        "--debug",
        action="store_true",
        default=default,
        help="show the traceback of an internal fault",
    )


def _build() -> tuple[argparse.ArgumentParser, dict[str, argparse.ArgumentParser]]:
    parser = argparse.ArgumentParser(
        prog="pertbook",
        description="Activity sheet in, auditable schedule-risk workbook out.",
    )
    parser.add_argument("--version", action="version", version=f"pertbook {__version__}")
    _global_flags(parser, default=False)
    # after the command too; SUPPRESS keeps a --debug given before the command
    common = argparse.ArgumentParser(add_help=False)
    _global_flags(common, default=argparse.SUPPRESS)
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    def command(name: str, help_text: str, epilog: str) -> argparse.ArgumentParser:
        return sub.add_parser(
            name,
            help=help_text,
            description=help_text,
            epilog=epilog,
            parents=[common],
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )

    inputs = f"schedule file(s) to read: {suffix_list()}"
    commands = {}
    p = commands["convert"] = command(
        "convert", "analyse schedules and write analysis workbooks", EPILOG_CONVERT
    )
    p.add_argument("inputs", nargs="+", metavar="INPUT", help=inputs)
    p.add_argument("--outdir", metavar="DIR", help="output folder (default: beside each input)")
    p.add_argument("--quiet", action="store_true", help="print problems only")
    add_conversion_options(p)

    p = commands["check"] = command(
        "check", "validate schedules only (exit 0 valid, 2 invalid); writes nothing", EPILOG_CHECK
    )
    p.add_argument("inputs", nargs="+", metavar="INPUT", help=inputs)

    p = commands["template"] = command(
        "template", "write a blank input workbook to fill in", EPILOG_TEMPLATE
    )
    p.add_argument("output", metavar="OUT.xlsx", help="the workbook to write")
    p.add_argument("--force", action="store_true", help="replace OUT.xlsx if it exists")

    p = commands["compare"] = command(
        "compare",
        "compare two runs: what moved since the earlier analysis, and why",
        EPILOG_COMPARE,
    )
    run = "an .analysis.json or .analysis.xlsx that pertbook convert wrote"
    p.add_argument("old", metavar="OLD", help=f"the earlier run: {run}")
    p.add_argument("new", metavar="NEW", help=f"the later run: {run}")
    p.add_argument("--outdir", metavar="DIR", help="output folder (default: beside NEW)")
    p.add_argument("--json", action="store_true", help="also write <NEW stem>.changes.json")
    p.add_argument("--quiet", action="store_true", help="print problems only")

    from converter.drop import add_watch_arguments

    p = commands["watch"] = command(
        "watch", "convert every sheet dropped into FOLDER/inbox", EPILOG_WATCH
    )
    add_conversion_options(p)
    add_watch_arguments(p)
    return parser, commands


def build_parser() -> argparse.ArgumentParser:
    """The ``pertbook`` argument parser."""
    return _build()[0]


def command_parsers() -> dict[str, argparse.ArgumentParser]:
    """Each command's own parser, by name (for its help and the documentation checks)."""
    return _build()[1]


# --------------------------------------------------------------------------- terminal


@dataclass
class Target:
    """Where one input's results go, or why it is not converted (``refused``)."""

    name: str
    xlsx: Path
    json: Path
    refused: str | None = None


def result_tags(suffix: str):
    """The tags tried in turn for a result name already given to an earlier input: none,
    the input's type, then the type counted up.

    Examples
    --------
    >>> from itertools import islice
    >>> list(islice(result_tags(".xlsx"), 4))
    ['', '-xlsx', '-xlsx-2', '-xlsx-3']
    """
    ext = suffix.lstrip(".").lower() or "file"
    yield ""
    yield f"-{ext}"
    n = 2
    while True:
        yield f"-{ext}-{n}"
        n += 1


def _key(path: Path) -> str:
    try:
        resolved = str(path.resolve())
    except (OSError, RuntimeError):  # a symbolic link loop: its own name stands for it
        resolved = os.path.abspath(path)
    return os.path.normcase(resolved)


class InputIndex:
    """The inputs of a run by resolved path and by file identity (device, inode), to tell
    whether an output would replace one of them without comparing every pair."""

    def __init__(self, names: list[str]) -> None:
        self.by_path: dict[str, str] = {}
        self.by_inode: dict[tuple[int, int], str] = {}
        for name in names:
            self.by_path.setdefault(_key(Path(name)), name)
            identity = self._identity(Path(name))
            if identity is not None:
                self.by_inode.setdefault(identity, name)

    @staticmethod
    def _identity(path: Path) -> tuple[int, int] | None:
        try:
            st = os.stat(path)
        except (OSError, ValueError):
            return None
        return (st.st_dev, st.st_ino) if st.st_ino else None

    def holder(self, path: Path) -> str | None:
        """The input that ``path`` names (the same path or the same file), if any."""
        hit = self.by_path.get(_key(path))
        if hit is None:
            identity = self._identity(path)
            hit = self.by_inode.get(identity) if identity is not None else None
        return hit


def _targets(args) -> list[Target]:
    """Each input's result names, deterministic in argument order: the first input of a
    stem gets ``<stem>.analysis.xlsx``, a later one ``<stem>-<ext>``, then ``<stem>-<ext>-2``
    ... (:func:`result_tags`), so no result of the run replaces another. An input whose
    result would replace a file given as an input of the same run (the same path, or the
    same file through a link) is refused."""
    outdir = Path(args.outdir) if args.outdir else None
    inputs = InputIndex(args.inputs)
    given: set[str] = set()
    out = []
    for name in args.inputs:
        path = Path(name)
        for tag in result_tags(path.suffix):
            xlsx, js = output_paths(path, outdir, tag)
            if _key(xlsx) not in given:
                break
        if tag:
            say(sys.stderr, f"{name}: another input has the same name; writing {xlsx.name}\n")
        given.add(_key(xlsx))
        target = Target(name, xlsx, js)
        for result in (xlsx, js) if args.json else (xlsx,):
            hit = inputs.holder(result)
            if hit is not None:
                target.refused = (
                    f"{name}: not converted: its result {result} would replace "
                    f"{hit}, an input of this run; choose another --outdir"
                )
                break
        out.append(target)
    return out


def _convert_one(
    args, options, name: str, xlsx: Path, js: Path
) -> tuple[int, ConvertResult | None]:
    """Convert one input, printing its problems; returns the exit code and the result."""
    err = make_console(sys.stderr)
    show_progress = err.is_terminal and not args.quiet
    try:
        with SimulationProgress(err) as progress:
            options.progress = progress if show_progress else None
            result = convert(name, options, workbook_path=xlsx, json_path=js)
    except OSError as exc:  # the output folder or disk, not the schedule
        say(sys.stderr, f"{name}: cannot write the results: {exc}\n")
        if args.debug:
            traceback.print_exc()
        return EXIT_FAULT, None
    except (PertbookError, Exception) as exc:  # noqa: BLE001 - the tool's own fault
        say(sys.stderr, f"{name}: internal error: {type(exc).__name__}: {exc}\n")
        if args.debug:
            traceback.print_exc()
        else:
            say(sys.stderr, "(run with --debug for the traceback; please report it)\n")
        return EXIT_FAULT, None
    _print_problems(name, result.problems, sys.stderr)
    if not result.ok:
        n = sum(1 for p in result.problems if p.severity == ERROR)
        say(sys.stderr, f"{name}: invalid input ({n} problem(s)); no workbook written\n")
        return EXIT_INVALID, result
    return EXIT_OK, result


def cmd_convert(args) -> int:
    options = options_from_args(args)
    out = make_console(sys.stdout)
    worst, shown = EXIT_OK, 0
    for target in _targets(args):
        if target.refused:
            say(sys.stderr, target.refused + "\n")
            worst = max(worst, EXIT_INVALID, key=_RANK.__getitem__)
            continue
        name = target.name
        code, result = _convert_one(args, options, name, target.xlsx, target.json)
        if code == EXIT_OK and not args.quiet:
            if shown:
                out.print()  # a blank line between the inputs' headlines
            print_headline(out, name, result)
            if result.account:
                say(sys.stdout, f"{name}: since the baseline: {result.account}\n")
            shown += 1
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
            say(
                sys.stdout,
                f"{name}: {'valid' if result.ok else 'INVALID'}"
                + (f" (activity sheet {result.sheet})" if result.sheet else "")
                + "\n",
            )
        except Exception as exc:  # noqa: BLE001
            code = EXIT_FAULT
            say(sys.stderr, f"{name}: internal error: {type(exc).__name__}: {exc}\n")
            if args.debug:
                traceback.print_exc()
        if _RANK[code] > _RANK[worst]:
            worst = code
    return worst


def cmd_template(args) -> int:
    from converter.write.template import write_template

    out = Path(args.output)
    if out.exists() and not args.force:
        say(sys.stderr, f"{out} exists; not overwritten (use --force to replace it)\n")
        return EXIT_INVALID
    if out.suffix.lower() != ".xlsx":
        say(sys.stderr, f"{out}: the template is an .xlsx workbook; name it *.xlsx\n")
        return EXIT_INVALID
    write_template(out)
    say(sys.stdout, f"wrote {out}\n")
    return EXIT_OK


def cmd_compare(args) -> int:
    from converter.comparison import compare

    try:
        result = compare(args.old, args.new, outdir=args.outdir, write_json=args.json)
    except OSError as exc:  # the output folder or disk, not the runs
        say(sys.stderr, f"cannot write the comparison: {exc}\n")
        if args.debug:
            traceback.print_exc()
        return EXIT_FAULT
    except Exception as exc:  # noqa: BLE001 - the tool's own fault
        say(sys.stderr, f"internal error: {type(exc).__name__}: {exc}\n")
        if args.debug:
            traceback.print_exc()
        return EXIT_FAULT
    for message in result.problems:
        say(sys.stderr, f"error: {message}\n")
    if not result.ok:
        say(sys.stderr, "no comparison written\n")
        return EXIT_INVALID
    if not args.quiet:
        say(sys.stdout, result.account + "\n")
    written = [str(p) for p in (result.workbook, result.json_path) if p is not None]
    say(sys.stdout, f"wrote {' and '.join(written)}\n")
    return EXIT_OK


def cmd_watch(args) -> int:
    from converter.drop import run_watch

    return run_watch(args, options_from_args(args))


COMMANDS = {
    "convert": cmd_convert,
    "check": cmd_check,
    "template": cmd_template,
    "compare": cmd_compare,
    "watch": cmd_watch,
}


def main(argv: list[str] | None = None) -> int:
    """Run ``pertbook``; returns the exit code (a bad argument: 2, with argparse's message)."""
    process_umask()  # read once, here in the main thread: outputs get the user's usual mode
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # --help, --version, or a usage error already printed
        return exc.code if isinstance(exc.code, int) else EXIT_INVALID
    if args.command is None:
        parser.print_help()
        return EXIT_INVALID
    return COMMANDS[args.command](args)


if __name__ == "__main__":
    raise SystemExit(main())
