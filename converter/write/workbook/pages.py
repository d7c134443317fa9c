"""Page set-up: how each sheet prints (orientation, scale, print titles, page breaks).

A sheet is laid on A4 paper. It prints at full size where it fits, scaled down to the page
width where the text stays readable (at least :data:`MIN_FONT` points), and otherwise in
bands of columns, one page wide each, repeating the title columns (ID and description)
and the header rows on every page, in "over, then down" order so that an activity's
whole row is read on consecutive pages. Rows are broken into pages by hand, so that no
page is left with a stray row or two: a tiny overflow is taken back by printing a little
smaller, a larger one is shared evenly among the pages; a chart or a block the caller
names is never split.

Widths are estimated on the wide side (see :func:`column_points`), so a renderer that
draws narrower columns only leaves more margin.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

from converter.write.workbook.rows import DEFAULT_FONT_SIZE, FONT_NAME

#: The smallest body text a reader should have to read on paper, in points (common
#: practice for printed tables; 8 pt is the usual floor for footnotes).
MIN_FONT = 8.0

#: A4 in points (210 x 297 mm).
A4 = (595.0, 842.0)
A4_CODE = 9  # the paper code of the spreadsheet format (ECMA-376 paperSize)

#: Margins in inches: left, right, top, bottom; header and footer sit inside top/bottom.
MARGINS = (0.4, 0.4, 0.55, 0.6)
HEADER_MARGIN = 0.25
FOOTER = "&L&A&RPage &P of &N"  # sheet name on the left, page numbers on the right

#: Digit advance in em of the font a renderer actually draws with: Arial is drawn as
#: Liberation Sans (0.556, its hmtx table) where it is not installed; Calibri, where neither
#: it nor its twin Carlito is installed, as DejaVu Sans (0.636). Excel itself sizes a column
#: unit as 7 px (5.25 pt) for both fonts, which is narrower.
DIGIT_EM = {"Arial": 0.556, "Calibri": 0.636}

#: Safety margin on every estimated width, and the share of the page height planned on.
WIDTH_MARGIN = 1.03
HEIGHT_SHARE = 0.96

#: Fixed padding of a column in points (LibreOffice measured about 4-5 pt).
COLUMN_PAD = 5.0

#: A last page holding fewer rows than this, or less than this share of a page, is stray.
STRAY_ROWS = 3
STRAY_SHARE = 0.25


def column_points(
    width_chars: float, font_name: str = FONT_NAME, font_size: float = DEFAULT_FONT_SIZE
) -> float:
    """Printed width in points of a column ``width_chars`` characters wide (on the wide side).

    Examples
    --------
    >>> round(column_points(10, "Arial", 10.0), 1)
    62.4
    """
    digit = DIGIT_EM.get(font_name, max(DIGIT_EM.values())) * font_size
    return (width_chars * digit + COLUMN_PAD) * WIDTH_MARGIN


def printable(landscape: bool, paper: tuple[float, float] = A4) -> tuple[float, float]:
    """Width and height in points inside the margins of the page.

    Examples
    --------
    >>> printable(True)
    (784.4, 512.2)
    """
    short, long = paper
    width, height = (long, short) if landscape else (short, long)
    left, right, top, bottom = MARGINS
    return (round(width - 72.0 * (left + right), 1), round(height - 72.0 * (top + bottom), 1))


@dataclass
class PagePlan:
    """How a sheet prints; :func:`apply` sets it on an xlsxwriter worksheet."""

    landscape: bool
    scale: int  # percent
    col_breaks: list[int] = field(default_factory=list)  # a page starts at these columns
    row_breaks: list[int] = field(default_factory=list)  # a page starts at these rows
    header_rows: tuple[int, int] | None = None
    title_cols: tuple[int, int] | None = None
    last_row: int = 0
    last_col: int = 0

    @property
    def pages_wide(self) -> int:
        return len(self.col_breaks) + 1

    @property
    def pages_tall(self) -> int:
        return len(self.row_breaks) + 1


def _bands(widths: list[float], first: int, room: float, prefer: Sequence[int] = ()) -> list[int]:
    """Columns at which a new page starts when ``widths[first:]`` are laid in ``room``,
    at the last ``prefer`` column of the page where there is one."""
    breaks: list[int] = []
    start, col = first, first
    while col < len(widths):
        if col > start and sum(widths[start : col + 1]) > room:
            better = [p for p in prefer if start < p <= col]
            start = better[-1] if better else col
            breaks.append(start)
            col = start
        col += 1
    return breaks


def _even_preferred(
    widths: list[float], lead: int, space: float, prefer: Sequence[int], bands: int
) -> list[int] | None:
    """Of the ways to begin ``bands - 1`` bands at ``prefer`` columns that fit ``space``,
    the one with the narrowest widest band (None when there is none)."""
    best, best_width = None, math.inf
    for cut in itertools.combinations(sorted(p for p in prefer if p > lead), bands - 1):
        edges = [lead, *cut, len(widths)]
        widest = max(sum(widths[a:b]) for a, b in zip(edges, edges[1:]))
        if widest <= space and widest < best_width:
            best, best_width = list(cut), widest
    return best


def plan_columns(
    widths: Sequence[float],
    title_cols: tuple[int, int] | None,
    room: float,
    min_scale: float,
    prefer: Sequence[int] = (),
) -> tuple[float, list[int]]:
    """Scale and column breaks for columns ``widths`` (points) on pages ``room`` wide.

    One band when the whole width fits at ``min_scale`` or more; otherwise the fewest bands
    at ``min_scale``, the title columns repeated on each, then the largest scale that keeps
    that many bands, the columns shared evenly (a band begins at a ``prefer`` column
    where one falls on the page).

    Examples
    --------
    >>> plan_columns([100.0] * 4, None, 500.0, 0.8)
    (1.0, [])
    >>> plan_columns([100.0] * 10, (0, 1), 400.0, 0.8)
    (0.8, [5, 8])
    """
    widths = list(widths)
    total = sum(widths)
    if total <= room:
        return 1.0, []
    if room / total >= min_scale:
        return room / total, []
    lead = 0 if title_cols is None else title_cols[1] + 1
    title = sum(widths[:lead])
    space = room / min_scale - title
    if space <= 0 or any(w > space for w in widths[lead:]):  # titles too wide to repeat
        return min_scale, _bands(widths, 0, room / min_scale, prefer)
    breaks = _bands(widths, lead, space, prefer)
    even = _even_preferred(widths, lead, space, prefer, len(breaks) + 1)
    if even is not None:
        breaks = even
    elif not set(breaks) <= set(prefer):
        # share the columns evenly: the narrowest room that still gives as many bands
        bands = len(breaks) + 1
        low, high = max(widths[lead:]), space
        for _ in range(40):
            mid = (low + high) / 2.0
            if len(_bands(widths, lead, mid, prefer)) + 1 <= bands:
                high = mid
            else:
                low = mid
        breaks = _bands(widths, lead, high, prefer)
    if lead:
        breaks = [b for b in breaks if b > lead]
    widest = max(title + sum(widths[a:b]) for a, b in zip([lead] + breaks, breaks + [len(widths)]))
    return min(1.0, room / widest), breaks


def plan_rows(
    heights: Sequence[float],
    header_rows: tuple[int, int] | None,
    room: float,
    keep: Sequence[tuple[int, int]] = (),
    starts: Sequence[int] = (),
) -> list[int]:
    """Row breaks for rows ``heights`` (points, at print scale) on pages ``room`` tall.

    Pages are filled in turn, the header rows repeated at the top of each later page;
    a block in ``keep`` (first and last row) moves whole to the next page when it would be
    split (unless it is taller than a page); a row in ``starts`` always begins a page. When
    the last page before such a row, or the very last, would hold a stray row or two, the
    rows since the previous start are shared evenly among their pages instead.

    Examples
    --------
    >>> plan_rows([10.0] * 25, (0, 0), 100.0)
    [10, 19]
    >>> plan_rows([10.0] * 21, (0, 0), 100.0)   # greedy would leave 2 rows alone
    [8, 15]
    >>> plan_rows([10.0] * 30, None, 100.0, starts=[12])
    [6, 12, 22]
    """
    breaks: list[int] = []
    for first, end in _chunks(len(heights), starts):
        if first:
            breaks.append(first)
        part = _fill(heights, header_rows, room, keep, first, end)
        if part and _stray(heights, part, end, room):
            pages = len(part) + 1
            # no lower than the tallest kept block that fits a page, so none is split
            blocks = [sum(heights[a : b + 1]) for a, b in keep if first <= a and b < end]
            low = max([room / pages] + [h for h in blocks if h <= room])
            high = room
            for _ in range(40):  # the smallest page height that still gives this many pages
                mid = (low + high) / 2.0
                if len(_fill(heights, header_rows, mid, keep, first, end)) + 1 <= pages:
                    high = mid
                else:
                    low = mid
            part = _fill(heights, header_rows, high, keep, first, end)
        breaks += part
    return breaks


def _chunks(n: int, starts: Sequence[int]) -> list[tuple[int, int]]:
    """The row ranges [first, end) between the rows that must begin a page."""
    bounds = [0] + sorted({s for s in starts if 0 < s < n}) + [n]
    return list(zip(bounds, bounds[1:]))


def _fill(
    heights: Sequence[float],
    header_rows: tuple[int, int] | None,
    room: float,
    keep: Sequence[tuple[int, int]],
    first: int = 0,
    end: int | None = None,
) -> list[int]:
    """Greedy page breaks for rows ``first`` to ``end - 1``, a page starting at ``first``."""
    end = len(heights) if end is None else end
    header = 0.0 if header_rows is None else sum(heights[header_rows[0] : header_rows[1] + 1])
    block: dict[int, list[tuple[int, int]]] = {}
    for top, bottom in keep:
        for row in range(top, bottom + 1):
            block.setdefault(row, []).append((top, bottom))
    breaks: list[int] = []
    used = header if header_rows is not None and first > header_rows[1] else 0.0
    row = first
    while row < end:
        start = breaks[-1] if breaks else first
        if used + heights[row] > room and row > start:
            cut = row  # or the top of the outermost block around it that fits a page
            for top, bottom in sorted(block.get(row, []), key=lambda b: (b[0], -b[1])):
                if top > start and sum(heights[top : bottom + 1]) + header <= room:
                    cut = top
                    break
            breaks.append(cut)
            row = cut
            used = header if header_rows is not None and cut > header_rows[1] else 0.0
            continue
        used += heights[row]
        row += 1
    return breaks


def _stray(heights: Sequence[float], breaks: list[int], end: int, room: float) -> bool:
    """Whether the last page, rows ``breaks[-1]`` to ``end - 1``, holds only a row or two."""
    last = heights[breaks[-1] : end]
    return len(last) < STRAY_ROWS or sum(last) < STRAY_SHARE * room


def _greedy(heights, header_rows, room, keep, starts) -> tuple[int, int]:
    """Pages of greedy filling, and how many of them (before a start, or the last) are
    stray."""
    pages = strays = 0
    for first, end in _chunks(len(heights), starts):
        part = _fill(heights, header_rows, room, keep, first, end)
        pages += len(part) + 1
        strays += bool(part and _stray(heights, part, end, room))
    return pages, strays


def plan(
    widths_chars: Sequence[float],
    heights: Sequence[float],
    *,
    header_rows: tuple[int, int] | None = None,
    title_cols: tuple[int, int] | None = None,
    keep: Sequence[tuple[int, int]] = (),
    starts: Sequence[int] = (),
    bands: Sequence[int] = (),
    font_name: str = FONT_NAME,
    font_size: float = DEFAULT_FONT_SIZE,
    paper: tuple[float, float] = A4,
) -> PagePlan:
    """The page set-up of a sheet with columns ``widths_chars`` and rows ``heights`` (pt).

    Parameters
    ----------
    widths_chars : sequence of float
        Width of every printed column, in characters.
    heights : sequence of float
        Height of every printed row, in points.
    header_rows, title_cols : (first, last), optional
        Rows and columns to repeat on every page.
    keep : sequence of (first_row, last_row)
        Blocks (charts, short tables) not to split across pages.
    starts : sequence of int
        Rows that begin a new page.
    bands : sequence of int
        Columns where a band of a wide table should begin, where one falls on the page.
    font_name, font_size : str, float
        The sheet's body font: the scale never takes it below :data:`MIN_FONT`.
    paper : (width, height) in points

    Returns
    -------
    PagePlan

    Examples
    --------
    >>> p = plan([10, 30] + [9] * 20, [15.0] * 60, header_rows=(3, 3), title_cols=(0, 1),
    ...          font_name="Arial", font_size=10.0)
    >>> p.landscape, p.scale, p.pages_wide, p.pages_tall
    (True, 97, 2, 2)
    """
    points = [column_points(w, font_name, font_size) for w in widths_chars]
    landscape = sum(points) > printable(False, paper)[0]
    width, height = printable(landscape, paper)
    height *= HEIGHT_SHARE
    min_percent = math.ceil(100.0 * min(1.0, MIN_FONT / font_size) - 1e-9)
    scale, col_breaks = plan_columns(points, title_cols, width, min_percent / 100.0, bands)
    percent = max(min_percent, min(100, math.floor(scale * 100.0 + 1e-9)))
    strays = _greedy(heights, header_rows, height * 100.0 / percent, keep, starts)[1]
    if strays:  # a tiny overflow: print a little smaller, while the text stays readable
        for smaller in range(percent - 1, min_percent - 1, -1):
            fewer = _greedy(heights, header_rows, height * 100.0 / smaller, keep, starts)[1]
            if fewer < strays:  # the largest scale that leaves fewer stray pages
                strays, percent = fewer, smaller
            if not strays:
                break
    row_breaks = plan_rows(heights, header_rows, height * 100.0 / percent, keep, starts)
    return PagePlan(
        landscape=landscape,
        scale=percent,
        col_breaks=col_breaks,
        row_breaks=row_breaks,
        header_rows=header_rows,
        title_cols=title_cols if col_breaks else None,
        last_row=len(heights) - 1,
        last_col=len(widths_chars) - 1,
    )


def apply(ws, p: PagePlan) -> None:
    """Set plan ``p`` on the xlsxwriter worksheet ``ws``."""
    if p.landscape:
        ws.set_landscape()
    else:
        ws.set_portrait()
    ws.set_paper(A4_CODE)
    left, right, top, bottom = MARGINS
    ws.set_margins(left=left, right=right, top=top, bottom=bottom)
    ws.set_footer(FOOTER, {"margin": HEADER_MARGIN})
    ws.print_area(0, 0, p.last_row, p.last_col)
    ws.set_print_scale(p.scale)
    if p.header_rows is not None:
        ws.repeat_rows(*p.header_rows)
    if p.title_cols is not None:
        ws.repeat_columns(*p.title_cols)
    if p.col_breaks:
        ws.set_v_pagebreaks(p.col_breaks)
        ws.print_across()
    if p.row_breaks:
        ws.set_h_pagebreaks(p.row_breaks)


# ------------------------------------------------------------- reading an xlsxwriter sheet
def sheet_geometry(ws) -> tuple[list[float], list[float], list[tuple[int, int]]]:
    """Column widths (characters) and row heights (points) of everything printed on ``ws``,
    cells and charts, and the row span of each chart.

    Reads the worksheet's own bookkeeping (xlsxwriter keeps sizes in pixels: a column of
    ``w`` characters is ``7 w + 5`` px, a row of ``h`` points ``4 h / 3`` px).
    """
    last_row = ws.dim_rowmax if ws.dim_rowmax is not None else 0
    last_col = ws.dim_colmax if ws.dim_colmax is not None else 0
    spans = []
    for row, col, chart, x_offset, y_offset, x_scale, y_scale, anchor, *_ in ws.charts:
        width = int(0.5 + chart.width * x_scale)
        height = int(0.5 + chart.height * y_scale)
        box = ws._position_object_pixels(col, row, x_offset, y_offset, width, height, anchor)
        col_end, row_end = box[4], box[5]
        last_row, last_col = max(last_row, row_end), max(last_col, col_end)
        spans.append((box[1], row_end))
    widths = []
    for col in range(last_col + 1):
        px = ws._size_col(col)
        widths.append((px - 5) / 7.0 if px >= 12 else px / 12.0)
    heights = [ws._size_row(row) * 0.75 for row in range(last_row + 1)]
    return widths, heights, spans


def fits_one_page(ws, last_row: int) -> bool:
    """Whether rows 0 to ``last_row`` of ``ws`` fit on one page at full size, either way up
    (so they do at any scale the plan picks)."""
    heights = [ws._size_row(row) * 0.75 for row in range(last_row + 1)]
    return sum(heights) <= printable(True)[1] * HEIGHT_SHARE


def set_up(
    ws,
    *,
    header_rows: tuple[int, int] | None = None,
    title_cols: tuple[int, int] | None = None,
    keep: Sequence[tuple[int, int]] = (),
    starts: Sequence[int] = (),
    bands: Sequence[int] = (),
    font_name: str = FONT_NAME,
    font_size: float = DEFAULT_FONT_SIZE,
) -> PagePlan:
    """Plan and set the page set-up of a finished sheet (call it last); returns the plan.

    ``header_rows`` and ``title_cols`` (first, last) repeat on every page; the rows of each
    block in ``keep`` and of each chart stay on one page where they fit; a row in
    ``starts`` begins a new page; a wide table's bands begin at ``bands`` columns where
    they can.
    """
    widths, heights, charts = sheet_geometry(ws)
    p = plan(
        widths,
        heights,
        header_rows=header_rows,
        title_cols=title_cols,
        keep=list(keep) + charts,
        starts=starts,
        bands=bands,
        font_name=font_name,
        font_size=font_size,
    )
    apply(ws, p)
    ws.page_plan = p
    return p


def is_set_up(ws) -> bool:
    """Whether :func:`set_up` has run on ``ws``."""
    return getattr(ws, "page_plan", None) is not None
