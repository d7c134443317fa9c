"""The cell-value rules (converter.values) and the calendar bound (converter.validate.bounds).

Outside references: Python's ``float`` (what a plain decimal number means where it is
accepted), the ``datetime`` module, numpy's business-day functions (``busday_offset``)
for the calendar-day bound, scipy.stats.norm for the normal quantiles, and the CPM
passes of converter.analyse.network (themselves checked against networkx in
tests/analyse/test_network.py) for the longest-path bound.
"""

from __future__ import annotations

import datetime as dt
import math
import re

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import norm

from converter.analyse.network import build_network, forward_pass
from converter.model import FF, FS, SF, SS, Settings
from converter.options import parse_due, parse_start_date
from converter.validate.bounds import TABLE_SPREAD, calendar_days_for, spread_allowance
from converter.validate.links import _bracket, parse_link_token
from converter.values import as_date, as_number, id_text, normalise, parse_number, shown

D = dt.date


# --------------------------------------------------------------------------- numbers
@pytest.mark.parametrize(
    "text", ["0", "-0", "2.5", "+4", "4.", ".5", "1e3", "1E-3", "-2.5e+2", " 7 ", "007", "1" * 300]
)
def test_plain_numbers_read_as_python_float_does(text):
    # Reference: Python's float() on the same text.
    assert parse_number(text) == float(text)


@pytest.mark.parametrize(
    "text",
    [
        "1_0",
        "nan",
        "NaN",
        "inf",
        "-Infinity",
        "1,5",
        "1 000",
        "0x10",
        "\uff11",
        "\u0661\u0662",
        "1e",
        "e3",
        "--1",
        ".",
        "",
        "+",
        "1.2.3",
        "5 days",
        "1e3.5",
    ],
)
def test_everything_else_is_not_a_plain_number(text):
    # Python's float() accepts several of these ("1_0", "nan", "inf", "\uff11"); we do not.
    with pytest.raises(ValueError, match="not a plain number"):
        parse_number(text)
    assert as_number(text) is None


def test_numbers_too_large_for_a_float_are_named_so():
    # Reference: float("1e400") is inf and float(10**400) raises OverflowError (Python).
    assert math.isinf(float("1e400"))
    for value in ("1e400", "9" * 400, 10**400):
        with pytest.raises(ValueError, match="too large"):
            parse_number(value)
    for value in (float("inf"), float("nan")):
        with pytest.raises(ValueError, match="not a finite number"):
            parse_number(value)


def test_percent_only_where_allowed():
    assert parse_number("25%", percent=True) == 0.25
    assert parse_number("\u221250 %", percent=True) == -0.5
    with pytest.raises(ValueError):
        parse_number("25%")
    with pytest.raises(ValueError):
        parse_number("2_5%", percent=True)


@pytest.mark.parametrize(
    "value, kind",
    [
        (True, "true/false"),
        (D(2024, 3, 1), "date"),
        (dt.datetime(2024, 3, 1, 9), "date"),
        (dt.time(9, 30), "time"),
        (dt.timedelta(hours=2), "time"),
    ],
)
def test_non_numbers_say_what_they_are(value, kind):
    with pytest.raises(ValueError, match=f"is a {kind}"):
        parse_number(value)


# --------------------------------------------------------------------------- shown
@pytest.mark.parametrize(
    "value, text",
    [
        (D(2024, 3, 1), "2024-03-01"),
        (dt.datetime(2024, 3, 1), "2024-03-01"),
        (dt.datetime(2024, 3, 1, 10, 30), "2024-03-01 10:30"),
        (dt.datetime(2024, 3, 1, 10, 30, 5), "2024-03-01 10:30:05"),
        (dt.time(7, 5), "07:05"),
        (3.0, "3"),
        (2.5, "2.5"),
        (1e155, "1e+155"),
        (True, "TRUE"),
        ("abc", '"abc"'),
    ],
)
def test_values_are_shown_as_typed(value, text):
    assert shown(value) == text


def test_long_text_is_cut_short_in_messages():
    text = shown("9" * 400)
    assert len(text) < 100 and "400 characters" in text


# --------------------------------------------------------------------------- dates
@pytest.mark.parametrize(
    "text, date",
    [
        ("2025-03-03", D(2025, 3, 3)),
        (" 2025-03-03 ", D(2025, 3, 3)),
        ("2025-03-03 09:30", D(2025, 3, 3)),
        ("2025-03-03T09:30:00", D(2025, 3, 3)),
        ("20250303", None),
        ("2025-03-03x", None),
        ("2025-W10-1", None),
        ("2025-02-30", None),
        ("next monday", None),
    ],
)
def test_dates_in_text(text, date):
    # Python's date.fromisoformat (3.11) also reads "20250303" and "2025-W10-1"; only the
    # YYYY-MM-DD form (with an optional time of day) is a date here.
    assert as_date(text) == date


def test_date_limits_and_nan_due():
    assert parse_start_date("1900-03-01") == D(1900, 3, 1)
    assert parse_start_date(D(9999, 12, 31)) == D(9999, 12, 31)
    with pytest.raises(ValueError, match="1900-03-01"):
        parse_start_date("1900-02-28")
    with pytest.raises(ValueError):
        parse_due(float("nan"))  # given, not blank: silently ignoring it would be wrong
    assert parse_due(1e7) == 1e7
    with pytest.raises(ValueError, match="10,000,000"):
        parse_due(1e7 + 1)


