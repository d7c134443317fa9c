"""The one public entry point: ``convert(path, options) -> ConvertResult``.

The CLI and the drop folder both call this; neither holds logic of its own.
"""

from __future__ import annotations

import json
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from converter.model import ERROR, Problem


class PertbookError(Exception):
    """Base class of the tool's own faults (exit code 1)."""


@dataclass
class ConvertOptions:
    """Options given by the caller (command line or watcher). ``None`` = not given.

    Values given here override the input's settings sheet, which overrides defaults.
    """

    due: str | float | None = None  # a number (duration) or an ISO date text
    json: bool = False
    iterations: int | None = None
    seed: int | None = None
    distribution: str | None = None
    correlation: float | None = None
    paths: int | None = None
    confidence: tuple[float, ...] | None = None
    start_date: str | None = None
    simulate: bool = True
    progress: object | None = None  # callable(done, total) for the simulation
    simulation_workers: int | None = None  # processes for the simulation; None: from the cores
    simulation_memory_mb: int | None = None  # simulation memory budget; None: 1024 MB


@dataclass
class ConvertResult:
    """What one conversion did."""

    input: Path
    ok: bool
    problems: list[Problem] = field(default_factory=list)
    workbook: Path | None = None
    json_path: Path | None = None
    headline: dict = field(default_factory=dict)
    sheet: str | None = None

    @property
    def errors(self) -> list[Problem]:
        return [p for p in self.problems if p.severity == ERROR]

    @property
    def exit_code(self) -> int:
        return 0 if self.ok else 2


def output_paths(path: Path, outdir: Path | None) -> tuple[Path, Path]:
    """``<stem>.analysis.xlsx`` and ``<stem>.analysis.json`` in ``outdir`` (default: input's)."""
    folder = Path(outdir) if outdir is not None else path.parent
    return folder / f"{path.stem}.analysis.xlsx", folder / f"{path.stem}.analysis.json"


def _atomic_write(target: Path, write) -> None:
    """Write through a temporary file in the same folder, then rename over ``target``."""
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".pertbook-", suffix=target.suffix, dir=target.parent)
    os.close(fd)
    try:
        write(Path(tmp))
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def load(path: str | os.PathLike, options: ConvertOptions | None = None):
    """Read and validate: returns ``(schedule or None, problems)``."""
    from converter.read.sheets import read_input
    from converter.validate.schedule import validate

    options = options or ConvertOptions()
    path = Path(path)
    raw, problems = read_input(path)
    if raw is None:
        return None, problems
    schedule, more = validate(raw, options)
    return schedule, problems + more


def check(path: str | os.PathLike, options: ConvertOptions | None = None) -> ConvertResult:
    """Validate only."""
    path = Path(path)
    schedule, problems = load(path, options)
    ok = schedule is not None and not any(p.severity == ERROR for p in problems)
    return ConvertResult(
        input=path, ok=ok, problems=problems, sheet=schedule.sheet if schedule else None
    )


def convert(
    path: str | os.PathLike,
    options: ConvertOptions | None = None,
    *,
    outdir: str | os.PathLike | None = None,
    workbook_path: str | os.PathLike | None = None,
    json_path: str | os.PathLike | None = None,
) -> ConvertResult:
    """Read, validate, analyse and write one input file.

    The workbook goes to ``workbook_path`` if given, else ``<outdir>/<stem>.analysis.xlsx``;
    it is written under a temporary name and renamed only when complete, and never
    written for invalid input. With ``options.json`` the JSON summary is written
    (also for invalid input). The input file is only ever read.
    """
    from converter.analyse.analysis import analyse
    from converter.write.json_summary import build_json
    from converter.write.workbook import write_workbook

    options = options or ConvertOptions()
    path = Path(path)
    default_xlsx, default_json = output_paths(path, Path(outdir) if outdir else None)
    xlsx_target = Path(workbook_path) if workbook_path else default_xlsx
    json_target = Path(json_path) if json_path else default_json

    schedule, problems = load(path, options)
    ok = schedule is not None and not any(p.severity == ERROR for p in problems)
    result = ConvertResult(
        input=path, ok=ok, problems=problems, sheet=schedule.sheet if schedule else None
    )
    analysis = None
    if ok:
        analysis = analyse(schedule, options)
        if xlsx_target.resolve() == path.resolve():
            raise PertbookError(f"refusing to overwrite the input file {path}")
        _atomic_write(xlsx_target, lambda tmp: write_workbook(analysis, tmp))
        result.workbook = xlsx_target
        result.headline = analysis.headline()
    if options.json:
        data = build_json(path, problems, analysis)
        text = json.dumps(data, indent=2, allow_nan=False)
        _atomic_write(json_target, lambda tmp: tmp.write_text(text, encoding="utf-8"))
        result.json_path = json_target
    return result
