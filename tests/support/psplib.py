"""Read PSPLIB single-mode (.sm) project files for outside checks of the schedule passes.

PSPLIB: R. Kolisch and A. Sprecher, "PSPLIB - A project scheduling problem library",
European Journal of Operational Research 96(1):205-216, 1997. Each .sm file lists the
jobs (job 1 and the last are zero-duration supersource and supersink), each job's
successors (finish-to-start, no lag) and durations, and in PROJECT INFORMATION the
``MPM-Time``: the critical-path length with no resource limits.

The files live outside the repository (``../shared/data/psplib`` beside the checkout, or
the folder named by env ``PERTBOOK_PSPLIB``); tests skip where they are absent.
Not a test module: test files import it.
"""

from __future__ import annotations

import csv
import os
import re
from dataclasses import dataclass
from pathlib import Path


class PsplibFormatError(ValueError):
    """The file does not follow the PSPLIB .sm layout."""


@dataclass(frozen=True)
class PsplibProject:
    """One PSPLIB instance: jobs numbered 1..n in file order."""

    name: str
    jobs: tuple[int, ...]
    durations: dict[int, int]
    successors: dict[int, tuple[int, ...]]
    mpm_time: int

    def predecessors(self) -> dict[int, tuple[int, ...]]:
        preds: dict[int, list[int]] = {j: [] for j in self.jobs}
        for j in self.jobs:
            for s in self.successors[j]:
                preds[s].append(j)
        return {j: tuple(p) for j, p in preds.items()}

    def links(self) -> list[tuple[int, int]]:
        """(predecessor, successor) job-number pairs in file order."""
        return [(j, s) for j in self.jobs for s in self.successors[j]]


def psplib_root() -> Path:
    """The PSPLIB folder: env PERTBOOK_PSPLIB, else ``<checkout>/../shared/data/psplib``."""
    given = os.environ.get("PERTBOOK_PSPLIB")
    if given:
        return Path(given)
    return Path(__file__).resolve().parents[3] / "shared" / "data" / "psplib"


def instance_files(folder: Path) -> list[Path]:
    """The .sm files of a folder in natural order (j301_1, j301_2, ..., j309_10, j3010_1, ...)."""

    def key(p: Path) -> list:
        return [int(t) if t.isdigit() else t for t in re.split(r"(\d+)", p.stem)]

    return sorted(Path(folder).glob("*.sm"), key=key)


def _section(lines: list[str], title: str) -> int:
    for i, line in enumerate(lines):
        if line.strip().upper().startswith(title):
            return i
    raise PsplibFormatError(f"no {title!r} section")


def _rows(lines: list[str], start: int) -> list[list[int]]:
    """Integer rows from ``start`` until the next line of stars."""
    rows = []
    for line in lines[start:]:
        text = line.strip()
        if text.startswith("*"):
            break
        if not text or text.startswith("-"):
            continue
        rows.append([int(x) for x in text.split()])
    return rows


def read_sm(path: Path) -> PsplibProject:
    """Parse a PSPLIB single-mode .sm file."""
    path = Path(path)
    lines = path.read_text(encoding="ascii", errors="replace").splitlines()

    info = _section(lines, "PROJECT INFORMATION")
    header = lines[info + 1].split()
    if header[-1] != "MPM-Time":
        raise PsplibFormatError(f"{path.name}: PROJECT INFORMATION has no MPM-Time column")
    mpm_time = int(lines[info + 2].split()[-1])

    prec = _section(lines, "PRECEDENCE RELATIONS")
    successors: dict[int, tuple[int, ...]] = {}
    for row in _rows(lines, prec + 2):
        job, _modes, count, *succ = row
        if len(succ) != count:
            raise PsplibFormatError(f"{path.name}: job {job} lists {len(succ)} of {count}")
        successors[job] = tuple(succ)

    req = _section(lines, "REQUESTS/DURATIONS")
    durations: dict[int, int] = {}
    for row in _rows(lines, req + 2):
        job, mode, duration = row[:3]
        if mode != 1:
            raise PsplibFormatError(f"{path.name}: job {job} has mode {mode}; .sm is single-mode")
        durations[job] = duration

    jobs = tuple(sorted(successors))
    if jobs != tuple(range(1, len(jobs) + 1)) or set(durations) != set(jobs):
        raise PsplibFormatError(f"{path.name}: job numbers are not 1..n in both sections")
    m = re.search(r"jobs \(incl\. supersource/sink \):\s*(\d+)", "\n".join(lines))
    if m and int(m.group(1)) != len(jobs):
        raise PsplibFormatError(f"{path.name}: header says {m.group(1)} jobs, found {len(jobs)}")
    for j in jobs:
        if any(s not in successors for s in successors[j]):
            raise PsplibFormatError(f"{path.name}: job {j} has an unknown successor")
    return PsplibProject(path.stem, jobs, durations, successors, mpm_time)


def activity_id(job: int) -> str:
    return f"J{job}"


def psplib_to_csv(sm_path: Path, csv_path: Path) -> PsplibProject:
    """Write a PSPLIB instance as a pertbook activity CSV (O = M = P = the duration).

    Columns ``ID,Description,Predecessors,Optimistic,Most likely,Pessimistic``; IDs are
    ``J<job number>``; predecessors comma-separated (finish-to-start, no lag), quoted.
    Returns the parsed project.
    """
    project = read_sm(sm_path)
    preds = project.predecessors()
    csv_path = Path(csv_path)
    csv_path.parent.mkdir(parents=True, exist_ok=True)
    with csv_path.open("w", newline="", encoding="utf-8") as fh:
        out = csv.writer(fh, quoting=csv.QUOTE_NONNUMERIC)
        out.writerow(["ID", "Description", "Predecessors", "Optimistic", "Most likely",
                      "Pessimistic"])  # fmt: skip
        for j in project.jobs:
            d = project.durations[j]
            what = "start" if j == 1 else "finish" if j == project.jobs[-1] else f"job {j}"
            out.writerow([
                activity_id(j),
                f"PSPLIB {project.name} {what}",
                ", ".join(activity_id(p) for p in preds[j]),
                d, d, d,
            ])  # fmt: skip
    return project
