"""The examples in the docstrings of ``converter/`` run as doctests.

Every module of the package is imported and its examples are run by Python's
``doctest``; a failing example fails the run. The key algorithms must keep a numpydoc
docstring with a runnable example and the published source they follow (the list
below), so that the examples cannot quietly disappear.
"""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import converter

FLAGS = doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE


def _module_names() -> list[str]:
    names = []
    for info in pkgutil.walk_packages(converter.__path__, "converter."):
        if info.name.rsplit(".", 1)[-1] == "__main__":
            continue  # runs the command line when imported
        names.append(info.name)
    return sorted(names)


MODULES = _module_names()


def test_every_module_is_found():
    # the package's modules on disk (a walk that silently found nothing would pass below)
    assert "converter.analyse.paths" in MODULES
    assert "converter.analyse.simulate.runs" in MODULES
    assert len(MODULES) > 20


@pytest.mark.parametrize("name", MODULES)
def test_module_doctests(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=FLAGS, report=False)
    assert result.failed == 0, f"{result.failed} of {result.attempted} examples failed in {name}"


#: object -> numpydoc sections its docstring must have (besides a runnable example)
KEY_ALGORITHMS = {
    "converter.analyse.network.forward_pass": ("Parameters", "Returns", "References"),
    "converter.analyse.network.backward_pass": ("Parameters", "Returns", "References"),
    "converter.analyse.network.schedule": ("Parameters", "Returns", "References"),
    "converter.analyse.paths.k_longest_paths": ("Parameters", "Returns", "References"),
    "converter.analyse.pert.p_meet": ("Parameters", "Returns", "References"),
    "converter.analyse.pert.duration_at": ("Parameters", "Returns", "References"),
    "converter.analyse.calendar.Calendar": ("Parameters", "References"),
    "converter.analyse.simulate.runs.simulate": ("Parameters", "Returns", "References"),
    "converter.analyse.simulate.correlation.induce_rank_correlation": (
        "Parameters",
        "Returns",
        "References",
    ),
    "converter.analyse.simulate.ranks.spearman_rows": ("Parameters", "Returns", "References"),
    "converter.analyse.simulate.inverse.evaluate": ("Parameters", "Returns", "References"),
}


@pytest.mark.parametrize("path", sorted(KEY_ALGORITHMS))
def test_key_algorithm_has_documented_example(path):
    module_name, name = path.rsplit(".", 1)
    obj = getattr(importlib.import_module(module_name), name)
    doc = obj.__doc__ or ""
    for section in (*KEY_ALGORITHMS[path], "Examples"):
        underline = "-" * len(section)
        assert f"\n    {section}\n    {underline}\n" in doc, f"{path}: no {section} section"
    examples = doctest.DocTestFinder(recurse=False).find(obj, name)
    assert sum(len(t.examples) for t in examples) > 0, f"{path}: no runnable example"
