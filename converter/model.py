"""Plain data shared by every stage: activities, links, settings, problems.

Nothing here reads files or computes schedules; the reader builds these objects,
the analysis reads them, the writers print them.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

ERROR = "error"
WARNING = "warning"

#: Precedence diagramming link types, in the order of their integer codes.
LINK_TYPES: tuple[str, ...] = ("FS", "SS", "FF", "SF")
FS, SS, FF, SF = range(4)

DISTRIBUTIONS: tuple[str, ...] = ("pert", "triangular", "uniform")

DEFAULT_SEED = 20240611
DEFAULT_ITERATIONS = 10_000
DEFAULT_PATHS = 10
DEFAULT_CONFIDENCE = (0.5, 0.8, 0.9, 0.95)

#: A risk register row whose Risk ID starts with this (any case) is an example, not read.
RISK_EXAMPLE_PREFIX = "Example"


@dataclass(frozen=True)
class Problem:
    """One thing wrong with the input, with its place.

    ``severity`` is ``"error"`` (blocks the analysis) or ``"warning"`` (reported,
    analysis goes on). ``fix`` is a plain-words remedy for the person who owns
    the sheet. ``activity`` is the ID the problem concerns: an activity's, or a risk's
    on the risk register (``subject`` then says ``"risk"``).
    """

    severity: str
    code: str
    message: str
    sheet: str | None = None
    cell: str | None = None
    activity: str | None = None
    fix: str | None = None
    subject: str = "activity"  # what ``activity`` names: "activity" or "risk"

    @property
    def where(self) -> str:
        if self.sheet and self.cell:
            return f"{self.sheet}!{self.cell}"
        return self.sheet or ""

    def __str__(self) -> str:
        head = f"{self.where}: " if self.where else ""
        act = f" [{self.subject} {self.activity}]" if self.activity else ""
        return f"{self.severity}: {head}{self.message}{act}"

    def as_dict(self) -> dict:
        return {
            "severity": self.severity,
            "code": self.code,
            "message": self.message,
            "sheet": self.sheet,
            "cell": self.cell,
            "activity": self.activity,
        }


@dataclass
class Activity:
    """One row of the activity sheet, estimates in the schedule's time unit."""

    id: str
    name: str
    optimistic: float
    most_likely: float
    pessimistic: float
    row: int = 0
    distribution: str | None = None
    group: str | None = None
    target: float | dt.date | None = None
    wbs: str | None = None  # the activity's own WBS code, when the sheet has a WBS column
    summary: str | None = None  # the WBS code of the summary row it sits under, if any
    #: The single duration as read (the Duration column), in the time unit; None if blank.
    duration: float | None = None
    #: The range class (or inline text such as ``80/100/120``) that made O, M and P from
    #: the duration; None where the O/M/P cells were given (or the duration is fixed).
    range: str | None = None
    #: (low, likely, high) in percent of the duration, where a range made O, M and P.
    range_percent: tuple[float, float, float] | None = None
    not_before: float | dt.date | None = None  # earliest start: an offset, or a date
    actual_start: float | dt.date | None = None  # status: offsets, or dates
    actual_finish: float | dt.date | None = None
    remaining: tuple[float, float, float] | None = None  # remaining O, M, P as given
    remaining_single: bool = False  # one Remaining number (O and P scaled from it)


@dataclass
class Summary:
    """A WBS summary row: not scheduled itself, it spans the activities under it.

    ``id`` is the row's ID cell (its WBS code when that cell is blank): links may name it.
    ``parent`` is the WBS code of the summary above it (None at the top level);
    ``activities`` the IDs of every activity under it, at any depth, in sheet order.
    """

    wbs: str
    id: str
    name: str
    row: int = 0
    parent: str | None = None
    activities: tuple[str, ...] = ()
    predecessors: str = ""  # the row's predecessor cell as typed


@dataclass(frozen=True)
class Link:
    """A precedence link ``pred -> succ`` of a PDM type with a lag (negative: lead)."""

    pred: str
    succ: str
    type: str = "FS"
    lag: float = 0.0
    sheet: str | None = None
    cell: str | None = None
    via: str | None = None  # the summary (or "S1, S2") whose link this one was expanded from

    @property
    def code(self) -> int:
        return LINK_TYPES.index(self.type)


