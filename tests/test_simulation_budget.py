"""The simulation's memory budget on the command line and in the outputs.

What is checked against what:
- the refusal (exit 2, the Iterations cell or ``--iterations``, the largest count that
  fits) and the option's limits come from the project's issue ("Hostile and messy
  input": refuse up front with exit 2 naming the largest iteration count that fits);
  the count itself is the budget module's own (``largest_iterations``), tested against
  measured memory in ``tests/analyse/test_simulate_memory.py``;
- the standard error of a sensitivity near 0 is sqrt(1.06 / (K - 3)) for K pairs, the
  variance of Fisher's atanh(rho) for Spearman's rho (Fieller, Hartley & Pearson 1957,
  Biometrika 44, 470-481), computed here from the formula, not from the code;
- the workbook is read back with openpyxl (an independent reader).
"""

from __future__ import annotations

import json
import math

import openpyxl
import pytest
from helpers import GOOD_ROWS, good_xlsx, sha256, write_xlsx

from converter import cli
from converter.analyse.simulate import budget
from converter.analyse.simulate.budget import SimulationMemoryError
from converter.api import ConvertOptions, check, convert
from converter.write.workbook.rows import merged_width, row_height
from converter.write.workbook.simulation import WIDTHS

#: A budget that keeps only part of the samples of GOOD_ROWS (4 activities) at 20,000
#: iterations, and refuses 50,000 (worked out with budget.plan_memory for one process).
SMALL_MB = 32
SAMPLED, REFUSED = 20_000, 50_000


def main(capsys, *args):
    code = cli.main([str(a) for a in args])
    out, err = capsys.readouterr()
    return code, out, err


def test_too_many_iterations_for_the_budget_is_exit_2_naming_the_largest(tmp_path, capsys):
    path = good_xlsx(tmp_path / "plan.xlsx")
    before = sha256(path)
    largest = budget.largest_iterations(4, memory_mb=SMALL_MB)
    assert 2 <= largest < REFUSED
    code, _, err = main(
        capsys, "convert", path, "--json", "--iterations", REFUSED, "--simulation-memory", SMALL_MB
    )
    assert code == 2, err
    assert f"at most {largest:,} iterations fit" in err and "Traceback" not in err
    assert not (tmp_path / "plan.analysis.xlsx").exists()  # no result for refused input
    data = json.loads((tmp_path / "plan.analysis.json").read_text(encoding="utf-8"))
    assert data["ok"] is False
    assert [p["code"] for p in data["problems"]] == ["simulation-memory"]
    assert sha256(path) == before
    # the same schedule without the simulation needs no budget
    code, _, err = main(
        capsys,
        "convert",
        path,
        "--iterations",
        REFUSED,
        "--simulation-memory",
        SMALL_MB,
        "--no-simulation",
    )
    assert code == 0, err


def test_check_names_the_iterations_cell_of_the_settings_sheet(tmp_path):
    path = write_xlsx(
        tmp_path / "plan.xlsx",
        {"Activities": GOOD_ROWS, "Settings": [["Setting", "Value"], ["Iterations", REFUSED]]},
    )
    result = check(path, ConvertOptions(simulation_memory_mb=SMALL_MB))
    assert result.exit_code == 2
    (problem,) = result.problems
    assert (problem.code, problem.sheet, problem.cell) == ("simulation-memory", "Settings", "B2")
    largest = budget.largest_iterations(4, memory_mb=SMALL_MB)
    assert f"Set Iterations to {largest:,} or fewer" in problem.fix
    assert check(path).exit_code == 0  # the default budget (1024 MB) holds it
    from_cli = check(path, ConvertOptions(iterations=REFUSED, simulation_memory_mb=SMALL_MB))
    assert from_cli.problems[0].sheet is None and "--iterations" in from_cli.problems[0].fix


