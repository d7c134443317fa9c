"""Ranges from a single duration: the range classes sheet, inline ranges, the default range.

Many schedules carry one duration per activity; the risk workshop then gives each
activity a range class instead of three numbers. A class (a row of the Ranges sheet) holds
low / most likely / high in percent of the duration, and the activity's estimates are

    O = duration x low% / 100,  M = duration x likely% / 100,  P = duration x high% / 100.

The Range cell holds a class name or inline percentages ``80/100/120``; the ``Default
range`` setting (``--default-range``) names the class of rows with a duration and no
range. Explicit O / M / P cells always win over a range. Every cell of the Ranges sheet is
checked, each problem naming its sheet and cell.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from converter.model import RangeClass, Settings
from converter.options import SheetValue
from converter.read.sheets import CellError, SheetData, TableMatch, cell_name
from converter.validate.problems import Collector
from converter.validate.units import as_converted
from converter.values import (
    LARGEST_DURATION,
    id_text,
    is_blank,
    parse_duration,
    parse_number,
    shown,
)

__all__ = [
    "RangeBook",
    "class_key",
    "parse_inline_range",
    "range_estimates",
    "read_duration",
    "read_range_classes",
]

#: Percentages no higher than this (but above 0) look like a cell formatted as a percentage
#: (90% is stored as 0.9): refused, since a high of 2% of the duration is no range.
FRACTION_LIMIT = 2.0
#: The largest percentage read: a hundred times the duration. Above it a number is a
#: slip (or a cell such as 1e308), refused at its own cell rather than as an absurd
#: estimate on the activity row.
MAX_PERCENT = 10_000.0
_LIMIT_WORDS = f"{MAX_PERCENT:,.0f} (a hundred times the duration)"
_PERCENT_TITLES = {"low": "Low %", "likely": "Likely %", "high": "High %"}
_SPLIT = re.compile(r"\s*/\s*")


def class_key(name: str) -> str:
    """Class names compare ignoring case and repeated spaces.

    Examples
    --------
    >>> class_key("  Medium  risk "), class_key("MEDIUM RISK")
    ('medium risk', 'medium risk')
    """
    return " ".join(name.split()).casefold()


def _percent(text: str) -> float:
    """One percentage, ``80`` or ``80%`` (both 80); ValueError if it is not a number."""
    text = text.strip()
    return parse_number(text[:-1] if text.endswith("%") else text)


def parse_inline_range(text: str) -> tuple[float, float, float]:
    """Inline percentages ``low/likely/high`` (``80/100/120``, ``80% / 100% / 120%``).

    Raises
    ------
    ValueError
        Unless there are three numbers, each 0 or more, with low <= likely <= high.

    Examples
    --------
    >>> parse_inline_range("80/100/120"), parse_inline_range(" 90% / 100% / 125.5% ")
    ((80.0, 100.0, 120.0), (90.0, 100.0, 125.5))
    >>> parse_inline_range("120/100/80")
    Traceback (most recent call last):
    ...
    ValueError: "120/100/80": need low <= likely <= high (in percent of the duration)
    """
    parts = _SPLIT.split(text.strip())
    if len(parts) != 3:
        raise ValueError(
            f"{shown(text)} is not three percentages low/likely/high such as 80/100/120"
        )
    try:
        low, likely, high = (_percent(p) for p in parts)
    except ValueError:
        raise ValueError(
            f"{shown(text)} is not three percentages low/likely/high such as 80/100/120"
        ) from None
    if min(low, likely, high) < 0:
        raise ValueError(f"{shown(text)}: percentages cannot be negative")
    if max(low, likely, high) > MAX_PERCENT:
        raise ValueError(f"{shown(text)}: a percentage is above {_LIMIT_WORDS}")
    if not low <= likely <= high:
        raise ValueError(f"{shown(text)}: need low <= likely <= high (in percent of the duration)")
    if 0 < high <= FRACTION_LIMIT:
        raise ValueError(f"{shown(text)}: percentages are written as 80 for 80%, not 0.8")
    return low, likely, high


def _inline_class(text: str, place: str) -> RangeClass:
    low, likely, high = parse_inline_range(text)
    name = "/".join(f"{x:g}" for x in (low, likely, high))
    return RangeClass(name, low, likely, high, place, inline=True)


# --------------------------------------------------------------------------- the book
@dataclass
class RangeBook:
    """The classes defined on the Ranges sheet, the default range, and those used."""

    classes: dict[str, RangeClass] = field(default_factory=dict)
    default: RangeClass | None = None
    #: Where the default range was given, for messages (" (Settings!B9)").
    default_where: str = ""
    #: The default range was given but is wrong (its error is recorded): rows that would
    #: take it are not also called fixed durations.
    default_bad: bool = False
    sheet: str = "Ranges"
    used: dict[str, RangeClass] = field(default_factory=dict)
    #: Classes (by :func:`class_key`) whose row has a problem: an activity naming one is
    #: refused without a second message (the row's problem names the cell).
    refused: set[str] = field(default_factory=set)

    def use(self, rc: RangeClass) -> RangeClass:
        """Record that ``rc`` made some activity's estimates; the first one of its name."""
        return self.used.setdefault(rc.name, rc)

    def unused(self) -> list[str]:
        """Names of the classes defined but used by no activity."""
        return [rc.name for rc in self.classes.values() if rc.name not in self.used]


