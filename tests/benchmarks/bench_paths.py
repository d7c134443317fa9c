"""Benchmark: k longest paths on large layered and random networks.

Run with ``python tests/benchmarks/bench_paths.py``; prints path counts and the best of
a few timings of ``k_longest_paths`` (k = 10). Target: the 1,000-activity layered
network well under a second.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path as FsPath

import numpy as np

sys.path.insert(0, str(FsPath(__file__).resolve().parents[2]))

from converter.analyse.network import build_network, schedule  # noqa: E402
from converter.analyse.paths import count_paths, k_longest_paths  # noqa: E402


def layered(layers: int, width: int, fan_out: int, rng: np.random.Generator):
    """``layers`` x ``width`` activities, each linked (FS) to ``fan_out`` in the next layer."""
    pred, succ = [], []
    for layer in range(layers - 1):
        for r in range(width):
            a = layer * width + r
            for b in rng.choice(width, size=fan_out, replace=False):
                pred.append(a)
                succ.append((layer + 1) * width + int(b))
    return build_network(layers * width, pred, succ)


def random_dag(n: int, m: int, reach: int, rng: np.random.Generator, typed: bool):
    """``m`` links i -> j with i < j <= i + reach (deep network); typed links if asked."""
    pred = rng.integers(0, n - 1, size=m)
    succ = np.minimum(pred + rng.integers(1, reach + 1, size=m), n - 1)
    kind = rng.integers(0, 4, size=m) if typed else None
    lag = rng.integers(-2, 4, size=m).astype(float) if typed else None
    return build_network(n, pred, succ, kind, lag)


def sci(x: int) -> str:
    """A Python int of any size in scientific notation."""
    digits = str(x)
    return f"{digits[0]}.{digits[1:4]}e+{len(digits) - 1}" if len(digits) > 4 else digits


def best_time(fn, repeats: int = 5) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def run(name: str, net, rng: np.random.Generator, k: int = 10) -> None:
    te = rng.uniform(1.0, 10.0, size=net.n)
    var = rng.uniform(0.0, 4.0, size=net.n)
    t0 = time.perf_counter()
    paths_n = count_paths(net)
    t_count = time.perf_counter() - t0
    t_paths = best_time(lambda: k_longest_paths(net, te, var, k))
    top = k_longest_paths(net, te, var, k)
    finish = schedule(net, te).finish
    print(f"{name}: {net.n} activities, {net.link_count} links, {len(net.backward_steps)} heights")
    print(f"  paths: {sci(paths_n)} (count_paths {t_count * 1e3:.1f} ms)")
    print(
        f"  k_longest_paths k={k}: best {t_paths * 1e3:.1f} ms; top mean {top[0].mean:.6f}, "
        f"CPM finish {finish:.6f}, k-th mean {top[-1].mean:.6f}"
    )


def main() -> None:
    rng = np.random.default_rng(12345)
    run("layered 50 x 20, fan-out 3", layered(50, 20, 3, rng), rng)
    run("layered 200 x 50, fan-out 3", layered(200, 50, 3, rng), rng)
    run("random deep DAG, FS", random_dag(10_000, 30_000, 20, rng, typed=False), rng)
    run("random deep DAG, typed + lags", random_dag(10_000, 30_000, 20, rng, typed=True), rng)
    run("layered 50 x 20, k=100", layered(50, 20, 3, rng), rng, k=100)


if __name__ == "__main__":
    main()
