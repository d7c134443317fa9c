"""Comparing two runs: what moved since the last analysis, and why.

``run`` reads one run's figures from the analysis JSON's keys; ``readback`` opens an
``.analysis.json`` or an ``.analysis.xlsx`` pertbook wrote; ``changes`` compares two runs;
``account`` writes the plain-words paragraph. This stage comes after ``write`` because it
reads back what the writers wrote (their sheet names, headers and JSON keys).
"""

from converter.compare.changes import Changes, compare_runs
from converter.compare.run import Run, RunError, run_from_json

__all__ = ["Changes", "Run", "RunError", "compare_runs", "run_from_json"]
