"""``pertbook watch``'s arguments (``converter.drop.command``) and the CLI's wiring of them.

The contract with the command line: ``add_watch_arguments`` adds only the watcher's own
options; the conversion options come from the CLI's shared function, and ``run_watch``
gets the ``ConvertOptions`` built from them. Defaults are the README's ("Command line").
"""

from __future__ import annotations

import argparse
import datetime as dt
import re

import pytest

from converter import cli
from converter.api import ConvertOptions
from converter.drop import add_watch_arguments, run_watch
from converter.drop.command import watcher_from_args
from converter.options import options_from_args

WATCH_FLAGS = (
    "--interval",
    "--once",
    "--workers",
    "--inbox",
    "--outbox",
    "--archive",
    "--failed",
    "--log",
    "--once-wait",
    "--max-backoff",
    "--stop-wait",
    "--quiet",
)


def watch_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser()
    add_watch_arguments(parser)
    return parser


def help_of(parser: argparse.ArgumentParser) -> dict[str, str]:
    """Each option's help paragraph, by its flag (from the formatted --help text)."""
    text = parser.format_help().split("options:", 1)[1]
    paragraphs = re.split(r"\n  (?=-)", text)
    return {p.split()[0].rstrip(","): " ".join(p.split()) for p in paragraphs if p.strip()}


def test_only_the_watchers_own_options_and_their_defaults():
    parser = watch_parser()
    args = parser.parse_args(["F"])
    assert (args.folder, args.interval, args.once, args.workers) == ("F", 5.0, False, None)
    assert (args.inbox, args.outbox, args.archive, args.failed) == (
        "inbox",
        "outbox",
        "archive",
        "failed",
    )
    assert (args.log, args.once_wait, args.max_backoff, args.quiet) == (None, 60.0, 60.0, False)
    assert args.stop_wait == 60.0
    for conversion_option in ("--due", "--json", "--iterations", "--seed"):
        with pytest.raises(SystemExit):
            parser.parse_args(["F", conversion_option, "1"])


def test_help_shows_every_default():
    helps = help_of(watch_parser())
    assert set(WATCH_FLAGS) <= set(helps), sorted(helps)
    assert "(default 5)" in helps["--interval"]
    assert "(default 60)" in helps["--once-wait"]
    assert "(default 60)" in helps["--max-backoff"]
    assert "(default 60)" in helps["--stop-wait"]
    assert "(default FOLDER/pertbook.log)" in helps["--log"]
    assert "(default one per CPU" in helps["--workers"]
    for part in ("inbox", "outbox", "archive", "failed"):
        assert f"(default {part})" in helps[f"--{part}"]
    for flag in ("--once", "--quiet"):
        assert "without it" in helps[flag]


def test_cli_watch_builds_convert_options_and_the_watcher():
    args = cli.build_parser().parse_args(
        [
            "watch",
            "F",
            "--due",
            "2025-03-31",
            "--json",
            "--iterations",
            "500",
            "--seed",
            "7",
            "--distribution",
            "triangular",
            "--correlation",
            "0.25",
            "--paths",
            "4",
            "--workers",
            "3",
            "--inbox",
            "in",
            "--log",
            "none",
            "--quiet",
            "--once-wait",
            "2",
        ]
    )
    options = options_from_args(args)
    assert (options.due, options.json, options.iterations, options.seed) == (
        dt.date(2025, 3, 31),
        True,
        500,
        7,
    )  # the due parser reads the ISO date
    assert (options.distribution, options.correlation, options.paths) == ("triangular", 0.25, 4)
    w = watcher_from_args(args, options)
    assert w.workers == 3 and w.log_path is None and w.echo is False and w.once_wait == 2.0
    assert w.layout.inbox.name == "in" and w.layout.outbox.name == "outbox"
    # several conversions side by side: one simulation process each, on a copy
    assert w.options.simulation_workers == 1 and options.simulation_workers is None
    assert w.options.iterations == 500
    # the watcher's simulation memory (default 1024 MB) shared by the 3 workers
    assert options.simulation_memory_mb is None and w.options.simulation_memory_mb == 341
    given = cli.build_parser().parse_args(
        ["watch", "F", "--workers", "2", "--simulation-memory", "3000"]
    )
    assert watcher_from_args(given, options_from_args(given)).options.simulation_memory_mb == 1500
    defaults = options_from_args(cli.build_parser().parse_args(["watch", "F"]))
    assert defaults == ConvertOptions()


def test_run_watch_on_a_folder_whose_parent_is_missing(tmp_path, capsys):
    args = watch_parser().parse_args([str(tmp_path / "not-mounted" / "drop"), "--once"])
    assert run_watch(args, ConvertOptions()) == 1
    assert "is the share mounted?" in capsys.readouterr().err
    assert not (tmp_path / "not-mounted").exists()  # nothing built in its place
