"""The problems of one rejected input, written for the person who owns the sheet.

Two files with the same content: ``<stem>.problems.txt`` (read anywhere) and
``<stem>.problems.xlsx`` (one row per problem, filterable). Each problem gives its
place (sheet and cell, activity) and what to do: ``Problem.fix`` where the
validator gave one, else ``Problem.message``.
"""

from __future__ import annotations

from pathlib import Path

from converter.model import ERROR, WARNING, Problem

FAULT = "fault"

FAULT_MESSAGE = (
    "pertbook itself failed while converting this file. This is a fault in the tool, "
    "not necessarily in your sheet."
)
FAULT_FIX = (
    "Send this file and its .problems.txt to whoever looks after pertbook. "
    "You may drop the file into the inbox again once they say it is fixed."
)


def fault_problem(summary: str) -> Problem:
    """The one problem reported for an input that crashed the converter."""
    return Problem(FAULT, "internal-fault", f"{FAULT_MESSAGE} ({summary})", fix=FAULT_FIX)


def place(problem: Problem) -> str:
    """``Activities!C4`` or ``Activities`` or ``""``, plus the activity if known."""
    where = problem.where
    if problem.activity:
        act = f"{problem.subject} {problem.activity}"
        where = f"{where} ({act})" if where else act
    return where


def advice(problem: Problem) -> str:
    """What to do: the validator's fix, else its message."""
    return problem.fix or problem.message


def ordered(problems: list[Problem]) -> list[Problem]:
    """Faults and errors first (they block the conversion), then warnings; stable."""
    rank = {FAULT: 0, ERROR: 1}
    return sorted(problems, key=lambda p: rank.get(p.severity, 2))


def _counts(problems: list[Problem]) -> str:
    errors = sum(p.severity == ERROR for p in problems)
    warnings = sum(p.severity == WARNING for p in problems)
    faults = sum(p.severity == FAULT for p in problems)
    parts = []
    for n, word in ((errors, "error"), (warnings, "warning"), (faults, "fault")):
        if n:
            parts.append(f"{n} {word}{'' if n == 1 else 's'}")
    return ", ".join(parts) or "no problems listed"


def problems_text(input_name: str, problems: list[Problem], details: str | None = None) -> str:
    """The plain-text report. ``details``: a fault's technical write-up, appended."""
    lines = [
        f"pertbook could not convert {input_name} ({_counts(problems)}).",
        "",
    ]
    if any(p.severity == FAULT for p in problems):
        lines.append("The file was not changed. It is in this folder, beside this report.")
    else:
        lines.append(
            "Correct the errors below in your copy of the file and drop it into the inbox "
            "again. The file here is exactly as it was dropped."
        )
    lines.append("")
    for i, p in enumerate(ordered(problems), 1):
        where = place(p)
        head = f"{i}. {p.severity.upper()}"
        if where:
            head += f" at {where}"
        lines.append(head)
        lines.append(f"   {p.message}")
        if p.fix and p.fix != p.message:
            lines.append(f"   What to do: {p.fix}")
        lines.append("")
    if not problems:
        lines.append("The converter rejected the file without saying why (a fault in pertbook).")
        lines.append("")
    if details:
        lines.append("Technical details (for whoever looks after pertbook):")
        lines.append("")
        lines.extend(details.rstrip("\n").splitlines())
        lines.append("")
    return "\n".join(lines)


def write_problems_text(
    path: Path, input_name: str, problems: list[Problem], details: str | None = None
) -> None:
    Path(path).write_text(problems_text(input_name, problems, details), encoding="utf-8")


HEADERS = ("#", "Severity", "Sheet", "Cell", "Activity", "What is wrong", "What to do", "Code")
WIDTHS = (5, 10, 16, 8, 12, 60, 60, 22)


def write_problems_xlsx(
    path: Path, input_name: str, problems: list[Problem], details: str | None = None
) -> None:
    """One row per problem under a title; a second sheet with a fault's details."""
    import xlsxwriter

    options = {"strings_to_formulas": False, "strings_to_urls": False, "strings_to_numbers": False}
    book = xlsxwriter.Workbook(str(path), options)
    try:
        bold = book.add_format({"bold": True})
        wrap = book.add_format({"text_wrap": True, "valign": "top"})
        top = book.add_format({"valign": "top"})
        sheet = book.add_worksheet("Problems")
        sheet.write_string(0, 0, f"pertbook could not convert {input_name}", bold)
        sheet.write_string(1, 0, _counts(problems))
        header_row = 3
        for col, (title, width) in enumerate(zip(HEADERS, WIDTHS, strict=True)):
            sheet.write_string(header_row, col, title, bold)
            sheet.set_column(col, col, width)
        for i, p in enumerate(ordered(problems), 1):
            row = header_row + i
            sheet.write_number(row, 0, i, top)
            values = (p.severity, p.sheet, p.cell, p.activity, p.message, advice(p), p.code)
            for col, value in enumerate(values, 1):
                sheet.write_string(row, col, value or "", wrap)
        last = header_row + max(len(problems), 1)
        sheet.autofilter(header_row, 0, last, len(HEADERS) - 1)
        sheet.freeze_panes(header_row + 1, 0)
        if details:
            extra = book.add_worksheet("Fault details")
            extra.set_column(0, 0, 120)
            for row, line in enumerate(details.rstrip("\n").splitlines()):
                extra.write_string(row, 0, line)
    finally:
        book.close()