@pytest.mark.parametrize("given", ["31", "0", "-5", "64.5", "lots"])
def test_simulation_memory_option_is_a_whole_number_from_32(capsys, given):
    code, _, err = main(capsys, "convert", "x.xlsx", "--simulation-memory", given)
    assert code == 2
    assert "--simulation-memory" in err and "from 32" in err


def test_api_refuses_a_budget_below_32_mb_as_a_problem(tmp_path):
    result = check(good_xlsx(tmp_path / "plan.xlsx"), ConvertOptions(simulation_memory_mb=8))
    assert result.exit_code == 2
    assert [p.code for p in result.problems] == ["bad-option"]


def test_a_refusal_during_the_run_is_a_problem_not_a_fault(tmp_path, monkeypatch):
    # the up-front estimate may pass where the run's own plan (more processes) does not
    import converter.analyse.analysis as analysis

    def refuse(schedule, options, baseline=None):
        raise SimulationMemoryError(
            "the simulation needs more", largest_iterations=700, needed_mb=99, budget_mb=SMALL_MB
        )

    monkeypatch.setattr(analysis, "analyse", refuse)
    path = write_xlsx(
        tmp_path / "plan.xlsx",
        {"Activities": GOOD_ROWS, "Settings": [["Setting", "Value"], ["Iterations", 900]]},
    )
    result = convert(path, ConvertOptions(json=True))
    assert result.exit_code == 2 and result.workbook is None
    (problem,) = result.problems
    assert (problem.code, problem.sheet, problem.cell) == ("simulation-memory", "Settings", "B2")
    assert "700" in problem.fix
    assert not (tmp_path / "plan.analysis.xlsx").exists()


def test_sampled_sensitivities_are_stated_on_the_sheet_and_in_the_json(tmp_path, capsys):
    path = good_xlsx(tmp_path / "plan.xlsx")
    code, _, err = main(
        capsys,
        "convert",
        path,
        "--json",
        "--iterations",
        SAMPLED,
        "--seed",
        "5",
        "--simulation-memory",
        SMALL_MB,
    )
    assert code == 0, err
    sim = json.loads((tmp_path / "plan.analysis.json").read_text(encoding="utf-8"))["simulation"]
    k = sim["sensitivity_iterations"]
    assert 1000 <= k < SAMPLED and sim["iterations"] == SAMPLED
    se = math.sqrt(1.06 / (k - 3))  # Fieller, Hartley & Pearson (1957)
    assert sim["sensitivity_std_error"] == pytest.approx(se, rel=1e-12)
    ws = openpyxl.load_workbook(tmp_path / "plan.analysis.xlsx")["Simulation"]
    found = [
        (c.row, c.value)
        for row in ws.iter_rows()
        for c in row
        if isinstance(c.value, str) and c.value.startswith("Sensitivities from")
    ]
    assert len(found) == 1
    row, text = found[0]
    assert text == (
        f"Sensitivities from the first {k:,} of {SAMPLED:,} iterations (memory "
        f"budget {SMALL_MB} MB); standard error about ±{se:.2g} near 0 "
        "(Fieller, Hartley & Pearson 1957)"
    )
    assert ws.row_dimensions[row].height == row_height([(text, merged_width(WIDTHS[1:]))])


def test_every_iteration_used_leaves_the_outputs_as_they_were(tmp_path, capsys):
    # the golden files of the samples rely on it: no new keys, no new row
    path = good_xlsx(tmp_path / "plan.xlsx")
    code, _, err = main(capsys, "convert", path, "--json", "--iterations", 2000)
    assert code == 0, err
    sim = json.loads((tmp_path / "plan.analysis.json").read_text(encoding="utf-8"))["simulation"]
    assert "sensitivity_iterations" not in sim and "sensitivity_std_error" not in sim
    ws = openpyxl.load_workbook(tmp_path / "plan.analysis.xlsx")["Simulation"]
    assert not any(
        isinstance(c.value, str) and c.value.startswith("Sensitivities from")
        for row in ws.iter_rows()
        for c in row
    )
