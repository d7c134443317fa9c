"""Rewrite the golden files of tests/golden/ after a deliberate change to the output.

    python tests/golden/regenerate.py                 # from this working tree's converter
    python tests/golden/regenerate.py --code DIR      # from another checkout (e.g. a baseline)
    python tests/golden/regenerate.py --check         # compare only; exit 1 on a difference

Each sample is converted twice (default options, as ``pertbook convert <sample> --json``);
the two runs must give identical files (the output is deterministic) before anything is
written. Files of a sample that are no longer produced are removed. Review the result
with ``git diff tests/golden`` before committing it.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
REPO = HERE.parents[1]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument(
        "--code",
        type=Path,
        default=REPO,
        help="folder holding the converter package to run (default: this tree)",
    )
    parser.add_argument(
        "--check", action="store_true", help="only report differences from the committed files"
    )
    args = parser.parse_args(argv)
    sys.path[:0] = [str(args.code.resolve()), str(REPO / "tests" / "support")]
    import golden

    import converter

    print(f"converter from {Path(converter.__file__).parent}")
    differ = 0
    for name in golden.SAMPLE_FILES:
        sample = golden.SAMPLES / name
        stem = sample.name.rsplit(".", 1)[0]
        with tempfile.TemporaryDirectory() as tmp:
            first = golden.convert_sample(sample, Path(tmp) / "one")
            second = golden.convert_sample(sample, Path(tmp) / "two")
        unstable = [f for f in first if first[f] != second.get(f)]
        if unstable or set(first) != set(second):
            print(f"{name}: two runs differ in {unstable}; not deterministic, nothing written")
            return 1
        old = golden.read_golden(stem) if (golden.GOLDEN / stem).is_dir() else {}
        changed = sorted(f for f in set(first) | set(old) if first.get(f) != old.get(f))
        size = sum(len(t.encode("utf-8")) for t in first.values())
        print(
            f"{name}: {len(first)} files, {size / 1024:.0f} KiB, "
            f"{len(changed)} changed{': ' + ', '.join(changed) if changed else ''}"
        )
        differ += len(changed)
        if args.check:
            continue
        root = golden.GOLDEN / stem
        for rel in changed:
            path = root / rel
            if rel in first:
                path.parent.mkdir(parents=True, exist_ok=True)
                path.write_text(first[rel], encoding="utf-8", newline="\n")
            else:
                path.unlink()
    return 1 if (args.check and differ) else 0


if __name__ == "__main__":
    sys.exit(main())
