"""Row heights for wrapped text, computed from the text and its column width.

LibreOffice does not grow a row for wrapped text written by xlsxwriter (the file carries
no measured heights), and Excel only does so on an edit; so every row that holds wrapped
text gets an explicit height from this module.

The unit of width is the spreadsheet's own column unit: one *character* is the advance of
the digit "0" in the workbook's default font at its default size. Excel and LibreOffice
both size a column of width ``w`` as ``w`` digit advances plus a small fixed padding, in
whichever font they actually render with (LibreOffice substitutes a missing font and
measures the substitute's digit). A text's width in that unit therefore depends only on
the shape of its characters relative to the digit, which varies little across the sans
fonts a workbook meets. :data:`CHAR_WIDTHS` holds, per printable ASCII character, the
larger of its advance in DejaVu Sans and in Liberation Sans (metric-compatible with
Arial), each divided by the same font's digit advance and rounded up to 0.05; the
metrics are read from the fonts' ``hmtx`` tables (fontTools), and
``tests/write/test_rows.py`` checks the table against them and against LibreOffice's
own line breaking.
"""

from __future__ import annotations

import math
import unicodedata
from collections.abc import Iterable

#: The workbook's default font and its size in points (every cell without its own).
#: Arial is drawn as its metric twin Liberation Sans where it is not installed (LibreOffice
#: ships it), so the pages look the same in Excel and in LibreOffice.
FONT_NAME = "Arial"
DEFAULT_FONT_SIZE = 10.0

#: Character advance in digit widths: the larger of DejaVu Sans and Liberation Sans.
_WIDTH_GROUPS = {
    0.45: "'ijl",
    0.5: " ,.I",
    0.55: "/:;\\|",
    0.6: "-f",
    0.65: "!()[]rt",
    0.75: '"',
    0.8: "*`",
    0.9: "Jcsz",
    0.95: "kvxy",
    1.0: "$0123456789?L_abdeghnopqu{}",
    1.1: "FTZ",
    1.2: "ABEKPSVXY",
    1.25: "&",
    1.3: "CDHNRUw",
    1.35: "#+<=>^~",
    1.4: "GOQ",
    1.5: "M",
    1.55: "m",
    1.6: "%",
    1.7: "W",
    1.85: "@",
}
CHAR_WIDTHS: dict[str, float] = {c: w for w, chars in _WIDTH_GROUPS.items() for c in chars}

#: Width of a character outside the table (after accents are stripped): wide, to be safe.
OTHER_WIDTH = 1.8

#: Bold text is wider: at most about 12% for letters in DejaVu Sans Bold against Book.
BOLD_FACTOR = 1.12

#: Safety margin on every text width: Excel rounds the digit advance down to whole pixels
#: when it sizes columns (7 px for an advance of about 7.4 px), so it fits about 5% less.
WIDTH_MARGIN = 1.08

#: Line pitch as a multiple of the font size. The fonts' own pitches (ascent + descent +
#: line gap, hhea table) are 1.164 (DejaVu Sans) and 1.149 (Liberation Sans); Excel gives
#: a line of 10 pt Arial a 12.75 pt row (1.275, from memory). 1.25 with
#: :data:`ROW_PADDING` makes one 10 pt line exactly that default row.
LINE_FACTOR = 1.25

#: Points added to a row for the cell's top and bottom margins.
ROW_PADDING = 0.25

#: The workbook's default row: one line of the default font (17 px at 96 dpi).
DEFAULT_ROW_HEIGHT = 12.75
DEFAULT_ROW_PIXELS = 17

#: Row heights are whole pixels at 96 dpi: multiples of 0.75 pt.
PIXEL = 0.75

#: Excel's largest row height in points (specification limit, from memory).
MAX_ROW_HEIGHT = 409.0


def char_width(ch: str) -> float:
    """Advance of one character in digit widths (accented letters as their base letter)."""
    width = CHAR_WIDTHS.get(ch)
    if width is not None:
        return width
    base = unicodedata.normalize("NFKD", ch)[:1]
    return CHAR_WIDTHS.get(base, OTHER_WIDTH)


