"""WBS summary rows: which rows are summaries, and what a link on a summary means.

The one home of the outline rules:

- a row's WBS code is its ``WBS`` cell as text; its parent is the code with its last dotted
  segment removed (``1.2`` for ``1.2.1``), when a row has that code (otherwise the row is at
  the top level);
- a row whose code is the parent of another row's code is a *summary*: it is not scheduled
  and needs no estimates (estimates on it are ignored with a warning);
- a link *to* a summary is a link to each of its activities that has no predecessor inside
  it; a link *from* a summary is a link from each of its activities that has no successor
  inside it (the usual meaning of linking a summary, common practice). Nested summaries are
  expanded deepest first, so "inside" counts the expanded links of the summaries within;
- the rows are shown in WBS order: each summary above its children, siblings in sheet order.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field

from converter.model import Activity, Link, Summary
from converter.read.sheets import CellError, TableMatch, cell_name
from converter.validate.problems import Collector
from converter.values import id_text, is_blank

ESTIMATE_KEYS = ("optimistic", "most_likely", "pessimistic")


def parent_code(code: str) -> str | None:
    """The code with its last dotted segment removed (None for a one-segment code).

    Examples
    --------
    >>> parent_code("1.2.1"), parent_code("1.2"), parent_code("7")
    ('1.2', '1', None)
    """
    head, dot, _ = code.rpartition(".")
    return head if dot else None


@dataclass
class Outline:
    """The WBS column as read: each data row's code, and which rows are summaries."""

    column: int
    codes: dict[int, str] = field(default_factory=dict)  # 0-based sheet row -> code
    summary_rows: frozenset[int] = frozenset()
    summaries: list[Summary] = field(default_factory=list)
    summary_cells: list[tuple[int, object]] = field(default_factory=list)  # (row, predecessors)
    summary_codes: frozenset[str] = frozenset()

    def parent_of(self, code: str) -> str | None:
        """The summary a row with this code sits under (None at the top level)."""
        parent = parent_code(code)  # a missing parent puts the row at the top level
        return parent if parent in self.summary_codes else None


def _code(value: object, where: str, sheet: str, out: Collector) -> str | None:
    """A WBS cell as its code (None when blank or unreadable, with a problem)."""
    if is_blank(value) or isinstance(value, CellError):
        return None
    if isinstance(value, float) and not value.is_integer():
        out.warn(
            "wbs-number",
            f"WBS code {value!r} is a number: 1.10 and 1.1 cannot be told apart",
            sheet,
            where,
            fix="Format the WBS column as text.",
        )
    code = id_text(value) if isinstance(value, (int, float)) else str(value).strip()
    if any(not part.strip() for part in code.split(".")):
        out.error(
            "bad-wbs",
            f'WBS code "{code}" has an empty segment',
            sheet,
            where,
            fix="Write codes as numbers or names separated by single dots, e.g. 1.2.3.",
        )
        return None
    return code


def read_outline(match: TableMatch, out: Collector) -> Outline | None:
    """The WBS column's codes and the summary rows (None without a WBS column)."""
    if "wbs" not in match.columns:
        return None
    col, sheet = match.columns["wbs"], match.sheet.name
    outline = Outline(col)
    first: dict[str, int] = {}
    for r in range(match.header_row + 1, len(match.sheet.rows)):
        row = match.sheet.rows[r]
        if all(is_blank(row[c]) for c in match.columns.values() if c < len(row)):
            continue
        code = _code(row[col] if col < len(row) else None, cell_name(r, col), sheet, out)
        if code is None:
            continue
        if code in first:
            out.error(
                "duplicate-wbs",
                f'WBS code "{code}" is used again (first on row {first[code] + 1})',
                sheet,
                cell_name(r, col),
                fix="Every row needs its own WBS code.",
            )
            continue
        first[code] = r
        outline.codes[r] = code
    parents = {parent_code(c) for c in outline.codes.values()} & set(first)
    outline.summary_codes = frozenset(parents)
    outline.summary_rows = frozenset(first[c] for c in parents)
    for r in sorted(outline.summary_rows):
        outline.summaries.append(_summary(match, r, outline.codes[r], out))
        outline.summary_cells.append((r, _cell(match, r, "predecessors")))
    for s in outline.summaries:
        s.parent = outline.parent_of(s.wbs)
    return outline


