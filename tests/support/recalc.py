"""Recalculate a workbook in LibreOffice and compare its results with the cached values.

The converter writes every derived figure as a live formula together with the value
it computed (the *cached* value). This helper gives tests an outside check of both:
LibreOffice Calc opens the workbook headless, recalculates every formula, and saves a
copy; :func:`compare_recalculated` then holds each cached value against LibreOffice's.

LibreOffice does not recalculate OOXML files on load by default (the shipped registry,
``share/registry/main.xcd``, sets ``/org.openoffice.Office.Calc/Formula/Load``
``OOXMLRecalcMode`` to 1). Each run therefore uses a private user profile whose
``registrymodifications.xcu`` sets ``OOXMLRecalcMode`` and ``ODFRecalcMode`` to 0.
The meaning of the values is LibreOffice's ``enum ScRecalcOptions`` in
``sc/inc/calcconfig.hxx`` ("have to match the registry values"): 0 = RECALC_ALWAYS,
1 = RECALC_NEVER, 2 = RECALC_ASK.

Not a test module: test files import it (``from recalc import recalculate``).
"""

from __future__ import annotations

import datetime as dt
import math
import os
import shutil
import signal
import subprocess
import tempfile
import threading
from pathlib import Path

import openpyxl
from openpyxl.utils.datetime import to_excel
from openpyxl.worksheet.formula import ArrayFormula

#: Registry values that force a full recalculation when a document loads
#: (0 = RECALC_ALWAYS, LibreOffice sc/inc/calcconfig.hxx).
RECALC_ALWAYS = 0

PROFILE_XCU = f"""<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry"
 xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" \
oor:op="fuse"><value>{RECALC_ALWAYS}</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" \
oor:op="fuse"><value>{RECALC_ALWAYS}</value></prop></item>
</oor:items>
"""

DEFAULT_TIMEOUT = 240.0  # seconds; a first start with a fresh profile takes a few seconds

_SEARCH = (
    "/usr/bin/soffice",
    "/usr/lib/libreoffice/program/soffice",
    "/opt/libreoffice/program/soffice",
    "/Applications/LibreOffice.app/Contents/MacOS/soffice",
)

_lock = threading.Lock()  # one LibreOffice process per profile at a time


class RecalcError(RuntimeError):
    """LibreOffice could not open, recalculate or save the workbook."""


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


def _new_profile(root: Path) -> Path:
    """A fresh LibreOffice user profile under ``root`` that recalculates on load."""
    profile = Path(tempfile.mkdtemp(prefix="lo-profile-", dir=root))
    (profile / "user").mkdir()
    (profile / "user" / "registrymodifications.xcu").write_text(PROFILE_XCU, encoding="utf-8")
    return profile


def _kill_group(proc: subprocess.Popen) -> None:
    """Kill the process group of a LibreOffice we started (it forks oosplash + soffice.bin)."""
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        pass
    proc.wait()


def recalculate(
    xlsx: Path, outdir: Path, *, timeout: float = DEFAULT_TIMEOUT, soffice: str | None = None
) -> Path:
    """Open ``xlsx`` in headless LibreOffice, recalculate every formula, save as xlsx.

    Returns ``outdir/<stem>.recalc.xlsx``. Every call runs in its own temporary user
    profile (so parallel test workers never share one, and a killed run leaves nothing
    behind). Raises :class:`RecalcError` with LibreOffice's output if the conversion
    fails, times out, or writes no file; a workbook LibreOffice cannot load fails here.
    """
    exe = soffice or soffice_path()
    if exe is None:
        raise RecalcError("LibreOffice (soffice) not found; set PERTBOOK_SOFFICE or install it")
    xlsx = Path(xlsx).resolve()
    if not xlsx.is_file():
        raise RecalcError(f"no such workbook: {xlsx}")
    outdir = Path(outdir).resolve()
    outdir.mkdir(parents=True, exist_ok=True)
    target = outdir / f"{xlsx.stem}.recalc.xlsx"
    with tempfile.TemporaryDirectory(prefix="pertbook-recalc-") as tmp:
        work = Path(tmp)
        profile = _new_profile(work)
        convert_dir = work / "out"
        convert_dir.mkdir()
        cmd = [
            exe,
            f"-env:UserInstallation={profile.as_uri()}",
            "--headless",
            "--invisible",
            "--nologo",
            "--nodefault",
            "--nolockcheck",
            "--norestore",
            "--convert-to",
            "xlsx:Calc MS Excel 2007 XML",
            "--outdir",
            str(convert_dir),
            str(xlsx),
        ]
        env = dict(os.environ, HOME=str(work))
        with _lock:
            proc = subprocess.Popen(
                cmd,
                stdout=subprocess.PIPE,
                stderr=subprocess.PIPE,
                env=env,
                start_new_session=True,
            )
            try:
                out, err = proc.communicate(timeout=timeout)
            except subprocess.TimeoutExpired as exc:
                _kill_group(proc)
                raise RecalcError(
                    f"LibreOffice did not finish converting {xlsx.name} within {timeout:.0f} s"
                ) from exc
        produced = convert_dir / f"{xlsx.stem}.xlsx"
        text = (out + err).decode("utf-8", "replace").strip()
        if proc.returncode != 0 or not produced.is_file() or produced.stat().st_size == 0:
            raise RecalcError(
                f"LibreOffice failed to convert {xlsx.name} (exit code {proc.returncode}): "
                f"{text or 'no output'}"
            )
        if any(line.lstrip().startswith("Error") for line in text.splitlines()):
            raise RecalcError(f"LibreOffice reported a problem converting {xlsx.name}: {text}")
        shutil.move(str(produced), target)
    return target


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
