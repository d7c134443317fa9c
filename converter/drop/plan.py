"""What happens to a finished job: from the worker's report to the list of moves.

A pure step between converting and moving files. :func:`plan_job` looks only at its
arguments: the worker's :class:`Report`, which files the job folder holds
(:class:`JobFiles`) and which names the shared folders already have (``taken``, asked, not
read here). It returns a :class:`Plan`: the outcome, each file's destination (folder,
stem, suffix), the problems report to write, and the line for the log. ``results.py``
carries the plan out; ``folder.settle`` delivers its moves.

Every input ends in exactly one place: ``archive/`` beside its result in ``outbox/``, or
``failed/`` beside its problems report. A plan never replaces a file: a name in use is
stamped with the time (``plan-20250314-101502.analysis.xlsx``), then counted up; a name
longer than the file system takes is shortened to ``<prefix>~<hash>`` (``api.fit_stem``).
"""

from __future__ import annotations

import errno
from collections.abc import Callable
from dataclasses import dataclass

from converter.api import DEFAULT_NAME_MAX, fit_stem
from converter.drop import folder as df
from converter.model import Problem
from converter.write.problems import fault_problem

CONVERTED, INVALID, FAULT, RETRY = "converted", "invalid", "fault", "retry"

#: errno values that say the storage is in trouble (full, gone, read-only), not the file.
STORAGE_ERRNOS = frozenset(
    {
        errno.ENOSPC,
        getattr(errno, "EDQUOT", errno.ENOSPC),
        errno.EROFS,
        errno.EIO,
        getattr(errno, "ESTALE", errno.EIO),
        errno.ENOTCONN,
        getattr(errno, "EHOSTDOWN", errno.EHOSTUNREACH),
        errno.EHOSTUNREACH,
        errno.ENETDOWN,
        errno.ENETUNREACH,
        errno.ETIMEDOUT,
    }
)
FULL_ERRNOS = frozenset({errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC)})

NO_WORKBOOK = "The converter reported success but wrote no workbook."
WORKER_DIED = (
    "The conversion process stopped abruptly on this file twice (for example it ran out of memory)."
)


@dataclass(frozen=True)
class Report:
    """What a worker says about one conversion (it crosses the process boundary).

    ``kind`` is ``"done"`` (``result`` is the ``ConvertResult``), ``"oserror"`` (``text``
    the traceback, ``errno`` the error number) or ``"fault"`` (``text`` the traceback).
    """

    kind: str
    result: object | None = None
    text: str = ""
    errno: int | None = None


@dataclass(frozen=True)
class JobFiles:
    """What the job folder holds after the conversion, and whether it can be written."""

    has_xlsx: bool
    has_json: bool
    writable: bool = True


@dataclass(frozen=True)
class Move:
    """One file of the job folder to ``<part>/<stem><suffix>``."""

    source: str
    part: str  # "outbox" | "archive" | "failed"
    stem: str
    suffix: str


@dataclass(frozen=True)
class Plan:
    """The outcome of a job and where each of its files goes.

    ``problems`` (with ``details``, a fault's traceback) is the report to write into the
    job folder before the moves; ``error`` is set for :data:`RETRY`: storage trouble, the
    input goes back to the inbox and the watcher backs off.
    """

    outcome: str
    moves: tuple[Move, ...] = ()
    note: str = ""
    problems: tuple[Problem, ...] = ()
    details: str | None = None
    error: tuple[int | None, str] | None = None

    def input_move(self, name: str) -> Move | None:
        """The move of the input ``name``, if the plan has one."""
        return next((m for m in self.moves if m.source == name), None)

    def items(self) -> list[list[str]]:
        """The moves as ``folder.write_plan`` records them."""
        return [[m.source, m.part, m.stem, m.suffix] for m in self.moves]


Taken = Callable[[str, str], bool]  # (part, file name) -> a file of that name is there


def plan_job(
    name: str,
    report: Report,
    files: JobFiles,
    taken: Taken,
    stamp: str,
    limit: int = DEFAULT_NAME_MAX,
) -> Plan:
    """The plan for the finished job of input ``name``.

    Parameters
    ----------
    name : str
        The input's file name, as dropped.
    report : Report
        What the worker said.
    files : JobFiles
        Which results the job folder holds; ``writable`` matters only for an OSError.
    taken : callable
        ``taken(part, file_name)`` is true when ``part`` already has a file of that name.
    stamp : str
        The time stamp for names that would clash (``folder.time_stamp()``).
    limit : int
        The file system's name limit in bytes (``api.name_limit``): every name planned
        fits in it, a long stem shortened by ``api.fit_stem`` (``<prefix>~<hash>``).

    Returns
    -------
    Plan
        :data:`CONVERTED` (result and JSON to the outbox, input to the archive),
        :data:`INVALID` or :data:`FAULT` (input, report and JSON to ``failed/``), or
        :data:`RETRY` (storage trouble: nothing moves but the input, back to the inbox).

    Examples
    --------
    >>> from converter.drop.plan import JobFiles, Report, plan_job
    >>> nothing = lambda part, file: False
    >>> fault = plan_job("plan.csv", Report("fault", text="ValueError: x"),
    ...                  JobFiles(False, False), nothing, "20250314-101502")
    >>> fault.outcome, [(m.part, m.stem + m.suffix) for m in fault.moves]
    ('fault', [('failed', 'plan.problems.txt'), ('failed', 'plan.problems.xlsx'), \
('failed', 'plan.csv')])
    """
    kind, text = report.kind, report.text
    if kind == "oserror":
        if report.errno in STORAGE_ERRNOS or not files.writable:
            return Plan(RETRY, error=(report.errno, text))
        kind = "fault"
    if kind == "done":
        result = report.result
        if getattr(result, "ok", False):
            if files.has_xlsx:
                return _converted(name, result, files.has_json, taken, stamp, limit)
            text = NO_WORKBOOK
        else:
            return _invalid(name, result, files.has_json, taken, stamp, limit)
    return _fault(name, text, files.has_json, taken, stamp, limit)


