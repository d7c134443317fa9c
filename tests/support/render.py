"""Print a workbook as LibreOffice would, and read the pages back.

``to_pdf`` runs LibreOffice headless (``--convert-to pdf``, a private profile per run that
keeps the cached values, see tests/support/libreoffice.py); ``page_words`` and
``page_texts`` read the PDF with poppler's ``pdftotext`` (``-bbox``: every word with its
box in points, origin top left; ``-layout``: the text of each page as laid out);
``to_png`` draws the pages with ``pdftoppm``.

Not a test module: test files and ``tests/pictures/make_pictures.py`` import it.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
import threading
import xml.etree.ElementTree as ET
from dataclasses import dataclass
from pathlib import Path

from libreoffice import PROFILE_TEMPLATE, RECALC_NEVER, kill_group
from recalc import soffice_path

DEFAULT_TIMEOUT = 240.0  # seconds
_lock = threading.Lock()  # one printing LibreOffice at a time from this process


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
    return to_pdf_many([document], outdir, timeout=timeout, soffice=soffice)[0]


def to_pdf_many(
    documents: list[Path],
    outdir: Path,
    *,
    timeout: float = DEFAULT_TIMEOUT,
    soffice: str | None = None,
) -> list[Path]:
    """Print each document to ``outdir/<stem>.pdf`` in one LibreOffice run (a private
    profile that leaves the cached values as they are); returns the PDFs in order."""
    exe = soffice or soffice_path()
    if exe is None:
        raise RenderError("LibreOffice (soffice) not found")
    sources = [Path(d).resolve() for d in documents]
    outdir = Path(outdir).resolve()
    outdir.mkdir(parents=True, exist_ok=True)
    targets = [outdir / f"{src.stem}.pdf" for src in sources]
    with tempfile.TemporaryDirectory(prefix="pertbook-pdf-") as tmp:
        work = Path(tmp)
        profile = work / "profile"
        (profile / "user").mkdir(parents=True)
        (profile / "user" / "registrymodifications.xcu").write_text(
            PROFILE_TEMPLATE.format(mode=RECALC_NEVER), encoding="utf-8"
        )
        out = work / "out"
        out.mkdir()
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
            "pdf",
            "--outdir",
            str(out),
            *map(str, sources),
        ]
        with _lock:
            proc = subprocess.Popen(
                cmd,
                stdout=subprocess.PIPE,
                stderr=subprocess.PIPE,
                env=dict(os.environ, HOME=str(work)),
                start_new_session=True,
            )
            try:
                stdout, stderr = proc.communicate(timeout=timeout)
            except subprocess.TimeoutExpired as exc:
                kill_group(proc)
                raise RenderError(
                    f"LibreOffice did not print {len(sources)} document(s) within {timeout:.0f} s"
                ) from exc
        text = (stdout + stderr).decode("utf-8", "replace").strip()
        for src, target in zip(sources, targets, strict=True):
            produced = out / f"{src.stem}.pdf"
            if proc.returncode != 0 or not produced.is_file() or produced.stat().st_size == 0:
                raise RenderError(
                    f"LibreOffice failed to print {src.name} "
                    f"(exit code {proc.returncode}): {text or 'no output'}"
                )
            shutil.move(str(produced), target)
    return targets


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
                words.append(
                    Word(
                        w.text or "",
                        float(w.get("xMin")),
                        float(w.get("yMin")),
                        float(w.get("xMax")),
                        float(w.get("yMax")),
                    )
                )
        pages.append(words)
    return pages


def to_png(pdf: Path, outdir: Path, prefix: str = "p", dpi: int = 60) -> list[Path]:
    """Draw every page as ``outdir/<prefix>-<n>.png`` (``pdftoppm``); returns them in order."""
    outdir = Path(outdir)
    outdir.mkdir(parents=True, exist_ok=True)
    _run(["pdftoppm", "-png", "-r", str(dpi), str(pdf), str(outdir / prefix)])
    return sorted(outdir.glob(f"{prefix}-*.png"))
