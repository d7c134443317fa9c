"""Schedule health checks: logic, estimates and structure of an activity network.

Each check counts offenders against a threshold and says why a reviewer should care.
``Check.activities`` lists offending activity IDs in sheet order; for checks on links
(leads, lags, link types, redundant links) it lists links as ``"PRED->SUCC"`` in link
order (``"PRED->SUCC [SS+2]"`` where a pair has more than one link, counted one by one:
:mod:`converter.analyse.ladders`). ``Check.count`` is ``len(Check.activities)``;
``Check.percent`` is the count as a percentage of the check's base (activities or links),
None where the check is an absolute count or the base is empty.

The project start is the first activity in sheet order without predecessors; the
project end is the activity without successors that finishes last (early finish; on a
tie the last listed). Other activities without predecessors or successors are the
"open ends" the logic and structure checks report.

Logic thresholds: the US Defense Contract Management Agency's 14-point schedule
assessment (:data:`DCMA`); why they matter: the US Government Accountability Office's
schedule assessment guide (:data:`GAO`). Estimate and structure thresholds: common
practice. Each check cites its sources as data (:attr:`Check.cited`); :data:`SOURCES`
lists every source once.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import networkx as nx
import numpy as np

from converter.analyse.ladders import link_names as _link_names
from converter.analyse.ladders import per_link_text
from converter.analyse.network import CpmResult, Network, critical_tolerance
from converter.analyse.redundant import redundant_links
from converter.model import FS, LINK_TYPES

LOGIC, ESTIMATES, STRUCTURE = "logic", "estimates", "structure"


@dataclass(frozen=True)
class Source:
    """A published source the checks cite: ``short`` in a table cell, ``full`` once below."""

    short: str
    full: str


# The DCMA citation and the check numbers below are from memory (not checked against the
# document here). The pamphlet's 14-point assessment gives, among its 14 checks: 1 logic,
# missing predecessors or successors <= 5% of incomplete tasks; 2 leads, 0; 3 lags <= 5%
# of links; 4 relationship types, finish-to-start >= 90%; 6 high float, total float over
# 44 working days <= 5%; 8 high duration, over 44 working days <= 5%. The GAO guide's
# best-practice numbers are from memory too.
DCMA = Source(
    "DCMA 2012",
    "US Defense Contract Management Agency (DCMA), Earned Value Management System (EVMS) "
    "Program Analysis Pamphlet (PAP), DCMA-EA PAM 200.1, October 2012: the 14-point "
    "schedule assessment.",
)
GAO = Source(
    "GAO 2015",
    "US Government Accountability Office (GAO), Schedule Assessment Guide: Best Practices "
    "for Project Schedules, GAO-16-89G, December 2015.",
)
MALCOLM = Source(
    "Malcolm et al. 1959",
    "D. G. Malcolm, J. H. Roseboom, C. E. Clark and W. Fazar, Application of a technique "
    "for research and development program evaluation, Operations Research 7(5), 1959.",
)
COMMON = Source("common practice", "Common practice of schedule review: no published source.")

#: Every source the checks cite, in the order a reader meets them.
SOURCES: tuple[Source, ...] = (DCMA, GAO, MALCOLM, COMMON)


@dataclass(frozen=True)
class Citation:
    """Where a check's threshold (``why=False``) or its reason (``why=True``) comes from."""

    source: Source
    where: str = ""  # the part of the source, e.g. "check 1 (logic)"
    why: bool = False

    @property
    def text(self) -> str:
        where = f", {self.where}" if self.where else ""
        return ("why: " if self.why else "") + self.source.short + where


SEQUENCING = "sequencing all activities"


def _dcma(check: int, name: str, best_practice: int, practice: str) -> tuple[Citation, ...]:
    return (
        Citation(DCMA, f"check {check} ({name})"),
        Citation(GAO, f"best practice {best_practice} ({practice})", why=True),
    )


#: DCMA "high float" and "high duration" limit, in working days.
LONG_DAYS = 44.0

#: A value within this many working days of :data:`LONG_DAYS` counts as equal to it: the
#: float tolerance's floor (``critical_tolerance`` of a zero-length project, 1e-9).
LONG_TOLERANCE = critical_tolerance(0.0)

#: Spread P/O above this flags a guessed range.
SPREAD_LIMIT = 10.0


