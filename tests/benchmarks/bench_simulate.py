"""Benchmark: Monte Carlo simulation (converter.analyse.simulate).

Run with ``python tests/benchmarks/bench_simulate.py`` (``--quick`` for smaller sizes;
``--memory`` for case 3 only).

1. 10,000 activities, about 30,000 FS links (random layered network) x 10,000
   iterations, PERT-beta, with criticality and sensitivity: seconds and peak memory,
   once with the default (automatic, 2 worker processes here) and once in one
   process. Targets: under 10 s and under 2 GB on the 2-core machine.
2. 500 activities: a plain loop (scipy.stats draws per activity, a Python forward pass
   over the links, one iteration at a time; 200 iterations) against simulate() with
   10,000 iterations, compared per iteration. Target: at least 100x.
3. The memory budget (default 1 GB): 120 activities x 10 million iterations and 2,000
   activities x 1 million (random layered networks, PERT-beta), with the default worker
   choice: seconds, peak memory, and how many iterations the sensitivities came from
   (with their standard error). Target: all processes together within the budget.

Each case runs in a fresh interpreter so that peak memory (ru_maxrss) is its own.
Peak memory is reported three ways: the parent's peak resident set, the largest
worker's (both ru_maxrss), and the peak of all processes together: their private
resident memory plus the growth of shared memory (the sample store the workers share,
counted once), polled every 0.2 s. Case 3 polls the proportional set size (Pss) of
every process instead, which counts each shared page once across them.

Figures on the 2-core machine (case 1, automatic workers, one whole process timed five
times after a warm-up, median; ``--child large 10000 30000 10000 auto``):

* before inverse-distribution sampling (Cheng's rejection sampler): 7.38 s wall, 12.7 s
  CPU, simulate() itself 5.6 to 6.3 s;
* with the tabulated inverse (issue 14), paired against the old code run by run (A B A B,
  five pairs each, machine shared with other work): 8.50 s wall against 9.09 s for the
  old code (ratio of pairs, median 0.88), CPU 10.9 s against 11.9 s (0.97); peak of all
  processes together 955 MB against 837 MB (the 41 MB quantile table and its copies).
  The passes, not the sampling, take most of the time now.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from converter.analyse.network import build_network  # noqa: E402


def layered_network(n: int, links: int, layers: int, seed: int):
    """``layers`` layers of n / layers activities; each link ends in a later layer and
    starts one or (less often) more layers before it; duplicates are dropped."""
    rng = np.random.default_rng(seed)
    width = n // layers
    layer = np.repeat(np.arange(layers), width)
    succ = rng.integers(width, n, size=links)
    back = np.minimum(rng.geometric(0.5, size=links), layer[succ])
    pred = (layer[succ] - back) * width + rng.integers(0, width, size=links)
    key = np.unique(pred * n + succ)
    return build_network(n, key // n, key % n)


def estimates(n: int, seed: int):
    rng = np.random.default_rng(seed)
    o = rng.uniform(1.0, 5.0, n)
    m = o + rng.uniform(0.0, 5.0, n)
    p = m + rng.uniform(0.5, 10.0, n)
    return o, m, p


def _status_kb(pid: int, *fields: str) -> int:
    total = 0
    try:
        with open(f"/proc/{pid}/status") as fh:
            for line in fh:
                name, _, rest = line.partition(":")
                if name in fields:
                    total += int(rest.split()[0])
    except OSError:
        pass
    return total


def _shmem_kb() -> int:
    with open("/proc/meminfo") as fh:
        for line in fh:
            if line.startswith("Shmem:"):
                return int(line.split()[1])
    return 0


def _children(pid: int) -> list[int]:
    out = []
    try:
        for tid in os.listdir(f"/proc/{pid}/task"):
            with open(f"/proc/{pid}/task/{tid}/children") as fh:
                out.extend(int(c) for c in fh.read().split())
    except OSError:
        pass
    return out


class PeakMemory:
    """Peak over the run of the private memory (RssAnon + RssFile) of this process and
    its children plus the growth of the system's shared memory (the shared sample
    store, counted once), polled in a thread."""

    def __init__(self, interval: float = 0.2):
        self.interval, self.peak_kb, self._stop = interval, 0, threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self._shmem0 = _shmem_kb()

    def _run(self):
        me = os.getpid()
        while not self._stop.is_set():
            total = sum(_status_kb(p, "RssAnon", "RssFile") for p in [me, *_children(me)])
            total += max(0, _shmem_kb() - self._shmem0)
            self.peak_kb = max(self.peak_kb, total)
            time.sleep(self.interval)

    def __enter__(self):
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()


def case_large(n: int, links: int, iterations: int, workers: int | None) -> dict:
    from converter.analyse.simulate import simulate

    net = layered_network(n, links, layers=100, seed=1)
    o, m, p = estimates(n, seed=2)
    with PeakMemory() as mem:
        t0 = time.perf_counter()
        cpu0 = time.process_time()
        r = simulate(net, o, m, p, iterations=iterations, seed=3, workers=workers)
        wall = time.perf_counter() - t0
        cpu = time.process_time() - cpu0
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return {
        "case": "large",
        "activities": n,
        "links": net.link_count,
        "iterations": iterations,
        "workers": workers,
        "seconds": wall,
        "parent_cpu_s": cpu,
        "workers_cpu_s": kids.ru_utime + kids.ru_stime,
        "parent_peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
        "largest_worker_peak_rss_mb": kids.ru_maxrss / 1024,
        "peak_total_mb": mem.peak_kb / 1024,
        "mean": r.mean,
        "critical_share_mean": float(r.criticality.mean()),
        "sensitivity_defined": int(np.isfinite(r.sensitivity).sum()),
    }


def _pss_kb(pid: int) -> int:
    try:
        with open(f"/proc/{pid}/smaps_rollup") as fh:
            for line in fh:
                if line.startswith("Pss:"):
                    return int(line.split()[1])
    except OSError:
        pass
    return 0


class PeakPss(PeakMemory):
    """Peak over the run of the summed proportional set size of this process and its
    children (shared pages divided among the processes sharing them), less its value at
    the start: the memory the run added, all processes together."""

    def __enter__(self):
        self._base = _pss_kb(os.getpid())  # before the run, not when the thread first runs
        return super().__enter__()

    def _run(self):
        me = os.getpid()
        while not self._stop.is_set():
            total = sum(_pss_kb(p) for p in [me, *_children(me)]) - self._base
            self.peak_kb = max(self.peak_kb, total)
            time.sleep(self.interval)


def case_budget(n: int, iterations: int, memory_mb: int | None) -> dict:
    from converter.analyse.simulate import simulate

    net = layered_network(n, 3 * n, layers=20, seed=7)
    o, m, p = estimates(n, seed=8)
    with PeakPss() as mem:
        t0 = time.perf_counter()
        r = simulate(net, o, m, p, iterations=iterations, seed=9, memory_mb=memory_mb)
        wall = time.perf_counter() - t0
    kids = resource.getrusage(resource.RUSAGE_CHILDREN)
    return {
        "case": "budget",
        "activities": n,
        "iterations": iterations,
        "memory_mb": memory_mb,
        "seconds": wall,
        "added_pss_mb": mem.peak_kb / 1024,
        "parent_peak_rss_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
        "largest_worker_peak_rss_mb": kids.ru_maxrss / 1024,
        "sensitivity_iterations": r.sensitivity_iterations,
        "sensitivity_se": r.sensitivity_std_error,
        "mean": r.mean,
    }


def loop_simulation(net, o, m, p, iterations: int, seed: int) -> np.ndarray:
    """The plain way: per iteration, one scipy.stats draw per activity, then a Python
    forward pass over the (FS) links in topological order."""
    from scipy import stats

    rng = np.random.default_rng(seed)
    a = 1 + 4 * (m - o) / (p - o)
    b = 1 + 4 * (p - m) / (p - o)
    preds = [[] for _ in range(net.n)]
    for pr, su in zip(net.pred.tolist(), net.succ.tolist(), strict=True):
        preds[su].append(pr)
    order = net.order.tolist()
    out = np.empty(iterations)
    for k in range(iterations):
        d = [
            stats.beta.rvs(a[i], b[i], loc=o[i], scale=p[i] - o[i], random_state=rng)
            for i in range(net.n)
        ]
        ef = [0.0] * net.n
        for j in order:
            es = 0.0
            for i in preds[j]:
                if ef[i] > es:
                    es = ef[i]
            ef[j] = es + d[j]
        out[k] = max(ef)
    return out


def case_loop(n: int, links: int, loop_iterations: int, iterations: int) -> dict:
    from converter.analyse.simulate import simulate

    net = layered_network(n, links, layers=25, seed=4)
    o, m, p = estimates(n, seed=5)
    t0 = time.perf_counter()
    y = loop_simulation(net, o, m, p, loop_iterations, seed=6)
    loop_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    r = simulate(net, o, m, p, iterations=iterations, seed=6)
    sim_s = time.perf_counter() - t0
    per_loop, per_sim = loop_s / loop_iterations, sim_s / iterations
    return {
        "case": "loop",
        "activities": n,
        "links": net.link_count,
        "loop_iterations": loop_iterations,
        "loop_seconds": loop_s,
        "loop_ms_per_iteration": per_loop * 1e3,
        "simulate_iterations": iterations,
        "simulate_seconds": sim_s,
        "simulate_ms_per_iteration": per_sim * 1e3,
        "speed_up": per_loop / per_sim,
        "loop_mean": float(y.mean()),
        "simulate_mean": r.mean,
    }


def run_child(args: list[str]) -> dict:
    cmd = [sys.executable, __file__, "--child", *args]
    out = subprocess.run(cmd, check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller sizes (a smoke run)")
    ap.add_argument("--memory", action="store_true", help="only case 3 (the memory budget)")
    ap.add_argument("--child", nargs="*", help=argparse.SUPPRESS)
    ns = ap.parse_args()
    if ns.child is not None:
        kind, *rest = ns.child
        if kind == "budget":
            n, iters, mb = rest
            res = case_budget(int(n), int(iters), None if mb == "default" else int(mb))
        elif kind == "large":
            n, links, iters, workers = rest
            res = case_large(
                int(n), int(links), int(iters), None if workers == "auto" else int(workers)
            )
        else:
            n, links, loop_iters, iters = rest
            res = case_loop(int(n), int(links), int(loop_iters), int(iters))
        print(json.dumps(res))
        return

    with open("/proc/loadavg") as fh:
        print(f"load average before: {fh.read().split()[:3]}  cores: {os.cpu_count()}")
    if not ns.memory:
        run_speed(ns.quick)
    scale = 10 if ns.quick else 1
    for n, iters in ((120, 10_000_000 // scale), (2_000, 1_000_000 // scale)):
        r = run_child(["budget", str(n), str(iters), "default"])
        print(
            f"[3] {n:,} activities x {iters:,} iterations, default budget (1,024 MB): "
            f"{r['seconds']:.1f} s; memory added by the run, all processes together (Pss) "
            f"{r['added_pss_mb']:.0f} MB; peak RSS: parent {r['parent_peak_rss_mb']:.0f} MB, "
            f"largest worker {r['largest_worker_peak_rss_mb']:.0f} MB; sensitivities from the "
            f"first {r['sensitivity_iterations']:,} iterations (standard error "
            f"{r['sensitivity_se']:.4f} near 0)  [target: within the budget]"
        )
    with open("/proc/loadavg") as fh:
        print(f"load average after: {fh.read().split()[:3]}")


def run_speed(quick: bool) -> None:
    """Cases 1 and 2."""
    n, links, iters = (2_000, 6_000, 2_000) if quick else (10_000, 30_000, 10_000)
    for workers in ("auto", "1"):
        r = run_child(["large", str(n), str(links), str(iters), workers])
        print(
            f"[1] {r['activities']:,} activities, {r['links']:,} links x {r['iterations']:,} "
            f"iterations, workers={workers}: {r['seconds']:.2f} s "
            f"(cpu: parent {r['parent_cpu_s']:.1f} s, workers {r['workers_cpu_s']:.1f} s); "
            f"peak memory: parent RSS {r['parent_peak_rss_mb']:.0f} MB, largest worker RSS "
            f"{r['largest_worker_peak_rss_mb']:.0f} MB, all processes together "
            f"{r['peak_total_mb']:.0f} MB  [target < 10 s, < 2 GB]"
        )
    loop_iters, sim_iters = (50, 2_000) if quick else (200, 10_000)
    r = run_child(["loop", "500", "1500", str(loop_iters), str(sim_iters)])
    print(
        f"[2] {r['activities']} activities, {r['links']} links: plain loop "
        f"{r['loop_ms_per_iteration']:.2f} ms/iteration ({r['loop_iterations']} iterations, "
        f"{r['loop_seconds']:.1f} s); simulate() {r['simulate_ms_per_iteration']:.4f} "
        f"ms/iteration ({r['simulate_iterations']:,} iterations, {r['simulate_seconds']:.2f} s,"
        f" with criticality and sensitivity); speed-up {r['speed_up']:.0f}x  [target >= 100x]"
        f"; means {r['loop_mean']:.2f} vs {r['simulate_mean']:.2f}"
    )


if __name__ == "__main__":
    main()
