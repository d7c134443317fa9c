"""What one cell's value is: blank, a number, a date, an activity ID, a header's words.

Cells arrive from calamine (numbers, dates, text) or from a CSV file (always text), and
options arrive from the command line (text); the same rules read all of them. These are
used by the option parsers (:mod:`converter.options`) and by validation.
"""

from __future__ import annotations

import datetime as dt
import math
import re

_INTEGRAL_TEXT = re.compile(r"^[1-9]\d*\.0+$|^0\.0+$")


def normalise(text: object) -> str:
    """Header text compared case-, space- and punctuation-insensitively.

    A trailing unit in brackets is dropped: ``"Optimistic (days)"`` -> ``"optimistic"``.

    Examples
    --------
    >>> normalise(" Most likely (days)"), normalise("Lead/Lag")
    ('mostlikely', 'lead/lag')
    """
    s = str(text).strip().lower()
    s = re.sub(r"\s*\([^)]*\)\s*$", "", s)
    return re.sub(r"[\s_.\-]+", "", s)


def is_blank(value: object) -> bool:
    """``None``, NaN and whitespace-only text are blank.

    Examples
    --------
    >>> is_blank("  "), is_blank(0)
    (True, False)
    """
    if value is None:
        return True
    if isinstance(value, float) and math.isnan(value):
        return True
    return isinstance(value, str) and not value.strip()


def as_number(value: object) -> float | None:
    """A finite number from a numeric cell or numeric text; None when it is not one.

    Examples
    --------
    >>> as_number(" 2.5 "), as_number("\u22121"), as_number("two"), as_number(True)
    (2.5, -1.0, None, None)
    """
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        x = float(value)
        return x if math.isfinite(x) else None
    if isinstance(value, str):
        try:
            x = float(value.strip().replace("\u2212", "-"))
        except ValueError:
            return None
        return x if math.isfinite(x) else None
    return None


def as_date(value: object) -> dt.date | None:
    """A date from a date cell or ``YYYY-MM-DD`` text (a time of day is dropped).

    Examples
    --------
    >>> as_date("2025-03-03"), as_date("next monday")
    (datetime.date(2025, 3, 3), None)
    """
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value.strip()[:10])
        except ValueError:
            return None
    return None


def id_text(value: object) -> str:
    """IDs are text; a numeric cell 3 or 3.0 (or the text "3.0" of a CSV export) is ID "3".

    Examples
    --------
    >>> id_text(3.0), id_text("3.0"), id_text(" A3 ")
    ('3', '3', 'A3')
    """
    if isinstance(value, bool):
        return str(value).upper()
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, (dt.datetime, dt.date)):
        return value.isoformat()
    text = str(value).strip()
    if _INTEGRAL_TEXT.match(text):
        return text.split(".")[0]
    return text
