"""Running ``pertbook`` on the corpus in measured child processes, and reading the results.

Every command runs as ``python -m converter ...`` (the installed entry point's code) with
the checkout on PYTHONPATH, started by a small intermediate Python process that sets the
umask, caps the address space (a guard for the machine, far above the limit asserted),
waits for the command and reports ``resource.getrusage(RUSAGE_CHILDREN).ru_maxrss``: the
peak resident memory of the command and of every process it started and waited for
(getrusage(2): the largest of the waited-for descendants). Measured from the small
intermediate, the test process's own size does not count: Linux carries a parent's
resident set into the child's ``ru_maxrss`` at fork and exec, so only the intermediate's
few megabytes do. A hang guard kills the whole process group; no test passes or fails
on elapsed time.

The workbooks written are read with the standard library (zipfile, a regular expression
over the worksheet XML per ECMA-376 Part 1, 18.3.1.40 ``<f>``, 18.2.5 ``<definedName>``,
and 18.4 shared strings), independently of the writer.
"""

from __future__ import annotations

import html
import json
import os
import re
import subprocess
import sys
import time
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from converter.values import printable

REPO = Path(__file__).resolve().parents[2]
#: Hang guard for one command (seconds); a guard only, never a pass/fail criterion.
HANG_GUARD = 300
#: Address-space cap of each command: a guard for the shared machine. numpy and scipy
#: reserve a few hundred MB of address space that is never touched; the memory asserted
#: is the resident peak, far below this.
ADDRESS_CAP = 6 << 30

INTERMEDIATE = r"""
import json, os, resource, signal, subprocess, sys
spec = json.loads(sys.argv[1])
os.umask(spec["umask"])
def cap():
    resource.setrlimit(resource.RLIMIT_AS, (spec["cap"], spec["cap"]))
with open(spec["out"], "wb") as out, open(spec["err"], "wb") as err:
    proc = subprocess.Popen(spec["argv"], stdout=out, stderr=err, stdin=subprocess.DEVNULL,
                            cwd=spec["cwd"], env=spec["env"], preexec_fn=cap,
                            start_new_session=True)
    hung = False
    try:
        code = proc.wait(timeout=spec["timeout"])
    except subprocess.TimeoutExpired:
        hung = True
        os.killpg(proc.pid, signal.SIGKILL)
        code = proc.wait()
usage = resource.getrusage(resource.RUSAGE_CHILDREN)
print(json.dumps({"code": code, "hung": hung, "peak_kb": usage.ru_maxrss}))
"""


@dataclass
class Run:
    """One command's exit code, output and peak resident memory (MB)."""

    argv: list[str]
    code: int
    stdout: str
    stderr: str
    peak_mb: float
    hung: bool
    seconds: float = 0.0  # reported, never asserted


