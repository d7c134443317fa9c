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