# --------------------------------------------------------------------------- IDs
@pytest.mark.parametrize(
    "a, b",
    [
        (1.0, "1.0"),
        (1, "1.00"),
        (3.0, 3),
        ("0.0", 0.0),
        (dt.datetime(2024, 1, 2, 10, 30), "2024-01-02T10:30:00"),
        (dt.datetime(2024, 1, 2, 10, 30), "2024-01-02 10:30:00"),
        (D(2024, 1, 2), "2024-01-02"),
        (D(2024, 1, 2), dt.datetime(2024, 1, 2)),
        (dt.time(9, 30), "9:30"),
        (dt.time(9, 30), "09:30:00"),
    ],
)
def test_the_same_id_typed_differently_is_one_id(a, b):
    assert id_text(a) == id_text(b)


@pytest.mark.parametrize(
    "a, b",
    [("1.10", "1.1"), ("01", "1"), ("A1", "a1"), ("1e2", 100.0), ("2024-01-02", "2024-01-03")],
)
def test_different_ids_stay_different(a, b):
    assert id_text(a) != id_text(b)


# --------------------------------------------------------------------------- the bound
@pytest.mark.parametrize(
    "working_days", [(0, 1, 2, 3, 4), (0, 1, 2, 3, 4, 5), (2,), (6, 0, 1, 2, 3)]
)
@pytest.mark.parametrize("unit", ["working days", "weeks", "calendar days"])
def test_calendar_days_bound_against_numpy(working_days, unit):
    # Reference: numpy.busday_offset gives the working day n (from 0) after the start;
    # the dates of offset x (start: floor, finish: ceil - 1 steps) must lie within the
    # bound, with holidays crowded into the first weeks.
    start = D(2025, 3, 1)
    mask = "".join("1" if i in working_days else "0" for i in range(7))
    holidays = tuple(start + dt.timedelta(days=k) for k in range(0, 60, 3))
    s = Settings(start_date=start, time_unit=unit, working_days=working_days, holidays=holidays)
    per_unit = len(working_days) if unit == "weeks" else 1
    for x in np.concatenate([np.linspace(0, 400, 97), [0.5, 1, 7, 1e-9]]):
        days = calendar_days_for(float(x), s)
        if unit == "calendar days":
            assert math.ceil(x) <= days
            continue
        steps = math.ceil(round(x * per_unit, 9))
        last = np.busday_offset(
            np.datetime64(start),
            steps,
            roll="forward",
            weekmask=mask,
            holidays=np.array(holidays, dtype="datetime64[D]"),
        )
        assert (last.astype(dt.date) - start).days <= days, x


def test_spread_allowance_against_scipy():
    # Reference: scipy.stats.norm.ppf. The fixed tables reach P1..P99 (z = 2.33) plus one
    # rounding step; any confidence level asked for is covered, however extreme.
    assert TABLE_SPREAD >= norm.ppf(0.99) * (1 + 2 / 25) + 1e-9
    for levels in [
        (0.5, 0.8, 0.9, 0.95),
        (1e-300,),
        (float(np.nextafter(1.0, 0.0)),),
        (5e-324, 0.5),
    ]:
        want = max(TABLE_SPREAD, *(abs(norm.ppf(c)) for c in levels))
        assert spread_allowance(levels) == pytest.approx(want, rel=1e-12)


@st.composite
def typed_network(draw):
    n = draw(st.integers(1, 12))
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n)]
    chosen = draw(st.lists(st.sampled_from(pairs), unique=True, max_size=25)) if pairs else []
    d = draw(st.lists(st.floats(0, 50, allow_nan=False), min_size=n, max_size=n))
    kinds = [draw(st.sampled_from([FS, SS, FF, SF])) for _ in chosen]
    lags = [draw(st.floats(-30, 30, allow_nan=False)) for _ in chosen]
    return n, [i for i, _ in chosen], [j for _, j in chosen], kinds, lags, np.array(d)


@settings(max_examples=200, deadline=None)
@given(typed_network())
def test_no_finish_exceeds_the_sum_of_durations_and_positive_lags(case):
    # The bound validation uses: every early finish <= sum of durations + positive lags.
    n, pred, succ, kinds, lags, d = case
    _, ef = forward_pass(build_network(n, pred, succ, kinds, lags), d)
    bound = float(d.sum()) + sum(max(lag, 0.0) for lag in lags)
    assert float(ef.max()) <= bound * (1 + 1e-12) + 1e-9


# --------------------------------------------------------------------------- long cells
_OLD_BRACKET = re.compile(r"^(?P<id>.*?)\s*\[(?P<spec>[^\[\]]*)\]$")
_OLD_UNIT = re.compile(r"\s*\([^)]*\)\s*$")


@settings(max_examples=500, deadline=None)
@given(st.text(alphabet="A1 []S+-(),", max_size=14))
def test_string_scans_read_as_the_regular_expressions_did(text):
    # Reference: the regular expressions these scans replace (they took quadratic time on
    # a long cell of spaces or brackets). Same result on any short text.
    token = text.strip()
    m = _OLD_BRACKET.match(token)
    want = None if m is None else (m.group("id").strip(), m.group("spec").strip())
    assert _bracket(token) == want
    lowered = text.strip().lower()
    assert normalise(text) == re.sub(r"[\s_.\-]+", "", _OLD_UNIT.sub("", lowered))


def test_a_million_character_cell_is_read_in_one_pass():
    # No time is measured: a quadratic scan of these would not finish (10^12 steps).
    big = 1_000_000
    assert parse_link_token("A" + " " * big + "x]") == ("A" + " " * big + "x]", "FS", 0.0)
    assert normalise("(" * big + ")") == ""
    assert id_text(" " * big + "B") == "B"
    with pytest.raises(ValueError):
        parse_number("1" * big + "x")
