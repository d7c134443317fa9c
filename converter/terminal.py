"""What the command line prints: the headline table, the progress bar and the problems.

Drawn with rich, which measures the terminal and writes plain text (no control codes, no
wrapping) when the output is redirected. Figures are rounded as a scheduler would: one
decimal for durations with their unit, whole percent, ``<1%`` / ``>99%`` at the ends.
"""

from __future__ import annotations

import math
import time
from pathlib import Path

from rich.console import Console
from rich.table import Table
from rich.text import Text

from converter.api import ConvertResult
from converter.model import ERROR
from converter.values import printable

#: Width for output that is not a terminal (a file, a pipe): wide enough never to wrap.
REDIRECTED_WIDTH = 200


def say(stream, text: str) -> None:
    """Write ``text`` to ``stream`` with its control characters escaped (:func:`printable`):
    every line the command line prints goes through here or through a rich ``Text``."""
    stream.write(printable(text))


def make_console(stream) -> Console:
    """A rich console on ``stream``: measured on a terminal, plain and unwrapped otherwise."""
    console = Console(file=stream, highlight=False)
    if not console.is_terminal:
        console.width = REDIRECTED_WIDTH
    return console


class SimulationProgress:
    """A rich progress bar on a terminal, shown only once a simulation has run a second.

    Call it as ``progress(done, total)`` (the simulation's progress callback); use it as a
    context manager so the bar is taken down however the conversion ends.
    """

    def __init__(self, console: Console, delay: float = 1.0):
        self.console = console
        self.delay = delay
        self.start = time.monotonic()
        self.bar = None  # a rich.progress.Progress once shown
        self.task = None

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            if done >= total or time.monotonic() - self.start < self.delay:
                return
            from rich.progress import (  # only when shown: keeps start-up quick
                BarColumn,
                MofNCompleteColumn,
                Progress,
                TextColumn,
                TimeRemainingColumn,
            )

            self.bar = Progress(
                TextColumn("simulating"),
                BarColumn(),
                MofNCompleteColumn(),
                TimeRemainingColumn(),
                console=self.console,
                transient=True,
            )
            self.bar.start()
            self.task = self.bar.add_task("simulating", total=total)
        self.bar.update(self.task, completed=done, total=total)
        if done >= total:
            self.close()

    def close(self) -> None:
        if self.bar is not None:
            self.bar.stop()
            self.bar = None

    def __enter__(self) -> SimulationProgress:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def format_chance(p: float | None) -> str:
    """A probability in whole percent, as a scheduler says it: never 0% or 100%.

    Examples
    --------
    >>> format_chance(0.5), format_chance(0.004), format_chance(0.9999999975)
    ('50%', '<1%', '>99%')
    >>> format_chance(0.994), format_chance(0.006), format_chance(None)
    ('99%', '1%', '-')
    """
    if p is None or math.isnan(p):
        return "-"
    whole = math.floor(p * 100 + 0.5)  # half up
    if whole < 1:
        return "<1%"
    if whole > 99:
        return ">99%"
    return f"{whole}%"


def format_duration(x: float | None, unit: str) -> str:
    """One decimal with the unit: ``format_duration(44.2987, "working days")`` ->
    ``'44.3 working days'``."""
    return "-" if x is None else f"{x:.1f} {unit}"


#: Headline rows: label, critical-path key, simulation key.
_FIGURES = (
    ("Expected finish", "expected_duration", "simulated_mean"),
    ("P50", "p50", "simulated_p50"),
    ("P80", "p80", "simulated_p80"),
    ("P90", "p90", "simulated_p90"),
)


def _date_key(key: str) -> str:
    return {"expected_duration": "finish_date", "simulated_mean": "simulated_finish_date"}.get(
        key, f"{key}_date"
    )


def headline_table(name: str, h: dict) -> Table:
    """The aligned headline of one conversion from :meth:`Analysis.headline` figures."""
    unit = h.get("time_unit", "time units")
    simulated = "simulated_mean" in h
    dated = h.get("start_date") is not None
    table = Table(box=None, show_edge=False, pad_edge=False, padding=(0, 2, 0, 0))
    table.add_column(Text(printable(Path(name).name)), style="bold", no_wrap=True)
    sources = [("simulation", 1), ("critical path", 0)] if simulated else [("critical path", 0)]
    for title, _ in sources:
        table.add_column(title.capitalize(), justify="right", no_wrap=True)
        if dated:
            table.add_column("", no_wrap=True)

    def cells(values: list) -> list[str]:
        out = []
        for duration, date in values:
            out.append(duration)
            if dated:
                out.append(date or "")
        return out

    for label, *keys in _FIGURES:
        pairs = [
            (format_duration(h.get(keys[k]), unit), h.get(_date_key(keys[k]))) for _, k in sources
        ]
        table.add_row(label, *cells(pairs))
    if h.get("due") is not None:
        due = h.get("due_date") or format_duration(h["due"], unit)
        keys = {0: "p_meet_due", 1: "simulated_p_meet_due"}
        table.add_row(
            f"Chance to finish by {due}",
            *cells([(format_chance(h.get(keys[k])), None) for _, k in sources]),
        )
    if "failed_checks" in h:
        table.add_row("Health checks failed", f"{h['failed_checks']} of {h['checks']}")
    if "done_share" in h:
        table.add_row(f"Work done by {h['status_date']}", f"{h['done_share']:.0%}")
    table.add_row("Warnings", str(h.get("warnings", 0)))
    return table


def print_headline(console: Console, name: str, result: ConvertResult) -> None:
    """The headline table, then one ``NAME: wrote PATH`` line per output."""
    console.print(headline_table(name, result.headline))
    for path in (result.workbook, result.json_path):
        if path is not None:
            console.print(Text(printable(f"{name}: wrote {path}")), soft_wrap=True)


# --------------------------------------------------------------------------- commands
#: Warnings printed per file; errors are always printed in full.
WARNINGS_SHOWN = 20


def _print_problems(path: str, problems, stream) -> None:
    warnings = 0
    for p in problems:
        if p.severity != ERROR:
            warnings += 1
            if warnings > WARNINGS_SHOWN:
                continue
        say(stream, f"{path}: {p}\n")
    if warnings > WARNINGS_SHOWN:
        say(
            stream,
            f"{path}: ... and {warnings - WARNINGS_SHOWN} more warning(s), all listed "
            "on the workbook's Warnings sheet\n",
        )
