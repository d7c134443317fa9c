"""The settings sheet: label/value rows -> values with their cells -> Settings.

Which labels name which setting lives here; how each value is read and which source
wins (command line > settings sheet > default) lives in :mod:`converter.options`.
"""

from __future__ import annotations

import datetime as dt

from converter.model import WARNING, Problem, Settings
from converter.options import ConvertOptions, SheetValue, resolve
from converter.read.sheets import CellError, SheetData, cell_name
from converter.values import is_blank, normalise, shown

SETTING_LABELS: dict[str, tuple[str, ...]] = {
    "start_date": ("start date", "project start", "project start date", "start"),
    "time_unit": ("time unit", "unit", "units", "duration unit", "time units"),
    "working_days": ("working days", "workdays", "work days", "working week", "work week"),
    "holidays": ("holidays", "holiday", "non working days", "public holidays", "closures"),
    "due": ("due", "due date", "deadline", "project due", "due duration"),
    "iterations": ("iterations", "simulation iterations", "runs", "trials"),
    "seed": ("seed", "random seed"),
    "distribution": ("distribution", "default distribution"),
    "correlation": ("correlation", "rank correlation", "group correlation"),
    "confidence_levels": ("confidence levels", "confidence level", "confidence"),
    "paths": ("paths", "near critical paths", "paths to list", "path count"),
    "default_range": ("default range", "default range class", "default uncertainty"),
    "status_date": ("status date", "data date", "progress date", "as of"),
    "hours_per_day": ("hours per day", "working hours per day", "hours a day", "day length"),
}
_SETTING_ALIASES = {normalise(a): k for k, v in SETTING_LABELS.items() for a in v}
#: Labels of a header row above the settings (not settings themselves).
_SETTING_HEADERS = {"setting", "settings", "option", "parameter", "name", "key", "label"}


class SettingsSheet:
    """The label/value rows of a settings sheet: values with their cells, holiday dates
    (one on the label's row and more on the rows below with a blank label) and a warning
    for each label pertbook does not know."""

    def __init__(self, sheet: SheetData | None):
        self.values: dict[str, SheetValue] = {}
        self.holidays: list[SheetValue] = []
        self.problems: list[Problem] = []
        if sheet is not None:
            self._read(sheet)

    def _read(self, sheet: SheetData) -> None:
        current = None
        for r, row in enumerate(sheet.rows):
            label = row[0] if row else None
            value = row[1] if len(row) > 1 else None
            here = SheetValue(value, sheet.name, cell_name(r, 1))
            if isinstance(label, CellError) or isinstance(value, CellError):
                # the reader's error-value names the cell; a label still starts its setting
                labelled = not is_blank(label) and not isinstance(label, CellError)
                current = _SETTING_ALIASES.get(normalise(label)) if labelled else None
                continue
            if is_blank(label):
                if current == "holidays" and not is_blank(value):
                    self.holidays.append(here)
                continue
            key = current = _SETTING_ALIASES.get(normalise(label))
            if key is None:
                if normalise(label) not in _SETTING_HEADERS and not is_blank(value):
                    self.problems.append(
                        Problem(
                            WARNING,
                            "unknown-setting",
                            f'setting "{label}" is not one pertbook knows; it was ignored',
                            sheet.name,
                            cell_name(r, 0),
                            fix="See the README for the setting labels.",
                        )
                    )
            elif is_blank(value):
                continue
            elif key == "holidays":
                self.holidays.append(here)
            else:
                if key in self.values:
                    self.problems.append(_repeated(label, self.values[key], here))
                self.values[key] = here


def _repeated(label: object, first: SheetValue, again: SheetValue) -> Problem:
    """A setting given on two rows: the later one is used, and the user is told so."""
    return Problem(
        WARNING,
        "repeated-setting",
        f'the setting "{str(label).strip()}" is given twice: {first.where} '
        f"({shown(first.value)}) and {again.where} ({shown(again.value)}); the later one, "
        f"{again.where}, is used",
        again.sheet,
        again.cell,
        fix="Delete the row you do not mean.",
    )


def resolve_settings(
    sheet: SheetData | None, options: ConvertOptions | None
) -> tuple[Settings, list[Problem], dict[str, SheetValue]]:
    """Defaults, overridden by the settings sheet, overridden by the command line.

    Returns the settings, the problems found, and where on the sheet each setting was
    read (setting name -> value with its cell), so that later checks can name the cell.
    """
    found = SettingsSheet(sheet)
    settings, problems = resolve(found.values, found.holidays, options)
    problems += _due_before_start(settings, found.values.get("due"))
    return settings, found.problems + problems, found.values


def place_of(
    settings: Settings, key: str, places: dict[str, SheetValue]
) -> tuple[str | None, str | None, str]:
    """(sheet, cell, words) of the value a setting took.

    Its cell on the settings sheet (and no words: the problem names the cell), or no cell
    and the words `` (--due on the command line)``.
    """
    given = places.get(key)
    if given is not None and settings.source_of(key).startswith("settings sheet"):
        return given.sheet, given.cell, ""
    return None, None, " (--" + key.replace("_", "-") + " on the command line)"


def _due_before_start(settings: Settings, on_sheet: SheetValue | None) -> list[Problem]:
    """A due date before the start date can only be missed: say so, naming the date."""
    due, start = settings.due, settings.start_date
    if not isinstance(due, dt.date) or start is None or due >= start:
        return []
    sheet, cell, where = place_of(settings, "due", {"due": on_sheet} if on_sheet else {})
    return [
        Problem(
            WARNING,
            "due-before-start",
            f"the due date {due.isoformat()}{where} is before the start date "
            f"{start.isoformat()}: the chance of finishing by it is 0%",
            sheet,
            cell,
            fix="Check the year of the due date and of the start date.",
        )
    ]
