"""Open one run pertbook wrote: an ``.analysis.json`` as it is, or an ``.analysis.xlsx``
read back from the cells the writers put its figures in (their cached values), into the
JSON's keys, so that :func:`converter.compare.run.run_from_json` reads both alike.

Anything else (a missing file, a folder or a pipe, text that is not JSON, another
program's JSON or workbook, another format version) is a :class:`RunError` whose message
says which and what to do.
"""

from __future__ import annotations

import datetime as dt
import io
import json
import os
import stat
import zipfile
from pathlib import Path

from converter.compare.run import WEEKDAYS, Run, RunError, run_from_json
from converter.read.archive import open_archive
from converter.read.kind import WORDS, sniff, zip_kind
from converter.read.limits import Damaged, LimitExceeded, ReadLimits
from converter.write.json_summary import FORMAT_VERSION
from converter.write.workbook.activities import HEADERS
from converter.write.workbook.layout import (
    ACTIVITIES,
    FIRST,
    RISKS,
    SETTINGS,
    SIMULATION,
    SUMMARY,
)
from converter.write.workbook.reference import SETTING_ROWS
from converter.write.workbook.risks_sheet import BASE as RISK_COLUMNS

#: The custom document property that marks an analysis workbook and its format version.
FORMAT_PROPERTY = "pertbook format"

#: The Settings used sheet's labels -> the JSON's settings keys.
SETTING_LABELS = {label: key for key, label in SETTING_ROWS.items()}
#: The Simulation sheet's labels -> the JSON's simulation keys.
SIMULATION_LABELS = {
    "Iterations": "iterations",
    "Seed": "seed",
    "Distribution": "distribution",
    "Rank correlation within groups": "correlation",
    "Mean finish": "mean",
    "Standard deviation": "sd",
    "Chance of meeting the due date": "p_meet_due",
}
#: The Activities sheet's headers -> the JSON's activity keys.
ACTIVITY_KEYS = {
    "id": "id",
    "name": "name",
    "o": "optimistic",
    "m": "most_likely",
    "p": "pessimistic",
    "te": "te",
    "tf": "total_float",
    "ef": "ef",
    "ef_date": "early_finish_date",
    "crit": "critical",
    "criticality": "criticality",
    "sensitivity": "sensitivity",
}
#: The Risks sheet's register headers (risks_sheet.BASE keys) -> the JSON's risk keys.
RISK_KEYS = {
    "id": "id",
    "description": "description",
    "p": "probability",
    "activities": "activities",
    "occurred": "occurred",
    "delay": "mean_delay_when_occurred",
    "sens": "sensitivity",
    "dmean_sim": "delta_mean",
    "d50": "delta_p50",
    "d80": "delta_p80",
}


def read_run(path: str | os.PathLike) -> Run:
    """The run recorded in ``path`` (an ``.analysis.json`` or ``.analysis.xlsx``).

    Raises
    ------
    RunError
        With a message naming the file and what is wrong with it.

    Examples
    --------
    >>> read_run("no-such-file.analysis.json")
    Traceback (most recent call last):
    ...
    converter.compare.run.RunError: no-such-file.analysis.json: no such file
    """
    name = str(path)
    data = _bytes(Path(path), name)
    kind = sniff(data)
    if kind == "text" and data.lstrip(b"\xef\xbb\xbf \t\r\n").startswith((b"{", b"[")):
        try:
            document = json.loads(data.decode("utf-8-sig"))
        except (UnicodeDecodeError, ValueError) as exc:
            raise RunError(f"{name} is not valid JSON ({exc})") from None
        except RecursionError:
            raise RunError(
                f"{name} is not a pertbook analysis: its JSON nests too deeply"
            ) from None
        return run_from_json(document, name)
    if kind == "zip":
        return run_from_json(_workbook_document(data, name), name)
    raise RunError(
        f"{name} is not a pertbook analysis (by its content it is {WORDS.get(kind, kind)}): "
        "give the .analysis.json or the .analysis.xlsx that pertbook convert wrote"
    )