@dataclass(frozen=True)
class Limit:
    """The most offenders a check allows.

    With ``share_of`` set, ``most`` is a percentage of that many activities or links;
    otherwise it is a count of offenders. ``unit`` names what a count counts;
    ``wording`` replaces the count's text where the limit reads better as what a clean
    network has ("1 connected group"); ``note`` follows a share in brackets.
    """

    most: float
    share_of: Literal["activities", "links"] | None = None
    unit: str = ""
    wording: str = ""
    note: str = ""

    @property
    def text(self) -> str:
        """How the limit reads on the Health check sheet and in the JSON."""
        if self.share_of is not None:
            note = f" ({self.note})" if self.note else ""
            return f"<= {self.most:g}% of {self.share_of}{note}"
        return self.wording or f"{self.most:g} {self.unit}"

    def allows(self, count: int, out_of: int | None) -> bool:
        """Whether ``count`` offenders (of ``out_of``) pass; exactly the share passes."""
        if self.share_of is None:
            return count <= self.most
        return count * 100 <= self.most * (out_of or 0)


@dataclass(frozen=True)
class Above:
    """An activity offends when a value of it exceeds ``days`` working days.

    ``tolerance`` (working days) absorbs float noise; ``days_per_unit`` converts the
    schedule's unit to working days (the sheet compares in schedule units).
    """

    days: float
    tolerance: float
    days_per_unit: float

    def offends(self, values: np.ndarray) -> np.ndarray:
        """Mask of ``values`` (in schedule units) above the limit."""
        return values * self.days_per_unit > self.days + self.tolerance


@dataclass
class Check:
    """One health check: what was counted, against which limit, and why it matters.

    ``key`` names the check for code (stable); ``name`` is its title for people.
    ``out_of`` is the number of activities or links the offenders are counted among
    (None where the check is an absolute count). ``above`` is the value limit of a
    check that judges a value per activity (high float, high duration).
    """

    key: str
    name: str
    group: str  # "logic" | "estimates" | "structure"
    limit: Limit
    activities: list[str]  # offending activity IDs, or "PRED->SUCC" for link checks
    out_of: int | None
    matters: str
    cited: tuple[Citation, ...]
    detail: str = ""  # extra facts for the reader (e.g. group sizes, which activity is the start)
    above: Above | None = field(default=None)

    @property
    def count(self) -> int:
        return len(self.activities)

    @property
    def percent(self) -> float | None:
        return 100.0 * self.count / self.out_of if self.out_of else None

    @property
    def passed(self) -> bool:
        return self.limit.allows(self.count, self.out_of)

    @property
    def threshold(self) -> str:
        return self.limit.text

    @property
    def source(self) -> str:
        """The citations as a table cell reads them."""
        return "; ".join(c.text for c in self.cited)


def _share(pct: float, of: Literal["activities", "links"], note: str = "") -> Limit:
    return Limit(pct, share_of=of, note=note)


def _none(unit: str = "", wording: str = "") -> Limit:
    return Limit(0, unit=unit, wording=wording)


def project_ends(net: Network, cpm: CpmResult) -> tuple[int | None, int | None]:
    """Index of the project start and the project end (see module docstring)."""
    starts = np.flatnonzero(~net.has_pred())
    ends = np.flatnonzero(~net.has_succ())
    start = int(starts[0]) if starts.size else None
    end = None
    if ends.size:
        ef = np.asarray(cpm.ef, dtype=float)[ends]
        latest = ends[ef >= ef.max() - critical_tolerance(float(ef.max()))]
        end = int(latest[-1])
    return start, end


def _days_text(days_per_unit: float) -> str:
    if days_per_unit == 1.0:
        return f"{LONG_DAYS:g} working days"
    return f"{LONG_DAYS:g} working days (= {LONG_DAYS / days_per_unit:.4g} schedule units)"


def _logic_checks(
    ids: list[str], te: np.ndarray, net: Network, cpm: CpmResult, days_per_unit: float
) -> list[Check]:
    return [
        _missing_logic(ids, net, cpm),
        *_link_checks(ids, net),
        *_long_checks(ids, te, cpm, days_per_unit),
    ]


def _missing_logic(ids: list[str], net: Network, cpm: CpmResult) -> Check:
    start, end = project_ends(net, cpm)
    open_start = ~net.has_pred()
    open_end = ~net.has_succ()
    if start is not None:
        open_start[start] = False
    if end is not None:
        open_end[end] = False
    ends_text = (
        f"project start {ids[start] if start is not None else '-'}, "
        f"project end {ids[end] if end is not None else '-'}"
    )
    return Check(
        key="missing_logic",
        name="missing predecessors or successors",
        group=LOGIC,
        limit=_share(5, "activities"),
        activities=[ids[i] for i in np.flatnonzero(open_start | open_end)],
        out_of=net.n,
        matters="An activity with an open start or finish can slip without moving "
        "anything after it, so the dates and floats around it understate the risk.",
        cited=_dcma(1, "logic", 2, SEQUENCING),
        detail=ends_text + " are not counted",
    )


