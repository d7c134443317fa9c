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
        self.cols = {k: i for i, k in enumerate(names)}

    # activity table -----------------------------------------------------------
    def row(self, i: int) -> int:
        return FIRST + i

    @property
    def last_row(self) -> int:
        return FIRST + max(self.n, 1) - 1

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
    }

    def link_cell(self, k: int, key: str, sheet: bool = True) -> str:
        return ref(FIRST + k, self.LINK_COLS[key], LINKS if sheet else None)

    def link_column(self, key: str) -> str:
        return span(FIRST, FIRST + max(self.n_links, 1) - 1, self.LINK_COLS[key], LINKS)
