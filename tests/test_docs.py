"""The README documents every command and option, and its two set-up commands are real."""

from __future__ import annotations

import argparse
import re
from pathlib import Path

from converter.cli import build_parser

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _subcommands() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    for action in parser._actions:  # argparse has no public accessor for subparsers
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    raise AssertionError("no subcommands")


def test_every_command_is_documented():
    for name in _subcommands():
        assert f"pertbook {name}" in README, name


def test_every_option_is_documented():
    missing = []
    for name, sub in _subcommands().items():
        for action in sub._actions:
            for flag in action.option_strings:
                if flag.startswith("--") and flag != "--help" and flag not in README:
                    missing.append(f"{name} {flag}")
    assert not missing, missing


def test_every_command_help_ends_with_an_example():
    for name, sub in _subcommands().items():
        assert sub.epilog and "example" in sub.epilog, name


def test_readme_set_up_commands_match_ci():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    test_command = 'pip install -e ".[test]" && python -m pytest -q'
    assert test_command in README
    assert test_command in ci
    assert re.search(r"pip install \. && pertbook convert samples/\S+", README)


def test_json_keys_documented():
    for key in ("expected_duration", "critical_path", "p_meet_due", "duration_at_confidence",
                "p_meet_due_all_paths", "std_error_mean", "p_meet_due_std_error",
                "merge_bias", "criticality", "sensitivity", "early_start_date", "links",
                "targets", "checks", "problems", "start_date", "calendar"):
        assert f'"{key}"' in README, key