def _bytes(path: Path, name: str) -> bytes:
    """The file's bytes: only a regular file (nothing that could block), within the limit."""
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise RunError(f"{name}: no such file") from None
    except OSError as exc:
        raise RunError(f"{name}: cannot be read ({exc.strerror})") from None
    if not stat.S_ISREG(st.st_mode):
        raise RunError(f"{name} is not a regular file; give a pertbook analysis file")
    limits = ReadLimits.from_environment()
    if st.st_size > limits.file_bytes:
        raise RunError(f"{name} is larger than the limit of {limits.file_bytes:,} bytes")
    try:
        return path.read_bytes()
    except OSError as exc:
        raise RunError(f"{name}: cannot be read ({exc.strerror})") from None


def _workbook_document(data: bytes, name: str) -> dict:
    """The JSON keys the comparison reads, from an analysis workbook's cells."""
    import openpyxl

    try:
        kind = zip_kind(open_archive(data, ReadLimits.from_environment()))
        if kind != "xlsx":
            raise RunError(
                f"{name} is not a pertbook analysis: by its content it is {WORDS.get(kind, kind)}"
            )
        wb = openpyxl.load_workbook(io.BytesIO(data), data_only=True)
    except (LimitExceeded, Damaged, zipfile.BadZipFile, KeyError, ValueError, OSError) as exc:
        if isinstance(exc, RunError):
            raise
        raise RunError(f"{name} is not a readable workbook ({exc})") from None
    props = {p.name: p.value for p in wb.custom_doc_props}
    version = props.get(FORMAT_PROPERTY)
    if version is None:
        ours = {SUMMARY, ACTIVITIES, SETTINGS} <= set(wb.sheetnames)
        raise RunError(
            f"{name} was written by an earlier pertbook (no format mark): convert its "
            "schedule again with this version"
            if ours
            else f"{name} is not an analysis workbook written by pertbook (it has no "
            f"{SUMMARY}, {ACTIVITIES} and {SETTINGS} sheets and no format mark)"
        )
    try:
        return _document(wb, int(version))
    except (KeyError, TypeError, ValueError, AttributeError, IndexError) as exc:
        if int(version) != FORMAT_VERSION:
            return {"pertbook_format": int(version)}  # run_from_json names the version
        raise RunError(
            f"{name} is not a complete pertbook analysis workbook: {type(exc).__name__} {exc}"
        ) from None


def _named(wb, name: str):
    """The cached value of the cell a defined name points at (None if it has none)."""
    defined = wb.defined_names.get(name)
    if defined is None:
        return None
    sheet, cell = next(iter(defined.destinations))
    return wb[sheet][cell.replace("$", "")].value


def _labelled(ws, column: int = 1, value_column: int = 2) -> dict[str, object]:
    """Label -> the value beside it, for the label/value rows of a sheet."""
    out: dict[str, object] = {}
    for row in ws.iter_rows(min_col=column, max_col=value_column, values_only=True):
        if isinstance(row[0], str) and row[0] not in out:
            out[row[0]] = row[-1]
    return out


def _iso(value) -> str | None:
    if isinstance(value, dt.datetime):
        return value.date().isoformat()
    return value.isoformat() if isinstance(value, dt.date) else None


def _document(wb, version: int) -> dict:
    settings = _settings(wb[SETTINGS])
    doc = {
        "pertbook_format": version,
        "ok": True,
        "input": _input(wb[SUMMARY]),
        "time_unit": settings.get("time_unit"),
        "start_date": settings.get("start_date"),
        "project": {
            "expected_duration": _named(wb, "ProjectMean"),
            "sd": _named(wb, "ProjectSD"),
            "p_meet_due": _named(wb, "PMeetDue"),
        },
        "activities": _activities(wb[ACTIVITIES]),
        "simulation": _simulation(wb[SIMULATION]) if SIMULATION in wb.sheetnames else None,
        "settings": settings,
        "risks": _risks(wb[RISKS]) if RISKS in wb.sheetnames else [],
    }
    if settings.get("start_date"):
        doc["calendar"] = {
            "start": settings["start_date"],
            "unit": settings["time_unit"],
            "working_days": settings["working_days"],
            "holidays": settings.get("holidays", []),
        }
    return doc


