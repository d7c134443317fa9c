"""Recalculate a workbook in LibreOffice and compare its results with the cached values.

The converter writes every derived figure as a live formula together with the value
it computed (the *cached* value). This helper gives tests an outside check of both:
LibreOffice Calc opens the workbook headless, recalculates every formula, and saves a
copy; :func:`compare_recalculated` then holds each cached value against LibreOffice's.

LibreOffice does not recalculate OOXML files on load by default (the shipped registry,
``share/registry/main.xcd``, sets ``/org.openoffice.Office.Calc/Formula/Load``
``OOXMLRecalcMode`` to 1). LibreOffice is therefore always run with a private user
profile whose ``registrymodifications.xcu`` sets ``OOXMLRecalcMode`` and
``ODFRecalcMode`` to 0. The meaning of the values is LibreOffice's
``enum ScRecalcOptions`` in ``sc/inc/calcconfig.hxx`` ("have to match the registry
values"): 0 = RECALC_ALWAYS, 1 = RECALC_NEVER, 2 = RECALC_ASK.

Starting LibreOffice is the slow part, so a test session starts it once
(tests/support/libreoffice.py, the session fixture ``libreoffice`` in tests/conftest.py)
and :func:`recalculate` hands every workbook to that running instance; outside a test
session it runs a one-off ``soffice --convert-to``.

Not a test module: test files import it (``from recalc import recalculate``).
"""

from __future__ import annotations

import datetime as dt
import math
import os
import shutil
from pathlib import Path

import openpyxl
from libreoffice import (
    DEFAULT_TIMEOUT,
    PROFILE_TEMPLATE,
    RECALC_ALWAYS,
    LibreOffice,
    RecalcError,
)
from openpyxl.utils.datetime import to_excel
from openpyxl.worksheet.formula import ArrayFormula

__all__ = [
    "PROFILE_XCU",
    "RECALC_ALWAYS",
    "LibreOffice",
    "RecalcError",
    "RecalcReport",
    "compare_recalculated",
    "recalculate",
    "soffice_path",
    "use_shared",
]

#: The private profile's registry: recalculate every formula whenever a document loads.
PROFILE_XCU = PROFILE_TEMPLATE.format(mode=RECALC_ALWAYS)

_SEARCH = (
    "/usr/bin/soffice",
    "/usr/lib/libreoffice/program/soffice",
    "/opt/libreoffice/program/soffice",
    "/Applications/LibreOffice.app/Contents/MacOS/soffice",
)

_shared: LibreOffice | None = None  # the test session's running LibreOffice, if any


class RecalcReport(list):
    """Mismatch descriptions (a ``list[str]``) plus how many formula cells were compared."""

    def __init__(self, mismatches: list[str], compared: int) -> None:
        super().__init__(mismatches)
        self.compared = compared

    def __repr__(self) -> str:
        return f"RecalcReport(compared={self.compared}, mismatches={list(self)!r})"


def soffice_path() -> str | None:
    """The LibreOffice ``soffice`` executable: env ``PERTBOOK_SOFFICE``, PATH, usual places."""
    given = os.environ.get("PERTBOOK_SOFFICE")
    if given:
        return given if Path(given).is_file() else None
    for name in ("soffice", "libreoffice"):
        found = shutil.which(name)
        if found:
            return found
    for place in _SEARCH:
        if Path(place).is_file():
            return place
    return None


def use_shared(office: LibreOffice | None) -> None:
    """Make :func:`recalculate` use ``office`` (the session's LibreOffice); None undoes it."""
    global _shared
    _shared = office


def recalculate(
    xlsx: Path, outdir: Path, *, timeout: float = DEFAULT_TIMEOUT, soffice: str | None = None
) -> Path:
    """Open ``xlsx`` in headless LibreOffice, recalculate every formula, save as xlsx.

    Returns ``outdir/<stem>.recalc.xlsx``; the input is never touched. Uses the test
    session's running LibreOffice (:func:`use_shared`) when there is one for the same
    ``soffice``; otherwise a one-off ``soffice --convert-to`` in a fresh private profile.
    Raises :class:`RecalcError` naming the workbook if LibreOffice cannot load or save
    it, or does not finish within ``timeout`` seconds.
    """
    exe = soffice or soffice_path()
    if exe is None:
        raise RecalcError("LibreOffice (soffice) not found; set PERTBOOK_SOFFICE or install it")
    if _shared is not None and _shared.soffice == exe:
        return _shared.recalculate(xlsx, outdir)
    with LibreOffice(exe, timeout=timeout, backend="convert-to") as office:
        return office.recalculate(xlsx, outdir)


