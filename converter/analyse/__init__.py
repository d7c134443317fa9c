"""Analyse: Schedule -> Analysis (CPM, PERT, near-critical paths, simulation); no file I/O."""