def _link_checks(ids: list[str], net: Network) -> list[Check]:
    m = net.link_count
    per_link = per_link_text(net)
    type_counts = ", ".join(
        f"{name} {int(np.sum(net.kind == code))}" for code, name in enumerate(LINK_TYPES)
    ) + (f"; {per_link}" if per_link else "")
    return [
        Check(
            key="leads",
            name="leads (negative lags)",
            group=LOGIC,
            limit=_none("links"),
            activities=_link_names(ids, net, net.lag < 0),
            out_of=m,
            matters="A lead lets a successor start before its predecessor's work is done, "
            "which hides overlap assumptions and can squeeze the critical path.",
            cited=_dcma(2, "leads", 2, SEQUENCING),
            detail=per_link,
        ),
        Check(
            key="lags",
            name="lags (positive)",
            group=LOGIC,
            limit=_share(5, "links"),
            activities=_link_names(ids, net, net.lag > 0),
            out_of=m,
            matters="A lag is waiting time nobody is doing or estimating; it often hides "
            "work that should be an activity with its own range.",
            cited=_dcma(3, "lags", 2, SEQUENCING),
            detail=per_link,
        ),
        Check(
            key="link_types",
            name="links other than finish-to-start",
            group=LOGIC,
            limit=_share(10, "links", note="finish-to-start >= 90%"),
            activities=_link_names(ids, net, net.kind != FS),
            out_of=m,
            matters="Start-to-start, finish-to-finish and start-to-finish links make the "
            "critical path harder to follow and float harder to interpret.",
            cited=_dcma(4, "relationship types", 2, SEQUENCING),
            detail=type_counts,
        ),
    ]


def _long_checks(
    ids: list[str], te: np.ndarray, cpm: CpmResult, days_per_unit: float
) -> list[Check]:
    n = len(ids)
    above = Above(LONG_DAYS, LONG_TOLERANCE, days_per_unit)
    return [
        Check(
            key="high_float",
            name="high total float",
            group=LOGIC,
            limit=_share(5, "activities"),
            activities=[ids[i] for i in np.flatnonzero(above.offends(cpm.total_float))],
            out_of=n,
            matters="Very large float usually means missing successors, so the activity "
            "could slip a long way without the schedule showing any effect.",
            cited=_dcma(6, "high float", 7, "ensuring reasonable total float"),
            detail=f"total float > {_days_text(days_per_unit)}",
            above=above,
        ),
        Check(
            key="high_duration",
            name="high duration",
            group=LOGIC,
            limit=_share(5, "activities"),
            activities=[ids[i] for i in np.flatnonzero(above.offends(te))],
            out_of=n,
            matters="Long activities are hard to estimate and to track; breaking them down "
            "gives better ranges and earlier warning.",
            cited=_dcma(8, "high duration", 4, "establishing the durations of all activities"),
            detail=f"expected time (O + 4M + P) / 6 > {_days_text(days_per_unit)}",
            above=above,
        ),
    ]


def _estimate_checks(ids: list[str], o: np.ndarray, m: np.ndarray, p: np.ndarray) -> list[Check]:
    n = len(ids)
    fixed = (o == m) & (m == p) & ~((o == 0) & (m == 0) & (p == 0))
    outside = (m < o) | (m > p)
    with np.errstate(divide="ignore", invalid="ignore"):
        wide = np.where(o > 0, p / np.where(o > 0, o, 1.0) > SPREAD_LIMIT, p > 0)
    return [
        Check(
            key="fixed_durations",
            name="fixed durations (O = M = P)",
            group=ESTIMATES,
            limit=_share(10, "activities"),
            activities=[ids[i] for i in np.flatnonzero(fixed)],
            out_of=n,
            matters="An activity without a range adds no uncertainty, so the simulated "
            "spread of the finish is too narrow if its duration is really uncertain.",
            cited=(
                Citation(COMMON),
                Citation(GAO, "best practice 8 (conducting a schedule risk analysis)", why=True),
            ),
            detail="milestones (O = M = P = 0) are not counted",
        ),
        Check(
            key="most_likely_outside",
            name="most likely outside optimistic..pessimistic",
            group=ESTIMATES,
            limit=_none("activities"),
            activities=[ids[i] for i in np.flatnonzero(outside)],
            out_of=n,
            matters="A most likely value outside its own range means the estimate was "
            "entered wrongly and the PERT figures for it are meaningless.",
            cited=(Citation(MALCOLM, "three-point estimate O <= M <= P"),),
        ),
        Check(
            key="wide_spread",
            name=f"wide spread (P / O > {SPREAD_LIMIT:g})",
            group=ESTIMATES,
            limit=_share(5, "activities"),
            activities=[ids[i] for i in np.flatnonzero(wide)],
            out_of=n,
            matters="A pessimistic value more than ten times the optimistic one usually "
            "means the scope is unclear and the range is a guess.",
            cited=(Citation(COMMON),),
            detail="O = 0 with P > 0 counts as an unbounded spread",
        ),
    ]


