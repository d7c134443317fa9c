"""Print a workbook as LibreOffice would, and read the pages back.

``to_pdf`` runs LibreOffice headless (``--convert-to pdf``, a private profile per run, as
``recalc.recalculate`` does); ``page_words`` and ``page_texts`` read the PDF with poppler's
``pdftotext`` (``-bbox``: every word with its box in points, origin top left; ``-layout``:
the text of each page as laid out); ``to_png`` draws the pages with ``pdftoppm``.

Not a test module: test files and ``tests/pictures/make_pictures.py`` import it.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

from recalc import _kill_group, _lock, _new_profile, soffice_path

DEFAULT_TIMEOUT = 240.0  # seconds


class RenderError(RuntimeError):
    """LibreOffice or poppler could not print or read the document."""


@dataclass(frozen=True)
class Word:
    """One word on a PDF page: its text and box in points (origin top left)."""

    text: str
    x0: float
    y0: float
    x1: float
    y1: float


def poppler_missing() -> str | None:
    """Why the PDF tools cannot run here (``None`` when pdftotext and pdftoppm exist)."""
    missing = [tool for tool in ("pdftotext", "pdftoppm", "pdfinfo") if not shutil.which(tool)]
    if missing:
        return f"poppler-utils not installed ({', '.join(missing)} not on PATH)"
    return None


def to_pdf(
    document: Path, outdir: Path, *, timeout: float = DEFAULT_TIMEOUT, soffice: str | None = None
) -> Path:
    """Print ``document`` to ``outdir/<stem>.pdf`` with LibreOffice headless; returns the path."""
    exe = soffice or soffice_path()
    if exe is None:
        raise RenderError("LibreOffice (soffice) not found")
    document = Path(document).resolve()
    outdir = Path(outdir).resolve()
    outdir.mkdir(parents=True, exist_ok=True)
    target = outdir / f"{document.stem}.pdf"
    with tempfile.TemporaryDirectory(prefix="pertbook-pdf-") as tmp:
        work = Path(tmp)
        profile = _new_profile(work)
        out = work / "out"
        out.mkdir()
        cmd = [exe, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--invisible",
               "--nologo", "--nodefault", "--nolockcheck", "--norestore",
               "--convert-to", "pdf", "--outdir", str(out), str(document)]
        with _lock:
            proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                    env=dict(os.environ, HOME=str(work)),
                                    start_new_session=True)
            try:
                stdout, stderr = proc.communicate(timeout=timeout)
            except subprocess.TimeoutExpired as exc:
                _kill_group(proc)
                raise RenderError(f"LibreOffice did not print {document.name} within "
                                  f"{timeout:.0f} s") from exc
        produced = out / f"{document.stem}.pdf"
        if proc.returncode != 0 or not produced.is_file() or produced.stat().st_size == 0:
            text = (stdout + stderr).decode("utf-8", "replace").strip()
            raise RenderError(f"LibreOffice failed to print {document.name} "
                              f"(exit code {proc.returncode}): {text or 'no output'}")
        shutil.move(str(produced), target)
    return target


def _run(cmd: list[str]) -> str:
    proc = subprocess.run(cmd, capture_output=True, timeout=120)
    if proc.returncode != 0:
        raise RenderError(f"{cmd[0]} failed: {proc.stderr.decode('utf-8', 'replace')}")
    return proc.stdout.decode("utf-8", "replace")


def page_count(pdf: Path) -> int:
    """Number of pages (``pdfinfo``)."""
    for line in _run(["pdfinfo", str(pdf)]).splitlines():
        if line.startswith("Pages:"):
            return int(line.split()[1])
    raise RenderError(f"pdfinfo gave no page count for {pdf}")


def page_texts(pdf: Path) -> list[str]:
    """The text of each page as laid out (``pdftotext -layout``)."""
    pages = _run(["pdftotext", "-layout", str(pdf), "-"]).split("\f")
    return pages[:-1] if pages and not pages[-1].strip() else pages


def page_words(pdf: Path) -> list[list[Word]]:
    """The words of each page with their boxes (``pdftotext -bbox``)."""
    xhtml = _run(["pdftotext", "-bbox", str(pdf), "-"])
    root = ET.fromstring(xhtml)
    pages: list[list[Word]] = []
    for page in root.iter():
        if not page.tag.endswith("page"):
            continue
        words = []
        for w in page:
            if w.tag.endswith("word"):
                words.append(Word(w.text or "", float(w.get("xMin")), float(w.get("yMin")),
                                  float(w.get("xMax")), float(w.get("yMax"))))
        pages.append(words)
    return pages


def to_png(pdf: Path, outdir: Path, prefix: str = "p", dpi: int = 60) -> list[Path]:
    """Draw every page as ``outdir/<prefix>-<n>.png`` (``pdftoppm``); returns them in order."""
    outdir = Path(outdir)
    outdir.mkdir(parents=True, exist_ok=True)
    _run(["pdftoppm", "-png", "-r", str(dpi), str(pdf), str(outdir / prefix)])
    return sorted(outdir.glob(f"{prefix}-*.png"))
