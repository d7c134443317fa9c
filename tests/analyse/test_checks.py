"""Tests for converter.analyse.checks: each check failed exactly once by a network built for it.

Outside references: the thresholds of the US Defense Contract Management Agency
14-Point Schedule Assessment (from memory: missing logic <= 5%, leads 0, lags <= 5%,
finish-to-start >= 90%, high float and high duration > 44 working days <= 5%);
networkx (transitive_reduction on a plain finish-to-start graph, connected
components) as an independent reference for the structure checks; and the defining
property of a redundant link (removing it changes no early or late date, checked with
the CPM passes for random durations). Estimate thresholds are common practice.
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest

from converter.analyse.checks import (
    DCMA,
    GAO,
    SOURCES,
    Above,
    Check,
    Limit,
    redundant_links,
    run_checks,
)
from converter.analyse.network import build_network, schedule
from converter.model import FF, FS, SF, SS


def _run(ids, links, est=None, days_per_unit=1.0):
    """links: (pred, succ) or (pred, succ, kind, lag); est: {id: (O, M, P)}, default (2, 3, 5)."""
    index = {a: i for i, a in enumerate(ids)}
    full = [lk if len(lk) == 4 else (*lk, FS, 0.0) for lk in links]
    net = build_network(
        len(ids),
        [index[p] for p, *_ in full],
        [index[s] for _, s, *_ in full],
        [k for *_, k, _ in full],
        [lag for *_, lag in full],
    )
    est = est or {}
    o, m, p = (np.array([est.get(a, (2.0, 3.0, 5.0))[j] for a in ids]) for j in range(3))
    cpm = schedule(net, (o + 4 * m + p) / 6)
    return {c.name: c for c in run_checks(ids, o, m, p, net, cpm, days_per_unit)}


def _chain(n, prefix="A"):
    ids = [f"{prefix}{i}" for i in range(n)]
    return ids, [(ids[i], ids[i + 1]) for i in range(n - 1)]


def _failures(checks: dict[str, Check]) -> list[str]:
    return [name for name, c in checks.items() if not c.passed]


def test_clean_network_passes_everything():
    # A start, two parallel strands of 9, an end: 20 activities, 20 FS links without lag.
    ids = ["S"] + [f"P{i}" for i in range(9)] + [f"Q{i}" for i in range(9)] + ["E"]
    links = [("S", "P0"), ("S", "Q0"), ("P8", "E"), ("Q8", "E")]
    links += [(f"P{i}", f"P{i + 1}") for i in range(8)] + [(f"Q{i}", f"Q{i + 1}") for i in range(8)]
    checks = _run(ids, links, {"S": (0, 0, 0), "E": (0, 0, 0)})
    assert _failures(checks) == []
    assert all(c.count == 0 and c.activities == [] for c in checks.values())
    assert {c.group for c in checks.values()} == {"logic", "estimates", "structure"}
    for c in checks.values():
        assert c.matters and c.source and c.threshold


def test_counts_match_offender_lists():
    ids, links = _chain(6)
    links += [("A0", "A2", SS, -1.0), ("A1", "A3", FS, 2.0)]
    for c in _run(ids, links).values():
        assert c.count == len(c.activities)


# ------------------------------------------------------------------------- logic


def test_missing_successor_counted_once():
    # S -> A -> E and S -> B: B has no successor; E (latest finish) is the project end.
    checks = _run(["S", "A", "B", "E"], [("S", "A"), ("A", "E"), ("S", "B")], {"B": (1, 1, 2)})
    c = checks["missing predecessors or successors"]
    assert (c.count, c.activities) == (1, ["B"])
    assert c.percent == pytest.approx(25.0)  # 1 of 4 activities
    assert not c.passed
    # the threshold's source is the published DCMA pamphlet, cited in full once
    assert c.cited[0].source is DCMA and c.cited[0].where == "check 1 (logic)"
    assert "Defense Contract Management Agency" in DCMA.full
    assert "DCMA-EA PAM 200.1" in DCMA.full and "October 2012" in DCMA.full
    assert (
        c.source == "DCMA 2012, check 1 (logic); why: GAO 2015, best practice 2 "
        "(sequencing all activities)"
    )


def test_missing_predecessor_counted_once():
    # S -> A -> E and X -> E: X is a second start; S is listed first, so X is counted.
    c = _run(["S", "A", "X", "E"], [("S", "A"), ("A", "E"), ("X", "E")])[
        "missing predecessors or successors"
    ]
    assert c.activities == ["X"]


def test_isolated_activity_counted_once():
    # An activity with no links at all is one offender, not two.
    ids, links = _chain(5)
    c = _run(ids + ["Z"], links, {"Z": (1, 1, 2)})["missing predecessors or successors"]
    assert c.activities == ["Z"]


def test_missing_logic_five_percent_boundary():
    # 20 activities, one open end: 5% exactly passes (DCMA: <= 5%); 19 activities: 5.26% fails.
    ids, links = _chain(19)
    c = _run(ids + ["Z"], links + [("A0", "Z")], {"Z": (1, 1, 2)})[
        "missing predecessors or successors"
    ]
    assert c.activities == ["Z"] and c.percent == pytest.approx(5.0) and c.passed
    ids, links = _chain(18)
    c = _run(ids + ["Z"], links + [("A0", "Z")], {"Z": (1, 1, 2)})[
        "missing predecessors or successors"
    ]
    assert c.percent == pytest.approx(100 / 19) and not c.passed


def test_lead():
    ids, links = _chain(4)
    links[1] = ("A1", "A2", FS, -1.0)
    c = _run(ids, links)["leads (negative lags)"]
    assert (c.count, c.activities, c.passed) == (1, ["A1->A2"], False)
    assert c.percent == pytest.approx(100 / 3)  # 1 of 3 links


def test_lag_boundary():
    # 20 links, one with a positive lag: 5% passes; 10 links: 10% fails.
    ids, links = _chain(21)
    links[7] = ("A7", "A8", FS, 2.0)
    c = _run(ids, links)["lags (positive)"]
    assert (c.activities, c.percent, c.passed) == (["A7->A8"], pytest.approx(5.0), True)
    ids, links = _chain(11)
    links[3] = ("A3", "A4", FS, 2.0)
    c = _run(ids, links)["lags (positive)"]
    assert (c.count, c.activities, c.passed) == (1, ["A3->A4"], False)
    assert c.percent == pytest.approx(10.0)


def test_link_types_boundary():
    # 10 links, one start-to-start: finish-to-start share 90% passes (DCMA: >= 90%);
    # 5 links, one finish-to-finish: 80% fails.
    ids, links = _chain(11)
    links[4] = ("A4", "A5", SS, 0.0)
    c = _run(ids, links)["links other than finish-to-start"]
    assert (c.activities, c.percent, c.passed) == (["A4->A5"], pytest.approx(10.0), True)
    ids, links = _chain(6)
    links[2] = ("A2", "A3", FF, 0.0)
    c = _run(ids, links)["links other than finish-to-start"]
    assert (c.count, c.activities, c.passed) == (1, ["A2->A3"], False)
    assert c.percent == pytest.approx(20.0)


def _float_network(side_te, main_te=100.0):
    # S -> M -> E with M long, S -> X -> E with X short: X's total float = main - side.
    ids = ["S", "M", "X", "E"]
    links = [("S", "M"), ("M", "E"), ("S", "X"), ("X", "E")]
    est = {"S": (0, 0, 0), "E": (0, 0, 0), "M": (main_te,) * 3, "X": (side_te,) * 3}
    return ids, links, est


def test_high_float():
    ids, links, est = _float_network(side_te=50.0, main_te=94.0)  # float of X = 44: not high
    assert _run(ids, links, est)["high total float"].count == 0
    ids, links, est = _float_network(side_te=50.0, main_te=95.0)  # float of X = 45 > 44
    c = _run(ids, links, est)["high total float"]
    assert (c.count, c.activities, c.passed) == (1, ["X"], False)
    assert c.percent == pytest.approx(25.0)


def test_high_float_in_weeks():
    # Weeks of 5 working days: 44 working days = 8.8 weeks. Float 9 weeks is high,
    # 8.8 weeks is not.
    ids, links, est = _float_network(side_te=1.0, main_te=10.0)
    assert _run(ids, links, est, days_per_unit=5.0)["high total float"].activities == ["X"]
    ids, links, est = _float_network(side_te=1.2, main_te=10.0)
    assert _run(ids, links, est, days_per_unit=5.0)["high total float"].count == 0
    # the same network in working days has no high float at all
    assert _run(ids, links, est, days_per_unit=1.0)["high total float"].count == 0


def test_high_duration():
    # TE = (40 + 4*45 + 50) / 6 = 45 > 44 (PERT expected time, Malcolm et al. 1959);
    # TE = (40 + 4*44 + 48) / 6 = 44 is not above the limit.
    ids, links = _chain(4)
    checks = _run(ids, links, {"A1": (40, 45, 50), "A2": (40, 44, 48)})
    c = checks["high duration"]
    assert (c.count, c.activities, c.passed) == (1, ["A1"], False)
    assert c.percent == pytest.approx(25.0)
    # in weeks of five days the 9-week activity A1 (45 days) is long, 8.8 weeks is not
    c = _run(ids, links, {"A1": (9, 9, 9), "A2": (8.8, 8.8, 8.8)}, days_per_unit=5.0)[
        "high duration"
    ]
    assert c.activities == ["A1"]


# --------------------------------------------------------------------- estimates


def test_fixed_duration_counted_milestones_not():
    ids, links = _chain(5)
    checks = _run(ids, links, {"A0": (0, 0, 0), "A2": (3, 3, 3)})
    c = checks["fixed durations (O = M = P)"]
    assert (c.count, c.activities, c.passed) == (1, ["A2"], False)  # 20% > 10%
    assert c.percent == pytest.approx(20.0)
    ids, links = _chain(10)
    assert _run(ids, links, {"A2": (3, 3, 3)})["fixed durations (O = M = P)"].passed  # 10%


def test_most_likely_outside_range():
    ids, links = _chain(4)
    c = _run(ids, links, {"A3": (1, 10, 5)})["most likely outside optimistic..pessimistic"]
    assert (c.count, c.activities, c.passed) == (1, ["A3"], False)


def test_wide_spread():
    # P / O = 11 > 10 is wide; P / O = 10 is not; O = 0 with P > 0 is unbounded;
    # O = P = 0 (milestone) is not.
    ids, links = _chain(6)
    est = {"A0": (0, 0, 0), "A1": (1, 2, 11), "A2": (1, 2, 10), "A5": (0, 0, 0)}
    c = _run(ids, links, est)["wide spread (P / O > 10)"]
    assert (c.count, c.activities, c.passed) == (1, ["A1"], False)
    est = {"A1": (0, 1, 2)}
    c = _run(ids, links, est)["wide spread (P / O > 10)"]
    assert c.activities == ["A1"] and c.percent == pytest.approx(100 / 6)


def test_spread_five_percent_passes():
    ids, links = _chain(20)
    assert _run(ids, links, {"A4": (1, 5, 30)})["wide spread (P / O > 10)"].passed


# --------------------------------------------------------------------- structure


def test_second_start_and_second_end():
    # S and X both lack predecessors (S first listed); E finishes last, Y earlier.
    ids = ["S", "X", "A", "Y", "E"]
    links = [("S", "A"), ("X", "A"), ("A", "E"), ("A", "Y")]
    checks = _run(ids, links, {"Y": (1, 1, 2), "E": (5, 6, 7)})
    starts, ends = checks["more than one start activity"], checks["more than one end activity"]
    assert (starts.count, starts.activities, starts.passed) == (1, ["X"], False)
    assert (ends.count, ends.activities, ends.passed) == (1, ["Y"], False)
    assert starts.percent is None and ends.percent is None


def test_end_is_latest_finish_not_last_listed():
    # E2 is listed last but finishes first, so E1 is the project end and E2 the extra end.
    ids = ["S", "E1", "E2"]
    c = _run(ids, [("S", "E1"), ("S", "E2")], {"E1": (9, 10, 11), "E2": (1, 2, 3)})[
        "more than one end activity"
    ]
    assert c.activities == ["E2"]


def test_end_tie_goes_to_last_listed():
    # E1 and E2 finish together; the last listed (E2) is taken as the project end.
    ids = ["S", "E1", "E2"]
    c = _run(ids, [("S", "E1"), ("S", "E2")], {"E1": (1, 2, 3), "E2": (1, 2, 3)})[
        "more than one end activity"
    ]
    assert c.activities == ["E1"]


def test_disconnected_group():
    ids, links = _chain(6)
    checks = _run(ids + ["Z"], links, {"Z": (1, 2, 3)})
    c = checks["disconnected groups"]
    assert (c.count, c.activities, c.passed) == (1, ["Z"], False)
    assert "2 group" in c.detail
    # reference: networkx weakly connected components of the same links
    g = nx.DiGraph(links)
    g.add_node("Z")
    assert nx.number_weakly_connected_components(g) == 2


def test_redundant_link_reported():
    # A -> B -> C already makes C wait for A, so A -> C is redundant.
    checks = _run(["A", "B", "C"], [("A", "B"), ("B", "C"), ("A", "C")])
    c = checks["redundant links"]
    assert (c.count, c.activities, c.passed) == (1, ["A->C"], False)
    assert c.percent == pytest.approx(100 / 3)


@pytest.mark.parametrize(
    "path, redundant",
    [
        ([("A", "B", FS, 2.0), ("B", "C", FS, 0.0)], True),  # C starts >= A finish + 2
        ([("A", "B", FS, 0.0), ("B", "C", SS, 0.0)], True),  # C start >= B start >= A finish
        ([("A", "B", SS, 0.0), ("B", "C", FS, 0.0)], False),  # only A start bounds C
        ([("A", "B", FF, 0.0), ("B", "C", FS, 0.0)], True),  # B finish >= A finish
        ([("A", "B", FS, 0.0), ("B", "C", FF, 0.0)], False),  # only C's finish is bounded
        ([("A", "B", FS, -1.0), ("B", "C", FS, 0.0)], False),  # a lead breaks the implication
        ([("A", "C", FS, 3.0)], True),  # a lagged FS link beside it says more
        ([("A", "C", SS, 0.0)], False),
        ([("A", "C", FS, 0.0)], True),  # a duplicate: the second copy is redundant
    ],
)
def test_redundant_link_rules(path, redundant):
    ids = ["A", "B", "C"]
    links = path + [("A", "C", FS, 0.0)]
    if not any("B" in lk[:2] for lk in path):
        links = [("A", "B"), *links]  # keep B connected, no bearing on A -> C
    c = _run(ids, links)["redundant links"]
    # a pair linked twice names its links with type and lag ("A->C [FS]"; analyse/ladders.py)
    assert ([x.split(" [")[0] for x in c.activities] == ["A->C"]) is redundant, c.activities


def test_redundant_links_agree_with_networkx_on_plain_networks():
    # With only FS links without lag, the redundant links are exactly those missing
    # from networkx.transitive_reduction of the plain graph.
    rng = np.random.default_rng(11)
    for _ in range(20):
        n = 25
        pairs = {(int(a), int(b)) for a, b in rng.integers(0, n, size=(70, 2)) if a < b}
        pairs = sorted(pairs)
        net = build_network(n, [a for a, _ in pairs], [b for _, b in pairs])
        g = nx.DiGraph(pairs)
        kept = set(nx.transitive_reduction(g).edges())
        want = [pair not in kept for pair in pairs]
        assert redundant_links(net).tolist() == want


def test_removing_redundant_links_keeps_every_date():
    # Defining property: dropping all reported links changes no early or late date
    # (CPM forward and backward passes, random durations, mixed link types and lags).
    rng = np.random.default_rng(5)
    for _ in range(30):
        n = 20
        pairs = sorted({(int(a), int(b)) for a, b in rng.integers(0, n, size=(60, 2)) if a < b})
        kind = rng.choice([FS, FS, FS, SS, FF, SF], size=len(pairs))
        lag = rng.choice([0.0, 0.0, 0.0, 2.0, -1.0], size=len(pairs))
        pred = [a for a, _ in pairs]
        succ = [b for _, b in pairs]
        net = build_network(n, pred, succ, kind, lag)
        red = redundant_links(net)
        keep = ~red
        slim = build_network(n, np.array(pred)[keep], np.array(succ)[keep], kind[keep], lag[keep])
        for _ in range(5):
            d = rng.uniform(0, 10, n)
            full, cut = schedule(net, d), schedule(slim, d)
            np.testing.assert_allclose(cut.es, full.es, atol=1e-9)
            np.testing.assert_allclose(cut.ls, full.ls, atol=1e-9)
            np.testing.assert_allclose(cut.total_float, full.total_float, atol=1e-9)


def test_empty_links_and_sizes_checked():
    ids, links = _chain(1)
    checks = _run(ids, links)
    assert _failures(checks) == []  # a single activity is its own start and end
    assert checks["leads (negative lags)"].percent is None  # no links: no base
    net = build_network(2, [0], [1])
    cpm = schedule(net, np.ones(2))
    with pytest.raises(ValueError):
        run_checks(["A"], [1], [1], [1], net, cpm)


# ------------------------------------------------------------------ structured limits


def test_limits_are_numbers_not_text():
    # DCMA 14-point thresholds (from memory, see the module docstring): missing logic
    # <= 5% of activities, leads 0, lags <= 5% of links, finish-to-start >= 90% (other
    # types <= 10%), high float and high duration <= 5% of activities, both above 44
    # working days. Estimate and structure limits: common practice.
    ids, links = _chain(6)
    checks = {c.key: c for c in _run(ids, links, days_per_unit=5.0).values()}
    assert checks["missing_logic"].limit == Limit(5, "activities")
    assert checks["leads"].limit == Limit(0, unit="links")
    assert checks["lags"].limit == Limit(5, "links")
    assert checks["link_types"].limit.most == 10
    assert checks["link_types"].limit.share_of == "links"
    for key in ("high_float", "high_duration"):
        assert checks[key].limit == Limit(5, "activities")
        assert checks[key].above == Above(44.0, 1e-9, 5.0)
    assert checks["redundant_links"].limit == Limit(5, "links")
    assert checks["extra_starts"].limit.most == 0 and checks["extra_starts"].out_of is None
    assert checks["missing_logic"].out_of == 6 and checks["lags"].out_of == 5
    assert len(checks) == 13  # every key is distinct


def test_limit_text_is_built_from_the_numbers():
    assert Limit(5, "activities").text == "<= 5% of activities"
    assert Limit(10, "links", note="finish-to-start >= 90%").text == (
        "<= 10% of links (finish-to-start >= 90%)"
    )
    assert Limit(0, unit="links").text == "0 links"
    assert Limit(0, wording="1 connected group").text == "1 connected group"


@pytest.mark.parametrize(
    ("count", "out_of", "passes"),
    [(1, 20, True), (1, 19, False), (0, 0, True), (1, 0, False), (2, 40, True)],
)
def test_share_limit_boundary_in_whole_numbers(count, out_of, passes):
    # exactly 5% passes (DCMA "<= 5%", from memory); nothing is allowed out of nothing
    assert Limit(5, "links").allows(count, out_of) is passes


def test_above_compares_in_working_days():
    # 8.8 weeks of 5 days = 44 working days: not above; 8.81 weeks is
    above = Above(44.0, 1e-9, 5.0)
    assert above.offends(np.array([8.8, 8.81, 0.0])).tolist() == [False, True, False]


def test_every_check_cites_a_listed_source():
    ids, links = _chain(6)
    for c in _run(ids, links).values():
        assert c.cited and all(cit.source in SOURCES for cit in c.cited)
        assert "from memory" not in c.source
    assert "GAO-16-89G" in GAO.full and "December 2015" in GAO.full