def text_width(text: str, font_size: float = DEFAULT_FONT_SIZE, bold: bool = False) -> float:
    """Width of one line of ``text`` in column units, with the safety margin.

    Parameters
    ----------
    text : str
        One line (no newline).
    font_size : float
        Font size in points; widths scale with it against :data:`DEFAULT_FONT_SIZE`.
    bold : bool
        Bold text is :data:`BOLD_FACTOR` wider.

    Returns
    -------
    float
        The width a column needs, in characters (the ``set_column`` unit), to hold it.

    Examples
    --------
    >>> round(text_width("0000000000", bold=False) / WIDTH_MARGIN, 6)
    10.0
    >>> text_width("Wm", font_size=22.0) > text_width("Wm")
    True
    """
    raw = sum(map(char_width, text))
    scale = font_size / DEFAULT_FONT_SIZE * (BOLD_FACTOR if bold else 1.0)
    return raw * scale * WIDTH_MARGIN


def wrap_lines(
    text: str, width_chars: float, font_size: float = DEFAULT_FONT_SIZE, bold: bool = False
) -> list[str]:
    """Break ``text`` into the lines a spreadsheet shows in a column ``width_chars`` wide.

    Explicit newlines always break; otherwise words are packed greedily, breaking only at
    spaces (a spreadsheet may also break after a hyphen, which gives fewer lines, never
    more); a word longer than the line is broken between characters, as LibreOffice and
    Excel do.

    Parameters
    ----------
    text : str
        The cell text.
    width_chars : float
        Column width in characters (for merged cells, :func:`merged_width`).
    font_size, bold
        As for :func:`text_width`.

    Returns
    -------
    list of str
        The lines, at least one (an empty text is one empty line).

    Examples
    --------
    >>> wrap_lines("one two three", 6)
    ['one', 'two', 'three']
    >>> wrap_lines("a\\nb", 40)
    ['a', 'b']
    >>> len(wrap_lines("x" * 30, 10))
    4
    """
    lines: list[str] = []
    for paragraph in text.split("\n"):
        lines.extend(_wrap_paragraph(paragraph, width_chars, font_size, bold))
    return lines


#: How close to the column width a line's running width must come before it is measured
#: again from scratch (the running sum differs from :func:`text_width`'s by rounding only).
_NEAR = 1e-6


def _wrap_paragraph(text: str, width: float, font_size: float, bold: bool) -> list[str]:
    """Greedy packing of one paragraph. The width of the line being packed is kept as a
    running sum, so each word is measured once (not the whole line again per word); a
    line within :data:`_NEAR` of the width is measured with :func:`text_width` itself, so
    the breaks are exactly those of measuring every candidate line."""
    scale = font_size / DEFAULT_FONT_SIZE * (BOLD_FACTOR if bold else 1.0)
    space = char_width(" ")
    lines: list[str] = []
    current, used = "", 0.0  # ``used``: the summed character widths of ``current``
    for word in text.split(" "):
        candidate = word if not current else f"{current} {word}"
        grown = sum(map(char_width, word), used + space if current else 0.0)
        measured = grown * scale * WIDTH_MARGIN
        if abs(measured - width) < _NEAR:
            measured = text_width(candidate, font_size, bold)
        if measured <= width:
            current, used = candidate, grown
            continue
        if current:
            lines.append(current)
        current = ""
        while word:  # a word wider than the line: break it (each piece measured once)
            cut = _longest_prefix(word, width, font_size, bold)
            if cut >= len(word):
                break
            cut = max(1, cut)
            lines.append(word[:cut])
            word = word[cut:]
        current, used = word, sum(map(char_width, word))
    lines.append(current)
    return lines


def _longest_prefix(word: str, width: float, font_size: float, bold: bool) -> int:
    """Number of leading characters of ``word`` that fit in ``width``."""
    scale = font_size / DEFAULT_FONT_SIZE * (BOLD_FACTOR if bold else 1.0) * WIDTH_MARGIN
    used = 0.0
    for k, ch in enumerate(word):
        used += char_width(ch) * scale
        if used > width:
            return k
    return len(word)


def lines_needed(
    text: str, width_chars: float, font_size: float = DEFAULT_FONT_SIZE, bold: bool = False
) -> int:
    """How many lines ``text`` takes when wrapped in a column ``width_chars`` wide.

    Examples
    --------
    >>> lines_needed("Why the two views differ", 60)
    1
    >>> lines_needed("Why the two views differ", 8)
    4
    """
    return len(wrap_lines(text, width_chars, font_size, bold))


def line_height(font_size: float = DEFAULT_FONT_SIZE) -> float:
    """Points one line of text takes in a row (see :data:`LINE_FACTOR`).

    Examples
    --------
    >>> round(line_height(11.0), 2)
    13.75
    """
    return font_size * LINE_FACTOR


