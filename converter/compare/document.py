"""The comparison as JSON: the ``"changes"`` key of ``convert --baseline --json`` and the
whole of ``pertbook compare --json``'s ``.changes.json`` (keys documented in the README)."""

from __future__ import annotations

from converter.write.json_summary import FORMAT_VERSION


def _move(m) -> dict:
    return {"id": m.id, "name": m.name, "old": m.old, "new": m.new, "change": m.change}


def _iso(d) -> str | None:
    return d.isoformat() if d is not None else None


def _run(run) -> dict:
    return {
        "file": run.file,
        "input_file": run.input_file,
        "sha256": run.sha256,
        "simulated": run.simulated,
    }


def changes_document(ch) -> dict:
    """The JSON-ready dict of a :class:`converter.compare.Changes`.

    Examples
    --------
    See tests/compare/test_compare.py (two conversions of a sample).
    """
    return {
        "format": FORMAT_VERSION,
        "account": ch.account,
        "old": _run(ch.old),
        "new": _run(ch.new),
        "time_unit": ch.new.time_unit,
        "settings": [
            {"setting": k, "old": a, "new": b, "differs": k in ch.differ} for k, a, b in ch.settings
        ],
        "settings_differ": list(ch.differ),
        "finish": [
            {
                "figure": fc.key,
                "label": fc.label,
                "old": fc.old,
                "new": fc.new,
                "change": fc.change,
                "old_date": _iso(fc.old_date),
                "new_date": _iso(fc.new_date),
                "days_moved": fc.days_moved,
            }
            for fc in ch.figures
        ],
        "critical_path": {
            "joined": [_move(m) for m in ch.joined],
            "left": [_move(m) for m in ch.left],
        },
        "added": [{"id": k, "name": n} for k, n in ch.added],
        "removed": [{"id": k, "name": n} for k, n in ch.removed],
        "estimates_changed": [
            {
                "id": e.id,
                "name": e.name,
                "old": dict(zip(("optimistic", "most_likely", "pessimistic"), e.old)),
                "new": dict(zip(("optimistic", "most_likely", "pessimistic"), e.new)),
                "te_change": e.te_change,
            }
            for e in ch.estimates
        ],
        "movers": {key: [_move(m) for m in moves] for key, moves in ch.movers.items()},
        "risk_drivers": {
            which: [
                {"id": m.id, "name": m.name, "sensitivity": m.old, "criticality": m.new}
                for m in moves
            ]
            for which, moves in ch.drivers.items()
        },
        "named_risks": None
        if ch.risks is None
        else [
            {"id": r.id, "description": r.description, "old": r.old, "new": r.new} for r in ch.risks
        ],
    }
