"""The risk register: one Risk per row, every problem with its cell.

A register row names a risk, its probability (0-1, or a percentage: ``30%``, or a number
above 1 read as percent; in (0, 1]), its impact (``Impact low/likely/high``, or one
``Impact`` for a fixed impact), in the schedule's time unit (units as for durations:
``3d``, ``16h``) or with ``%`` as a share of each hit activity's sampled duration, and
the activities it hits. Optional: mitigated probability and impacts, a group (risks of
one group occur together, so they must share their probability). A row whose Risk ID
starts with ``Example`` is skipped (the template's example row).
"""

from __future__ import annotations

import re

from converter.model import RISK_EXAMPLE_PREFIX as EXAMPLE_PREFIX
from converter.model import Risk, Settings
from converter.read.extent import CellError
from converter.read.sheets import TableMatch, cell_name
from converter.validate.problems import Collector
from converter.values import (
    LARGEST_DURATION,
    id_text,
    is_blank,
    parse_duration,
    parse_number,
    shown,
)

__all__ = ["EXAMPLE_PREFIX", "parse_probability", "read_risks"]

_SEPARATORS = re.compile(r"[,;]")

_IMPACTS = ("low", "likely", "high")


def parse_probability(value: object) -> float:
    """A probability cell: 0-1, ``30%``, or a number above 1 read as a percentage.

    Raises ValueError (message starting with the value as shown) outside (0, 1].

    Examples
    --------
    >>> parse_probability(0.3), parse_probability("30%"), parse_probability(30)
    (0.3, 0.3, 0.3)
    """
    x = parse_number(value, percent=True)
    if x > 1 and not (isinstance(value, str) and value.strip().endswith("%")):
        x /= 100.0
    if not 0.0 < x <= 1.0:
        raise ValueError(f"{shown(value)} is not a probability in (0, 1] (0% < p <= 100%)")
    return x


class _Row:
    """One register row being read: its cells and where the problems go."""

    def __init__(self, match: TableMatch, r: int, settings: Settings, out: Collector):
        self.row = match.sheet.rows[r]
        self.cols, self.r, self.sheet = match.columns, r, match.sheet.name
        self.settings, self.out, self.ok = settings, out, True
        self.ident: str | None = None

    def value(self, key: str) -> object:
        c = self.cols.get(key)
        return self.row[c] if c is not None and c < len(self.row) else None

    def cell(self, key: str) -> str:
        return cell_name(self.r, self.cols[key])

    def error(self, code: str, key: str, message: str, fix: str) -> None:
        self.ok = False
        self.out.error(code, message, self.sheet, self.cell(key), self.ident, fix, "risk")

    def blank(self) -> bool:
        return all(is_blank(self.value(k)) for k in self.cols)

    def probability(self, key: str) -> float | None:
        v = self.value(key)
        if is_blank(v) or isinstance(v, CellError):
            if key == "probability":
                self.error("risk-probability", key, "the probability is blank", _P_FIX)
            return None
        try:
            return parse_probability(v)
        except ValueError as exc:
            self.error("risk-probability", key, f"probability {exc}", _P_FIX)
            return None

    def impact(self, key: str) -> tuple[float, bool] | None:
        """(value, is a percentage) of one impact cell; None when blank or bad."""
        v = self.value(key)
        if is_blank(v) or isinstance(v, CellError):
            return None
        try:
            if isinstance(v, str) and v.strip().endswith("%"):
                x, pct = parse_number(v, percent=True), True
            else:
                s = self.settings
                x, pct = parse_duration(v, s.time_unit, s.hours_per_day), False
        except ValueError as exc:
            self.error("risk-impact", key, f"impact {exc}", _I_FIX)
            return None
        if x < 0 or x > LARGEST_DURATION:
            self.error("risk-impact", key, f"impact {shown(v)} is out of range", _I_FIX)
            return None
        return x, pct

    def impacts(self, prefix: str, fixed: str) -> tuple[float, float, float, bool] | None:
        """(low, likely, high, percent) from the three columns or the one fixed column."""
        keys = [f"{prefix}_{k}" for k in _IMPACTS]
        got = {k: self.impact(k) for k in keys if k in self.cols}
        got = {k: v for k, v in got.items() if v is not None}
        if not got and fixed in self.cols:
            one = self.impact(fixed)
            return None if one is None else (one[0], one[0], one[0], one[1])
        if not got:
            return None
        if len({pct for _, pct in got.values()}) > 1:
            key = next(k for k, v in got.items() if v[1] != got[next(iter(got))][1])
            self.error(
                "risk-impact-mixed",
                key,
                "a percentage impact is mixed with an impact in time units on one row",
                "Write all impacts of the row with % or all in time units.",
            )
            return None
        pct = next(iter(got.values()))[1]
        likely = got.get(keys[1])
        if likely is None:
            missing = keys[1] if keys[1] in self.cols else next(iter(got))
            self.error("risk-impact", missing, "the likely impact is blank", _I_FIX)
            return None
        low = got.get(keys[0], (likely[0], pct))[0]
        high = got.get(keys[2], (likely[0], pct))[0]
        if not low <= likely[0] <= high:
            bad = keys[0] if low > likely[0] else keys[2]
            self.error(
                "risk-impact-order",
                bad,
                f"impacts low {shown(low)}, likely "
                f"{shown(likely[0])}, high {shown(high)} are not in order (need "
                "low <= likely <= high)",
                "Check the order of the three impacts.",
            )
            return None
        return low, likely[0], high, pct


