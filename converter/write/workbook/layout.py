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
TIMELINE = "Timeline"
HEALTH = "Health check"
SETTINGS = "Settings used"
METHOD = "Method"
INPUT = "Input as read"
WARNINGS = "Warnings"
RISKS = "Risks"

#: Zero-based row of the first data row in the activity and links tables (sheet row 5).
FIRST = 4


@dataclass
class Layout:
    """Column positions of the activity table, which depend on what the analysis has."""

    n: int
    n_links: int
    dates: bool
    simulated: bool
    cols: dict[str, int] = field(default_factory=dict)
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
        if self.risks:
            names += ["risk_delay"]
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