def _cell(match: TableMatch, r: int, key: str) -> object:
    c = match.columns.get(key)
    row = match.sheet.rows[r]
    return row[c] if c is not None and c < len(row) else None


def _summary(match: TableMatch, r: int, code: str, out: Collector) -> Summary:
    """The Summary of row ``r``; a warning when it carries estimates (they are ignored)."""
    raw_id, name = _cell(match, r, "id"), _cell(match, r, "name")
    ident = code if is_blank(raw_id) or isinstance(raw_id, CellError) else id_text(raw_id)
    given = [k for k in ESTIMATE_KEYS if not is_blank(_cell(match, r, k))]
    if given:
        out.warn(
            "summary-estimates",
            f"row {r + 1} is the summary of WBS {code}: its estimates are ignored (a summary "
            "spans the activities under it)",
            match.sheet.name,
            cell_name(r, match.columns[given[0]]),
            ident,
            fix="Leave the estimates of summary rows blank.",
        )
    preds = _cell(match, r, "predecessors")
    return Summary(
        wbs=code,
        id=ident,
        name=ident if is_blank(name) or isinstance(name, CellError) else str(name).strip(),
        row=r + 1,
        predecessors="" if is_blank(preds) or isinstance(preds, CellError) else str(preds),
    )


def place_activities(outline: Outline, activities: list[Activity], out: Collector, sheet: str):
    """Each activity's own WBS code and summary; each summary's activities; ID clashes."""
    by_wbs = {s.wbs: s for s in outline.summaries}
    members: dict[str, list[str]] = defaultdict(list)
    for a in activities:
        a.wbs = outline.codes.get(a.row - 1)
        a.summary = outline.parent_of(a.wbs) if a.wbs is not None else None
        parent = a.summary
        while parent is not None:
            members[parent].append(a.id)
            parent = by_wbs[parent].parent
    ids = {a.id: a.row for a in activities}
    for s in outline.summaries:
        s.activities = tuple(members[s.wbs])
        if s.id in ids:
            out.error(
                "duplicate-id",
                f'summary ID "{s.id}" is also an activity\'s ID (row {ids[s.id]})',
                sheet,
                cell_name(s.row - 1, outline.column),
                s.id,
                fix="Give the summary row its own ID, or leave its ID blank.",
            )
        ids[s.id] = s.row


def display_order(activities: list[Activity], summaries: list[Summary]) -> list[tuple[str, int]]:
    """The table's rows in WBS order: ``("summary", j)`` or ``("activity", i)``.

    Each summary comes right above everything under it (so its rows are contiguous);
    siblings keep sheet order.

    Examples
    --------
    >>> acts = [Activity("x", "x", 1, 1, 1, row=3, wbs="1.1", summary="1"),
    ...         Activity("y", "y", 1, 1, 1, row=4, wbs="2")]
    >>> display_order(acts, [Summary("1", "S", "S", row=2)])
    [('summary', 0), ('activity', 0), ('activity', 1)]
    """
    children: dict[str | None, list[tuple[int, str, int]]] = defaultdict(list)
    for j, s in enumerate(summaries):
        children[s.parent].append((s.row, "summary", j))
    for i, a in enumerate(activities):
        children[a.summary].append((a.row, "activity", i))
    order: list[tuple[str, int]] = []
    stack = sorted(children[None], reverse=True)
    while stack:
        _, kind, k = stack.pop()
        order.append((kind, k))
        if kind == "summary":
            stack.extend(sorted(children[summaries[k].wbs], reverse=True))
    return order


# --------------------------------------------------------------------------- links
def _ancestors(node: str, parent: dict[str, str | None]) -> list[str]:
    """The summary IDs above ``node`` (nearest first), not ``node`` itself."""
    chain = []
    up = parent.get(node)
    while up is not None:
        chain.append(up)
        up = parent.get(up)
    return chain


