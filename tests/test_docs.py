"""The README documents every command and option, and its two set-up commands are real."""

from __future__ import annotations

import re
from pathlib import Path

from converter.cli import command_parsers

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _flags(help_text: str) -> set[str]:
    """The long options a command's --help lists (argparse's public help text)."""
    return set(re.findall(r"(?<![\w-])--[a-z][a-z-]*", help_text)) - {"--help"}


def test_every_command_is_documented():
    assert set(command_parsers()) == {"convert", "check", "template", "compare", "watch"}
    for name in command_parsers():
        assert f"pertbook {name}" in README, name


def test_every_option_is_documented():
    missing = []
    for name, sub in command_parsers().items():
        flags = _flags(sub.format_help())
        assert flags or name == "check", name  # the help lists options at all
        missing += [f"{name} {flag}" for flag in sorted(flags) if flag not in README]
    assert not missing, missing


def test_every_command_help_ends_with_an_example():
    for name, sub in command_parsers().items():
        assert sub.epilog and "example" in sub.epilog, name


def test_readme_set_up_commands_match_ci():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    test_command = 'pip install -e ".[test]" && python -m pytest -q'
    assert test_command in README
    assert test_command in ci
    assert re.search(r"pip install \. && pertbook convert samples/\S+", README)


def test_json_keys_documented():
    for key in (
        "expected_duration",
        "critical_path",
        "p_meet_due",
        "duration_at_confidence",
        "p_meet_due_all_paths",
        "std_error_mean",
        "p_meet_due_std_error",
        "merge_bias",
        "criticality",
        "sensitivity",
        "early_start_date",
        "links",
        "targets",
        "checks",
        "problems",
        "start_date",
        "calendar",
        "pertbook_format",
        "settings",
        "changes",
        "estimates_changed",
        "settings_differ",
        "risk_drivers",
    ):
        assert f'"{key}"' in README, key
