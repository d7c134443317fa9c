"""The one public entry point: ``convert(path, options) -> ConvertResult``.

The CLI and the drop folder both call this; neither holds logic of its own. The options
(:class:`ConvertOptions`) and their rules live in :mod:`converter.options`.
"""

from __future__ import annotations

import json
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from converter.model import ERROR, Problem, Schedule
from converter.options import ConvertOptions

__all__ = ["ConvertOptions", "ConvertResult", "Loaded", "PertbookError", "check", "convert",
           "load", "load_input", "output_paths"]


class PertbookError(Exception):
    """Base class of the tool's own faults (exit code 1)."""


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


@dataclass
class Loaded:
    """An input read and validated: the schedule (None if invalid), every problem, and the
    input's SHA-256 (computed once by the reader; None when the file could not be opened)."""

    path: Path
    schedule: Schedule | None
    problems: list[Problem]
    sha256: str | None

    @property
    def ok(self) -> bool:
        return self.schedule is not None and not any(p.severity == ERROR for p in self.problems)


def load_input(path: str | os.PathLike, options: ConvertOptions | None = None) -> Loaded:
    """Read and validate one file."""
    from converter.read.sheets import read_input
    from converter.validate import validate

    read = read_input(Path(path))
    if read.raw is None:
        return Loaded(read.path, None, read.problems, read.sha256)
    schedule, more = validate(read.raw, options or ConvertOptions())
    return Loaded(read.path, schedule, read.problems + more, read.sha256)


def load(path: str | os.PathLike, options: ConvertOptions | None = None):
    """Read and validate: returns ``(schedule or None, problems)``."""
    loaded = load_input(path, options)
    return loaded.schedule, loaded.problems


def check(path: str | os.PathLike, options: ConvertOptions | None = None) -> ConvertResult:
    """Validate only."""
    loaded = load_input(path, options)
    return ConvertResult(input=Path(path), ok=loaded.ok, problems=loaded.problems,
                         sheet=loaded.schedule.sheet if loaded.schedule else None)


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

    loaded = load_input(path, options)
    schedule, problems = loaded.schedule, loaded.problems
    result = ConvertResult(input=path, ok=loaded.ok, problems=problems,
                           sheet=schedule.sheet if schedule else None)
    analysis = None
    if loaded.ok:
        analysis = analyse(schedule, options)
        if xlsx_target.resolve() == path.resolve():
            raise PertbookError(f"refusing to overwrite the input file {path}")
        _atomic_write(xlsx_target, lambda tmp: write_workbook(analysis, tmp))
        result.workbook = xlsx_target
        result.headline = analysis.headline()
    if options.json:
        data = build_json(path, problems, analysis, loaded.sha256)
        text = json.dumps(data, indent=2, allow_nan=False)
        _atomic_write(json_target, lambda tmp: tmp.write_text(text, encoding="utf-8"))
        result.json_path = json_target
    return result