def read_range_classes(
    ranges: TableMatch | None,
    unreadable: SheetData | None,
    settings: Settings,
    places: dict[str, SheetValue],
    out: Collector,
) -> RangeBook:
    """The range classes of the Ranges sheet and the default range, each cell checked."""
    book = RangeBook()
    if ranges is None and unreadable is not None:
        out.error(
            "ranges-columns",
            f"the sheet {unreadable.name} is named as the range classes sheet, but no row "
            "has the headers Range, Low %, Likely %, High %",
            unreadable.name,
            "A1",
            fix="Head its columns Range, Low %, Likely %, High % (one class per row).",
        )
    if ranges is not None:
        book.sheet = ranges.sheet.name
        first: dict[str, int] = {}
        for r in range(ranges.header_row + 1, len(ranges.sheet.rows)):
            rc = _class_row(ranges, r, first, out)
            if isinstance(rc, RangeClass):
                book.classes[class_key(rc.name)] = rc
            elif rc is not None:
                book.refused.add(rc)
    _default(book, settings, places, out)
    return book


def _class_row(m: TableMatch, r: int, first: dict[str, int], out: Collector):
    """One row of the Ranges sheet as a class; or the key of a class whose percentages
    have problems (recorded); or None (a blank row, or a name with a problem)."""
    row, cols, sheet = m.sheet.rows[r], m.columns, m.sheet.name
    cells = {k: (row[c] if c < len(row) else None) for k, c in cols.items()}
    if all(is_blank(v) for v in cells.values()):
        return None
    name_cell = cell_name(r, cols["range"])
    raw_name = cells["range"]
    name = None
    if isinstance(raw_name, CellError):
        out.error("error-value", _error_words("Range", raw_name), sheet, name_cell)
    elif is_blank(raw_name):
        out.error(
            "range-blank-name",
            "this range class has percentages but no name",
            sheet,
            name_cell,
            fix="Name the class (e.g. Medium) or delete the row.",
        )
    else:
        name = " ".join(id_text(raw_name).split())
        if "/" in name:
            out.error(
                "range-name-slash",
                f'the class name "{name}" contains "/", which marks inline percentages',
                sheet,
                name_cell,
                fix="Choose a name without a slash.",
            )
            name = None
        elif class_key(name) in first:
            out.error(
                "range-duplicate",
                f'the range class "{name}" is defined again (first on row '
                f"{first[class_key(name)] + 1})",
                sheet,
                name_cell,
                fix="Every class needs its own name: delete or rename one of the two rows.",
            )
            name = None
        else:
            first[class_key(name)] = r
    values = _percentages(m, r, cells, name, out)
    if name is None:
        return None
    if values is None:
        return class_key(name)
    return RangeClass(name, *values, place=f"{sheet}!{name_cell}")


