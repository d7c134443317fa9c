"""Benchmark: named risks in the simulation (converter.analyse.simulate.risks, risk_runs).

Run with ``python tests/benchmarks/bench_risks.py`` (``--iterations 2000`` for a quick
run; the full size is the default).

100 risks (probabilities 5-50 %, PERT impacts of 1-20 days, each hitting 1-5 random
activities, a tenth with percentage impacts, some in groups) on a 10,000-activity random
layered network (about 30,000 FS links) x 10,000 iterations: the same simulation without
risks, then with them including the ranking (sensitivity of every risk, common-random-
number deltas of the top 20). Target: with risks within 2x the time without. Both runs
use the default worker choice and are timed in this process, one after the other.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_simulate import estimates, layered_network  # noqa: E402

from converter.analyse.simulate import simulate  # noqa: E402
from converter.analyse.simulate.risks import draw_risks  # noqa: E402
from converter.model import Risk  # noqa: E402


def register(n: int, count: int, seed: int) -> list[Risk]:
    rng = np.random.default_rng(seed)
    risks = []
    for k in range(count):
        hits = tuple(str(i) for i in rng.choice(n, size=int(rng.integers(1, 6)), replace=False))
        p = float(rng.uniform(0.05, 0.5))
        percent = k % 10 == 9
        low = float(rng.uniform(0.05, 0.1)) if percent else float(rng.uniform(1, 5))
        likely, high = low * 2, low * 4
        group = f"g{k // 2}" if k % 20 < 4 else None  # pairs sharing a cause
        if group is not None and k % 2:
            p = risks[-1].probability
        risks.append(Risk(f"R{k + 1}", "", p, low, likely, high, hits, percent, group))
    return risks


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--iterations", type=int, default=10_000)
    parser.add_argument("--activities", type=int, default=10_000)
    parser.add_argument("--risks", type=int, default=100)
    args = parser.parse_args()
    n, iterations = args.activities, args.iterations
    net = layered_network(n, 3 * n, 50, seed=1)
    o, m, p = estimates(n, seed=2)
    index = {str(i): i for i in range(n)}
    t0 = time.perf_counter()
    plain = simulate(net, o, m, p, iterations=iterations, seed=3)
    t_plain = time.perf_counter() - t0
    t0 = time.perf_counter()
    risks = register(n, args.risks, seed=4)
    draws = draw_risks(risks, index, distribution="pert", iterations=iterations, seed=3)
    t_draw = time.perf_counter() - t0
    with_risks = simulate(net, o, m, p, iterations=iterations, seed=3, risks=draws)
    t_risks = time.perf_counter() - t0
    rank = with_risks.risks
    print(f"{n:,} activities, {net.link_count:,} links, {iterations:,} iterations")
    print(
        f"without risks: {t_plain:.2f} s (mean {plain.mean:.2f}, P80 {plain.percentiles[0.8]:.2f})"
    )
    print(
        f"with {len(risks)} risks incl. ranking of the top {len(rank.top)}: {t_risks:.2f} s "
        f"(drawing the risks {t_draw:.2f} s; mean {with_risks.mean:.2f}, "
        f"P80 {with_risks.percentiles[0.8]:.2f})"
    )
    print(f"ratio: {t_risks / t_plain:.2f} (target: at most 2)")
    best = rank.by_p80[0]
    print(f"largest P80 delta: {rank.ids[best]} {rank.delta_p80[best]:.3f}")


if __name__ == "__main__":
    main()