def _input(ws) -> dict:
    rows = _labelled(ws)
    return {"file": rows.get("Input file"), "sha256": rows.get("Input SHA-256")}


def _settings(ws) -> dict:
    rows = _labelled(ws)
    out: dict = {}
    for label, key in SETTING_LABELS.items():
        value = rows.get(label)
        if value == "(none)":
            value = None
        elif isinstance(value, (dt.date, dt.datetime)):
            value = _iso(value)
        out[key] = value
    if isinstance(out.get("working_days"), str):
        out["working_days"] = [WEEKDAYS.index(d.strip()) for d in out["working_days"].split(",")]
    if isinstance(out.get("confidence_levels"), str):
        levels = out["confidence_levels"].split(",")
        out["confidence_levels"] = [float(c.strip().rstrip("%")) / 100 for c in levels]
    out["holidays"] = _holidays(ws)
    return out


def _holidays(ws) -> list[str]:
    """The dates in column A below the "Holidays" head."""
    days, below = [], False
    for (value,) in ws.iter_rows(min_col=1, max_col=1, values_only=True):
        if value == "Holidays":
            below = True
        elif below and _iso(value):
            days.append(_iso(value))
    return days


def _simulation(ws) -> dict:
    rows = _labelled(ws)
    out = {key: rows.get(label) for label, key in SIMULATION_LABELS.items()}
    percentiles = {}
    for label, value in ws.iter_rows(min_col=5, max_col=6, values_only=True):
        if isinstance(label, str) and label.startswith("P") and isinstance(value, (int, float)):
            percentiles[repr(float(label[1:]) / 100)] = value
    out["percentiles"] = percentiles
    return out


def _activities(ws) -> list[dict]:
    """One dict per row of the activity table, by its column headers."""
    heads = next(ws.iter_rows(min_row=FIRST, max_row=FIRST, values_only=True))
    where = {text: col for col, text in enumerate(heads) if isinstance(text, str)}
    cols = {key: where[HEADERS[k]] for k, key in ACTIVITY_KEYS.items() if HEADERS[k] in where}
    if "id" not in cols or "te" not in cols:
        raise KeyError(f"the {ACTIVITIES} sheet's ID and TE columns")
    if "State" in where:
        cols["state"] = where["State"]
    rows = []
    for row in ws.iter_rows(min_row=FIRST + 1, values_only=True):
        if row[cols["id"]] in (None, ""):
            break
        item = {key: row[col] for key, col in cols.items()}
        item["id"] = str(item["id"])
        item["critical"] = item.get("critical") in ("Yes", True)
        for key in ("criticality", "sensitivity"):
            if not isinstance(item.get(key), (int, float)):
                item[key] = None
        rows.append(item)
    return rows


def _risks(ws) -> list[dict]:
    """One dict per risk of the Risks sheet's register, in the JSON's keys and order.

    The register's head is the row that carries all of its headers (found by their texts,
    not by a fixed address); the register ends at the first row with no probability (the
    ranking's title stands right below it). "n/a" (no simulation, no delta) reads as None,
    the hit activities (written joined by ", ") as a list.
    """
    texts = {key: head for key, head, _ in RISK_COLUMNS}
    wanted = [texts[k] for k in RISK_KEYS]
    rows = ws.iter_rows(values_only=True)
    for row in rows:
        where = {text: col for col, text in enumerate(row) if isinstance(text, str)}
        if all(text in where for text in wanted):
            break
    else:
        raise KeyError(f"the {RISKS} sheet's register headers")
    cols = {key: where[texts[k]] for k, key in RISK_KEYS.items()}
    out = []
    for row in rows:
        cells = {key: row[col] if col < len(row) else None for key, col in cols.items()}
        if not isinstance(cells["probability"], (int, float)) or cells["id"] in (None, ""):
            break
        for key, value in cells.items():
            if value == "n/a" or isinstance(value, bool):
                cells[key] = None
        cells["id"] = str(cells["id"])
        cells["description"] = str(cells["description"] or "")
        acts = cells["activities"]
        cells["activities"] = [a.strip() for a in str(acts).split(",") if a.strip()] if acts else []
        out.append(cells)
    return out