_P_FIX = "Type a probability above 0 and at most 1 (or a percentage such as 30%)."
_I_FIX = "Type the delay in time units (3, 3d, 16h) or as a share of the duration (10%)."


def _activities(row: _Row, known: set[str]) -> tuple[str, ...]:
    v = row.value("activities")
    if "activities" not in row.cols or is_blank(v) or isinstance(v, CellError):
        key = "activities" if "activities" in row.cols else "id"
        row.error(
            "risk-no-activities",
            key,
            "the risk names no activities it hits",
            "List the IDs of the activities the risk hits, separated by commas.",
        )
        return ()
    tokens = [id_text(t) for t in _SEPARATORS.split(v)] if isinstance(v, str) else [id_text(v)]
    tokens = [t for t in tokens if t]
    unknown = [t for t in tokens if t not in known]
    if unknown:
        row.error(
            "risk-unknown-activity",
            "activities",
            "unknown activity ID"
            f"{'s' if len(unknown) > 1 else ''} {', '.join(map(shown, unknown))}",
            "Use the IDs of the activity sheet.",
        )
    return tuple(dict.fromkeys(tokens))


def _risk(row: _Row, known: set[str]) -> Risk | None:
    p = row.probability("probability")
    impact = row.impacts("impact", "impact")
    if impact is None and row.ok:
        key = next((k for k in ("impact_likely", "impact") if k in row.cols), "id")
        row.error("risk-impact", key, "the risk has no impact", _I_FIX)
    acts = _activities(row, known)
    mp = row.probability("mitigated_probability") if "mitigated_probability" in row.cols else None
    mitigated = row.impacts("mitigated", "mitigated_impact")
    if mitigated is not None and impact is not None and mitigated[3] != impact[3]:
        key = next(k for k in ("mitigated_likely", "mitigated_impact") if k in row.cols)
        row.error(
            "risk-impact-mixed",
            key,
            "the mitigated impact is a percentage and the impact is not, or the other way round",
            "Write both the same way.",
        )
    group = row.value("group")
    if not row.ok or p is None or impact is None:
        return None
    low, likely, high, pct = impact
    m = mitigated or (None, None, None, pct)
    return Risk(
        row.ident,
        _text(row.value("description")),
        p,
        low,
        likely,
        high,
        acts,
        pct,
        None if is_blank(group) else id_text(group),
        row.r + 1,
        mp,
        m[0],
        m[1],
        m[2],
    )


def _text(v: object) -> str:
    return "" if is_blank(v) or isinstance(v, CellError) else str(v).strip()


def read_risks(
    match: TableMatch, settings: Settings, known: set[str], out: Collector
) -> list[Risk]:
    """Every risk of the register; problems (each with its cell) go to ``out``.

    Examples
    --------
    >>> from converter.read.sheets import SheetData, match_header
    >>> from converter.read.risks import RISK_ALIASES
    >>> rows = [["Risk", "Probability", "Impact", "Activities"], ["R1", "30%", "2d", "A; B"]]
    >>> match = match_header(SheetData("Risks", rows), RISK_ALIASES)
    >>> out = Collector()
    >>> r = read_risks(match, Settings(), {"A", "B"}, out)[0]
    >>> r.probability, r.likely, r.activities, out.problems
    (0.3, 2.0, ('A', 'B'), [])
    """
    risks: list[Risk] = []
    seen: dict[str, str] = {}
    for r in range(match.header_row + 1, len(match.sheet.rows)):
        row = _Row(match, r, settings, out)
        if row.blank():
            continue
        v = row.value("id")
        if is_blank(v) or isinstance(v, CellError):
            row.error("risk-blank-id", "id", "the risk has no ID", "Give every risk an ID.")
            continue
        row.ident = id_text(v)
        if row.ident.lower().startswith(EXAMPLE_PREFIX.lower()):
            continue  # the template's example row
        if row.ident in seen:
            row.error(
                "risk-duplicate-id",
                "id",
                f"risk ID {shown(row.ident)} is also on {seen[row.ident]}",
                "Give every risk its own ID.",
            )
            continue
        seen[row.ident] = row.cell("id")
        risk = _risk(row, known)
        if risk is not None:
            risks.append(risk)
    _check_groups(risks, match, out)
    return risks


def _check_groups(risks: list[Risk], match: TableMatch, out: Collector) -> None:
    """Risks of one group occur together: they must share their probabilities."""
    first: dict[str, Risk] = {}
    col = match.columns.get("probability", match.columns["id"])
    for risk in risks:
        if risk.group is None:
            continue
        head = first.setdefault(risk.group, risk)
        same = (head.probability, head.mitigated_probability) == (
            risk.probability,
            risk.mitigated_probability,
        )
        if not same:
            out.error(
                "risk-group-probability",
                f"risk {risk.id} is in group "
                f"{shown(risk.group)} with risk {head.id} but has another probability; "
                "risks of one group occur together",
                match.sheet.name,
                cell_name(risk.row - 1, col),
                risk.id,
                "Give the risks of one group the same probability (and mitigated probability).",
                "risk",
            )
