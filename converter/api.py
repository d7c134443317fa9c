"""The one public entry point: ``convert(path, options) -> ConvertResult``.

The CLI and the drop folder both call this; neither holds logic of its own. The options
(:class:`ConvertOptions`) and their rules live in :mod:`converter.options`.

Also here, because the command line and the drop folder share them: the guard that turns
away anything that is not a regular file before it is opened (:func:`not_a_regular_file`),
the names of outputs fitted to the file system's limit (:func:`fit_stem`), and the mode an
output gets: the one an ordinary new file gets under the user's umask (:func:`new_file_mode`).
"""

from __future__ import annotations

import errno
import hashlib
import json
import os
import stat
import tempfile
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path

from converter.model import ERROR, Problem, Schedule
from converter.options import ConvertOptions

__all__ = [
    "ConvertOptions",
    "ConvertResult",
    "Loaded",
    "PertbookError",
    "check",
    "convert",
    "fit_stem",
    "kind_of",
    "load",
    "load_input",
    "memory_problems",
    "name_limit",
    "new_file_mode",
    "not_a_regular_file",
    "output_paths",
    "process_umask",
    "same_file",
]

#: The suffixes of ``convert``'s two outputs.
RESULT_SUFFIXES = (".analysis.xlsx", ".analysis.json")
#: File-name limit in bytes when the file system does not say (POSIX NAME_MAX on Linux,
#: macOS and the common Windows file systems: 255).
DEFAULT_NAME_MAX = 255
#: Hex digits of the SHA-256 of a stem that a shortened name keeps (``plan~1a2b3c4d``).
HASH_DIGITS = 8


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
    account: str = ""  # with a baseline: what moved since it, in plain words

    @property
    def exit_code(self) -> int:
        return 0 if self.ok else 2


