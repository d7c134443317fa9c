"""Drop-folder throughput: a drop of 200 sample-sized workbooks is cleared in < 2 minutes.

Copies the files in ``samples/`` round-robin into a fresh ``inbox`` (200 by default, each
under its own name), runs ``pertbook watch --once`` with a process pool (default: one
worker per CPU) and default conversion settings, and reports files per minute. It then
checks that every file was converted exactly once: one result per input in the outbox,
every input archived byte for byte, nothing failed, nothing left in a working folder.
With ``--watchers 2`` two watcher processes share the folder.

Run: ``python tests/benchmarks/bench_watch.py [--files 200] [--workers N] [--watchers 1]``
"""

from __future__ import annotations

import argparse
import hashlib
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

from converter.read import SUFFIXES  # noqa: E402

TARGET_SECONDS = 120.0
WATCH_CMD = [sys.executable, "-m", "converter", "watch"]


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def fill_inbox(inbox: Path, count: int) -> dict[str, str]:
    samples = sorted(p for p in (REPO / "samples").iterdir() if p.suffix.lower() in SUFFIXES)
    if not samples:
        raise SystemExit("no sample workbooks in samples/")
    dropped = {}
    for i in range(count):
        src = samples[i % len(samples)]
        name = f"{src.stem}-{i:04d}{src.suffix}"
        shutil.copyfile(src, inbox / name)
        dropped[name] = sha(inbox / name)
    return dropped


def verify(root: Path, dropped: dict[str, str]) -> list[str]:
    """Every way the run could have gone wrong, as text; empty if none."""
    errors = []
    outbox = {p.name for p in (root / "outbox").iterdir()}
    expected = {f"{Path(n).stem}.analysis.xlsx" for n in dropped}
    if outbox != expected:
        errors.append(
            f"outbox: {len(outbox - expected)} unexpected, {len(expected - outbox)} missing"
        )
    archive = root / "archive"
    for name, digest in dropped.items():
        if not (archive / name).exists() or sha(archive / name) != digest:
            errors.append(f"{name} not archived intact")
    failed = list((root / "failed").iterdir())
    if failed:
        errors.append(f"{len(failed)} files in failed/")
    left = [p for p in (root / "inbox").iterdir()]
    if left:
        errors.append(f"{len(left)} files left in the inbox")
    work = root / ".pertbook-work"
    jobs = [j for d in work.iterdir() if d.is_dir() for j in d.iterdir() if j.is_dir()]
    if jobs:
        errors.append(f"{len(jobs)} jobs left in working folders")
    return errors


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--files", type=int, default=200)
    ap.add_argument("--workers", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--watchers", type=int, default=1)
    ap.add_argument("--interval", type=float, default=1.0)
    ap.add_argument(
        "--iterations",
        type=int,
        default=None,
        help="Monte Carlo iterations (default: the converter's default)",
    )
    args = ap.parse_args(argv)

    with tempfile.TemporaryDirectory(prefix="pertbook-bench-") as tmp:
        root = Path(tmp) / "drop"
        (root / "inbox").mkdir(parents=True)
        dropped = fill_inbox(root / "inbox", args.files)
        cmd = WATCH_CMD + [
            str(root),
            "--once",
            "--quiet",
            "--interval",
            str(args.interval),
            "--workers",
            str(args.workers),
        ]
        if args.iterations:
            cmd += ["--iterations", str(args.iterations)]
        start = time.perf_counter()
        procs = [subprocess.Popen(cmd, cwd=REPO) for _ in range(args.watchers)]
        codes = [p.wait() for p in procs]
        seconds = time.perf_counter() - start
        errors = verify(root, dropped)
        if any(codes):
            errors.append(f"watcher exit codes {codes}")
        log = (root / "pertbook.log").read_text(encoding="utf-8")
        converted = log.count("\tconverted\t")
        if converted != args.files:
            errors.append(f"{converted} 'converted' log lines for {args.files} files")

    per_minute = args.files / seconds * 60
    print(
        f"files: {args.files}  watchers: {args.watchers}  workers each: {args.workers}  "
        f"CPUs: {os.cpu_count()}  poll interval: {args.interval:g} s"
    )
    print(
        f"cleared in {seconds:.1f} s  ->  {per_minute:.0f} files per minute "
        f"({seconds / args.files:.2f} s per file)"
    )
    print(
        f"target: {args.files} files in under {TARGET_SECONDS:.0f} s: "
        f"{'met' if seconds < TARGET_SECONDS else 'NOT met'}"
    )
    print("each file converted exactly once: " + ("yes" if not errors else "NO"))
    for e in errors:
        print("  " + e)
    return 1 if errors else 0


if __name__ == "__main__":
    raise SystemExit(main())