def _structure_checks(ids: list[str], net: Network, cpm: CpmResult) -> list[Check]:
    n = net.n
    start, end = project_ends(net, cpm)
    no_pred = np.flatnonzero(~net.has_pred())
    no_succ = np.flatnonzero(~net.has_succ())

    g = nx.Graph()
    g.add_nodes_from(range(n))
    g.add_edges_from(zip(net.pred.tolist(), net.succ.tolist(), strict=True))
    groups = sorted(nx.connected_components(g), key=lambda c: (-len(c), min(c)))
    outside_main = sorted(i for c in groups[1:] for i in c)
    sizes = ", ".join(str(len(c)) for c in groups)
    closed = (
        Citation(COMMON, "one start and one finish"),
        Citation(GAO, f"best practice 2 ({SEQUENCING})", why=True),
    )
    return [
        Check(
            key="extra_starts",
            name="more than one start activity",
            group=STRUCTURE,
            limit=_none(wording="1 activity without predecessors"),
            activities=[ids[i] for i in no_pred if i != start],
            out_of=None,
            matters="Each extra start is an activity whose early dates nothing drives; the "
            "project start should be a single activity or milestone.",
            cited=closed,
            detail=f"project start taken as {ids[start]}, the first listed"
            if start is not None
            else "",
        ),
        Check(
            key="extra_ends",
            name="more than one end activity",
            group=STRUCTURE,
            limit=_none(wording="1 activity without successors"),
            activities=[ids[i] for i in no_succ if i != end],
            out_of=None,
            matters="Each extra end is work whose lateness the project finish never sees.",
            cited=closed,
            detail=f"project end taken as {ids[end]}, the latest early finish"
            if end is not None
            else "",
        ),
        Check(
            key="disconnected",
            name="disconnected groups",
            group=STRUCTURE,
            limit=_none(wording="1 connected group"),
            activities=[ids[i] for i in outside_main],
            out_of=n,
            matters="Activities not linked to the main network cannot affect its finish, "
            "so their risk is missing from the analysis.",
            cited=(
                Citation(COMMON, "one connected network"),
                Citation(GAO, "best practice 5 (horizontal traceability)", why=True),
            ),
            detail=f"{len(groups)} group(s) of sizes {sizes}; activities outside the largest "
            "are listed"
            if groups
            else "",
        ),
        Check(
            key="redundant_links",
            name="redundant links",
            group=STRUCTURE,
            limit=_share(5, "links"),
            activities=_link_names(ids, net, redundant_links(net)),
            out_of=net.link_count,
            matters="A link implied by another path adds nothing today but keeps a "
            "dependency alive after the path changes, which confuses later edits.",
            cited=(Citation(COMMON),),
            detail="only finish-to-start links without lag are judged",
        ),
    ]


def run_checks(
    ids: list[str],
    optimistic,
    most_likely,
    pessimistic,
    net: Network,
    cpm: CpmResult,
    days_per_unit: float = 1.0,
) -> list[Check]:
    """All health checks, in the order logic, estimates, structure.

    Estimates are in the schedule's time unit; ``days_per_unit`` converts them (and
    floats) to working days for the 44-working-day limits (see
    :attr:`converter.analyse.calendar.Calendar.days_per_unit`). The PERT expected time
    (O + 4M + P) / 6 (Malcolm et al. 1959) is the duration judged by "high duration".
    """
    o = np.asarray(optimistic, dtype=float).reshape(-1)
    m = np.asarray(most_likely, dtype=float).reshape(-1)
    p = np.asarray(pessimistic, dtype=float).reshape(-1)
    if not (len(ids) == net.n == o.size == m.size == p.size):
        raise ValueError("ids, estimates and network must have one entry per activity")
    te = (o + 4.0 * m + p) / 6.0
    return (
        _logic_checks(ids, te, net, cpm, days_per_unit)
        + _estimate_checks(ids, o, m, p)
        + _structure_checks(ids, net, cpm)
    )
