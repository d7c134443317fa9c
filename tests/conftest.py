"""Shared test fixtures."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

TESTS = Path(__file__).resolve().parent
if str(TESTS) not in sys.path:  # helper modules (recalc, psplib) import as top-level names
    sys.path.insert(0, str(TESTS))

from recalc import soffice_path  # noqa: E402


@pytest.fixture(scope="session")
def soffice() -> str:
    """Path of LibreOffice's soffice; skips the test where LibreOffice is not installed."""
    path = soffice_path()
    if path is None:
        pytest.skip(
            "LibreOffice (soffice) not found on PATH or in the usual places; install "
            "libreoffice-calc (e.g. apt-get install libreoffice-calc-nogui) or set "
            "PERTBOOK_SOFFICE to run the recalculation checks"
        )
    return path


def require_modules(*names: str) -> None:
    """Skip unless every named module (``pkg.mod`` or ``pkg.mod:attr``) imports."""
    import importlib

    for name in names:
        module, _, attr = name.partition(":")
        try:
            found = importlib.import_module(module)
            if attr:
                getattr(found, attr)
        except Exception as exc:  # a stage still being written: skip, do not fail
            pytest.skip(f"{name} is not importable yet ({exc!r}); convert cannot run")


@pytest.fixture
def convert_api():
    """``(convert, ConvertOptions)``; skips while the conversion stages are not all present."""
    require_modules("converter.analysis", "converter.jsonout", "converter.workbook:write_workbook")
    from converter.api import ConvertOptions, convert

    return convert, ConvertOptions