@dataclass
class Settings:
    """Options for one conversion; each carries its origin for the workbook."""

    start_date: dt.date | None = None
    time_unit: str = "working days"  # "working days" | "weeks" | "calendar days" | "working hours"
    hours_per_day: float = 8.0  # working hours in one day, to read "16h" and plan by the hour
    working_days: tuple[int, ...] = (0, 1, 2, 3, 4)  # Monday = 0
    holidays: tuple[dt.date, ...] = ()
    due: float | dt.date | None = None
    iterations: int = DEFAULT_ITERATIONS
    seed: int = DEFAULT_SEED
    distribution: str = "pert"
    correlation: float = 0.0
    confidence_levels: tuple[float, ...] = DEFAULT_CONFIDENCE
    paths: int = DEFAULT_PATHS
    default_range: str | None = None  # the range class of rows with a duration but no range
    sources: dict[str, str] = field(default_factory=dict)
    status_date: float | dt.date | None = None  # progress as of the end of this day / offset

    def source_of(self, name: str) -> str:
        return self.sources.get(name, "default")


@dataclass(frozen=True)
class RangeClass:
    """A range class: low / most likely / high in percent of an activity's single duration.

    ``place`` says where it was defined: ``"Ranges!A3"`` for a class on the Ranges sheet,
    or the activity cell where an inline range (``80/100/120``) was typed.
    """

    name: str
    low: float
    likely: float
    high: float
    place: str = ""
    inline: bool = False


@dataclass
class RawTable:
    """The activity sheet as read: header row and values, for the 'as read' sheet."""

    sheet: str
    header_row: int  # 1-based sheet row of the header
    headers: list[str]
    rows: list[list[object]]  # data rows in sheet order, blank rows included
    first_row: int  # 1-based sheet row of rows[0]


@dataclass
class Risk:
    """One row of the risk register: an event that may delay the activities it hits.

    ``low``, ``likely``, ``high`` are the impact in the schedule's time unit, or, with
    ``percent``, a fraction of each hit activity's sampled duration (0.1 for 10%). The
    ``mitigated_*`` fields are the register after the planned responses (None: not given,
    the unmitigated value applies).
    """

    id: str
    description: str
    probability: float
    low: float
    likely: float
    high: float
    activities: tuple[str, ...]
    percent: bool = False
    group: str | None = None
    row: int = 0
    mitigated_probability: float | None = None
    mitigated_low: float | None = None
    mitigated_likely: float | None = None
    mitigated_high: float | None = None

    @property
    def mitigated(self) -> bool:
        """Whether any mitigated value is given."""
        return self.mitigated_probability is not None or self.mitigated_likely is not None

    def after_response(self) -> Risk:
        """The risk with its mitigated values (the unmitigated ones where none is given)."""
        from dataclasses import replace

        if self.mitigated_likely is None:
            low, likely, high = self.low, self.likely, self.high
        else:
            low, likely, high = self.mitigated_low, self.mitigated_likely, self.mitigated_high
        p = self.probability if self.mitigated_probability is None else self.mitigated_probability
        return replace(self, probability=p, low=low, likely=likely, high=high)


@dataclass
class Schedule:
    """A validated schedule: what the analysis consumes."""

    activities: list[Activity]
    links: list[Link]
    settings: Settings
    input_file: str
    sha256: str
    sheet: str
    raw: RawTable | None = None
    warnings: list[Problem] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)  # e.g. which sheet was chosen and why
    summaries: list[Summary] = field(default_factory=list)  # WBS summary rows, sheet order
    #: The range classes (and inline ranges) that made some activity's O, M and P, in the
    #: order first used.
    ranges: list[RangeClass] = field(default_factory=list)
    risks: list[Risk] = field(default_factory=list)  # the risk register (may be empty)
    risk_sheet: str | None = None  # the sheet the register was read from

    def index(self) -> dict[str, int]:
        return {a.id: i for i, a in enumerate(self.activities)}
