"""``pertbook watch``: the watcher's own arguments, and running it from parsed arguments.

The command line (``converter.cli``) owns the subcommand and the conversion options it
shares with ``convert`` (``--due``, ``--json``, ``--iterations``, ...); it adds this
module's arguments with :func:`add_watch_arguments` and calls :func:`run_watch` with the
parsed arguments and the ``ConvertOptions`` built from them.
"""

from __future__ import annotations

import argparse
import os
import sys

from converter.api import ConvertOptions
from converter.drop.health import describe
from converter.drop.loop import Watcher
from converter.values import printable

PARTS = ("inbox", "outbox", "archive", "failed")


def add_watch_arguments(parser: argparse.ArgumentParser) -> None:
    """Add FOLDER and the watcher's own options (not the conversion options) to ``parser``.

    Examples
    --------
    >>> import argparse
    >>> parser = argparse.ArgumentParser()
    >>> add_watch_arguments(parser)
    >>> args = parser.parse_args(["drop", "--once"])
    >>> (args.folder, args.once, args.interval, args.once_wait, args.max_backoff, args.stop_wait)
    ('drop', True, 5.0, 60.0, 60.0, 60.0)
    """
    parser.add_argument("folder", metavar="FOLDER", help="the drop folder (created if missing)")
    parser.add_argument(
        "--interval",
        type=float,
        default=5.0,
        metavar="SECONDS",
        help="seconds between polls (default %(default)g)",
    )
    parser.add_argument(
        "--once",
        action="store_true",
        help="process what is in the inbox, then exit, for cron or a scheduled "
        "task (without it: keep watching)",
    )
    parser.add_argument(
        "--workers",
        type=int,
        default=None,
        metavar="N",
        help="conversions in parallel; 0 converts in this process "
        f"(default one per CPU: {os.cpu_count() or 1} here)",
    )
    for part in PARTS:
        parser.add_argument(
            f"--{part}",
            default=part,
            metavar="NAME",
            help=f"name of the {part} folder inside FOLDER (default %(default)s)",
        )
    parser.add_argument(
        "--log",
        default=None,
        metavar="FILE",
        help="log file, or 'none' for no file (default FOLDER/pertbook.log)",
    )
    parser.add_argument(
        "--once-wait",
        type=float,
        default=60.0,
        metavar="SECONDS",
        help="with --once, how long to wait for files still being written (default %(default)g)",
    )
    parser.add_argument(
        "--max-backoff",
        type=float,
        default=60.0,
        metavar="SECONDS",
        help="longest wait between retries when a folder cannot be used (default %(default)g)",
    )
    parser.add_argument(
        "--stop-wait",
        type=float,
        default=60.0,
        metavar="SECONDS",
        help="after Ctrl+C or SIGTERM, how long the files in hand may take to "
        "finish before they go back to the inbox (default %(default)g)",
    )
    parser.add_argument(
        "--quiet",
        action="store_true",
        help="log to the file only (without it: also to the terminal)",
    )


def watcher_from_args(args: argparse.Namespace, options: ConvertOptions, **kw) -> Watcher:
    """A :class:`Watcher` set up from the arguments of :func:`add_watch_arguments`.

    ``kw`` goes to the Watcher as is (tests pass ``convert_fn``).
    """
    log = args.log
    log_path: str | None = "" if log is None else (None if log.lower() == "none" else log)
    return Watcher(
        args.folder,
        options,
        names={part: getattr(args, part) for part in PARTS},
        interval=args.interval,
        workers=args.workers,
        once=args.once,
        once_wait=args.once_wait,
        log_path=log_path,
        echo=not args.quiet,
        max_backoff=args.max_backoff,
        stop_wait=args.stop_wait,
        **kw,
    )


def run_watch(args: argparse.Namespace, options: ConvertOptions) -> int:
    """Run ``pertbook watch`` from parsed arguments; returns the exit code.

    0: stopped with nothing left (with ``--once``: everything converted); 2 (``--once``):
    some input was invalid; 1: a fault, files left unplaced, or the folder unusable.
    """
    try:
        return watcher_from_args(args, options).run()
    except OSError as exc:
        print(printable(f"pertbook watch: {describe(exc)}"), file=sys.stderr)
        return 1