# --------------------------------------------------------------------------- files
_KINDS = (
    (stat.S_ISFIFO, "a named pipe (FIFO)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISLNK, "a symbolic link"),
)


def kind_of(mode: int) -> str:
    """What a file of this ``st_mode`` is, in words.

    Examples
    --------
    >>> import stat
    >>> kind_of(stat.S_IFIFO | 0o644), kind_of(stat.S_IFREG | 0o644)
    ('a named pipe (FIFO)', 'a regular file')
    """
    if stat.S_ISREG(mode):
        return "a regular file"
    return next((words for test, words in _KINDS if test(mode)), "not a regular file")


def not_a_regular_file(path: str | os.PathLike) -> str | None:
    """Why ``path`` must not be opened (a pipe, a device, a socket), or None.

    Asks the file system (``os.stat``, which follows a symbolic link to what it names)
    without opening anything, so it never blocks: opening a named pipe waits for a writer,
    and a device such as ``/dev/zero`` never ends. A missing file or a folder gives None:
    the reader reports those in its own words.
    """
    try:
        st = os.stat(path)
    except (OSError, ValueError):
        return None
    if stat.S_ISREG(st.st_mode) or stat.S_ISDIR(st.st_mode):
        return None
    through = " (through a symbolic link)" if os.path.islink(path) else ""
    return (
        f"{path} is {kind_of(st.st_mode)}{through}, not a regular file; pertbook reads "
        "only regular files"
    )


def same_file(a: str | os.PathLike, b: str | os.PathLike) -> bool:
    """True if ``a`` and ``b`` name one file: the same resolved path, or (both existing)
    the same device and inode (a hard link, another spelling on a case-blind disk)."""
    try:
        if Path(a).resolve() == Path(b).resolve():
            return True
    except (OSError, RuntimeError):
        pass
    try:
        return os.path.samefile(a, b)
    except (OSError, ValueError):
        return False


def name_limit(folder: str | os.PathLike) -> int:
    """The longest file name, in bytes, that ``folder``'s file system takes.

    ``os.pathconf(folder, "PC_NAME_MAX")`` (POSIX) asked of ``folder`` or, while it does not
    exist yet, of its nearest existing parent; :data:`DEFAULT_NAME_MAX` where the system
    does not say.
    """
    place = Path(folder)
    for candidate in (place, *place.parents):
        try:
            limit = os.pathconf(candidate, "PC_NAME_MAX")
        except (FileNotFoundError, NotADirectoryError):
            continue
        except (OSError, ValueError, AttributeError):  # not POSIX, or no such variable
            break
        return limit if limit > 0 else DEFAULT_NAME_MAX
    return DEFAULT_NAME_MAX


def _size(text: str) -> int:
    """Bytes of ``text`` in the file-system encoding."""
    return len(os.fsencode(text))


def fit_stem(stem: str, suffixes: Iterable[str], limit: int = DEFAULT_NAME_MAX) -> str:
    """``stem``, shortened if needed so that ``stem + suffix`` fits in ``limit`` bytes for
    every suffix: the longest prefix that fits, ``~``, and 8 hex digits of the SHA-256 of
    the whole stem. The same stem always gives the same name; different stems that share
    a long prefix still get different names.

    Parameters
    ----------
    stem : str
        The name before the suffix (``plan`` of ``plan.analysis.xlsx``).
    suffixes : iterable of str
        Every suffix the stem will carry.
    limit : int
        The file system's name limit in bytes (:func:`name_limit`), counted in the
        file-system encoding (``os.fsencode``).

    Returns
    -------
    str
        The stem to use. Raises OSError (ENAMETOOLONG) if not even one character fits.

    Examples
    --------
    >>> fit_stem("plan", [".analysis.xlsx"])
    'plan'
    >>> short = fit_stem("x" * 250, [".analysis.xlsx"])
    >>> len(short + ".analysis.xlsx"), short[-9:]
    (255, '~086d4a1c')

    References
    ----------
    IEEE Std 1003.1 (POSIX), ``pathconf`` and ``{NAME_MAX}``: the limit applies to one
    path component, in bytes.
    """
    room = limit - max((_size(s) for s in suffixes), default=0)
    if _size(stem) <= room:
        return stem
    tag = "~" + hashlib.sha256(os.fsencode(stem)).hexdigest()[:HASH_DIGITS]
    keep = room - _size(tag)
    if keep < 1:
        raise OSError(errno.ENAMETOOLONG, os.strerror(errno.ENAMETOOLONG), stem)
    prefix = stem[:keep]
    while _size(prefix) > keep:
        prefix = prefix[:-1]
    return prefix + tag


def output_paths(path: Path, outdir: Path | None, tag: str = "") -> tuple[Path, Path]:
    """``<stem><tag>.analysis.xlsx`` and ``.analysis.json`` in ``outdir`` (default: the
    input's folder), the stem shortened by :func:`fit_stem` if the names would pass the
    file system's limit (the tag is kept whole)."""
    folder = Path(outdir) if outdir is not None else Path(path).parent
    ends = [f"{tag}{s}" for s in RESULT_SUFFIXES]
    stem = fit_stem(Path(path).stem, ends, name_limit(folder)) + tag
    return tuple(folder / f"{stem}{s}" for s in RESULT_SUFFIXES)  # type: ignore[return-value]


_UMASK: int | None = None


def _read_umask() -> int:
    """This process's umask: from ``/proc/self/status`` (Linux 4.7+), which leaves it
    untouched, else set and put straight back (``os.umask``), briefly to 077, so a file
    another thread creates meanwhile is, if anything, more private."""
    try:
        with open("/proc/self/status", encoding="ascii", errors="replace") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    old = os.umask(0o077)
    os.umask(old)
    return old


def process_umask() -> int:
    """The user's umask, read once (the command line asks at start-up, in the main thread)."""
    global _UMASK
    if _UMASK is None:
        _UMASK = _read_umask()
    return _UMASK


def new_file_mode() -> int:
    """The mode an ordinary new file gets under the user's umask: ``0o666 & ~umask``.

    Examples
    --------
    >>> new_file_mode() == 0o666 & ~process_umask()
    True
    """
    return 0o666 & ~process_umask()


def _atomic_write(target: Path, write) -> None:
    """Write through a private temporary file in the same folder (``mkstemp``: mode 0600,
    so nobody reads it half-written), give it the mode of an ordinary new file
    (:func:`new_file_mode`), then rename it over ``target``."""
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=".pertbook-", suffix=target.suffix, dir=target.parent)
    try:
        try:
            write(Path(tmp))
            if hasattr(os, "fchmod"):
                if not os.path.samestat(os.fstat(fd), os.stat(tmp, follow_symlinks=False)):
                    raise OSError(errno.EEXIST, "the temporary file was replaced", tmp)
                os.fchmod(fd, new_file_mode())
        finally:
            os.close(fd)
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
    """Read and validate one file. Anything but a regular file (a pipe, a device, also
    through a symbolic link) is a problem found before the file is opened."""
    from converter.read.sheets import read_input
    from converter.validate import validate

    refused = not_a_regular_file(path)
    if refused is not None:
        where = Path(path)
        return Loaded(
            where,
            None,
            [
                Problem(
                    ERROR,
                    "not-a-file",
                    refused,
                    sheet=where.name,
                    fix="Give the schedule file itself: pertbook reads regular files only, not "
                    "pipes, devices or sockets.",
                )
            ],
            None,
        )
    read = read_input(Path(path))
    if read.raw is None:
        return Loaded(read.path, None, read.problems, read.sha256)
    options = options or ConvertOptions()
    schedule, more = validate(read.raw, options)
    if any(p.severity == ERROR for p in read.problems):
        schedule = None  # an error cell (the reader's) is skipped by validation: invalid
    elif schedule is not None:  # the reader's warnings go on the Warnings sheet too
        schedule.warnings[:0] = read.problems
    loaded = Loaded(read.path, schedule, read.problems + more, read.sha256)
    if loaded.ok and options.simulate:
        loaded.problems += memory_problems(schedule, options.simulation_memory_mb)
    return loaded


