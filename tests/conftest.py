"""Shared test fixtures."""

from __future__ import annotations

import os
import sys
from collections.abc import Iterator
from pathlib import Path

import pytest

TESTS = Path(__file__).resolve().parent / "support"
if str(TESTS) not in sys.path:  # helper modules (recalc, psplib) import as top-level names
    sys.path.insert(0, str(TESTS))

from hypothesis import settings  # noqa: E402
from libreoffice import LibreOffice  # noqa: E402
from recalc import soffice_path, use_shared  # noqa: E402

# CI runs the property tests on a fixed sequence of examples (reproducible, no flakes from
# a new random draw); locally they explore afresh each run. No deadlines: the machine is
# shared and timing is not what these tests check.
settings.register_profile("ci", derandomize=True, deadline=None, print_blob=True)
settings.register_profile("dev", deadline=None)
settings.load_profile("ci" if os.environ.get("CI") else "dev")


@pytest.fixture(scope="session")
def libreoffice() -> Iterator[LibreOffice]:
    """One headless LibreOffice for the whole session, recalculating every workbook on load.

    Started on first use, stopped (with its process group) when the session ends; its
    private profile sets ``OOXMLRecalcMode`` = 0 (tests/support/libreoffice.py). While it
    runs, ``recalc.recalculate`` hands workbooks to it too. Skips the test where
    LibreOffice is not installed.
    """
    path = soffice_path()
    if path is None:
        pytest.skip(
            "LibreOffice (soffice) not found on PATH or in the usual places; install "
            "libreoffice-calc (e.g. apt-get install libreoffice-calc-nogui) or set "
            "PERTBOOK_SOFFICE to run the recalculation checks"
        )
    office = LibreOffice(path)
    use_shared(office)
    try:
        yield office
    finally:
        use_shared(None)
        office.close()


@pytest.fixture(scope="session")
def soffice(libreoffice: LibreOffice) -> str:
    """Path of LibreOffice's soffice (``recalculate(..., soffice=)`` uses the session's one)."""
    return libreoffice.soffice


@pytest.fixture
def convert_api():
    """``(convert, ConvertOptions)`` from the one entry point (a broken import fails)."""
    from converter.api import ConvertOptions, convert

    return convert, ConvertOptions