def _inside_error(lk: Link, summary: str, out: Collector) -> None:
    out.error(
        "summary-link-inside",
        f"the link {lk.pred} -> {lk.succ} joins summary {summary} to a row under it",
        lk.sheet,
        lk.cell,
        lk.succ,
        fix="Link the activities under the summary to each other, not to the summary.",
    )


def expand_summary_links(
    links: list[Link], activities: list[Activity], summaries: list[Summary], out: Collector
) -> list[Link]:
    """Links on summaries replaced by links between activities (type and lag kept).

    Each expanded link records where it came from (``via``: the summary ID, or both IDs
    for a link between two summaries) and keeps the cell of the link as written. A link
    that the expansion gives again (same pair, type and lag) is counted once.

    Examples
    --------
    Summary S (WBS 1) over x -> y; a link B -> S becomes B -> x, S -> C becomes y -> C:

    >>> acts = [Activity(i, i, 1, 1, 1, summary=("1" if i in "xy" else None)) for i in "xyBC"]
    >>> s = Summary("1", "S", "S", activities=("x", "y"))
    >>> links = [Link("x", "y"), Link("B", "S"), Link("S", "C")]
    >>> [(k.pred, k.succ, k.via) for k in expand_summary_links(links, acts, [s], Collector())]
    [('x', 'y', None), ('B', 'x', 'S'), ('y', 'C', 'S')]
    """
    by_id = {s.id: s for s in summaries}
    if not any(lk.pred in by_id or lk.succ in by_id for lk in links):
        return links
    id_of = {s.wbs: s.id for s in summaries}
    parent: dict[str, str | None] = {a.id: id_of.get(a.summary) for a in activities}
    parent.update({s.id: id_of.get(s.parent) for s in summaries})
    bucket: dict[str, list[Link]] = defaultdict(list)  # links inside each summary
    usable = []
    for lk in links:
        up_pred, up_succ = _ancestors(lk.pred, parent), _ancestors(lk.succ, parent)
        if lk.pred in by_id and lk.pred in up_succ:
            _inside_error(lk, lk.pred, out)
            continue
        if lk.succ in by_id and lk.succ in up_pred:
            _inside_error(lk, lk.succ, out)
            continue
        usable.append(lk)
        for common in set(up_pred) & set(up_succ):
            bucket[common].append(lk)
    entry: dict[str, list[str]] = {}
    leave: dict[str, list[str]] = {}
    depth = {s.id: len(_ancestors(s.id, parent)) for s in summaries}
    for s in sorted(summaries, key=lambda x: -depth[x.id]):  # deepest first
        has_pred, has_succ = set(), set()
        for lk in bucket[s.id]:
            has_succ.update(leave.get(lk.pred, [lk.pred]))
            has_pred.update(entry.get(lk.succ, [lk.succ]))
        entry[s.id] = [a for a in s.activities if a not in has_pred]
        leave[s.id] = [a for a in s.activities if a not in has_succ]
    return _expanded(usable, entry, leave, by_id)


def _expanded(links: list[Link], entry, leave, by_id) -> list[Link]:
    """Every link with its summary ends replaced, in the order written."""
    seen = {(lk.pred, lk.succ, lk.type, lk.lag) for lk in links if not _on_summary(lk, by_id)}
    result = []
    for lk in links:
        if not _on_summary(lk, by_id):
            result.append(lk)
            continue
        via = ", ".join(x for x in (lk.pred, lk.succ) if x in by_id)
        for p in leave.get(lk.pred, [lk.pred]):
            for q in entry.get(lk.succ, [lk.succ]):
                key = (p, q, lk.type, lk.lag)
                if key not in seen:
                    seen.add(key)
                    result.append(Link(p, q, lk.type, lk.lag, lk.sheet, lk.cell, via))
    return result


def _on_summary(lk: Link, by_id) -> bool:
    return lk.pred in by_id or lk.succ in by_id