def _error_words(title: str, value: CellError) -> str:
    return f"the {title} cell holds the error value {value.code} (a formula that failed)"


def _percentages(m: TableMatch, r: int, cells: dict, name, out: Collector):
    """(low, likely, high) of one class row, or None with each bad cell's problem."""
    sheet, found, bad = m.sheet.name, {}, False
    for key, title in _PERCENT_TITLES.items():
        where, value = cell_name(r, m.columns[key]), cells[key]
        problem = None
        if isinstance(value, CellError):
            problem = ("error-value", _error_words(title, value))
        elif is_blank(value):
            problem = ("range-missing-percent", f"{title} is blank")
        else:
            try:
                x = _percent(value) if isinstance(value, str) else parse_number(value)
            except ValueError:
                x = None
                problem = ("range-not-a-number", f"{title} {shown(value)} is not a number")
            if x is not None and x < 0:
                problem = ("range-negative", f"{title} {shown(x)} is negative")
            elif x is not None and x > MAX_PERCENT:
                problem = ("range-too-large", f"{title} {shown(x)} is above {_LIMIT_WORDS}")
            elif x is not None:
                found[key] = x
        if problem:
            bad = True
            label = f' of the range class "{name}"' if name else ""
            out.error(
                problem[0],
                problem[1] + label,
                sheet,
                where,
                fix="Type a percentage of the duration, 0 or more, e.g. 90 for 90%.",
            )
    if bad:
        return None
    return _class_order(m, r, found, name, out)


def _class_order(m: TableMatch, r: int, v: dict, name, out: Collector):
    """low <= likely <= high and not fractions; each problem at the cell that breaks it."""
    sheet, label = m.sheet.name, f' of the range class "{name}"' if name else ""
    low, likely, high = v["low"], v["likely"], v["high"]
    breaks = []
    if likely < low:
        breaks.append(("likely", f"Likely % {shown(likely)} is less than Low % {shown(low)}"))
    if high < likely or (high < low and not breaks):
        worse = likely if high < likely else low
        which = "Likely" if high < likely else "Low"
        breaks.append(("high", f"High % {shown(high)} is less than {which} % {shown(worse)}"))
    for key, words in breaks:
        out.error(
            "range-order",
            words + label + " (need Low % <= Likely % <= High %)",
            sheet,
            cell_name(r, m.columns[key]),
            fix="Check the order of the three percentages.",
        )
    if not breaks and 0 < high <= FRACTION_LIMIT:
        out.error(
            "range-fraction",
            f"High % {shown(high)}{label} would make the longest duration {shown(high)}% of "
            "the planned one: the percentages look like fractions (a cell formatted as a "
            "percentage stores 90% as 0.9)",
            sheet,
            cell_name(r, m.columns["high"]),
            fix="Type the percentages as plain numbers: 90 for 90%.",
        )
        return None
    return None if breaks else (low, likely, high)


def _default(book: RangeBook, settings: Settings, places: dict, out: Collector) -> None:
    """The Default range setting: a class of the Ranges sheet or inline percentages."""
    name = settings.default_range
    if name is None:
        return
    given = places.get("default_range")
    on_sheet = given is not None and settings.source_of("default_range").startswith("settings")
    sheet, cell = (given.sheet, given.cell) if on_sheet else (None, None)
    book.default_where = f" ({given.where})" if on_sheet else " (--default-range)"
    if "/" in name:
        try:
            book.default = _inline_class(name, f"Default range{book.default_where}")
        except ValueError as exc:
            out.error("bad-range", f"Default range {exc}", sheet, cell)
            book.default_bad = True
        return
    book.default = book.classes.get(class_key(name))
    if book.default is None and class_key(name) in book.refused:
        book.default_bad = True
    elif book.default is None:
        book.default_bad = True
        out.error(
            "unknown-range",
            f'the Default range "{name}"{book.default_where} is not a class on the '
            f"{book.sheet} sheet" + _known(book),
            sheet,
            cell,
            fix="Define the class on the Ranges sheet (Range, Low %, Likely %, High %) or "
            "name one that is there.",
        )


