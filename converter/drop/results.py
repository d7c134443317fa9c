"""Carrying out the plan of a finished job: report, plan file, moves, log line, counts.

Order matters for crash safety. The problems report and the JSON's corrected input place
are written into the job folder first, then the plan file (atomically); only then do files
leave the job folder (``folder.settle``). A watcher killed before the plan file exists
leaves a job the next watcher puts back in the inbox; killed after, one it delivers.
When a shared folder cannot be written the job is kept (``stuck``) and retried at each
poll, while the watcher backs off.
"""

from __future__ import annotations

import json
import logging
import os
import time
import traceback
from pathlib import Path

from converter.api import name_limit
from converter.drop import folder as df
from converter.drop.folder import Job
from converter.drop.health import Health
from converter.drop.plan import RETRY, JobFiles, Plan, Report, plain_fault_plan, plan_job
from converter.write.problems import write_problems_text, write_problems_xlsx

#: The drop folder's parts that receive files.
PLACED = ("outbox", "archive", "failed")


class Results:
    """Places the files of finished jobs; counts outcomes; keeps the jobs not yet placed."""

    def __init__(self, layout: df.Layout, log: logging.Logger, health: Health) -> None:
        self.layout = layout
        self.log = log
        self.health = health
        self.counts = {"converted": 0, "invalid": 0, "fault": 0}
        self.stuck: list[Job] = []

    # ------------------------------------------------------------------ a finished job

    def finish(self, job: Job, report: Report) -> None:
        """Plan the job from the worker's report and carry the plan out."""
        seconds = time.monotonic() - job.started
        writable = _writable(job.dir) if report.kind == "oserror" else True
        files = JobFiles(
            (job.dir / df.RESULT_XLSX).exists(), (job.dir / df.RESULT_JSON).exists(), writable
        )
        plan = plan_job(job.name, report, files, self._taken, df.time_stamp(), self._limit())
        if plan.outcome == RETRY:
            code, text = plan.error or (None, "")
            words = os.strerror(code) if code else (text.strip().splitlines() or ["?"])[-1]
            self.put_back(
                job, f"{job.name}: storage trouble while converting", OSError(code, words)
            )
            return
        try:
            plan = self._prepare(job, plan)
            df.write_plan(job.dir, plan.outcome, plan.items())
        except OSError as exc:
            self.put_back(job, f"{job.name}: could not write its results", exc)
            return
        self.settle(job, seconds, plan.note)

    def _taken(self, part: str, name: str) -> bool:
        return os.path.lexists(self.layout.folder(part) / name)

    def _limit(self) -> int:
        """The shortest file-name limit (bytes) of the folders files are placed in."""
        return min(name_limit(self.layout.folder(part)) for part in PLACED)

    def _prepare(self, job: Job, plan: Plan) -> Plan:
        """Write the plan's problems report and the JSON's input place into the job folder.

        Raises OSError when the job folder cannot be written. Should the report writer
        itself fail, the plan becomes a plain-text note of that fault.
        """
        try:
            if plan.problems:
                problems = list(plan.problems)
                write_problems_text(job.dir / df.PROBLEMS_TXT, job.name, problems, plan.details)
                write_problems_xlsx(job.dir / df.PROBLEMS_XLSX, job.name, problems, plan.details)
            self._name_input_in_json(job, plan)
        except OSError:
            raise
        except Exception:  # noqa: BLE001 - the report writer failed: a plain note instead
            text = traceback.format_exc()
            (job.dir / df.PROBLEMS_TXT).write_text(text, encoding="utf-8")
            return plain_fault_plan(job.name, text, self._taken, df.time_stamp(), self._limit())
        return plan

    def _name_input_in_json(self, job: Job, plan: Plan) -> None:
        """Point the JSON's input file at where the input will be, not the working folder."""
        move = plan.input_move(job.name)
        path = job.dir / df.RESULT_JSON
        if move is None:
            return
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return
        entry = data.get("input") if isinstance(data, dict) else None
        if not isinstance(entry, dict) or not isinstance(entry.get("file"), str):
            return
        final = self.layout.folder(move.part) / f"{move.stem}{move.suffix}"
        entry["file"] = (
            final.relative_to(self.layout.root).as_posix()
            if _under(final, self.layout.root)
            else str(final)
        )
        tmp = job.dir / ".pb-json.tmp"
        tmp.write_text(json.dumps(data, indent=2, allow_nan=False), encoding="utf-8")
        os.replace(tmp, path)

    # ------------------------------------------------------------------ placing files

    def settle(self, job: Job, seconds: float | None, note: str = "") -> None:
        """Deliver the job's files (or put its input back); on trouble keep it as stuck."""
        try:
            settled = df.settle(job.dir, self.layout)
        except OSError as exc:
            if job not in self.stuck:
                self.stuck.append(job)
            self.health.trouble(
                f"{job.name}: its files cannot be placed yet (kept in {job.dir})", exc
            )
            return
        if job in self.stuck:
            self.stuck.remove(job)
        self.health.progressed()
        self._record(job, settled, seconds, note)

    def put_back(self, job: Job, what: str, exc: OSError) -> None:
        """Storage trouble before a plan existed: the input goes back to the inbox."""
        self.health.trouble(what, exc)
        try:
            (job.dir / df.PLAN).unlink(missing_ok=True)
            settled = df.settle(job.dir, self.layout)
        except OSError as again:
            self.log.error(
                "%s: cannot be put back yet (%s); it stays in %s", job.name, again, job.dir
            )
            if job not in self.stuck:
                self.stuck.append(job)
            return
        self._record(job, settled, None, "")

    def settle_now(self, jobs: list[Job]) -> None:
        """Stopping at once: settle ``jobs`` and the stuck ones as they stand (a job with
        no plan yet goes back to the inbox); those that cannot be stay stuck."""
        jobs, self.stuck = jobs + self.stuck, []
        for job in jobs:
            try:
                df.settle(job.dir, self.layout)
            except OSError as exc:
                self.log.error(
                    "%s: could not put back (%s); it stays in %s", job.name, exc, job.dir
                )
                self.stuck.append(job)

    def retry_stuck(self) -> bool:
        """Try again to place the files of stuck jobs; False if some still cannot be."""
        for job in list(self.stuck):
            self.settle(job, None, "placed after a retry")
            if job in self.stuck:
                return False
        return True

    def recover(self, work: df.WorkArea, stale_after: float) -> None:
        """Settle the jobs left by watchers that stopped without finishing them."""
        try:
            adopted = work.adopt_abandoned(stale_after)
        except OSError as exc:
            self.log.error("could not look for files left by a stopped watcher: %s", exc)
            return
        for path in adopted:
            job = Job(path, df.input_name(path) or path.name, adopted=True)
            self.settle(job, None, "finished after a stopped watcher")

    def _record(self, job: Job, settled: df.Settled, seconds: float | None, note: str) -> None:
        """Count the outcome and write its log line."""
        outcome = settled.outcome
        if outcome in self.counts:
            self.counts[outcome] += 1
        if outcome in ("returned", "empty"):
            if outcome == "returned":
                self.log.info(
                    "%s\treturned to the inbox%s",
                    job.name,
                    " (left by a stopped watcher)" if job.adopted else "",
                )
            return
        main = settled.placed.get(df.RESULT_XLSX) or settled.placed.get(job.name)
        where = (
            main.relative_to(self.layout.root) if main and _under(main, self.layout.root) else main
        )
        secs = f"{seconds:.2f} s" if seconds is not None else "recovered"
        parts = [job.name, outcome, secs, f"-> {where}"]
        if note:
            parts.append(note)
        level = logging.INFO if outcome == "converted" else logging.WARNING
        self.log.log(level, "\t".join(str(p) for p in parts))


def _writable(job_dir: Path) -> bool:
    probe = job_dir / ".pb-probe"
    try:
        probe.write_bytes(b"probe")
        probe.unlink()
    except OSError:
        return False
    return True


def _under(path: Path, root: Path) -> bool:
    try:
        path.relative_to(root)
    except ValueError:
        return False
    return True