def _converted(name: str, result, has_json: bool, taken: Taken, stamp: str, limit: int) -> Plan:
    stem, suffix = df.split_name(name)
    results = [".analysis.xlsx"] + ([".analysis.json"] if has_json else [])
    out = df.free_stem(stem, results, lambda file: taken("outbox", file), stamp, limit)
    moves = [Move(df.RESULT_JSON, "outbox", out, ".analysis.json")] if has_json else []
    moves.append(Move(df.RESULT_XLSX, "outbox", out, ".analysis.xlsx"))
    kept = df.free_stem(stem, [suffix], lambda file: taken("archive", file), stamp, limit)
    moves.append(Move(name, "archive", kept, suffix))
    note = headline_text(getattr(result, "headline", {}) or {})
    warnings = [p for p in getattr(result, "problems", []) or [] if p.severity != "error"]
    if warnings:
        note = f"{note} ({len(warnings)} warnings)".strip()
    return Plan(CONVERTED, tuple(moves), note)


def _invalid(name: str, result, has_json: bool, taken: Taken, stamp: str, limit: int) -> Plan:
    problems = tuple(getattr(result, "problems", []) or [])
    errors = [p for p in problems if p.severity == "error"]
    first = str(errors[0] if errors else problems[0]) if problems else "no problems"
    note = f"{len(errors)} error{'' if len(errors) == 1 else 's'}; first: {first}"
    return Plan(INVALID, _to_failed(name, has_json, taken, stamp, limit), note, problems)


def _fault(name: str, text: str, has_json: bool, taken: Taken, stamp: str, limit: int) -> Plan:
    summary = text.strip().splitlines()[-1] if text.strip() else "unknown fault"
    moves = _to_failed(name, has_json, taken, stamp, limit)
    return Plan(FAULT, moves, summary, (fault_problem(summary),), details=text)


def _to_failed(name: str, has_json: bool, taken: Taken, stamp: str, limit: int) -> tuple[Move, ...]:
    """The input with its problems report (and JSON) into ``failed/``, the input last."""
    stem, suffix = df.split_name(name)
    suffixes = [suffix, ".problems.txt", ".problems.xlsx"]
    if has_json:
        suffixes.append(".problems.json")
    s, own = _failed_stems(name, suffixes, taken, stamp, limit)
    moves = [Move(df.RESULT_JSON, "failed", s, ".problems.json")] if has_json else []
    moves.append(Move(df.PROBLEMS_TXT, "failed", s, ".problems.txt"))
    moves.append(Move(df.PROBLEMS_XLSX, "failed", s, ".problems.xlsx"))
    moves.append(Move(name, "failed", own, suffix))  # the input last: its report is there
    return tuple(moves)


def _failed_stems(
    name: str, suffixes: list[str], taken: Taken, stamp: str, limit: int
) -> tuple[str, str]:
    """The stem of the reports in ``failed/`` and the input's own stem there.

    Both are one free stem, so a report sits beside its input; but when only the reports'
    longer suffixes made the stem too long to fit, the input keeps the name it was
    dropped with (if that is free), and its reports take the shortened stem.
    """
    stem, _ = df.split_name(name)
    s = df.free_stem(stem, suffixes, lambda file: taken("failed", file), stamp, limit)
    shortened_only = s != stem and s == fit_stem(stem, suffixes, limit)
    return s, stem if shortened_only and not taken("failed", name) else s


def plain_fault_plan(
    name: str, text: str, taken: Taken, stamp: str, limit: int = DEFAULT_NAME_MAX
) -> Plan:
    """The plan when even the problems report could not be written: the input and a
    plain-text note (``text``, already in the job folder) into ``failed/``."""
    stem, suffix = df.split_name(name)
    s, own = _failed_stems(name, [suffix, ".problems.txt"], taken, stamp, limit)
    moves = (Move(df.PROBLEMS_TXT, "failed", s, ".problems.txt"), Move(name, "failed", own, suffix))
    summary = text.strip().splitlines()[-1] if text.strip() else "unknown fault"
    return Plan(FAULT, moves, summary)


def _format_figure(value) -> str:
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


def headline_text(headline: dict) -> str:
    """``key=value`` pairs of the headline figures, for the log line.

    Examples
    --------
    >>> headline_text({"expected_duration": 41.333333, "sd": None, "critical": "A1-A4"})
    'expected_duration=41.33 critical=A1-A4'
    """
    return " ".join(f"{k}={_format_figure(v)}" for k, v in headline.items() if v is not None)
