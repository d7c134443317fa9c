"""WBS summary rows: each one's start, finish and span; the check of links on them.

A summary is not scheduled itself: it starts when the first activity under it starts
and finishes when the last one finishes (its early dates), common practice for outline
(summary) rows. The order of the table's rows (each summary above its children) is the
rule of :func:`converter.validate.outline.display_order`.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from converter.analyse.checks import COMMON, GAO, LOGIC, SEQUENCING, Check, Citation, Limit
from converter.analyse.figures import ActivityDates
from converter.analyse.network import CpmResult, Network
from converter.model import Schedule
from converter.validate.outline import display_order


@dataclass
class SummaryFigures:
    """The summary rows' figures, one entry per ``schedule.summaries``.

    ``order`` lists the activity table's rows (``("summary", j)`` or ``("activity", i)``);
    ``extent[j]`` is how many rows follow summary ``j`` under it (they are contiguous).
    ``start`` / ``finish`` are offsets in the schedule's time unit; ``span`` = finish -
    start. The dates are None without a start date.
    """

    order: list[tuple[str, int]]
    extent: list[int]
    start: np.ndarray
    finish: np.ndarray
    span: np.ndarray
    start_dates: list[dt.date] | None = None
    finish_dates: list[dt.date] | None = None


def summary_figures(
    schedule: Schedule, cpm: CpmResult, dates: ActivityDates | None
) -> SummaryFigures | None:
    """Start = MIN of the early starts under each summary, finish = MAX of early finishes.

    Returns None when the schedule has no summary rows.

    Examples
    --------
    >>> from converter.model import Activity, Settings, Summary
    >>> from converter.analyse.network import build_network, schedule as cpm_of
    >>> acts = [Activity("x", "x", 2, 2, 2, row=3, summary="1"),
    ...         Activity("y", "y", 3, 3, 3, row=4, summary="1")]
    >>> s = Schedule(acts, [], Settings(), "f", "", "Sheet",
    ...              summaries=[Summary("1", "S", "S", row=2, activities=("x", "y"))])
    >>> cpm = cpm_of(build_network(2, [0], [1]), np.array([2.0, 3.0]))
    >>> f = summary_figures(s, cpm, None)
    >>> f.order, f.extent, float(f.start[0]), float(f.finish[0]), float(f.span[0])
    ([('summary', 0), ('activity', 0), ('activity', 1)], [2], 0.0, 5.0, 5.0)
    """
    summaries = schedule.summaries
    if not summaries:
        return None
    order = display_order(schedule.activities, summaries)
    index = schedule.index()
    members = [np.array([index[a] for a in s.activities], dtype=np.int64) for s in summaries]
    es, ef = np.asarray(cpm.es, dtype=float), np.asarray(cpm.ef, dtype=float)
    start = np.array([es[k].min() for k in members])
    finish = np.array([ef[k].max() for k in members])
    figures = SummaryFigures(order, _extents(summaries), start, finish, finish - start)
    if dates is not None:
        figures.start_dates = [min(dates.early_start[i] for i in k) for k in members]
        figures.finish_dates = [max(dates.early_finish[i] for i in k) for k in members]
    return figures


def _extents(summaries) -> list[int]:
    """How many rows sit under each summary: its activities and the summaries within."""
    by_wbs = {s.wbs: j for j, s in enumerate(summaries)}
    extent = [len(s.activities) for s in summaries]
    for s in summaries:
        up = s.parent
        while up is not None:
            extent[by_wbs[up]] += 1
            up = summaries[by_wbs[up]].parent
    return extent


def summary_link_check(ids: list[str], net: Network, via: list[str | None]) -> Check:
    """The health check of links written on summary rows (each expanded link counted).

    ``via`` has one entry per link of ``net`` (the links the passes run on: a project in
    flight drops those into finished work): the summary it was expanded from, or None.
    The limit is none (common practice); why it matters: the GAO guide asks for logic
    between activities (best practice 2, from memory).

    Examples
    --------
    >>> from converter.analyse.network import build_network
    >>> c = summary_link_check(["a", "b", "c"], build_network(3, [0, 1], [1, 2]), [None, "S"])
    >>> c.activities, c.passed, c.detail
    (['b->c'], False, 'written on S')
    """
    on_summary = np.array([v is not None for v in via], dtype=bool).reshape(-1)
    names = [f"{ids[p]}->{ids[s]}" for p, s in zip(net.pred[on_summary], net.succ[on_summary])]
    written = sorted({s.strip() for v in via if v is not None for s in v.split(",")})
    return Check(
        key="summary_links",
        name="links on summary rows",
        group=LOGIC,
        limit=Limit(0, unit="links"),
        activities=names,
        out_of=net.link_count,
        matters="A link on a summary row stands for links to or from whichever activities "
        "are first or last under it; when the work under it changes, the logic changes "
        "unseen. Link the activities themselves.",
        cited=(
            Citation(COMMON, "logic between activities"),
            Citation(GAO, f"best practice 2 ({SEQUENCING})", why=True),
        ),
        detail="written on " + ", ".join(written) if written else "",
    )
