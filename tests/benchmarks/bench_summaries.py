"""Speed of a schedule with WBS summary rows and links on them (not a test: prints figures).

    python tests/benchmarks/bench_summaries.py [--phases 10] [--packages 20] [--size 15]

A real-shaped outline: phases (WBS 1, 2, ...) of work packages (1.1, 1.2, ...) of
activities (1.1.1, ...), each package a chain with a few cross links, each package linked
to the next one by a link written on the package's summary row, each phase to the next by
a link on the phase's summary row. Targets: the existing ones of bench_core.py (validate
and schedule well under 1 s for a few thousand activities; convert under 15 s).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xlsxwriter
from bench_core import time_convert

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

HEAD = ["WBS", "ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]


def make_input(path: Path, phases: int, packages: int, size: int, seed: int = 1) -> int:
    """Write the outline; returns how many activities it has."""
    rng = np.random.default_rng(seed)
    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = wb.add_worksheet("Activities")
    ws.write_row(0, 0, HEAD)
    r, count = 1, 0
    for ph in range(1, phases + 1):
        ws.write_row(r, 0, [f"{ph}", f"P{ph}", f"Phase {ph}", f"P{ph - 1}" if ph > 1 else ""])
        r += 1
        for pk in range(1, packages + 1):
            pred = f"W{ph}_{pk - 1}" if pk > 1 else ""
            ws.write_row(r, 0, [f"{ph}.{pk}", f"W{ph}_{pk}", f"Package {ph}.{pk}", pred])
            r += 1
            for k in range(1, size + 1):
                preds = [f"A{ph}_{pk}_{k - 1}"] if k > 1 else []
                if k > 3 and rng.random() < 0.3:
                    preds.append(f"A{ph}_{pk}_{k - 3}[SS+1]")
                m = float(rng.integers(1, 10))
                row = [f"{ph}.{pk}.{k}", f"A{ph}_{pk}_{k}", f"Task {k}", ", ".join(preds)]
                ws.write_row(r, 0, [*row, m - 1 if m > 1 else m, m, m + 3])
                r += 1
                count += 1
    wb.close()
    return count


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--phases", type=int, default=10)
    ap.add_argument("--packages", type=int, default=20)
    ap.add_argument("--size", type=int, default=15)
    args = ap.parse_args()
    from converter.options import ConvertOptions
    from converter.read.sheets import read_input
    from converter.validate import validate

    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "outline.xlsx"
        n = make_input(src, args.phases, args.packages, args.size)
        raw = read_input(src).raw
        t0 = time.perf_counter()
        sched, problems = validate(raw, ConvertOptions())
        t1 = time.perf_counter()
        assert sched is not None, problems[:5]
        expanded = sum(1 for lk in sched.links if lk.via)
        print(
            f"input: {n:,} activities, {len(sched.summaries):,} summary rows, "
            f"{len(sched.links):,} links ({expanded:,} expanded from links on summaries)"
        )
        print(f"validate (with the expansion): {t1 - t0:.2f} s")
        for sim in (False, True):
            r = time_convert(src, Path(tmp), sim)
            label = "convert, with 10,000-iteration simulation" if sim else "convert, no simulation"
            print(f"{label + ':':42s} {r['seconds']:.1f} s, peak {r['peak_mb']:.0f} MB")


if __name__ == "__main__":
    main()
