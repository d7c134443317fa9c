"""Where each figure lives in the workbook: sheet names, columns, rows, defined names."""

from __future__ import annotations

from dataclasses import dataclass, field

from converter.write.workbook.formulas import ref, span

SUMMARY = "Summary"
ACTIVITIES = "Activities"
LINKS = "Links"
PATHS = "Paths"
PROBABILITY = "Probability"
SIMULATION = "Simulation"
TRACE = "Trace"
TIMELINE = "Timeline"
HEALTH = "Health check"
SETTINGS = "Settings used"
METHOD = "Method"
INPUT = "Input as read"
WARNINGS = "Warnings"
RANGES = "Ranges"
RISKS = "Risks"

#: Zero-based row of the first data row in the activity and links tables (sheet row 5).
FIRST = 4

#: Trace sheet: zero-based row of the first traced iteration's summary line, and the
#: columns of that table (what it stands for, the simulated figure, the iteration).
TRACE_FIRST = 4
TRACE_COLS = {"label": 0, "figure": 1, "iteration": 2, "finish": 3, "recorded": 4}


def trace_cell(k: int, key: str, sheet: bool = True) -> str:
    """Reference to traced iteration ``k``'s ``key`` cell on the Trace sheet."""
    return ref(TRACE_FIRST + k, TRACE_COLS[key], TRACE if sheet else None)


def trace_target(k: int) -> str:
    """A hyperlink target (``#Trace!A5``) at traced iteration ``k``'s line."""
    return "#" + ref(TRACE_FIRST + k, 0, TRACE)


@dataclass
class Layout:
    """Column positions of the activity table, which depend on what the analysis has."""

    n: int
    n_links: int
    dates: bool
    simulated: bool
    cols: dict[str, int] = field(default_factory=dict)
    #: The table's rows in WBS order (``("summary", j)`` / ``("activity", i)``), or None
    #: when there are no summary rows: activity ``i`` is then on row FIRST + i.
    order: list[tuple[str, int]] | None = None
    rows: list[int] = field(default_factory=list)  # sheet row of each activity (the row map)
    summary_rows: list[int] = field(default_factory=list)  # sheet row of each summary
    #: Whether some activity has a Duration: its Duration and Range columns are shown.
    ranged: bool = False
    not_before: bool = False  # a Not before column (start constraints given)
    status: bool = False  # the progress columns (a status date given)
    risks: bool = False  # a risk register: the expected risk delay column, last

    def __post_init__(self) -> None:
        names = [
            "id",
            "name",
            "pred",
            "o",
            "m",
            "p",
            "te",
            "var",
            "es",
            "ef",
            "ls",
            "lf",
            "tf",
            "ff",
            "crit",
        ]
        if self.dates:
            names += ["es_date", "ef_date", "ls_date", "lf_date"]
        if self.simulated:
            names += ["criticality", "sensitivity"]
        if self.order is not None:
            names += ["wbs", "span"]
        if self.ranged:
            names += ["duration", "range"]
        on_dates = self.dates  # each constraint or actual offset beside it as a date
        if self.not_before:
            names += ["not_before"] + (["not_before_date"] if on_dates else [])
        if self.status:
            for key in ("actual_start", "actual_finish"):
                names += [key] + ([f"{key}_date"] if on_dates else [])
            names += ["rem_o", "rem_m", "rem_p", "state"]
        if self.risks:
            names += ["risk_delay"]
        self.cols = {k: i for i, k in enumerate(names)}
        self._row_map()

    def _row_map(self) -> None:
        """Build, once, the sheet row of each activity and each summary."""
        if self.order is None:
            return
        self.rows = [0] * self.n
        self.summary_rows = [0] * sum(1 for kind, _ in self.order if kind == "summary")
        for position, (kind, k) in enumerate(self.order):
            (self.summary_rows if kind == "summary" else self.rows)[k] = FIRST + position

    # activity table -----------------------------------------------------------
    def row(self, i: int) -> int:
        """The sheet row (0-based) of activity ``i``."""
        return self.rows[i] if self.order is not None else FIRST + i

    @property
    def table_rows(self) -> int:
        """Rows of the activity table: activities and summary rows."""
        return len(self.order) if self.order is not None else self.n

    @property
    def last_row(self) -> int:
        return FIRST + max(self.table_rows, 1) - 1

    def cell(self, i: int, key: str, sheet: bool = False, absolute: bool = False) -> str:
        """Reference to activity ``i``'s ``key`` column (e.g. ``J7``)."""
        return ref(self.row(i), self.cols[key], ACTIVITIES if sheet else None, absolute)

    def column(self, key: str, sheet: bool = True) -> str:
        return span(FIRST, self.last_row, self.cols[key], ACTIVITIES if sheet else None)

    # links table ---------------------------------------------------------------
    LINK_COLS = {
        "from": 0,
        "to": 1,
        "type": 2,
        "lag": 3,
        "push": 4,
        "slack": 5,
        "pull": 6,
        "driving": 7,
        "via": 8,  # only when links were written on WBS summary rows
    }

    def link_cell(self, k: int, key: str, sheet: bool = True) -> str:
        return ref(FIRST + k, self.LINK_COLS[key], LINKS if sheet else None)

    def link_column(self, key: str) -> str:
        return span(FIRST, FIRST + max(self.n_links, 1) - 1, self.LINK_COLS[key], LINKS)

    # ranges table ------------------------------------------------------------------
    RANGE_COLS = {"range": 0, "low": 1, "likely": 2, "high": 3, "kind": 4, "place": 5}

    def range_cell(self, k: int, key: str) -> str:
        """The absolute reference of range ``k``'s ``key`` on the Ranges sheet."""
        return ref(FIRST + k, self.RANGE_COLS[key], RANGES, absolute=True)
