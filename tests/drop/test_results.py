"""Carrying out plans (``converter.drop.results``) and the problems report it writes.

The report's wording is checked against the validator's own Problem fields; the workbook
is read back with openpyxl (an independent reader), where a text that looks like a formula
must stay a text cell (``data_type == "s"``, openpyxl's cell types).
"""

from __future__ import annotations

import errno
import logging

import openpyxl
from drop_support import names, sha

from converter.drop import folder as df
from converter.drop import results as results_module
from converter.drop.folder import Job
from converter.drop.health import Health
from converter.drop.plan import Report
from converter.drop.results import Results
from converter.model import Problem
from converter.write.problems import problems_text, write_problems_xlsx


def test_problems_report_text_and_workbook(tmp_path):
    problems = [
        Problem(
            "error",
            "unknown-predecessor",
            "C4 names predecessor Q7, which is not in the ID column",
            "Activities",
            "C4",
            "A3",
            fix="Add Q7 to the ID column, or remove it from A3's predecessors.",
        ),
        Problem("warning", "odd", "=SUM(A1) looks like a formula", "Activities", "B9"),
    ]
    text = problems_text("plan.xlsx", problems)
    assert "Activities!C4" in text and "activity A3" in text
    assert "What to do: Add Q7 to the ID column" in text
    assert "Activities!B9" in text and "1 error, 1 warning" in text
    path = tmp_path / "p.xlsx"
    write_problems_xlsx(path, "plan.xlsx", problems)
    sheet = openpyxl.load_workbook(path).active
    rows = [r for r in sheet.iter_rows(min_row=5, values_only=True)]
    assert rows[0][1:5] == ("error", "Activities", "C4", "A3")
    assert rows[0][6].startswith("Add Q7")
    assert rows[1][6] == "=SUM(A1) looks like a formula"  # no fix: the message instead
    assert sheet.cell(row=6, column=7).data_type == "s"  # kept as text, not a formula


def results_in(tmp_path) -> tuple[Results, df.Layout, logging.Logger]:
    layout = df.Layout.under(tmp_path / "drop")
    for _, path in layout.shared():
        path.mkdir(parents=True)
    log = logging.getLogger(f"test.results.{id(layout)}")
    return Results(layout, log, Health(0.05, 0.2, log)), layout, log


def claimed(tmp_path, name: str, data: bytes) -> Job:
    job_dir = tmp_path / "work" / "job1"
    job_dir.mkdir(parents=True)
    (job_dir / name).write_bytes(data)
    return Job(job_dir, name)


def test_a_fault_goes_to_failed_with_its_report(tmp_path):
    results, layout, _ = results_in(tmp_path)
    job = claimed(tmp_path, "plan.csv", b"dropped bytes")
    results.finish(job, Report("fault", text="Traceback...\nKeyError: 'x'\n"))
    assert names(layout.failed) == {"plan.csv", "plan.problems.txt", "plan.problems.xlsx"}
    assert sha(layout.failed / "plan.csv") == sha(b"dropped bytes")
    assert "KeyError: 'x'" in (layout.failed / "plan.problems.txt").read_text(encoding="utf-8")
    assert results.counts == {"converted": 0, "invalid": 0, "fault": 1}
    assert not job.dir.exists() and results.stuck == []


def test_a_failing_report_writer_still_files_the_input_with_a_plain_note(tmp_path, monkeypatch):
    def broken_writer(*args, **kw):
        raise ValueError("the report writer fell over")

    monkeypatch.setattr(results_module, "write_problems_xlsx", broken_writer)
    results, layout, _ = results_in(tmp_path)
    job = claimed(tmp_path, "plan.csv", b"dropped bytes")
    results.finish(job, Report("fault", text="RuntimeError: first fault\n"))
    assert names(layout.failed) == {"plan.csv", "plan.problems.txt"}
    note = (layout.failed / "plan.problems.txt").read_text(encoding="utf-8")
    assert "ValueError: the report writer fell over" in note
    assert sha(layout.failed / "plan.csv") == sha(b"dropped bytes")
    assert results.counts["fault"] == 1


def test_storage_trouble_puts_the_input_back_and_backs_off(tmp_path):
    results, layout, _ = results_in(tmp_path)
    job = claimed(tmp_path, "plan.csv", b"dropped bytes")
    results.finish(job, Report("oserror", text="OSError: full", errno=errno.ENOSPC))
    assert (layout.inbox / "plan.csv").read_bytes() == b"dropped bytes"
    assert not results.health.healthy and results.health.level == 1
    assert results.counts == {"converted": 0, "invalid": 0, "fault": 0}
