"""Speed of the core pipeline on a large schedule (not a test: prints its figures).

    python tests/benchmarks/bench_core.py [--activities 10000] [--links 30000]

Targets (issue "Core"): 10,000 activities with 30,000 links validated and scheduled
in under 1 s; the whole convert including the workbook in under 15 s and 1 GB peak
memory. Each convert runs in a fresh child process so its peak memory (ru_maxrss) is
its own.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xlsxwriter

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))


def make_input(path: Path, n: int, links: int, seed: int = 1) -> None:
    """A random layered network: each activity links to ~links/n earlier ones."""
    rng = np.random.default_rng(seed)
    width = 50
    level = np.arange(n) // width
    preds: list[set[int]] = [set() for _ in range(n)]
    count = 0
    while count < links:
        s = int(rng.integers(width, n))
        lo = max(0, (level[s] - 3) * width)
        p = int(rng.integers(lo, level[s] * width))
        if p not in preds[s]:
            preds[s].add(p)
            count += 1
    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = wb.add_worksheet("Activities")
    ws.write_row(
        0, 0, ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
    )
    for i in range(n):
        m = float(rng.integers(2, 20))
        o = m - float(rng.integers(0, 2))
        p = m + float(rng.integers(0, 10))
        ws.write_row(
            i + 1,
            0,
            [f"A{i}", f"Work package {i}", ", ".join(f"A{j}" for j in sorted(preds[i])), o, m, p],
        )
    wb.close()


def time_validate_schedule(path: Path) -> dict:
    from converter.analyse.analysis import analyse  # noqa: F401  (import cost outside the timing)
    from converter.analyse.network import build_network, schedule
    from converter.analyse.pert import expected_time
    from converter.options import ConvertOptions
    from converter.read.sheets import read_input
    from converter.validate import validate

    t0 = time.perf_counter()
    raw = read_input(path).raw
    t1 = time.perf_counter()
    sched, problems = validate(raw, ConvertOptions())
    assert sched is not None, problems[:5]
    t2 = time.perf_counter()
    idx = sched.index()
    acts = sched.activities
    net = build_network(
        len(acts),
        [idx[lk.pred] for lk in sched.links],
        [idx[lk.succ] for lk in sched.links],
        [lk.code for lk in sched.links],
        [lk.lag for lk in sched.links],
    )
    te = expected_time(
        [a.optimistic for a in acts], [a.most_likely for a in acts], [a.pessimistic for a in acts]
    )
    cpm = schedule(net, te)
    t3 = time.perf_counter()
    return {
        "read_s": t1 - t0,
        "validate_s": t2 - t1,
        "schedule_s": t3 - t2,
        "validate_and_schedule_s": t3 - t1,
        "finish": cpm.finish,
        "links": len(sched.links),
    }


CHILD = """
import json, resource, sys, time
sys.path.insert(0, {root!r})
from converter.api import ConvertOptions, convert
t = time.perf_counter()
r = convert({path!r}, ConvertOptions(simulate={sim}, iterations={iters}), outdir={out!r})
dt = time.perf_counter() - t
assert r.ok, r.problems[:3]
print(json.dumps({{"seconds": dt,
                  "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}}))
"""


def time_convert(path: Path, out: Path, simulate: bool, iterations: int = 10_000) -> dict:
    code = CHILD.format(
        root=str(ROOT), path=str(path), out=str(out), sim=simulate, iters=iterations
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return json.loads(res.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--activities", type=int, default=10_000)
    ap.add_argument("--links", type=int, default=30_000)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "big.xlsx"
        make_input(src, args.activities, args.links)
        figures = time_validate_schedule(src)
        print(
            f"input: {args.activities:,} activities, {figures['links']:,} links "
            f"({src.stat().st_size / 1e6:.1f} MB xlsx)"
        )
        print(f"read (calamine):           {figures['read_s']:.2f} s")
        print(f"validate:                  {figures['validate_s']:.2f} s")
        print(f"schedule (CPM passes):     {figures['schedule_s']:.3f} s")
        print(
            f"validate + schedule:       {figures['validate_and_schedule_s']:.2f} s (target < 1 s)"
        )
        for sim in (False, True):
            r = time_convert(src, Path(tmp), sim)
            label = "convert, with 10,000-iteration simulation" if sim else "convert, no simulation"
            print(
                f"{label + ':':42s} {r['seconds']:.1f} s, peak {r['peak_mb']:.0f} MB "
                "(target < 15 s, < 1 GB without simulation)"
            )


if __name__ == "__main__":
    main()
