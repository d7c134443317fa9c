"""Make the README's page pictures: what a reviewer gets, printed.

Converts a sample, prints the workbook with LibreOffice (PDF) and draws chosen pages as
PNG with poppler's pdftoppm:

    python tests/pictures/make_pictures.py            # writes samples/pages/*.png

The clinic sample gives the Summary, the probability chart, the histogram, the risk
drivers and the timeline; the substation sample the WBS outline of the Activities sheet
and the two pages of its Risks sheet.

Run it again after a change to the workbook's look, so the pictures stay true. Needs
LibreOffice (soffice) and poppler-utils.
"""

from __future__ import annotations

import argparse
import re
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))
sys.path.insert(0, str(REPO / "tests" / "support"))

from render import page_texts, to_pdf  # noqa: E402

from converter.api import ConvertOptions, convert  # noqa: E402

SAMPLE = REPO / "samples" / "clinic-it-rollout.xlsx"
#: The sample with WBS summary rows, range classes and a risk register.
SUBSTATION = REPO / "samples" / "substation-upgrade.xlsx"
OUTDIR = REPO / "samples" / "pages"

#: picture name -> (sheet, a text on the page wanted: the first of the sheet's pages with it)
PICTURES = {
    "summary": ("Summary", "When will it finish?"),
    "probability": ("Probability", "Chance of finishing by each duration"),
    "histogram": ("Simulation", "Histogram of simulated durations"),
    "drivers": ("Simulation", "Risk drivers"),
    "timeline": ("Timeline", "Schedule on expected times"),
}
#: The same for the substation sample: the WBS outline and the risk register.
SUBSTATION_PICTURES = {
    "activities-wbs": ("Activities", "Design and approvals"),
    "risks": ("Risks", "The register and what each risk does to the finish"),
    "risk-ranking": ("Risks", "Ranking: the"),
}
#: Each sample and the pictures drawn from it.
SETS = ((SAMPLE, PICTURES), (SUBSTATION, SUBSTATION_PICTURES))


def find_pages(pdf: Path, pictures: dict[str, tuple[str, str]] = PICTURES) -> dict[str, int]:
    """Picture name -> page number (from 1), from the footer's sheet name and the text."""
    found: dict[str, int] = {}
    for number, text in enumerate(page_texts(pdf), start=1):
        lines = [line for line in text.splitlines() if line.strip()]
        if not lines or not re.search(r"Page \d+ of \d+\s*$", lines[-1]):
            continue
        sheet = re.split(r"\s{2,}", lines[-1].strip())[0]
        for name, (want, words) in pictures.items():
            if name not in found and sheet == want and words in text:
                found[name] = number
    return found


def make_pictures(
    sample: Path = SAMPLE,
    outdir: Path = OUTDIR,
    dpi: int = 70,
    pictures: dict[str, tuple[str, str]] = PICTURES,
) -> list[Path]:
    """Write one PNG per entry of ``pictures`` into ``outdir``; returns their paths."""
    outdir.mkdir(parents=True, exist_ok=True)
    made = []
    with tempfile.TemporaryDirectory(prefix="pertbook-pictures-") as tmp:
        work = Path(tmp)
        result = convert(sample, ConvertOptions(), outdir=work)
        if not result.ok:
            raise SystemExit(f"{sample.name} did not convert: {result.problems}")
        pdf = to_pdf(work / f"{sample.stem}.analysis.xlsx", work)
        pages = find_pages(pdf, pictures)
        for name in pictures:
            if name not in pages:
                raise SystemExit(f"no page for the picture {name!r}: {pictures[name]}")
            stem = work / name
            page = str(pages[name])
            subprocess.run(
                [
                    "pdftoppm",
                    "-png",
                    "-r",
                    str(dpi),
                    "-f",
                    page,
                    "-l",
                    page,
                    "-singlefile",
                    str(pdf),
                    str(stem),
                ],
                check=True,
                capture_output=True,
            )
            target = outdir / f"{name}.png"
            shutil.move(str(stem.with_suffix(".png")), target)
            made.append(target)
    return made


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--outdir", type=Path, default=OUTDIR)
    parser.add_argument("--dpi", type=int, default=70)
    args = parser.parse_args(argv)
    for sample, pictures in SETS:
        for path in make_pictures(sample, args.outdir, args.dpi, pictures):
            print(path.relative_to(REPO) if path.is_relative_to(REPO) else path)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
