"""Links: predecessor tokens (``A3[SS+2]``), the predecessor column, a links sheet, cycles.

Every link found is checked (it names an activity, not itself; a pair linked twice by
one type is a repeat or a conflict, see :class:`LinkBook`) and the network as a whole must
have no cycle; each problem names the cell the link came from.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable

import networkx as nx

from converter.model import LINK_TYPES, Activity, Link, Settings
from converter.read.sheets import CellError, TableMatch, cell_name
from converter.validate.problems import Collector
from converter.validate.units import UNIT_FIX, as_converted, in_time_units
from converter.values import LARGEST_LAG, UnitError, id_text, is_blank, normalise, shown

LINK_TYPE_WORDS = {
    "fs": "FS",
    "finishtostart": "FS",
    "finishstart": "FS",
    "ss": "SS",
    "starttostart": "SS",
    "startstart": "SS",
    "ff": "FF",
    "finishtofinish": "FF",
    "finishfinish": "FF",
    "sf": "SF",
    "starttofinish": "SF",
    "startfinish": "SF",
}

_SPEC = re.compile(
    r"^(?P<type>FS|SS|FF|SF)?(?P<lag>[+-](?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)"
    r"(?:[eE][+-]?[0-9]+)?(?P<unit>[A-Za-z.]*))?$",
    re.IGNORECASE,
)


# --------------------------------------------------------------------------- notation
def parse_link_token(token: str, settings: Settings | None = None) -> tuple[str, str, float] | str:
    """``ID``, ``ID[+2]``, ``ID[SS]``, ``ID[SS+3]``, ``ID[FF-1]`` -> (id, type, lag).

    Returns an error message (str) when the bracket part cannot be read or its lag is
    beyond the largest lag (:data:`~converter.values.LARGEST_LAG`). Type and lag sit
    only inside the brackets, so IDs may contain ``+`` and ``-``. The ID is read by the
    one rule for IDs (:func:`~converter.values.id_text`): ``1.0`` is ID ``1``. The lag
    may carry a unit (``A3[SS+2d]``, ``A3[+4h]``, ``A3[FF-1w]``), converted to the time
    unit with ``settings`` (:mod:`converter.validate.units`).

    Examples
    --------
    >>> parse_link_token("A3[SS+2]"), parse_link_token("B-1"), parse_link_token("1.0[-1]")
    (('A3', 'SS', 2.0), ('B-1', 'FS', 0.0), ('1', 'FS', -1.0))
    >>> parse_link_token("A3[+4h]"), parse_link_token("A3[FF-1w]")
    (('A3', 'FS', 0.5), ('A3', 'FF', -5.0))
    """
    bracket = _bracket(token)
    if bracket is None:
        return id_text(token), "FS", 0.0
    ident, spec = bracket
    if not ident:
        return f'"{token}" has a bracket part but no activity ID before it'
    s = _SPEC.match(re.sub(r"\s+", "", spec).replace("\u2212", "-"))
    if not s or (s.group("type") is None and s.group("lag") is None and spec):
        return (
            f'"{_short(token)}": cannot read [{_short(spec)}]; write the link type FS, SS, '
            "FF or SF and/or a lag such as +2, -1 or +4h, e.g. A3[SS+2]"
        )
    kind = (s.group("type") or "FS").upper()
    try:  # a number with an optional unit by _SPEC
        lag = in_time_units(s.group("lag"), settings) if s.group("lag") else 0.0
    except UnitError as exc:
        return f'"{_short(token)}": the lag {exc}. {UNIT_FIX}'
    except ValueError:  # a plain number by _SPEC, so one too large to compute with
        lag = math.inf
    if not abs(lag) <= LARGEST_LAG:
        size = _short(s.group("lag")) if math.isfinite(lag) else "too large a number"
        if s.group("unit") and math.isfinite(lag):
            size = as_converted(s.group("lag"), lag, settings)
        return (
            f'"{_short(token)}": the lag ({size}) is beyond {LARGEST_LAG:,.0f} time units '
            "either way, the longest lag or lead pertbook computes with"
        )
    return id_text(ident), kind, lag


def _bracket(token: str) -> tuple[str, str] | None:
    """(ID, bracket part) of ``ID[...]`` (the last bracket pair, with no bracket inside).

    String methods rather than a regular expression: a long cell of spaces must not
    take quadratic time.
    """
    if not token.endswith("]"):
        return None
    opening = token.rfind("[")
    if opening < 0 or "]" in token[opening + 1 : -1]:
        return None
    return token[:opening].strip(), token[opening + 1 : -1].strip()


def _short(text: str, most: int = 40) -> str:
    return text if len(text) <= most else text[: most - 12] + "..." + text[-8:]


def split_predecessors(value: object) -> list[str]:
    """The tokens of a predecessor cell, separated by commas, semicolons or line breaks.

    Examples
    --------
    >>> split_predecessors("A1, B2[SS]; C3"), split_predecessors(7.0)
    (['A1', 'B2[SS]', 'C3'], ['7'])
    """
    if is_blank(value):
        return []
    if not isinstance(value, str):  # a number, date or time cell: one ID
        return [id_text(value)]
    return [t.strip() for t in re.split(r"[,;\n]", value) if t.strip()]


# --------------------------------------------------------------------------- collecting
class LinkBook:
    """The links found so far, and the rule for a pair of activities linked more than once.

    Links of different types between one pair (a ladder: ``B[SS+2]`` with ``B[FF+3]``) are
    all kept. The very same link (pair, type and lag) given again is a warning naming
    both places and is kept once; the same pair and type with another lag is an error
    naming both places.
    """

    def __init__(self, ids: set[str], out: Collector):
        self.ids = ids
        self.out = out
        self.links: list[Link] = []
        self._seen: dict[tuple[str, str, str], Link] = {}

    def add(self, pred: str, succ: str, kind: str, lag: float, sheet: str, cell: str) -> None:
        """Keep the link ``pred -> succ`` unless an equal or conflicting one came first."""
        first = self._seen.get((pred, succ, kind))
        if first is None:
            link = Link(pred, succ, kind, lag, sheet, cell)
            self._seen[(pred, succ, kind)] = link
            self.links.append(link)
            return
        here = f"{sheet}!{cell}"
        there = f"{first.sheet}!{first.cell}"
        if first.lag == lag:
            place = "again in the same cell" if there == here else f"first at {there}"
            self.out.warn(
                "repeated-link",
                f"the {type_and_lag(kind, lag)} link {pred} -> {succ} is given twice "
                f"({place}); it is counted once",
                sheet,
                cell,
                succ,
                fix=f"Delete the copy at {here}.",
            )
            return
        places = (
            f"{_signed(first.lag)} and {_signed(lag)}, both at {here}"
            if there == here
            else f"{_signed(first.lag)} at {there} and {_signed(lag)} at {here}"
        )
        self.out.error(
            "conflicting-lags",
            f"the {kind} link {pred} -> {succ} is given twice with different lags: {places}",
            sheet,
            cell,
            succ,
            fix=f"Keep one lag for the {kind} link; two links between one pair need "
            "different types (e.g. SS with a lag and FF with a lag).",
        )


def type_and_lag(kind: str, lag: float) -> str:
    """A link's type with its lag, as people write it: ``FS``, ``SS+2``, ``FF-1.5``.

    Examples
    --------
    >>> type_and_lag("FS", 0.0), type_and_lag("SS", 2.0), type_and_lag("FF", -1.5)
    ('FS', 'SS+2', 'FF-1.5')
    """
    return kind + (_signed(lag) if lag else "")


def _signed(lag: float) -> str:
    """A lag with its sign, every digit it has (``+2``, ``-1.5``, ``+0.30000000000000004``)."""
    return ("+" if lag >= 0 else "") + shown(float(lag))


def read_predecessor_column(
    book: LinkBook,
    activities: list[Activity],
    cells: list[tuple[int, object]],
    match: TableMatch,
    settings: Settings | None = None,
) -> None:
    """Links from the predecessor cell of each activity (``cells``: (row, value) each);
    lags written with a unit are converted with ``settings``."""
    sheet, cols = match.sheet.name, match.columns
    pc = cols["predecessors"]
    id_column = cell_name(0, cols["id"])[:-1]
    for act, (r, value) in zip(activities, cells):
        if isinstance(value, CellError):  # the reader's error-value names the cell
            continue
        cell = cell_name(r, pc)
        for token in split_predecessors(value):
            parsed = parse_link_token(token, settings)
            if isinstance(parsed, str):
                book.out.error("bad-link", parsed, sheet, cell, act.id)
                continue
            pred, kind, lag = parsed
            if pred == act.id:
                book.out.error(
                    "self-link",
                    f"{act.id} names itself as a predecessor",
                    sheet,
                    cell,
                    act.id,
                    fix="Remove the activity's own ID from its predecessors.",
                )
            elif pred not in book.ids:
                book.out.error(
                    "missing-link",
                    f'predecessor "{pred}" is not an activity ID in column {id_column}',
                    sheet,
                    cell,
                    act.id,
                    fix=f"{sheet}!{cell} names predecessor {pred}, which is not in "
                    f"the ID column.{_hint(pred, book.ids)}",
                )
            else:
                book.add(pred, act.id, kind, lag, sheet, cell)


def _hint(pred: str, ids: Iterable[str]) -> str:
    ids = set(ids)
    parts = pred.split()
    if len(parts) > 1 and all(p in ids for p in parts):
        return " Separate predecessors with commas or semicolons."
    folded = {i.lower().replace(" ", ""): i for i in ids}
    guess = folded.get(pred.lower().replace(" ", ""))
    if guess:
        return f' Did you mean "{guess}"?'
    return " Add it to the ID column or correct the spelling."


def read_links_sheet(book: LinkBook, match: TableMatch, settings: Settings | None = None) -> None:
    """Links from a sheet of Predecessor / Successor / Type / Lag rows (a lag may carry a
    unit, ``2d`` or ``-4h``, converted with ``settings``)."""
    for r in range(match.header_row + 1, len(match.sheet.rows)):
        row = match.sheet.rows[r]
        vals = {k: (row[c] if c < len(row) else None) for k, c in match.columns.items()}
        if all(is_blank(v) for v in vals.values()):
            continue
        if any(isinstance(v, CellError) for v in vals.values()):
            continue  # the reader's error-value names the cell; the row is not guessed at
        link = _link_row(book, match, r, vals, settings)
        if link is not None:
            book.add(*link, match.sheet.name, cell_name(r, match.columns["pred"]))


def _link_row(book: LinkBook, match: TableMatch, r: int, vals: dict, settings=None):
    """(pred, succ, type, lag) of one links-sheet row, or None with its problems recorded."""
    sheet, cols, out = match.sheet.name, match.columns, book.out
    pred = None if is_blank(vals.get("pred")) else id_text(vals["pred"])
    succ = None if is_blank(vals.get("succ")) else id_text(vals["succ"])
    ok = True
    for ident, key in ((pred, "pred"), (succ, "succ")):
        where = cell_name(r, cols[key])
        if ident is None:
            out.error(
                "bad-link",
                "the link row has no " + ("predecessor" if key == "pred" else "successor"),
                sheet,
                where,
            )
            ok = False
        elif ident not in book.ids:
            out.error(
                "missing-link",
                f'"{ident}" is not an activity ID',
                sheet,
                where,
                ident,
                fix=f"{sheet}!{where} names {ident}, which is not in the activity "
                "sheet's ID column.",
            )
            ok = False
    kind = "FS"
    if "type" in cols and not is_blank(vals.get("type")):
        kind = LINK_TYPE_WORDS.get(normalise(vals["type"]))
        if kind is None:
            out.error(
                "bad-link",
                f"link type {shown(vals['type'])} is not one of {', '.join(LINK_TYPES)}",
                sheet,
                cell_name(r, cols["type"]),
                succ,
            )
            ok = False
    lag = 0.0
    if "lag" in cols and not is_blank(vals.get("lag")):
        lag_cell = cell_name(r, cols["lag"])
        try:
            lag = in_time_units(vals["lag"], settings)
        except UnitError as exc:
            out.error("bad-unit", f"lag {exc}", sheet, lag_cell, succ, fix=UNIT_FIX)
            ok = False
        except ValueError as exc:
            out.error("bad-link", f"lag {exc}", sheet, lag_cell, succ)
            ok = False
        else:
            if abs(lag) > LARGEST_LAG:
                out.error(
                    "too-large",
                    f"lag {as_converted(vals['lag'], lag, settings)} is beyond "
                    f"{LARGEST_LAG:,.0f} time units "
                    "either way, the longest lag or lead pertbook computes with",
                    sheet,
                    lag_cell,
                    succ,
                    fix="Check the number and the time unit.",
                )
                ok = False
    if ok and pred == succ:
        out.error(
            "self-link", f"{pred} is linked to itself", sheet, cell_name(r, cols["pred"]), pred
        )
        ok = False
    return (pred, succ, kind, lag) if ok else None


# --------------------------------------------------------------------------- the network
def check_cycles(activities: list[Activity], links: list[Link], out: Collector) -> None:
    """One problem per dependency cycle, printed from the activity listed first."""
    g = nx.DiGraph()
    g.add_nodes_from(a.id for a in activities)
    cell_of, via_of = {}, {}
    for lk in links:
        g.add_edge(lk.pred, lk.succ)
        cell_of[(lk.pred, lk.succ)] = (lk.sheet, lk.cell)
        if lk.via:  # a link expanded from a link written on a WBS summary row
            via_of.setdefault((lk.pred, lk.succ), lk.via)
    if nx.is_directed_acyclic_graph(g):
        return
    pos = {a.id: i for i, a in enumerate(activities)}
    for comp in nx.strongly_connected_components(g):
        if len(comp) < 2:
            continue
        order = [u for u, _ in nx.find_cycle(g.subgraph(comp))]
        k = min(range(len(order)), key=lambda i: pos[order[i]])
        order = order[k:] + order[:k]
        text = " -> ".join(order + [order[0]])
        sheet, cell = cell_of[(order[-1], order[0])]
        pairs = zip(order, order[1:] + order[:1])
        vias = sorted({via_of[pq] for pq in pairs if pq in via_of})
        if vias:
            text += " (through the links written on summary " + "; ".join(vias) + ")"
        out.error(
            "cycle",
            f"dependency cycle: {text}",
            sheet,
            cell,
            order[0],
            fix="Remove or reverse one of these links: an activity cannot wait for itself.",
        )


def warn_unlinked(
    activities: list[Activity], links: list[Link], match: TableMatch, out: Collector
) -> None:
    """A warning for each activity with no predecessors and no successors (of several)."""
    if len(activities) < 2:
        return
    column = match.columns.get("predecessors", match.columns["id"])
    linked = {lk.pred for lk in links} | {lk.succ for lk in links}
    for a in activities:
        if a.id not in linked:
            out.warn(
                "no-links",
                "the activity has no predecessors and no successors",
                match.sheet.name,
                cell_name(a.row - 1, column),
                a.id,
                fix="Link it into the network, or check it belongs in this schedule.",
            )
