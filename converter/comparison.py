"""``pertbook compare OLD NEW``: two runs in, ``<NEW stem>.changes.xlsx`` (and
``.changes.json``) out, never over an existing file.

The comparison is :mod:`converter.compare`; this module only reads the two files, names
the outputs (shortened like :func:`converter.api.fit_stem` where the disk needs it) and
writes them through private temporary files, linked to their names only where no file has
that name yet.
"""

from __future__ import annotations

import json
import os
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

from converter.api import fit_stem, name_limit, new_file_mode

#: The suffixes of ``compare``'s two outputs.
CHANGES_SUFFIXES = (".changes.xlsx", ".changes.json")


@dataclass
class CompareResult:
    """What one ``compare`` did: the files written, or why nothing was (``problems``)."""

    old: Path
    new: Path
    problems: list[str] = field(default_factory=list)
    workbook: Path | None = None
    json_path: Path | None = None
    account: str = ""

    @property
    def ok(self) -> bool:
        return not self.problems

    @property
    def exit_code(self) -> int:
        return 0 if self.ok else 2


def changes_stem(new: str | os.PathLike) -> str:
    """The stem of a comparison's outputs: NEW's name without its suffix and ``.analysis``.

    Examples
    --------
    >>> changes_stem("out/plan.analysis.json"), changes_stem("plan.analysis.xlsx")
    ('plan', 'plan')
    >>> changes_stem("june.json")
    'june'
    """
    stem = Path(new).stem
    return stem[: -len(".analysis")] if stem.endswith(".analysis") else stem


def _link_new(tmp: Path, target: Path) -> None:
    """Give the finished ``tmp`` the name ``target`` only if nothing has it (never replace)."""
    os.link(tmp, target)


def _write_new(folder: Path, stem: str, writers: dict[str, object]) -> dict[str, Path]:
    """Write each ``suffix -> write(tmp)`` under ``<stem><tag><suffix>`` in ``folder``, the
    first tag (none, ``-2``, ``-3``...) that names no existing file for any suffix: a file
    already there is never replaced, also when another process makes one meanwhile."""
    folder.mkdir(parents=True, exist_ok=True)
    stem = fit_stem(stem, [f"-99{s}" for s in writers], name_limit(folder))
    made: dict[str, Path] = {}
    tmps = {}
    try:
        for suffix, write in writers.items():
            fd, tmp = tempfile.mkstemp(prefix=".pertbook-", suffix=suffix, dir=folder)
            os.close(fd)
            tmps[suffix] = Path(tmp)
            write(Path(tmp))
            os.chmod(tmp, new_file_mode())
        n = 1
        while not made:
            tag = "" if n == 1 else f"-{n}"
            targets = {s: folder / f"{stem}{tag}{s}" for s in writers}
            try:
                for suffix, target in targets.items():
                    _link_new(tmps[suffix], target)
                    made[suffix] = target
            except FileExistsError:
                for target in made.values():
                    target.unlink(missing_ok=True)
                made = {}
                n += 1
    finally:
        for tmp in tmps.values():
            tmp.unlink(missing_ok=True)
    return made


def compare(
    old: str | os.PathLike,
    new: str | os.PathLike,
    *,
    outdir: str | os.PathLike | None = None,
    write_json: bool = False,
) -> CompareResult:
    """Compare two runs (``.analysis.json`` or ``.analysis.xlsx`` files pertbook wrote) and
    write ``<NEW stem>.changes.xlsx`` (and ``.changes.json`` with ``write_json``) beside NEW
    or in ``outdir``, never over an existing file (:func:`_write_new`). A file that is not
    such a run gives its message in ``problems`` and nothing is written."""
    from converter.compare import compare_runs
    from converter.compare.document import changes_document
    from converter.compare.readback import read_run
    from converter.compare.run import RunError
    from converter.write.workbook import write_changes_workbook

    result = CompareResult(Path(old), Path(new))
    runs = []
    for name in (old, new):
        try:
            runs.append(read_run(name))
        except RunError as exc:
            result.problems.append(str(exc))
    if not result.ok:
        return result
    changes = compare_runs(*runs)
    result.account = changes.account
    writers = {CHANGES_SUFFIXES[0]: lambda tmp: write_changes_workbook(changes, tmp)}
    if write_json:
        text = json.dumps(changes_document(changes), indent=2, allow_nan=False)
        writers[CHANGES_SUFFIXES[1]] = lambda tmp: tmp.write_text(text, encoding="utf-8")
    folder = Path(outdir) if outdir is not None else Path(new).parent
    made = _write_new(folder, changes_stem(new), writers)
    result.workbook = made[CHANGES_SUFFIXES[0]]
    result.json_path = made.get(CHANGES_SUFFIXES[1])
    return result