def height_for_lines(lines: int, font_size: float = DEFAULT_FONT_SIZE) -> float:
    """Row height in points for ``lines`` lines, rounded up to a whole pixel (0.75 pt).

    Examples
    --------
    >>> height_for_lines(1) == DEFAULT_ROW_HEIGHT
    True
    >>> height_for_lines(3, font_size=8.0)
    30.75
    """
    height = max(1, lines) * line_height(font_size) + ROW_PADDING
    return min(MAX_ROW_HEIGHT, math.ceil(height / PIXEL - 1e-9) * PIXEL)


def lines_held(height: float, font_size: float = DEFAULT_FONT_SIZE) -> int:
    """How many lines of ``font_size`` text a row ``height`` points tall shows in full.

    Examples
    --------
    >>> lines_held(height_for_lines(4))
    4
    >>> lines_held(DEFAULT_ROW_HEIGHT)
    1
    >>> lines_held(DEFAULT_ROW_HEIGHT, font_size=12.0)
    0
    """
    return int((height - ROW_PADDING) / line_height(font_size) + 1e-9)


def merged_width(widths: Iterable[float]) -> float:
    """Width in characters of cells merged across columns of the given widths.

    Each column also carries a padding of 5 pixels (of 7 per character), which a merged
    cell gains for every column after the first.

    Examples
    --------
    >>> round(merged_width([10, 10]), 2)
    20.71
    """
    widths = list(widths)
    return sum(widths) + max(0, len(widths) - 1) * 5.0 / 7.0


Cell = tuple[str, float] | tuple[str, float, float] | tuple[str, float, float, bool]


def row_height(cells: Iterable[Cell], minimum: float | None = None) -> float:
    """Height in points of a row whose wrapped cells are given as ``(text, width[, size,
    bold])``: the tallest cell decides.

    Parameters
    ----------
    cells : iterable of tuples
        ``(text, width_chars)`` with optional ``font_size`` and ``bold``.
    minimum : float, optional
        A floor, e.g. :data:`DEFAULT_ROW_HEIGHT`, so short rows keep their height.

    Returns
    -------
    float
        Points, at most :data:`MAX_ROW_HEIGHT`.

    Examples
    --------
    >>> row_height([("short", 30), ("a longer text that wraps onto two lines", 20)])
    25.5
    >>> row_height([("short", 30, 8.0)], minimum=DEFAULT_ROW_HEIGHT)
    12.75
    """
    height = 0.0
    for cell in cells:
        text, width = cell[0], cell[1]
        size = cell[2] if len(cell) > 2 else DEFAULT_FONT_SIZE
        bold = cell[3] if len(cell) > 3 else False
        height = max(height, height_for_lines(lines_needed(text, width, size, bold), size))
    if minimum is not None:
        height = max(height, minimum)
    return height


def shorten(text: str, width_chars: float, font_size: float = DEFAULT_FONT_SIZE) -> str:
    """``text`` cut to one line of ``width_chars``, at a word boundary, with an ellipsis.

    Examples
    --------
    >>> shorten("IT-05 Hardware delivery (supplier lead time)", 24)
    'IT-05 Hardware delivery…'
    >>> shorten("IT-05 Kick-off", 24)
    'IT-05 Kick-off'
    """
    if text_width(text, font_size) <= width_chars:
        return text
    room = width_chars - text_width("…", font_size)
    cut = _longest_prefix(text, room, font_size, False)
    space = text.rfind(" ", 0, cut + 1)
    if space > cut // 2:  # break at a word where that keeps most of the room
        cut = space
    return text[:cut].rstrip(" ,;:-(") + "…"


def fit_row(ws, row: int, cells: Iterable[Cell]) -> float:
    """Give row ``row`` of the xlsxwriter sheet ``ws`` the height its wrapped ``cells`` need,
    where that is more than the default; returns the height."""
    height = row_height(cells, minimum=DEFAULT_ROW_HEIGHT)
    if height > DEFAULT_ROW_HEIGHT:
        ws.set_row(row, height)
    return height


def rows_spanned(pixels: float) -> int:
    """Default rows an object ``pixels`` tall covers (an object below starts after them).

    Examples
    --------
    >>> rows_spanned(340)
    20
    """
    return math.ceil(pixels / DEFAULT_ROW_PIXELS)
