"""The list every validation step adds its problems to."""

from __future__ import annotations

from converter.model import ERROR, WARNING, Problem


class Collector:
    """Problems found so far, in the order found; nothing stops at the first one."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []

    def error(
        self, code, message, sheet=None, cell=None, activity=None, fix=None, subject="activity"
    ) -> None:
        self.problems.append(Problem(ERROR, code, message, sheet, cell, activity, fix, subject))

    def warn(
        self, code, message, sheet=None, cell=None, activity=None, fix=None, subject="activity"
    ) -> None:
        self.problems.append(Problem(WARNING, code, message, sheet, cell, activity, fix, subject))

    def has(self, *codes: str) -> bool:
        """Whether a problem with one of these codes was found."""
        return any(p.code in codes for p in self.problems)

    @property
    def errors(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == ERROR]

    @property
    def warnings(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == WARNING]
