"""The package's shape: data flows down the stages, modules and functions stay small.

Common practice (no published source): a layered package whose folder listing reads in the
order the data flows is easier to learn and to change; these checks keep it that way.
They read the source with the standard library's ``ast`` module, so they need nothing
beyond the checkout.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "converter"

#: Each part of the package, in the order the data flows. A module may import from its
#: own part and from parts before it, never from a later one.
STAGES: tuple[str, ...] = (
    "model",
    "values",
    "options",
    "read",
    "validate",
    "analyse",
    "write",
    "compare",
    "api",
    "comparison",
    "drop",
    "terminal",
    "cli",
)

#: Modules allowed over 500 lines (none today).
LONG_MODULES: dict[str, str] = {}

#: Functions allowed over 80 lines of code (docstring not counted), with the reason (also
#: listed in DEVELOPERS.md).
LONG_FUNCTIONS: dict[str, str] = {}

MAX_MODULE_LINES = 500
MAX_FUNCTION_LINES = 80


def _modules() -> list[Path]:
    return sorted(p for p in PACKAGE.rglob("*.py") if "__pycache__" not in p.parts)


def _name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _stage(dotted: str) -> int | None:
    """Index of the stage of ``converter.<part>...``; None for the package root."""
    parts = dotted.split(".")
    if len(parts) < 2 or parts[0] != "converter":
        return None
    if parts[1] in ("__main__",):
        return len(STAGES)
    return STAGES.index(parts[1]) if parts[1] in STAGES else None


def _imports(path: Path) -> list[tuple[int, str]]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            base = node.module
            for alias in node.names:
                found.append((node.lineno, f"{base}.{alias.name}" if base == "converter" else base))
        elif isinstance(node, ast.Import):
            found += [(node.lineno, alias.name) for alias in node.names]
    return [(line, name) for line, name in found if name.split(".")[0] == "converter"]


def _docstring_lines(node: ast.FunctionDef | ast.AsyncFunctionDef) -> int:
    """Lines of the function's docstring: documentation does not count against its length."""
    first = node.body[0] if node.body else None
    if (
        isinstance(first, ast.Expr)
        and isinstance(first.value, ast.Constant)
        and isinstance(first.value.value, str)
    ):
        return first.end_lineno - first.lineno + 1
    return 0


def test_every_module_belongs_to_a_stage():
    strays = [_name(p) for p in _modules() if _stage(_name(p)) is None and _name(p) != "converter"]
    assert not strays, f"modules outside the stages {STAGES}: {strays}"


@pytest.mark.parametrize("path", _modules(), ids=_name)
def test_no_import_from_a_later_stage(path):
    here = _stage(_name(path))
    if here is None:  # converter/__init__.py: the package's lazy front door only
        return
    later = [
        f"line {line}: {name}"
        for line, name in _imports(path)
        if (there := _stage(name)) is not None and there > here
    ]
    assert not later, (
        f"{_name(path)} ({STAGES[min(here, len(STAGES) - 1)]}) imports from later stages: {later}"
    )


def test_relative_imports_are_not_used():
    """Absolute imports only, so a module's line says where its names come from."""
    relative = []
    for path in _modules():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom) and node.level:
                relative.append(f"{_name(path)} line {node.lineno}")
    assert not relative, relative


def test_the_writer_reads_no_input_file():
    """Nothing under write/ reads an input file or hashes it (the read stage does)."""
    offenders = []
    for path in (PACKAGE / "write").rglob("*.py"):
        for line, name in _imports(path):
            if name.startswith(("converter.read", "converter.validate")):
                offenders.append(f"{_name(path)} line {line}: {name}")
        if "hashlib" in path.read_text(encoding="utf-8"):
            offenders.append(f"{_name(path)}: hashlib")
    assert not offenders, offenders


@pytest.mark.parametrize("path", _modules(), ids=_name)
def test_modules_stay_small(path):
    lines = len(path.read_text(encoding="utf-8").splitlines())
    if _name(path) in LONG_MODULES:
        return
    assert lines <= MAX_MODULE_LINES, f"{_name(path)} has {lines} lines"


@pytest.mark.parametrize("path", _modules(), ids=_name)
def test_functions_stay_short(path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    long = []
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            length = node.end_lineno - node.lineno + 1 - _docstring_lines(node)
            key = f"{_name(path)}.{node.name}"
            if length > MAX_FUNCTION_LINES and key not in LONG_FUNCTIONS:
                long.append(f"{node.name} ({length} lines, line {node.lineno})")
    assert not long, f"{_name(path)}: {long}"


def test_stage_checker_catches_a_backward_import(tmp_path):
    """The checker itself can fail: an analyse module importing the writer is caught."""
    module = tmp_path / "bad.py"
    module.write_text("from converter.write.workbook import write_workbook\n", encoding="utf-8")
    found = [(line, name) for line, name in _imports(module)]
    assert found == [(1, "converter.write.workbook")]
    assert _stage(found[0][1]) > _stage("converter.analyse.network")
