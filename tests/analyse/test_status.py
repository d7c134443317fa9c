"""Start constraints and a project in flight: the remaining-work analysis.

What is checked against what:
- small cases worked by hand (the working is in the comments), with dates read off a
  printed calendar of March 2026 (Monday 2 March);
- random networks with typed links against tests/support/reference_cpm.py: a start-floor
  CPM and an event-graph model of a status update, both solved with networkx
  Bellman-Ford longest paths, written from the rules and not from pertbook's passes;
- a project with every activity finished reproduces its actual finish with no spread
  (the rule of the issue: finished work is fixed at its actual dates).
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest
from reference_cpm import reference_cpm, reference_status_cpm

from converter.analyse.analysis import analyse
from converter.analyse.network import build_network, schedule
from converter.analyse.paths import k_longest_paths
from converter.analyse.status_checks import baseline_execution_index, missed
from converter.model import LINK_TYPES, Activity, Link, Schedule, Settings
from converter.options import ConvertOptions

NO_SIM = ConvertOptions(simulate=False)


def plan(acts, links, **settings) -> Schedule:
    return Schedule(acts, links, Settings(**settings), "test.csv", "", "Activities")


def fixed(ident, d, **kw) -> Activity:
    return Activity(ident, ident, d, d, d, **kw)


# --------------------------------------------------------------------------- Not before
def test_not_before_holds_the_early_start_by_hand():
    # A (3) -> B (2); B not before 10: ES_B = max(EF_A = 3, 10) = 10, EF_B = 12; A's
    # total float = LS_A - ES_A = (10 - 3) - 0 = 7 (B's start is held by its constraint).
    a = analyse(plan([fixed("A", 3), fixed("B", 2, not_before=10.0)], [Link("A", "B")]), NO_SIM)
    assert a.cpm.es.tolist() == [0.0, 10.0]
    assert a.cpm.ef.tolist() == [3.0, 12.0]
    assert a.cpm.total_float.tolist() == [7.0, 0.0]
    # the critical path starts at B's constraint: length 10 + 2 = 12
    assert a.paths[0].path.activities == [1] and a.paths[0].path.mean == 12.0
    # paths: A > B, and B alone from its constraint: 2 (A > B has length 3 + 2 = 5)
    assert a.path_count == 2 and [p.path.mean for p in a.paths] == [12.0, 5.0]
    check = next(c for c in a.checks if c.key == "constraints")
    assert check.activities == ["B"] and not check.passed  # 1 of 2 > 5%


def test_not_before_date_is_the_start_of_that_day():
    # Start Monday 2026-03-02; Not before Monday 2026-03-09 = after 5 working days (2-6
    # March): offset 5; the early start date is that Monday.
    s = plan([fixed("A", 2, not_before=dt.date(2026, 3, 9))], [], start_date=dt.date(2026, 3, 2))
    a = analyse(s, NO_SIM)
    assert a.cpm.es.tolist() == [5.0]
    assert a.activity_dates.early_start == [dt.date(2026, 3, 9)]
    assert a.activity_dates.early_finish == [dt.date(2026, 3, 10)]


@pytest.mark.parametrize("seed", range(20))
def test_start_floors_match_networkx(seed):
    # reference: tests/support/reference_cpm.py (networkx Bellman-Ford, floors as the
    # origin edges' weights)
    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 25))
    pairs = [(p, s) for s in range(n) for p in range(s) if rng.random() < 0.25]
    kinds = rng.integers(0, 4, len(pairs))
    lags = rng.integers(-2, 4, len(pairs)).astype(float)
    d = rng.integers(0, 9, n).astype(float)
    floor = np.where(rng.random(n) < 0.3, rng.integers(0, 30, n), 0).astype(float)
    pred, succ = [p for p, _ in pairs], [s for _, s in pairs]
    net = build_network(n, pred, succ, kinds, lags, floor=floor)
    r = schedule(net, d)
    es, ls, finish = reference_cpm(n, pred, succ, kinds, lags, d, floor=floor)
    np.testing.assert_allclose(r.es, es, atol=1e-9)
    np.testing.assert_allclose(r.ls, ls, atol=1e-9)
    assert r.finish == pytest.approx(finish)
    # the longest path, counted from its first activity's floor, is the project finish
    top = k_longest_paths(net, d, np.ones(n), 1)[0]
    assert top.mean == pytest.approx(finish)


# --------------------------------------------------------------------------- status
def flight() -> Schedule:
    # A finished (actual 0 -> 3), B in progress (started 3, 2 units remaining, status 6),
    # C not started (after A), D after B and C.
    acts = [
        fixed("A", 3, actual_start=0.0, actual_finish=3.0),
        fixed("B", 5, actual_start=3.0, remaining=(2.0, 2.0, 2.0)),
        fixed("C", 2),
        fixed("D", 4),
    ]
    links = [Link("A", "B"), Link("A", "C"), Link("B", "D"), Link("C", "D")]
    return plan(acts, links, status_date=6.0)


def test_finished_in_progress_and_not_started_by_hand():
    a = analyse(flight(), NO_SIM)
    # A fixed at 0 -> 3; B keeps its start 3 and finishes at 6 + 2 = 8; C cannot start
    # before the status date: 6 -> 8; D after both: 8 -> 12.
    assert a.cpm.es.tolist() == [0.0, 3.0, 6.0, 8.0]
    assert a.cpm.ef.tolist() == [3.0, 8.0, 8.0, 12.0]
    assert a.project_mean == 12.0
    prog = a.remaining_work.progress
    assert prog.state == ["finished", "in progress", "not started", "not started"]
    # work done by expected duration: A 3 + B's 3 worked, of 3 + (3 + 2) + 2 + 4 = 14
    assert prog.done_share == pytest.approx(6 / 14)
    assert a.var[0] == 0.0  # finished work has no spread


def test_links_on_summaries_counted_on_the_remaining_network():
    # A (finished 0 -> 3) -> B (finished 3 -> 5), both under summary S1, and S1 -> C
    # written on the summary, expanded to B -> C (B has no successor inside S1). A -> B
    # leads into finished work, so the remaining network drops it; the health check must
    # count the links the passes run on: B -> C (via S1) only. A project in flight with
    # summary rows once failed here with an internal error (the dropped link shifted the
    # list of summaries against the network's links).
    from converter.model import Summary

    acts = [
        fixed("A", 3, actual_start=0.0, actual_finish=3.0),
        fixed("B", 2, actual_start=3.0, actual_finish=5.0),
        fixed("C", 2),
    ]
    s = plan(acts, [Link("A", "B"), Link("B", "C", via="S1")], status_date=6.0)
    s.summaries.append(Summary("1", "S1", "S1", activities=("A", "B")))
    a = analyse(s, NO_SIM)
    assert a.net.link_count == 1
    check = next(c for c in a.checks if c.key == "summary_links")
    assert check.activities == ["B->C"] and check.detail == "written on S1"


def test_single_remaining_scales_with_the_activity_ratios():
    # B estimates 4 / 5 / 8, Remaining 2.5: remaining O = 2.5*4/5 = 2, P = 2.5*8/5 = 4;
    # TE of the remaining work (2 + 10 + 4) / 6 = 8/3; status 6, so EF_B = 6 + 8/3.
    b = Activity("B", "B", 4, 5, 8, actual_start=3.0, remaining=(2.5,) * 3, remaining_single=True)
    a = analyse(plan([b], [], status_date=6.0), NO_SIM)
    assert a.remaining_work.progress.remaining[0].tolist() == [2.0, 2.5, 4.0]
    assert a.cpm.ef[0] == pytest.approx(6 + 8 / 3)


def test_in_progress_without_remaining_is_pro_rated():
    # O/M/P 2/4/12: TE 5; started at 0, status 2: 2/5 done, each estimate times 3/5:
    # 1.2 / 2.4 / 7.2, remaining TE 3; finish 2 + 3 = 5.
    b = Activity("B", "B", 2, 4, 12, actual_start=0.0)
    a = analyse(plan([b], [], status_date=2.0), NO_SIM)
    np.testing.assert_allclose(a.remaining_work.progress.remaining[0], [1.2, 2.4, 7.2])
    assert a.cpm.ef[0] == pytest.approx(5.0)


def test_status_date_on_a_holiday_by_hand():
    # Start Monday 2026-03-02, Monday 9 March a holiday. Status date 9 March: the end of
    # Friday 6 March, offset 5. A finished 2-4 March (offset 0 -> 3); B (2 days, after A)
    # not started: it starts at offset 5, on Tuesday 10 March, and finishes Wednesday 11.
    acts = [
        fixed("A", 3, actual_start=dt.date(2026, 3, 2), actual_finish=dt.date(2026, 3, 4)),
        fixed("B", 2),
    ]
    s = plan(
        acts,
        [Link("A", "B")],
        start_date=dt.date(2026, 3, 2),
        holidays=(dt.date(2026, 3, 9),),
        status_date=dt.date(2026, 3, 9),
    )
    a = analyse(s, NO_SIM)
    assert a.remaining_work.progress.status_offset == 5.0
    assert a.cpm.es.tolist() == [0.0, 5.0]
    assert a.activity_dates.early_start[1] == dt.date(2026, 3, 10)
    assert a.activity_dates.early_finish[1] == dt.date(2026, 3, 11)


def test_out_of_sequence_keeps_the_logic_for_the_remaining_work():
    # A (in progress since 0, 4 left at status 5) -FS-> B (started at 2, 1 left): B's
    # remaining work waits for A: EF_A = 5 + 4 = 9, EF_B = 9 + 1 = 10 (retained logic).
    acts = [
        fixed("A", 9, actual_start=0.0, remaining=(4.0,) * 3),
        fixed("B", 4, actual_start=2.0, remaining=(1.0,) * 3),
    ]
    a = analyse(plan(acts, [Link("A", "B")], status_date=5.0), NO_SIM)
    assert a.cpm.ef.tolist() == [9.0, 10.0]
    check = next(c for c in a.checks if c.key == "out_of_sequence")
    assert check.activities == ["A->B"] and not check.passed


@pytest.mark.parametrize("seed", range(25))
def test_remaining_work_matches_an_event_graph_reference(seed):
    # An execution on actual durations (plain CPM on them) sets each activity's actual
    # dates; a status offset cuts it into finished / in progress / not started. The
    # reference is tests/support/reference_cpm.reference_status_cpm (networkx).
    rng = np.random.default_rng(100 + seed)
    n = int(rng.integers(3, 20))
    pairs = [(p, s) for s in range(n) for p in range(s) if rng.random() < 0.3]
    kinds = rng.integers(0, 4, len(pairs))
    lags = rng.integers(0, 3, len(pairs)).astype(float)
    pred, succ = [p for p, _ in pairs], [s for _, s in pairs]
    actual = rng.integers(1, 8, n).astype(float)
    net = build_network(n, pred, succ, kinds, lags)
    done = schedule(net, actual)
    status = float(rng.integers(0, int(done.finish) + 1))
    plan_d = rng.integers(1, 8, n).astype(float)  # the estimates of work not started
    acts, state, rem = [], [], np.zeros(n)
    for i in range(n):
        s0, f0 = float(done.es[i]), float(done.ef[i])
        if f0 <= status:
            acts.append(fixed(str(i), plan_d[i], actual_start=s0, actual_finish=f0))
            state.append("finished")
        elif s0 < status:
            rem[i] = float(rng.integers(0, 6))
            acts.append(fixed(str(i), plan_d[i], actual_start=s0, remaining=(rem[i],) * 3))
            state.append("in progress")
        else:
            acts.append(fixed(str(i), plan_d[i]))
            state.append("not started")
    links = [Link(str(p), str(s), LINK_TYPES[k], g) for (p, s), k, g in zip(pairs, kinds, lags)]
    a = analyse(plan(acts, links, status_date=status), NO_SIM)
    es, ef, lf, finish = reference_status_cpm(
        n, pred, succ, kinds, lags, plan_d, state, done.es, done.ef, status, rem
    )
    np.testing.assert_allclose(a.cpm.ef, ef, atol=1e-9)
    assert a.project_mean == pytest.approx(finish)
    for i in range(n):
        if state[i] == "in progress":  # keeps its actual start unless logic holds the rest
            held = ef[i] > status + rem[i] + 1e-9
            assert a.cpm.es[i] >= done.es[i] - 1e-9
            assert held or a.cpm.es[i] == pytest.approx(done.es[i])
        else:
            assert a.cpm.es[i] == pytest.approx(es[i])
        if state[i] == "not started":
            assert a.cpm.lf[i] == pytest.approx(lf[i])


def test_every_activity_finished_reproduces_the_actual_finish():
    # Three finished activities, the last finishing at 11: the forecast is 11 with no
    # spread, analytic and simulated alike.
    acts = [
        Activity("A", "A", 2, 3, 9, actual_start=0.0, actual_finish=4.0),
        Activity("B", "B", 1, 5, 6, actual_start=4.0, actual_finish=11.0),
        Activity("C", "C", 1, 2, 3, actual_start=4.0, actual_finish=6.0),
    ]
    s = plan(acts, [Link("A", "B"), Link("A", "C")], status_date=12.0, iterations=500)
    a = analyse(s, ConvertOptions())
    assert a.project_mean == 11.0 and a.project_sd == 0.0
    assert a.simulation.mean == pytest.approx(11.0) and a.simulation.sd == pytest.approx(0.0)
    assert all(v == pytest.approx(11.0) for v in a.simulation.percentiles.values())
    assert a.remaining_work.progress.done_share == 1.0


# --------------------------------------------------------------------------- checks
def test_missed_activities_on_a_hand_built_case():
    # Plan: A 0-2, B 2-5, C 5-9 (a chain). Status 6: A and B were due. A finished, B is
    # still in progress: B is missed, 1 of 2 due (50% > 5%: the check fails).
    acts = [
        fixed("A", 2, actual_start=0.0, actual_finish=2.0),
        fixed("B", 3, actual_start=2.0, remaining=(1.0,) * 3),
        fixed("C", 4),
    ]
    a = analyse(plan(acts, [Link("A", "B"), Link("B", "C")], status_date=6.0), NO_SIM)
    check = next(c for c in a.checks if c.key == "missed")
    assert check.activities == ["B"] and check.out_of == 2 and not check.passed
    assert missed(["finished", "in progress", "not started"], np.array([2, 5, 9.0]), 6.0) == (
        [1],
        2,
    )


def test_actual_dates_after_the_status_date_are_counted():
    acts = [fixed("A", 2, actual_start=0.0, actual_finish=8.0), fixed("B", 1)]
    a = analyse(plan(acts, [Link("A", "B")], status_date=6.0), NO_SIM)
    check = next(c for c in a.checks if c.key == "actuals_after_status")
    assert check.activities == ["A"] and not check.passed


def test_baseline_execution_index_hook_by_hand():
    # 3 due by the status date (baseline finishes 1, 2, 3 <= 4); 2 finished: 2/3.
    state = ["finished", "finished", "in progress", "not started"]
    bei = baseline_execution_index(state, np.array([1.0, 2.0, 3.0, np.nan]), 4.0)
    assert bei == pytest.approx(2 / 3)
    assert baseline_execution_index(state, np.array([9.0, 9, 9, 9]), 4.0) is None


def test_simulation_honours_the_start_floor():
    # A (1..9) -> C (2), B (3) -> C; C not before 20. Any sample: C starts at 20 at the
    # earliest (A's pessimistic 9 < 20), so every iteration finishes at exactly 22 (the
    # floor dominates): mean 22, no spread; the analytic finish is 22 too.
    acts = [
        Activity("A", "A", 1, 4, 9),
        fixed("B", 3),
        fixed("C", 2, not_before=20.0),
    ]
    s = plan(acts, [Link("A", "C"), Link("B", "C")], iterations=400)
    a = analyse(s, ConvertOptions())
    assert a.project_mean == 22.0
    assert a.simulation.mean == pytest.approx(22.0) and a.simulation.sd == pytest.approx(0.0)
    assert a.simulation.criticality[2] == 1.0 and a.simulation.criticality[0] == 0.0


def test_a_finished_activity_is_past_its_risks(tmp_path):
    """A risk that hits only finished work adds nothing; on work still to do it adds p x impact.

    Hand-worked: A (3 days, finished on days 0-3) -> B (O = M = P = 4, not started).
    Risk R1 hits A only, R2 hits B with probability 0.5 and a fixed impact of 2: the expected
    finish is the status offset 3 + B's 4 + 0.5 x 2 = 8, and every iteration ends at 7 or
    at 9 (R2 occurring or not; common practice: a finished activity carries no more risk).
    """
    from helpers import write_xlsx

    from converter.analyse.analysis import analyse
    from converter.api import ConvertOptions, load

    sheets = {
        "Activities": [
            [
                "ID",
                "Predecessors",
                "Optimistic",
                "Most likely",
                "Pessimistic",
                "Actual start",
                "Actual finish",
            ],
            ["A", None, 3, 3, 3, 0, 3],
            ["B", "A", 4, 4, 4, None, None],
        ],
        "Settings": [["Status date", 3], ["Iterations", 2000]],
        "Risks": [
            ["Risk", "Probability", "Impact", "Activities"],
            ["R1", 0.9, 5, "A"],
            ["R2", 0.5, 2, "B"],
        ],
    }
    schedule, problems = load(write_xlsx(tmp_path / "p.xlsx", sheets), ConvertOptions())
    assert schedule is not None, [str(p) for p in problems]
    a = analyse(schedule)
    assert a.risk_view.activity_delay.tolist() == [0.0, 1.0]
    assert a.cpm.finish == pytest.approx(8.0)
    assert set(np.round(a.simulation.durations, 6)) <= {7.0, 9.0}
