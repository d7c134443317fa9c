"""The plan of a finished job (``converter.drop.plan``), a pure function, on every outcome.

The expected destinations are the drop folder's documented promises (README, "Office
set-up"): a converted input goes to ``archive/`` with its result in ``outbox/``; an
invalid or crashing one to ``failed/`` with ``<name>.problems.txt`` and ``.xlsx``; nothing
is overwritten, a name in use gets a time stamp, then ``-2``, ``-3``... Storage trouble
(errno values from POSIX errno.h) puts the input back in the inbox. The last test carries
a plan out with ``folder.settle`` on real folders.
"""

from __future__ import annotations

import errno
from pathlib import Path

from converter.api import ConvertResult
from converter.drop import folder as df
from converter.drop.plan import (
    CONVERTED,
    FAULT,
    INVALID,
    NO_WORKBOOK,
    RETRY,
    JobFiles,
    Move,
    Report,
    headline_text,
    plain_fault_plan,
    plan_job,
)
from converter.model import Problem
from converter.write.problems import fault_problem

STAMP = "20250314-101502"
ERROR = Problem(
    "error",
    "unknown-predecessor",
    "C4 names predecessor Q7",
    "Activities",
    "C4",
    "A3",
    fix="Add Q7 to the ID column.",
)
WARNING = Problem("warning", "odd", "B9 looks like a formula", "Activities", "B9")


def taken_in(**parts: set[str]):
    """A ``taken(part, name)`` answering from sets of names per folder."""
    return lambda part, name: name in parts.get(part, set())


NOTHING = taken_in()


def ok_result(*problems: Problem) -> ConvertResult:
    return ConvertResult(
        Path("plan.csv"),
        ok=True,
        problems=list(problems),
        headline={"expected_duration": 41.333333, "sd": 3.5, "p80": None},
    )


def bad_result(*problems: Problem) -> ConvertResult:
    return ConvertResult(Path("plan.csv"), ok=False, problems=list(problems))


def where(plan) -> list[tuple[str, str, str]]:
    return [(m.source, m.part, m.stem + m.suffix) for m in plan.moves]


def test_converted_result_to_outbox_input_to_archive():
    plan = plan_job("plan.csv", Report("done", ok_result()), JobFiles(True, False), NOTHING, STAMP)
    assert plan.outcome == CONVERTED
    assert where(plan) == [
        (df.RESULT_XLSX, "outbox", "plan.analysis.xlsx"),
        ("plan.csv", "archive", "plan.csv"),
    ]
    assert plan.note == "expected_duration=41.33 sd=3.5"  # None figures left out
    assert plan.problems == () and plan.error is None
    assert plan.input_move("plan.csv") == Move("plan.csv", "archive", "plan", ".csv")


def test_converted_with_json_and_warnings():
    result = ok_result(WARNING, WARNING)
    plan = plan_job("plan.xlsx", Report("done", result), JobFiles(True, True), NOTHING, STAMP)
    assert where(plan) == [
        (df.RESULT_JSON, "outbox", "plan.analysis.json"),
        (df.RESULT_XLSX, "outbox", "plan.analysis.xlsx"),
        ("plan.xlsx", "archive", "plan.xlsx"),
    ]
    assert plan.note.endswith("(2 warnings)")


def test_name_clashes_are_stamped_then_counted_per_folder():
    # README: "dropping plan.xlsx a second time gives plan-20250314-101502.analysis.xlsx"
    taken = taken_in(outbox={"plan.analysis.xlsx"}, archive={"plan.csv", f"plan-{STAMP}.csv"})
    plan = plan_job("plan.csv", Report("done", ok_result()), JobFiles(True, False), taken, STAMP)
    assert where(plan) == [
        (df.RESULT_XLSX, "outbox", f"plan-{STAMP}.analysis.xlsx"),
        ("plan.csv", "archive", f"plan-{STAMP}-2.csv"),
    ]


def test_result_and_json_keep_one_stem_when_only_the_json_name_is_taken():
    taken = taken_in(outbox={"plan.analysis.json"})
    plan = plan_job("plan.csv", Report("done", ok_result()), JobFiles(True, True), taken, STAMP)
    stems = {m.stem for m in plan.moves if m.part == "outbox"}
    assert stems == {f"plan-{STAMP}"}
    assert plan.input_move("plan.csv").stem == "plan"  # the archive had no clash


def test_invalid_input_with_its_report_to_failed():
    result = bad_result(WARNING, ERROR, ERROR)
    plan = plan_job("plan.csv", Report("done", result), JobFiles(False, False), NOTHING, STAMP)
    assert plan.outcome == INVALID
    assert where(plan) == [
        (df.PROBLEMS_TXT, "failed", "plan.problems.txt"),
        (df.PROBLEMS_XLSX, "failed", "plan.problems.xlsx"),
        ("plan.csv", "failed", "plan.csv"),
    ]  # the input last
    assert plan.problems == (WARNING, ERROR, ERROR) and plan.details is None
    assert plan.note == f"2 errors; first: {ERROR}"


def test_invalid_with_json_and_a_clash_in_failed():
    taken = taken_in(failed={"plan.problems.json"})
    plan = plan_job(
        "plan.csv", Report("done", bad_result(ERROR)), JobFiles(False, True), taken, STAMP
    )
    assert where(plan)[0] == (df.RESULT_JSON, "failed", f"plan-{STAMP}.problems.json")
    assert {m.stem for m in plan.moves} == {f"plan-{STAMP}"}
    assert plan.note == f"1 error; first: {ERROR}"