def child_env() -> dict[str, str]:
    """The environment of a command: the checkout first on the path, default limits."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("PERTBOOK_")}
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def run_measured(args: list[str], work: Path, *, umask: int, tag: str) -> Run:
    """``python -m converter ARGS`` in ``work``; stdout and stderr decoded as UTF-8 (with
    undecodable bytes of odd file names kept as surrogate escapes)."""
    argv = [sys.executable, "-m", "converter", *args]
    out, err = work / f".{tag}.out", work / f".{tag}.err"
    spec = {
        "argv": argv,
        "out": str(out),
        "err": str(err),
        "cwd": str(work),
        "env": child_env(),
        "umask": umask,
        "cap": ADDRESS_CAP,
        "timeout": HANG_GUARD,
    }
    started = time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-c", INTERMEDIATE, json.dumps(spec)], capture_output=True, check=True
    )
    report = json.loads(done.stdout)
    decode = lambda p: p.read_bytes().decode("utf-8", "surrogateescape")  # noqa: E731
    run = Run(
        argv,
        report["code"],
        decode(out),
        decode(err),
        report["peak_kb"] / 1024,
        report["hung"],
        time.perf_counter() - started,
    )
    out.unlink()
    err.unlink()
    return run


# --------------------------------------------------------------------------- outputs
@dataclass
class Outcome:
    """What one command said about one input: its lines and the outcome they give."""

    stdout: list[str] = field(default_factory=list)
    stderr: list[str] = field(default_factory=list)

    @property
    def text(self) -> str:
        return "\n".join(self.stdout + self.stderr)


def split_by_input(run: Run, names: list[str]) -> dict[str, Outcome]:
    """Each input's lines (``NAME: ...``); a line that names no input continues the one
    before (a message holding a line break). A command given one input has all its lines
    (however the name is shown)."""
    by_length = sorted(names, key=lambda n: len(printable(n)), reverse=True)
    outcomes = {n: Outcome() for n in names}
    for stream in ("stdout", "stderr"):
        current = names[0] if len(names) == 1 else None
        for line in getattr(run, stream).splitlines():
            owner = next((n for n in by_length if line.startswith(printable(n) + ": ")), None)
            current = owner or current
            if current is not None:
                getattr(outcomes[current], stream).append(line)
    return outcomes


def _said(lines: list[str], name: str, *words: str) -> bool:
    """Whether a line says ``NAME: <one of words>...`` (the name as given, or shown
    otherwise when the command had this one input)."""
    name = printable(name)  # control characters are printed escaped (CWE-150)
    for line in lines:
        rest = line[len(name) + 2 :] if line.startswith(name + ": ") else line
        if rest.startswith(words) or any(f": {w}" in line for w in words):
            return True
    return False


def check_code(outcome: Outcome, name: str) -> int | None:
    """The exit code ``check`` gave one input: 0 valid, 2 invalid, 1 a fault."""
    if _said(outcome.stderr, name, "internal error"):
        return 1
    if _said(outcome.stdout, name, "INVALID"):
        return 2
    if _said(outcome.stdout, name, "valid"):
        return 0
    return None


def convert_code(outcome: Outcome, name: str) -> int | None:
    """The exit code ``convert`` gave one input, from its own lines."""
    if _said(outcome.stderr, name, "internal error", "cannot write the results"):
        return 1
    if _said(outcome.stderr, name, "invalid input", "not converted"):
        return 2
    if _said([x for x in outcome.stdout if x.endswith(".analysis.xlsx")], name, "wrote "):
        return 0
    return None


# --------------------------------------------------------------------------- workbooks
_FORMULA = re.compile(r"<(?:\w+:)?f\b[^>]*>(.*?)</(?:\w+:)?f>", re.S)
_DEFINED = re.compile(r"<definedName\b[^>]*>(.*?)</definedName>", re.S)
_TEXT = re.compile(r"<t\b[^>]*>(.*?)</t>", re.S)
_ESCAPE = re.compile(r"_x([0-9A-Fa-f]{4})_")
#: Words no formula of pertbook's own uses; in a formula they can only come from input.
FOREIGN = (
    "cmd",
    "|",
    "HYPERLINK",
    "DDE",
    "WEBSERVICE",
    "IMPORTXML",
    "EXEC(",
    "CALL(",
    "REGISTER",
    "example.invalid",
    "calc",
    "notepad",
)


def xml_text(raw: str) -> str:
    text = html.unescape(raw)
    return _ESCAPE.sub(lambda m: chr(int(m.group(1), 16)), text).replace("\x00", "")


@dataclass
class WorkbookText:
    formulas: list[str]
    strings: list[str]
    external: list[str]


def workbook_text(path: Path) -> WorkbookText:
    """Every formula (cells, defined names, chart references) and every text of a workbook,
    and the targets of its external relationships."""
    formulas, strings, external = [], [], []
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if not name.endswith((".xml", ".rels")):
                continue
            xml = z.read(name).decode("utf-8")
            formulas += [xml_text(f) for f in _FORMULA.findall(xml)]
            formulas += [xml_text(f) for f in _DEFINED.findall(xml)]
            if name.endswith(".rels"):
                external += re.findall(r'Target="([^"]*)"[^>]*TargetMode="External"', xml)
            elif name.startswith("xl/sharedStrings") or name.startswith("xl/worksheets/"):
                strings += [xml_text(t) for t in _TEXT.findall(xml)]
    return WorkbookText(formulas, strings, external)


def formula_problems(path: Path, texts: tuple[str, ...]) -> list[str]:
    """What in ``path`` breaks "input text is never a formula": a formula holding a word
    no formula of pertbook's own holds or an input text, a link to outside the file, an
    input text not kept as text."""
    found = workbook_text(path)
    bad = [
        f"formula {f!r}"
        for f in found.formulas
        if any(w.lower() in f.lower() for w in FOREIGN)
        or any(t and t.lstrip("=+-@\t\r ") and t.lstrip("=+-@\t\r ") in f for t in texts)
    ]
    bad += [f"external link {t!r}" for t in found.external]
    bad += [
        f"input text {t!r} is not a text in the workbook"
        for t in texts
        if not any(t.strip() in s for s in found.strings)
    ]
    return bad
