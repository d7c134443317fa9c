"""Speed on a real-shaped schedule (not a test: prints its figures).

    python tests/benchmarks/bench_real_shaped.py [--phases 6] [--packages 6] [--groups 5]
        [--size 20] [--keep FILE]

The shape of a schedule exported from a planning tool after a risk workshop, as issue
"Schedules as they really come" lists it (the network and the figures are invented):

- WBS summary rows at three levels: phases (``1``), work packages (``1.2``) and groups
  (``1.2.3``) above the activities (``1.2.3.4``); each group a chain of activities with a
  few start-to-start cross links;
- links on summaries: every phase after the first linked to the one before on its
  summary row; the packages of a phase in pairs (the even one linked to the odd one on
  its summary row); in each package groups 1-2-3 in line and 4-5 beside them, the third
  linked on the links sheet, the others on their summary rows (``--serial``: every
  package and group in one line, so every path runs through every activity);
- estimates typed with units as text cells (``3d``, ``2w``, ``16h``, ``3 days``) beside
  plain numbers;
- ladders (``X[SS+1d], X[FF+2d]``) and the very same link written twice (a warning each);
- a links sheet (``Predecessor``, ``Successor``, ``Type``, ``Lag``, lags with units) with
  the links between the groups not linked on their summary rows and links across packages;
- a tenth of the activities with one Duration and a Range (a class of the Ranges sheet,
  or inline percentages) instead of O, M and P.

The default is 3,600 activities and 222 summary rows. The figures, each printed: read +
validate, the analysis without the simulation, the workbook write (timed in this process,
one after the other), then the whole convert without and with a 10,000-iteration
simulation (each in a fresh child process, as in ``bench_core.py``, whose targets apply:
validate and schedule well under 1 s, the convert without simulation under 15 s and 1 GB).
``--keep FILE`` also saves the generated input, to time the command line on it.
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xlsxwriter
from bench_core import time_convert, time_validate_schedule

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

HEAD = [
    "WBS",
    "ID",
    "Description",
    "Predecessors",
    "Optimistic",
    "Most likely",
    "Pessimistic",
    "Duration",
    "Range",
]
RANGES = [("Tight", 90, 100, 110), ("Normal", 85, 100, 125), ("Wide", 75, 110, 160)]
INLINE = ["80/100/130", "90/105/140"]


def with_unit(days: int, rng: np.random.Generator) -> str | float:
    """``days`` working days as a plain number or text with a unit (hours at 8 a day)."""
    pick = rng.random()
    if pick < 0.5:
        return float(days)
    if days % 5 == 0 and pick < 0.7:
        return f"{days // 5}w"
    if days <= 3 and pick < 0.85:
        return f"{days * 8}h"
    return f"{days} days" if pick > 0.95 else f"{days}d"


def estimates(rng: np.random.Generator) -> list:
    """O, M, P (with units) or a Duration with a Range: the cells after Predecessors."""
    m = int(rng.integers(1, 16))
    if rng.random() < 0.1:
        duration = f"{m // 5 or 1}w" if rng.random() < 0.3 else f"{m}d"
        pick = int(rng.integers(0, len(RANGES) + len(INLINE)))
        rng_cell = RANGES[pick][0] if pick < len(RANGES) else INLINE[pick - len(RANGES)]
        return ["", "", "", duration, rng_cell]
    o = max(1, m - int(rng.integers(0, 3)))
    p = m + int(rng.integers(0, 8))
    return [with_unit(o, rng), with_unit(m, rng), with_unit(p, rng)]


def chain_preds(code: str, k: int, rng: np.random.Generator) -> str:
    """The Predecessors cell of the k-th activity of a group: the one before, as a ladder,
    a repeated link or a plain link, and now and then a cross link three back."""
    if k == 1:
        return ""
    before = f"{code}_{k - 1}"
    pick = rng.random()
    if pick < 0.15:
        preds = [f"{before}[SS+1d]", f"{before}[FF+{int(rng.integers(1, 3))}d]"]
    elif pick < 0.2:
        preds = [before, before]  # the very same link twice: a warning, counted once
    else:
        preds = [before]
    if k > 3 and rng.random() < 0.2:
        preds.append(f"{code}_{k - 3}[SS+4h]")
    return ", ".join(preds)


def make_input(
    path: Path, phases: int, packages: int, groups: int, size: int, serial: bool, seed: int = 1
):
    """Write the schedule; returns (activities, summary rows, rows on the links sheet).

    Packages run in pairs (the even one after the odd one) and the fourth group of a
    package beside the first three; with ``serial`` everything runs in one line, so every
    path goes through every activity (the worst case for the Paths sheet)."""
    rng = np.random.default_rng(seed)
    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = wb.add_worksheet("Activities")
    ws.write_row(0, 0, HEAD)
    links: list[list] = []
    r, count, summaries = 1, 0, 0
    for ph in range(1, phases + 1):
        ws.write_row(r, 0, [f"{ph}", f"P{ph}", f"Phase {ph}", f"P{ph - 1}" if ph > 1 else ""])
        r, summaries = r + 1, summaries + 1
        for pk in range(1, packages + 1):
            pred = f"W{ph}_{pk - 1}" if pk > 1 and (serial or pk % 2 == 0) else ""
            ws.write_row(r, 0, [f"{ph}.{pk}", f"W{ph}_{pk}", f"Package {ph}.{pk}", pred])
            r, summaries = r + 1, summaries + 1
            for g in range(1, groups + 1):
                code = f"A{ph}_{pk}_{g}"
                on_summary = g > 1 and g % 3 != 0 and (serial or g != 4)
                pred = f"G{ph}_{pk}_{g - 1}" if on_summary else ""
                ws.write_row(r, 0, [f"{ph}.{pk}.{g}", f"G{ph}_{pk}_{g}", f"Group {g}", pred])
                r, summaries = r + 1, summaries + 1
                if g % 3 == 0:  # the link between the groups on the links sheet instead
                    links.append([f"A{ph}_{pk}_{g - 1}_{size}", f"{code}_1", "FS", "2d"])
                if pk > 1 and g == groups and rng.random() < 0.5:  # across packages
                    links.append([f"A{ph}_{pk - 1}_{g}_2", f"{code}_2", "SS", "1w"])
                    links.append([f"A{ph}_{pk - 1}_{g}_2", f"{code}_2", "FF", "16h"])
                for k in range(1, size + 1):
                    row = [f"{ph}.{pk}.{g}.{k}", f"{code}_{k}", f"Task {ph}.{pk}.{g}.{k}"]
                    ws.write_row(r, 0, [*row, chain_preds(code, k, rng), *estimates(rng)])
                    r, count = r + 1, count + 1
                if g > 1 and g % 3 == 0:  # a link of the Predecessors cells repeated here
                    links.append([f"{code}_1", f"{code}_2", "FS", 0])
    ls = wb.add_worksheet("Links")
    ls.write_row(0, 0, ["Predecessor", "Successor", "Type", "Lag"])
    for i, row in enumerate(links, start=1):
        ls.write_row(i, 0, row)
    rs = wb.add_worksheet("Ranges")
    rs.write_row(0, 0, ["Range", "Low %", "Likely %", "High %"])
    for i, row in enumerate(RANGES, start=1):
        rs.write_row(i, 0, row)
    wb.close()
    return count, summaries, len(links)


def time_in_process(src: Path, out: Path) -> dict:
    """Read + validate, the analysis without simulation and the workbook write, in turn."""
    from converter.analyse.analysis import analyse
    from converter.options import ConvertOptions
    from converter.read.sheets import read_input
    from converter.validate import validate
    from converter.write.workbook import write_workbook

    options = ConvertOptions(simulate=False)
    t0 = time.perf_counter()
    raw = read_input(src).raw
    sched, problems = validate(raw, options)
    t1 = time.perf_counter()
    assert sched is not None, [p for p in problems if p.severity == "error"][:5]
    analysis = analyse(sched, options)
    t2 = time.perf_counter()
    write_workbook(analysis, out)
    t3 = time.perf_counter()
    return {
        "links": len(sched.links),
        "expanded": sum(1 for lk in sched.links if lk.via),
        "warnings": len(problems),
        "read_validate_s": t1 - t0,
        "analyse_s": t2 - t1,
        "write_s": t3 - t2,
    }


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--phases", type=int, default=6)
    ap.add_argument("--packages", type=int, default=6)
    ap.add_argument("--groups", type=int, default=5)
    ap.add_argument("--size", type=int, default=20)
    ap.add_argument("--serial", action="store_true", help="every package and group in series")
    ap.add_argument("--keep", type=Path, help="also save the generated input here")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "real_shaped.xlsx"
        n, summaries, sheet_links = make_input(
            src, args.phases, args.packages, args.groups, args.size, args.serial
        )
        if args.keep:
            shutil.copyfile(src, args.keep)
        core = time_validate_schedule(src)  # as bench_core.py times it, for its < 1 s
        f = time_in_process(src, Path(tmp) / "in_process.analysis.xlsx")
        print(
            f"input: {n:,} activities, {summaries:,} summary rows, {f['links']:,} links "
            f"({f['expanded']:,} expanded from links on summaries, {sheet_links:,} rows on the "
            f"links sheet), {f['warnings']:,} warnings ({src.stat().st_size / 1e6:.1f} MB xlsx)"
        )
        print(f"read + validate:                 {f['read_validate_s']:.2f} s")
        print(
            f"validate + schedule (CPM passes): {core['validate_and_schedule_s']:.2f} s "
            f"(passes alone {core['schedule_s']:.2f} s; target < 1 s)"
        )
        print(f"analysis without simulation:     {f['analyse_s']:.2f} s")
        print(f"workbook write:                  {f['write_s']:.2f} s")
        for sim in (False, True):
            r = time_convert(src, Path(tmp), sim)
            label = "convert, with 10,000-iteration simulation" if sim else "convert, no simulation"
            print(
                f"{label + ':':42s} {r['seconds']:.1f} s, peak {r['peak_mb']:.0f} MB"
                + ("" if sim else " (target < 15 s, < 1 GB)")
            )


if __name__ == "__main__":
    main()