def _known(book: RangeBook) -> str:
    names = [rc.name for rc in book.classes.values()]
    if not names:
        return " (no classes are defined)"
    shown_names = ", ".join(names[:10]) + (", ..." if len(names) > 10 else "")
    return f" (classes defined: {shown_names})"


# --------------------------------------------------------------------------- one activity
def read_duration(row, cols, r, sheet, ident, settings: Settings, out: Collector):
    """The Duration cell in the time unit (units such as ``3d`` or ``16h`` converted):
    ``(value or None, ok)``; a bad value is a problem naming the cell."""
    c = cols.get("duration")
    value = row[c] if c is not None and c < len(row) else None
    if is_blank(value):
        return None, True
    if isinstance(value, CellError):  # the reader's error-value names the cell
        return None, False
    where = cell_name(r, c)
    try:
        x = parse_duration(
            value, settings.time_unit, settings.hours_per_day, len(settings.working_days)
        )
    except ValueError as exc:
        out.error(
            "not-a-number",
            f"Duration {exc}",
            sheet,
            where,
            ident,
            fix="Type a number of time units, or a number with a unit: 16h, 3d, 2w.",
        )
        return None, False
    if x < 0:
        out.error("negative-estimate", f"Duration {shown(x)} is negative", sheet, where, ident)
        return None, False
    if x > LARGEST_DURATION:
        out.error(
            "too-large",
            f"Duration {shown(x)} is more than {LARGEST_DURATION:,.0f} time units",
            sheet,
            where,
            ident,
        )
        return None, False
    return x, True


def range_estimates(
    duration: float, row, cols, r, sheet, ident, book: RangeBook, out: Collector, settings=None
):
    """(O, M, P, fixed) from the duration and the row's range, and the class used.

    Without a Range (and no Default range) the duration is fixed, with a warning.
    """
    d_cell = cell_name(r, cols["duration"])
    rc = _row_range(row, cols, r, sheet, ident, book, out)
    if rc is False:
        return None, None
    if rc is None:
        if duration > 0 and not book.default_bad:
            typed = as_converted(_typed(row, cols["duration"]), duration, settings)
            out.warn(
                "deterministic",
                f"only a duration ({typed}) and no range: treated as a fixed duration (O = M = P)",
                sheet,
                d_cell,
                ident,
                fix="Give the activity a Range (a class of the Ranges sheet or 80/100/120), "
                "or set a Default range.",
            )
        return (duration, duration, duration, True), None
    o, m, p = (duration * x / 100 for x in (rc.low, rc.likely, rc.high))
    if p > LARGEST_DURATION:
        out.error(
            "too-large",
            f"the pessimistic estimate {shown(p)} (Duration x High % of {rc.name}) is more "
            f"than {LARGEST_DURATION:,.0f} time units",
            sheet,
            d_cell,
            ident,
        )
        return None, None
    return (o, m, p, o == m == p), book.use(rc)


def _typed(row, col: int) -> object:
    """The cell as read (None past the row's end)."""
    return row[col] if col < len(row) else None


def _row_range(row, cols, r, sheet, ident, book: RangeBook, out: Collector):
    """The row's class (or the default), None for none, False after a problem."""
    c = cols.get("range")
    value = row[c] if c is not None and c < len(row) else None
    if isinstance(value, CellError):
        return False
    if is_blank(value):
        return None if book.default_bad else book.default
    where = cell_name(r, c)
    text = " ".join(id_text(value).split())
    if "/" in text:
        try:
            return _inline_class(text, f"typed in {sheet}!{where}")
        except ValueError as exc:
            out.error("bad-range", f"Range {exc}", sheet, where, ident)
            return False
    rc = book.classes.get(class_key(text))
    if rc is None and class_key(text) in book.refused:
        return False
    if rc is None:
        out.error(
            "unknown-range",
            f'the range class "{text}" is not defined on the {book.sheet} sheet' + _known(book),
            sheet,
            where,
            ident,
            fix="Define the class on the Ranges sheet (Range, Low %, Likely %, High %), "
            "correct its name, or type inline percentages such as 80/100/120.",
        )
        return False
    return rc