def _formula_text(value: object) -> str | None:
    """The formula of a cell value read with ``data_only=False``, or None."""
    if isinstance(value, ArrayFormula):
        return value.text
    if isinstance(value, str) and value.startswith("="):
        return value
    if type(value).__name__ == "DataTableFormula":
        return "{data table}"
    return None


def _serial(value: dt.datetime | dt.date | dt.time) -> float:
    """Excel 1900-system serial number of a date/time (openpyxl's conversion)."""
    return float(to_excel(value))


def _same(cached: object, recalc: object, rel: float) -> bool:
    """Equal within tolerance: numbers by ``rel`` (abs 1e-12), dates to 1 ms, others exactly."""
    if isinstance(cached, bool) or isinstance(recalc, bool):
        if isinstance(cached, bool) and isinstance(recalc, bool):
            return cached == recalc
        # LibreOffice may save a logical result as 1/0 with a BOOLEAN number format.
        other = recalc if isinstance(cached, bool) else cached
        flag = cached if isinstance(cached, bool) else recalc
        return isinstance(other, (int, float)) and float(other) == float(flag)
    is_time = (dt.datetime, dt.date, dt.time)
    if isinstance(cached, is_time) or isinstance(recalc, is_time):
        try:
            a = _serial(cached) if isinstance(cached, is_time) else float(cached)
            b = _serial(recalc) if isinstance(recalc, is_time) else float(recalc)
        except (TypeError, ValueError):
            return False
        return abs(a - b) <= 1e-3 / 86400.0
    if isinstance(cached, (int, float)) and isinstance(recalc, (int, float)):
        if math.isnan(cached) or math.isnan(recalc):
            return False
        return math.isclose(cached, recalc, rel_tol=rel, abs_tol=1e-12)
    if isinstance(cached, str) and isinstance(recalc, str):
        return cached == recalc
    return cached is None and recalc is None


def compare_recalculated(original: Path, recalculated: Path, rel: float = 1e-9) -> RecalcReport:
    """Compare the cached value of every formula cell of ``original`` with LibreOffice's.

    Returns a list of mismatch descriptions, ``"Sheet!A1: formula =..., cached X,
    recalculated Y"``, with ``.compared`` = number of formula cells looked at. A formula
    cell that has no cached value at all is a mismatch too (the converter always writes
    one); so is a sheet that LibreOffice's copy lacks.
    """
    formulas = openpyxl.load_workbook(original, data_only=False)
    cached_wb = openpyxl.load_workbook(original, data_only=True)
    recalc_wb = openpyxl.load_workbook(recalculated, data_only=True)
    mismatches: list[str] = []
    compared = 0
    for ws in formulas.worksheets:
        cached_ws = cached_wb[ws.title]
        recalc_ws = recalc_wb[ws.title] if ws.title in recalc_wb.sheetnames else None
        for row in ws.iter_rows():
            for cell in row:
                formula = _formula_text(cell.value)
                if formula is None:
                    continue
                compared += 1
                where = f"{ws.title}!{cell.coordinate}"
                cached = cached_ws[cell.coordinate].value
                if recalc_ws is None:
                    mismatches.append(f"{where}: formula {formula}, sheet missing after recalc")
                    continue
                recalc = recalc_ws[cell.coordinate].value
                if cached is None:
                    mismatches.append(
                        f"{where}: formula {formula}, no cached value, recalculated {recalc!r}"
                    )
                elif not _same(cached, recalc, rel):
                    mismatches.append(
                        f"{where}: formula {formula}, cached {cached!r}, recalculated {recalc!r}"
                    )
    for wb in (formulas, cached_wb, recalc_wb):
        wb.close()
    return RecalcReport(mismatches, compared)
