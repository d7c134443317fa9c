"""Forward pass against PSPLIB's published MPM-Time (critical-path length, no resource limits).

Source: R. Kolisch and A. Sprecher, "PSPLIB - A project scheduling problem library",
EJOR 96(1):205-216, 1997; each .sm file's PROJECT INFORMATION gives MPM-Time. networkx's
dag_longest_path_length is a second, independent longest-path computation.
"""

from __future__ import annotations

import json

import networkx as nx
import numpy as np
import pytest
from psplib import instance_files, psplib_root, psplib_to_csv, read_sm

from converter.analyse.network import build_network, schedule

ROOT = psplib_root()


def _sample(set_name: str, every: int) -> list:
    folder = ROOT / set_name
    if not folder.is_dir():
        return [
            pytest.param(
                None,
                marks=pytest.mark.skip(
                    reason=f"PSPLIB folder {folder} not found (shared data outside the "
                    "repository; set PERTBOOK_PSPLIB to its location)"
                ),
                id=f"{set_name}-absent",
            )
        ]
    files = instance_files(folder)[::every]
    return [pytest.param(f, id=f.stem) for f in files]


def _arrays(project):
    index = {j: i for i, j in enumerate(project.jobs)}
    pred = [index[a] for a, _ in project.links()]
    succ = [index[b] for _, b in project.links()]
    d = np.array([project.durations[j] for j in project.jobs], dtype=float)
    return pred, succ, d


def _networkx_length(project) -> float:
    """Longest path with node weights: edge u->v weighs d[u]; sinks lead to an end node."""
    g = nx.DiGraph()
    for a, b in project.links():
        g.add_edge(a, b, weight=project.durations[a])
    for j in project.jobs:
        if not project.successors[j]:
            g.add_edge(j, "end", weight=project.durations[j])
    return nx.dag_longest_path_length(g, weight="weight")


@pytest.mark.parametrize("path", _sample("j30", 10) + _sample("j120", 10))
def test_forward_pass_matches_mpm_time(path):
    project = read_sm(path)
    pred, succ, d = _arrays(project)
    net = build_network(len(project.jobs), pred, succ)  # FS links, zero lag
    result = schedule(net, d)
    assert result.finish == project.mpm_time  # PSPLIB MPM-Time
    assert _networkx_length(project) == project.mpm_time  # networkx agrees
    assert result.critical.any()
    assert np.all(result.total_float >= 0)


def test_parser_reads_the_whole_file():
    path = ROOT / "j30" / "j301_1.sm"
    if not path.is_file():
        pytest.skip(f"PSPLIB file {path} not found (set PERTBOOK_PSPLIB)")
    project = read_sm(path)
    # job count from the file's own header line "jobs (incl. supersource/sink ): 32"
    assert len(project.jobs) == 32
    assert project.durations[1] == 0 and project.durations[32] == 0  # supersource / sink
    assert project.successors[32] == ()
    assert set(project.predecessors()[32])  # the sink has predecessors


@pytest.mark.parametrize("path", _sample("j30", 96) + _sample("j120", 120))
def test_psplib_csv_reads_back(path, tmp_path):
    from converter.api import load

    csv_path = tmp_path / f"{path.stem}.csv"
    project = psplib_to_csv(path, csv_path)
    sched, problems = load(csv_path)
    assert sched is not None, "\n".join(str(p) for p in problems)
    assert not [p for p in problems if p.severity == "error"]
    assert [a.id for a in sched.activities] == [f"J{j}" for j in project.jobs]
    assert [a.most_likely for a in sched.activities] == [project.durations[j] for j in project.jobs]
    got = sorted((k.pred, k.succ, k.type, k.lag) for k in sched.links)
    assert got == sorted((f"J{a}", f"J{b}", "FS", 0.0) for a, b in project.links())


@pytest.mark.parametrize("path", _sample("j30", 48) + _sample("j120", 60))
def test_psplib_convert(path, tmp_path, convert_api):
    convert, ConvertOptions = convert_api
    csv_path = tmp_path / f"{path.stem}.csv"
    project = psplib_to_csv(path, csv_path)
    result = convert(csv_path, ConvertOptions(json=True, simulate=False), outdir=tmp_path)
    assert result.ok, "\n".join(str(p) for p in result.problems)
    data = json.loads(result.json_path.read_text(encoding="utf-8"))
    # O = M = P, so the PERT expected duration is the critical-path length: PSPLIB MPM-Time
    assert data["project"]["expected_duration"] == pytest.approx(project.mpm_time, abs=1e-9)
