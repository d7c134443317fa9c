"""WBS summary rows: which rows are summaries, and links on summaries expanded.

What is checked against what:
- summary detection and link expansion on hand-built outlines, the expected links worked
  by hand in the comments from the rule the project's issue states (a link to a summary
  is a link to each of its activities with no predecessor inside it; a link from a
  summary is a link from each of its activities with no successor inside it: the usual
  meaning, common practice);
- a network where one summary link changes the critical path, its passes worked by hand
  (CPM forward pass, Kelley & Walker 1959);
- random outlines with random links: every expanded link set is held against the rule
  recomputed from the expanded graph with networkx (in-degree / out-degree inside the
  summary's activities), and the passes against the independent networkx longest-path
  CPM of tests/support/reference_cpm.py;
- the cells named by problems are worked out by hand from the rows written (header on
  row 1: A=WBS, B=ID, C=Description, D=Predecessors, E=O, F=M, G=P).
"""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
from helpers import write_csv
from reference_cpm import LINK_CODES, reference_cpm

from converter.analyse.analysis import analyse
from converter.api import ConvertOptions, load
from converter.model import ERROR, WARNING

HEAD = ["WBS", "ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]


def run(tmp_path, rows, name="plan.csv"):
    return load(write_csv(tmp_path / name, [HEAD, *rows]), ConvertOptions(simulate=False))


def links_of(schedule) -> set[tuple]:
    return {(lk.pred, lk.succ, lk.type, lk.lag, lk.via) for lk in schedule.links}


def problems(found, severity) -> set[tuple]:
    return {(p.code, p.cell, p.activity) for p in found if p.severity == severity}


def test_summaries_found_by_parent_codes_at_several_levels(tmp_path):
    # Codes 1, 1.1, 1.1.1, 1.1.2, 1.2, 2, 3.1: 1 is the parent of 1.1 and 1.2, 1.1 of
    # 1.1.1 and 1.1.2; 2 and 3.1 have no children; 3 does not exist, so 3.1 is top level.
    rows = [
        ["1", "P", "Phase", None, None, None, None],
        ["1.1", "Q", "Part", None, None, None, None],
        ["1.1.1", "a", "a", None, 1, 1, 1],
        ["1.1.2", "b", "b", "a", 1, 1, 1],
        ["1.2", "c", "c", "b", 1, 1, 1],
        ["2", "d", "d", "c", 1, 1, 1],
        ["3.1", "e", "e", "d", 1, 1, 1],
    ]
    schedule, found = run(tmp_path, rows)
    assert schedule is not None, found
    assert [(s.wbs, s.id, s.parent, s.activities) for s in schedule.summaries] == [
        ("1", "P", None, ("a", "b", "c")),
        ("1.1", "Q", "1", ("a", "b")),
    ]
    assert [(a.id, a.wbs, a.summary) for a in schedule.activities] == [
        ("a", "1.1.1", "1.1"),
        ("b", "1.1.2", "1.1"),
        ("c", "1.2", "1"),
        ("d", "2", None),
        ("e", "3.1", None),
    ]


def test_links_on_summaries_expanded_by_hand(tmp_path):
    # S (1): a -> b and a -> c inside, so S starts with a and ends with b and c.
    # T (2): T1 (2.1) holds d -> e and ends with e; T1 -> f (written on T1, inside T)
    # becomes e -> f; inside T, d has no predecessor and f no successor.
    # X -> S  becomes X -> a                       (via S)
    # S -> T  becomes b -> d, c -> d               (via "S, T")
    # T -> Y  becomes f -> Y                       (via T)
    rows = [
        ["0", "X", "x", None, 1, 1, 1],
        ["1", "S", "s", "X", None, None, None],
        ["1.1", "a", "a", None, 1, 1, 1],
        ["1.2", "b", "b", "a", 1, 1, 1],
        ["1.3", "c", "c", "a[SS+1]", 1, 1, 1],
        ["2", "T", "t", "S", None, None, None],
        ["2.1", "T1", "t1", None, None, None, None],
        ["2.1.1", "d", "d", None, 1, 1, 1],
        ["2.1.2", "e", "e", "d", 1, 1, 1],
        ["2.2", "f", "f", "T1[+2]", 1, 1, 1],
        ["3", "Y", "y", "T", 1, 1, 1],
    ]
    schedule, found = run(tmp_path, rows)
    assert schedule is not None, found
    assert links_of(schedule) == {
        ("a", "b", "FS", 0.0, None),
        ("a", "c", "SS", 1.0, None),
        ("d", "e", "FS", 0.0, None),
        ("X", "a", "FS", 0.0, "S"),
        ("e", "f", "FS", 2.0, "T1"),
        ("b", "d", "FS", 0.0, "S, T"),
        ("c", "d", "FS", 0.0, "S, T"),
        ("f", "Y", "FS", 0.0, "T"),
    }
    # each expanded link keeps the cell its summary link was written in (Y, row 12: D12)
    assert {lk.cell for lk in schedule.links if lk.via == "T"} == {"D12"}


def test_summary_link_changes_the_critical_path(tmp_path):
    # Fixed durations A = 6 and B = 2 under S, in parallel; C = 3.
    # C after B:  ES_C = EF_B = 2, EF_C = 5; A finishes at 6: project 6, critical path A.
    # C after S:  S -> C is A -> C and B -> C; ES_C = max(6, 2) = 6, EF_C = 9:
    #             project 9, critical path A -> C; S starts 0, finishes 6, spans 6.
    def plan(pred):
        return [
            ["1", "S", "Stage", None, None, None, None],
            ["1.1", "A", "A", None, 6, 6, 6],
            ["1.2", "B", "B", None, 2, 2, 2],
            ["2", "C", "C", pred, 3, 3, 3],
        ]

    options = ConvertOptions(simulate=False)
    before = analyse(run(tmp_path, plan("B"), "b.csv")[0], options)
    after = analyse(run(tmp_path, plan("S"), "s.csv")[0], options)
    assert (before.project_mean, before.critical_ids) == (6.0, ["A"])
    assert (after.project_mean, after.critical_ids) == (9.0, ["A", "C"])
    assert list(after.cpm.es) == [0.0, 0.0, 6.0]
    f = after.summaries
    assert (f.start[0], f.finish[0], f.span[0]) == (0.0, 6.0, 6.0)
    check = next(c for c in after.checks if c.key == "summary_links")
    assert (check.activities, check.passed) == (["A->C", "B->C"], False)
    check = next(c for c in before.checks if c.key == "summary_links")
    assert (check.count, check.passed) == (0, True)


def test_outline_problems_name_their_cells(tmp_path):
    rows = [
        ["1", "S", "s", None, 1, 2, 3],  # estimates on a summary: warning at E2
        ["1.1", "a", "a", "S", 1, 1, 1],  # a link from S to its own activity: D3
        ["1.2", "b", "b", None, 1, 1, 1],
        ["1.2", "c", "c", None, 1, 1, 1],  # WBS 1.2 again: A5
        ["1..3", "d", "d", None, 1, 1, 1],  # an empty segment: A6
    ]
    schedule, found = run(tmp_path, rows)
    assert schedule is None
    assert problems(found, ERROR) == {
        ("summary-link-inside", "D3", "a"),
        ("duplicate-wbs", "A5", None),
        ("bad-wbs", "A6", None),
    }
    assert ("summary-estimates", "E2", "S") in problems(found, WARNING)


def test_summary_id_clashing_with_an_activity_is_a_problem(tmp_path):
    rows = [["1", "a", "s", None, None, None, None], ["1.1", "a", "a", None, 1, 1, 1]]
    schedule, found = run(tmp_path, rows)
    assert schedule is None
    assert ("duplicate-id", "A2", "a") in problems(found, ERROR)


def test_a_summary_in_a_cycle_is_named(tmp_path):
    # S holds a -> b; Y after S is b -> Y; a after Y closes a -> b -> Y -> a.
    rows = [
        ["1", "S", "s", None, None, None, None],
        ["1.1", "a", "a", "Y", 1, 1, 1],
        ["1.2", "b", "b", "a", 1, 1, 1],
        ["2", "Y", "y", "S", 1, 1, 1],
    ]
    schedule, found = run(tmp_path, rows)
    assert schedule is None
    [cycle] = [p for p in found if p.code == "cycle"]
    assert "a -> b -> Y -> a" in cycle.message and "summary S" in cycle.message


def test_blank_summary_id_is_its_wbs_code_and_can_be_linked(tmp_path):
    # Summary 1 has no ID: links name it "1"; 1 -> z becomes y -> z (y ends it).
    rows = [
        ["1", None, "Stage", None, None, None, None],
        ["1.1", "x", "x", None, 1, 1, 1],
        ["1.2", "y", "y", "x", 1, 1, 1],
        ["2", "z", "z", "1", 1, 1, 1],
    ]
    schedule, found = run(tmp_path, rows)
    assert schedule is not None, found
    assert ("y", "z", "FS", 0.0, "1") in links_of(schedule)


def _random_outline(rng) -> tuple[list[list], dict[str, list[str]]]:
    """Rows of a random outline (summaries and leaves) and each summary's leaves."""
    rows, leaves, order = [], {}, []

    def grow(code: str, depth: int, path: list[str]):
        kids = int(rng.integers(2, 4)) if depth < 3 and rng.random() < 0.5 else 0
        ident = f"N{code.replace('.', '_')}"
        if kids:
            rows.append([code, ident, ident, None, None, None, None])
            leaves[ident] = []
            for k in range(1, kids + 1):
                grow(f"{code}.{k}", depth + 1, [*path, ident])
        else:
            o = float(rng.integers(0, 4))
            rows.append([code, ident, ident, None, o, o + 1, o + 3])
            order.append(ident)
            for s in path:
                leaves[s].append(ident)

    for top in range(1, int(rng.integers(3, 6))):
        grow(str(top), 0, [])
    return rows, leaves, order


@pytest.mark.parametrize("seed", range(25))
def test_random_outlines_against_the_rule_and_networkx(tmp_path, seed):
    rng = np.random.default_rng(seed)
    rows, leaves, order = _random_outline(rng)
    position = {a: k for k, a in enumerate(order)}
    nodes = [r[1] for r in rows]

    def span(node):  # first and last leaf position under a node
        ks = [position[a] for a in leaves.get(node, [node])]
        return min(ks), max(ks)

    written = []  # links u -> v with every leaf of u before every leaf of v: no cycle
    for _ in range(len(nodes)):
        u, v = rng.choice(nodes, 2, replace=False)
        if span(u)[1] < span(v)[0] and (u, v) not in written:
            written.append((u, v))
    for u, v in written:
        row = next(r for r in rows if r[1] == v)
        row[3] = u if row[3] is None else f"{row[3]}, {u}"
    schedule, found = run(tmp_path, rows)
    assert schedule is not None, [str(p) for p in found]
    g = nx.DiGraph([(lk.pred, lk.succ) for lk in schedule.links])
    g.add_nodes_from(order)
    # the rule, recomputed from the expanded graph: a link to summary S reaches exactly the
    # activities of S with no predecessor among S's activities (and mirrored for "from")
    for u, v in written:
        inside_v = g.subgraph(leaves.get(v, [v]))
        inside_u = g.subgraph(leaves.get(u, [u]))
        targets = {a for a in inside_v if inside_v.in_degree(a) == 0}
        sources = {a for a in inside_u if inside_u.out_degree(a) == 0}
        assert {(p, q) for p in sources for q in targets} <= set(g.edges), (u, v)
    # the passes on the expanded network against networkx longest paths
    a = analyse(schedule, ConvertOptions(simulate=False))
    index = {x: k for k, x in enumerate(a.ids)}
    es, _, finish = reference_cpm(
        len(a.ids),
        [index[lk.pred] for lk in schedule.links],
        [index[lk.succ] for lk in schedule.links],
        [LINK_CODES[lk.type] for lk in schedule.links],
        [lk.lag for lk in schedule.links],
        a.te,
    )
    np.testing.assert_allclose(a.cpm.es, es, atol=1e-9)
    assert a.project_mean == pytest.approx(finish)
    for j, s in enumerate(schedule.summaries):  # a summary spans its activities
        ks = [index[x] for x in leaves[s.id]]
        assert a.summaries.start[j] == pytest.approx(min(es[k] for k in ks))
        assert a.summaries.finish[j] == pytest.approx(max(es[k] + a.te[k] for k in ks))


def test_links_sheet_may_name_a_summary(tmp_path):
    # Links sheet row 2: S -> z with SS+1; S holds x -> y, so it starts with x only:
    # S -> z [SS+1] becomes y -> z [SS+1] (a "from" link: y ends S), type and lag kept.
    from helpers import write_xlsx

    activities = [
        HEAD,
        ["1", "S", "s", None, None, None, None],
        ["1.1", "x", "x", None, 1, 1, 1],
        ["1.2", "y", "y", "x", 1, 1, 1],
        ["2", "z", "z", None, 1, 1, 1],
    ]
    links = [["Predecessor", "Successor", "Type", "Lag"], ["S", "z", "SS", 1]]
    path = write_xlsx(tmp_path / "plan.xlsx", {"Activities": activities, "Links": links})
    schedule, found = load(path, ConvertOptions(simulate=False))
    assert schedule is not None, found
    assert ("y", "z", "SS", 1.0, "S") in links_of(schedule)
    assert [lk.cell for lk in schedule.links if lk.via] == ["A2"]