def test_fault_carries_the_traceback_and_its_last_line():
    text = "Traceback (most recent call last):\n  ...\nRuntimeError: fell over\n"
    plan = plan_job("plan.csv", Report("fault", text=text), JobFiles(False, False), NOTHING, STAMP)
    assert plan.outcome == FAULT
    assert plan.note == "RuntimeError: fell over"
    assert plan.problems == (fault_problem("RuntimeError: fell over"),)
    assert plan.details == text
    assert [m.part for m in plan.moves] == ["failed"] * 3


def test_success_without_a_workbook_is_a_fault():
    plan = plan_job("plan.csv", Report("done", ok_result()), JobFiles(False, True), NOTHING, STAMP)
    assert plan.outcome == FAULT and plan.note == NO_WORKBOOK
    assert where(plan)[0] == (df.RESULT_JSON, "failed", "plan.problems.json")


def test_storage_trouble_puts_back_other_errors_are_faults():
    full = Report("oserror", text="OSError: [Errno 28]", errno=errno.ENOSPC)
    plan = plan_job("plan.csv", full, JobFiles(False, False), NOTHING, STAMP)
    assert plan.outcome == RETRY and plan.moves == ()
    assert plan.error == (errno.ENOSPC, "OSError: [Errno 28]")
    denied = Report("oserror", text="PermissionError: x", errno=errno.EACCES)
    assert plan_job("plan.csv", denied, JobFiles(False, False), NOTHING, STAMP).outcome == FAULT
    # ...unless the job folder itself cannot be written: then the storage is the trouble
    stuck = plan_job("plan.csv", denied, JobFiles(False, False, writable=False), NOTHING, STAMP)
    assert stuck.outcome == RETRY


def test_plain_fault_plan_when_the_report_cannot_be_written():
    taken = taken_in(failed={"plan.csv"})
    plan = plain_fault_plan("plan.csv", "Traceback...\nValueError: bad cell\n", taken, STAMP)
    assert plan.outcome == FAULT and plan.note == "ValueError: bad cell"
    assert where(plan) == [
        (df.PROBLEMS_TXT, "failed", f"plan-{STAMP}.problems.txt"),
        ("plan.csv", "failed", f"plan-{STAMP}.csv"),
    ]


def test_long_names_fit_the_limit_stamped_or_not():
    # POSIX {NAME_MAX}: bytes of one name; here a small limit stands for the file system's
    name = "p" * 40 + ".csv"  # fits a 48-byte limit; its derived names would not

    def fits(plan) -> bool:
        return all(len((m.stem + m.suffix).encode()) <= 48 for m in plan.moves)

    def outbox(plan) -> set[str]:
        return {m.stem + m.suffix for m in plan.moves if m.part == "outbox"}

    done = plan_job(name, Report("done", ok_result()), JobFiles(True, True), NOTHING, STAMP, 48)
    assert fits(done)
    assert done.input_move(name).stem == "p" * 40  # the input keeps its own name
    stems = {m.stem for m in done.moves if m.part == "outbox"}
    assert len(stems) == 1 and stems.pop().startswith("p" * 10)
    taken = taken_in(outbox=outbox(done), archive={name})
    again = plan_job(name, Report("done", ok_result()), JobFiles(True, True), taken, STAMP, 48)
    assert fits(again) and not outbox(again) & outbox(done)
    assert all(m.stem.endswith(f"-{STAMP}") for m in again.moves)  # the stamp kept whole

    bad = plan_job(
        name, Report("done", bad_result(ERROR)), JobFiles(False, False), NOTHING, STAMP, 48
    )
    assert fits(bad)
    assert bad.input_move(name).stem == "p" * 40  # only its reports are shortened
    reports = {m.stem for m in bad.moves if m.source != name}
    assert len(reports) == 1 and "~" in reports.pop()


def test_headline_text_rounds_to_four_figures():
    assert headline_text({"a": 1 / 3, "b": 12, "c": None, "d": "A1-A4"}) == "a=0.3333 b=12 d=A1-A4"


def test_a_plan_carried_out_puts_every_file_where_it_says(tmp_path):
    layout = df.Layout.under(tmp_path)
    for _, path in layout.shared():
        path.mkdir()
    (layout.archive / "plan.csv").write_bytes(b"an earlier plan")
    job = tmp_path / "job"
    job.mkdir()
    (job / "plan.csv").write_bytes(b"input")
    (job / df.RESULT_XLSX).write_bytes(b"result")

    def taken(part: str, name: str) -> bool:
        return (layout.folder(part) / name).exists()

    plan = plan_job("plan.csv", Report("done", ok_result()), JobFiles(True, False), taken, STAMP)
    df.write_plan(job, plan.outcome, plan.items())
    settled = df.settle(job, layout)
    assert settled.outcome == CONVERTED
    assert (layout.outbox / "plan.analysis.xlsx").read_bytes() == b"result"
    assert (layout.archive / f"plan-{STAMP}.csv").read_bytes() == b"input"
    assert (layout.archive / "plan.csv").read_bytes() == b"an earlier plan"
    assert not job.exists()
