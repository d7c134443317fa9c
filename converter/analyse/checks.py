"""Schedule health checks: logic, estimates and structure of an activity network.

Each check counts offenders against a threshold and says why a reviewer should care.
``Check.activities`` lists offending activity IDs in sheet order; for checks on links
(leads, lags, link types, redundant links) it lists links as ``"PRED->SUCC"`` in link
order. ``Check.count`` is always ``len(Check.activities)``; ``Check.percent`` is the
count as a percentage of the check's base (activities or links), None where the check
is an absolute count or the base is empty.

The project start is the first activity in sheet order without predecessors; the
project end is the activity without successors that finishes last (early finish; on a
tie the last listed). Other activities without predecessors or successors are the
"open ends" the logic and structure checks report.

Logic thresholds: US Defense Contract Management Agency 14-Point Schedule Assessment
(thresholds from memory). Estimate and structure thresholds: common practice.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import networkx as nx
import numpy as np

from converter.analyse.network import CpmResult, Network, critical_tolerance
from converter.model import FF, FS, LINK_TYPES, SF, SS

LOGIC, ESTIMATES, STRUCTURE = "logic", "estimates", "structure"

DCMA = "US Defense Contract Management Agency 14-Point Schedule Assessment (thresholds from memory)"

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
    source: str
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


def _link_names(ids: list[str], net: Network, mask: np.ndarray) -> list[str]:
    return [f"{ids[p]}->{ids[s]}" for p, s in zip(net.pred[mask], net.succ[mask], strict=True)]


def _days_text(days_per_unit: float) -> str:
    if days_per_unit == 1.0:
        return f"{LONG_DAYS:g} working days"
    return f"{LONG_DAYS:g} working days (= {LONG_DAYS / days_per_unit:.4g} schedule units)"


#: Reachability is tracked for this many target nodes at a time (bounds memory).
_CHUNK = 4096


def redundant_links(net: Network) -> np.ndarray:
    """Mask of plain finish-to-start links (lag 0) implied by other links.

    A link A->C (FS, lag 0) says C starts no earlier than A finishes. It is redundant
    when other links already say so. With durations >= 0, track what each link
    bounds: FS (lag >= 0) bounds the successor's start by the predecessor's finish,
    SS its start by the predecessor's start, FF its finish by the predecessor's finish,
    SF its finish by the predecessor's start, and an activity's start bounds its own
    finish. On the graph of (activity, start|finish) nodes built from all links with
    lag >= 0, the link A->C is redundant when (C, start) is reachable from
    (A, finish) by a path of two or more edges, i.e. the edge is not in the graph's
    transitive reduction. A second copy of the same plain link, or a plain link beside
    an FS link with a positive lag between the same pair, is redundant too.
    Negative-lag links imply nothing here.

    Reachability is computed as bitsets over the targets, in reverse topological
    order, ``_CHUNK`` targets at a time: linear in nodes + edges per chunk.

    Parameters
    ----------
    net : Network
        The activity network (links with their types and lags).

    Returns
    -------
    numpy.ndarray of bool, shape (net.link_count,)
        True for each plain finish-to-start link that other links imply; other link
        types and lagged links are never marked.

    References
    ----------
    A. V. Aho, M. R. Garey and J. D. Ullman, "The transitive reduction of a directed
    graph", SIAM Journal on Computing 1(2), 131-137, 1972. The tests compare the result
    with ``networkx.transitive_reduction`` on plain finish-to-start networks.

    Examples
    --------
    A -> B -> C and A -> C: the direct link A -> C is implied by the chain.

    >>> from converter.analyse.network import build_network
    >>> net = build_network(3, pred=[0, 1, 0], succ=[1, 2, 2])
    >>> redundant_links(net).tolist()
    [False, False, True]

    With B -> C finish-to-finish, B bounds only C's finish, so A -> C is needed:

    >>> net = build_network(3, pred=[0, 1, 0], succ=[1, 2, 2], kind=[FS, FF, FS])
    >>> redundant_links(net).tolist()
    [False, False, False]
    """
    n, m = net.n, net.link_count
    out = np.zeros(m, dtype=bool)
    plain = (net.kind == FS) & (net.lag == 0)
    if not plain.any():
        return out
    # node 2i = start of activity i, 2i + 1 = its finish
    adj: list[set[int]] = [set() for _ in range(2 * n)]
    for i in range(n):
        adj[2 * i].add(2 * i + 1)  # a start bounds its own finish (duration >= 0)
    tail_end = {FS: 1, FF: 1, SS: 0, SF: 0}  # 1: the link starts from the predecessor's finish
    head_end = {FS: 0, SS: 0, FF: 1, SF: 1}  # 1: the link bounds the successor's finish
    lagged: set[tuple[int, int]] = set()
    links = zip(
        net.pred.tolist(), net.succ.tolist(), net.kind.tolist(), net.lag.tolist(), strict=True
    )
    for p, s, k, lag in links:
        if lag < 0:
            continue
        adj[2 * p + tail_end[k]].add(2 * s + head_end[k])
        if k == FS and lag > 0:
            lagged.add((p, s))
    judged: list[tuple[int, int, int]] = []  # (link, node of A's finish, node of C's start)
    seen: set[tuple[int, int]] = set()
    for j in np.flatnonzero(plain).tolist():
        p, s = int(net.pred[j]), int(net.succ[j])
        if (p, s) in seen or (p, s) in lagged:
            out[j] = True
        else:
            judged.append((j, 2 * p + 1, 2 * s))
        seen.add((p, s))
    targets = sorted({v for _, _, v in judged})
    order: list[int] = []
    for i in net.order[::-1].tolist():  # successors before predecessors; finish before start
        order += [2 * i + 1, 2 * i]
    for lo in range(0, len(targets), _CHUNK):
        bit = {v: 1 << b for b, v in enumerate(targets[lo : lo + _CHUNK])}
        reach = [0] * (2 * n)  # reach[u]: targets in this chunk reachable from u (u included)
        for u in order:
            r = bit.get(u, 0)
            for w in adj[u]:
                r |= reach[w]
            reach[u] = r
        for j, u, v in judged:
            b = bit.get(v)
            if b is not None and any(reach[w] & b for w in adj[u] if w != v):
                out[j] = True
    return out


def _logic_checks(
    ids: list[str], te: np.ndarray, net: Network, cpm: CpmResult, days_per_unit: float
) -> list[Check]:
    n, m = net.n, net.link_count
    start, end = project_ends(net, cpm)
    open_start = ~net.has_pred()
    open_end = ~net.has_succ()
    if start is not None:
        open_start[start] = False
    if end is not None:
        open_end[end] = False
    above = Above(LONG_DAYS, LONG_TOLERANCE, days_per_unit)
    type_counts = ", ".join(
        f"{name} {int(np.sum(net.kind == code))}" for code, name in enumerate(LINK_TYPES)
    )
    ends_text = (
        f"project start {ids[start] if start is not None else '-'}, "
        f"project end {ids[end] if end is not None else '-'}"
    )
    return [
        Check(
            key="missing_logic",
            name="missing predecessors or successors",
            group=LOGIC,
            limit=_share(5, "activities"),
            activities=[ids[i] for i in np.flatnonzero(open_start | open_end)],
            out_of=n,
            matters="An activity with an open start or finish can slip without moving "
            "anything after it, so the dates and floats around it understate the risk.",
            source=DCMA,
            detail=ends_text + " are not counted",
        ),
        Check(
            key="leads",
            name="leads (negative lags)",
            group=LOGIC,
            limit=_none("links"),
            activities=_link_names(ids, net, net.lag < 0),
            out_of=m,
            matters="A lead lets a successor start before its predecessor's work is done, "
            "which hides overlap assumptions and can squeeze the critical path.",
            source=DCMA,
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
            source=DCMA,
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
            source=DCMA,
            detail=type_counts,
        ),
        Check(
            key="high_float",
            name="high total float",
            group=LOGIC,
            limit=_share(5, "activities"),
            activities=[ids[i] for i in np.flatnonzero(above.offends(cpm.total_float))],
            out_of=n,
            matters="Very large float usually means missing successors, so the activity "
            "could slip a long way without the schedule showing any effect.",
            source=DCMA,
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
            source=DCMA,
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
            source="common practice, no published source: a three-point analysis needs "
            "ranges; milestones (O = M = P = 0) are not counted",
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
            source="definition of a three-point estimate: O <= M <= P (Malcolm et al. 1959)",
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
            source="common practice, no published source: flags guesswork; O = 0 with "
            "P > 0 counts as an unbounded spread",
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
    closed = "common practice: one start and one finish for a closed network"
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
            source=closed,
            detail=f"project start taken as {ids[start]} (first listed)"
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
            source=closed,
            detail=f"project end taken as {ids[end]} (latest early finish)"
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
            source="common practice: one connected network (weakly connected components, "
            "networkx)",
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
            source="common practice, no published source; only finish-to-start links "
            "without lag are judged",
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