def memory_problems(schedule: Schedule, memory_mb: int | None) -> list[Problem]:
    """The error of a valid schedule whose simulation cannot fit its memory budget
    (code ``simulation-memory``, at the Iterations cell, naming the largest count that
    fits), or of a budget below the smallest accepted; else nothing."""
    from converter.analyse.simulate.budget import memory_problem
    from converter.options import parse_memory_mb

    if memory_mb is not None:
        try:
            memory_mb = parse_memory_mb(memory_mb)
        except ValueError as exc:
            return [
                Problem(
                    ERROR,
                    "bad-option",
                    f"the simulation memory budget: {exc}",
                    fix="Give --simulation-memory 32 (MB) or more.",
                )
            ]
    problem = memory_problem(schedule, memory_mb)
    return [] if problem is None else [problem]


def load(path: str | os.PathLike, options: ConvertOptions | None = None):
    """Read and validate: returns ``(schedule or None, problems)``."""
    loaded = load_input(path, options)
    return loaded.schedule, loaded.problems


def check(path: str | os.PathLike, options: ConvertOptions | None = None) -> ConvertResult:
    """Validate only."""
    loaded = load_input(path, options)
    return ConvertResult(
        input=Path(path),
        ok=loaded.ok,
        problems=loaded.problems,
        sheet=loaded.schedule.sheet if loaded.schedule else None,
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
    (also for invalid input). Outputs get the mode of an ordinary new file under the
    user's umask. The input file is only ever read: an output that would replace it
    raises :class:`PertbookError` before anything is read.
    """
    from converter.analyse.analysis import analyse
    from converter.analyse.simulate.budget import SimulationMemoryError, refusal_problem
    from converter.write.json_summary import build_json
    from converter.write.workbook import write_workbook

    options = options or ConvertOptions()
    path = Path(path)
    default_xlsx, default_json = output_paths(path, Path(outdir) if outdir else None)
    xlsx_target = Path(workbook_path) if workbook_path else default_xlsx
    json_target = Path(json_path) if json_path else default_json
    for target in (xlsx_target, json_target) if options.json else (xlsx_target,):
        if same_file(target, path):
            raise PertbookError(f"refusing to overwrite the input file {path} with {target}")

    written = (xlsx_target, json_target) if options.json else (xlsx_target,)
    refused = _replaces_baseline(options.baseline, written)
    if refused is not None:  # nothing is read or written, not even the JSON
        return ConvertResult(input=path, ok=False, problems=[refused])
    loaded = load_input(path, options)
    schedule, problems = loaded.schedule, loaded.problems
    result = ConvertResult(
        input=path, ok=loaded.ok, problems=problems, sheet=schedule.sheet if schedule else None
    )
    baseline = _read_baseline(options.baseline, problems)
    analysis = None
    if loaded.ok:
        try:
            analysis = analyse(schedule, options, _baseline_finishes(baseline))
        except SimulationMemoryError as exc:  # the estimate passed, the run did not fit
            problems.append(refusal_problem(exc, schedule.settings.source_of("iterations")))
            result.ok = False
    result.ok = result.ok and loaded.ok
    changes = None
    if result.ok and analysis is not None and baseline is not None:
        changes = _changes(
            baseline, build_json(path, problems, analysis, loaded.sha256), xlsx_target
        )
    if changes is not None:
        result.account = changes.account
    if result.ok and analysis is not None:
        _atomic_write(xlsx_target, lambda tmp: write_workbook(analysis, tmp, changes))
        result.workbook = xlsx_target
        result.headline = analysis.headline()
    if options.json:
        data = build_json(path, problems, analysis, loaded.sha256)
        if changes is not None:
            from converter.compare.document import changes_document

            data["changes"] = changes_document(changes)
        text = json.dumps(data, indent=2, allow_nan=False)
        _atomic_write(json_target, lambda tmp: tmp.write_text(text, encoding="utf-8"))
        result.json_path = json_target
    return result


# --------------------------------------------------------------------------- baseline
#: The remedy for a baseline that cannot be used.
BASELINE_FIX = (
    "Give the .analysis.json (or .analysis.xlsx) that an earlier pertbook convert wrote; "
    "keep the last run's copy under another name (e.g. plan-2027-05.analysis.json)."
)


def _replaces_baseline(baseline, targets: tuple[Path, ...]) -> Problem | None:
    """The error when an output of this run would replace the baseline it reads."""
    for target in targets if baseline is not None else ():
        if same_file(target, baseline):
            return Problem(
                ERROR,
                "bad-baseline",
                f"the baseline {baseline} would be replaced by this run's result {target}",
                fix=BASELINE_FIX + " Or choose another --outdir.",
            )
    return None


def _read_baseline(baseline, problems: list):
    """The baseline run of ``convert --baseline`` (None when none is given, or when it
    cannot be used: then an error ``bad-baseline`` joins ``problems``)."""
    if baseline is None:
        return None
    from converter.compare.readback import read_run
    from converter.compare.run import RunError

    try:
        return read_run(baseline)
    except RunError as exc:
        problems.append(Problem(ERROR, "bad-baseline", f"--baseline: {exc}", fix=BASELINE_FIX))
        return None


def _baseline_finishes(run):
    """What the progress checks judge against: the baseline run's early finish (offset and
    date) of each activity, as plain data (:class:`converter.analyse.baseline.Baseline`)."""
    if run is None:
        return None
    from converter.analyse.baseline import Baseline

    finishes = {ident: (act.ef, act.early_finish) for ident, act in run.activities.items()}
    return Baseline(Path(run.file).name, run.time_unit, finishes)


def _changes(baseline, document: dict, xlsx_target: Path):
    """The comparison of the run in hand (its JSON ``document``) with ``baseline``."""
    from converter.compare import compare_runs, run_from_json

    return compare_runs(baseline, run_from_json(document, str(xlsx_target)))
