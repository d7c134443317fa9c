"""The Trace sheet's named risks: each risk's draws in each traced iteration as formulas,
and the delays they add into the traced durations (rules in
:mod:`converter.analyse.simulate.trace_risks`).

One row per risk, above the activities: its probability and impact low / likely / high
read from the Risks sheet (the PERT shapes as formulas); per traced iteration its
occurrence uniform u (a value), whether it occurred (``=u<probability``), its impact
uniform v (a value) and its impact, the impact distribution's inverse at v (BETA.INV,
the triangular inverse with IF and SQRT, or the uniform's). An activity's traced
duration adds ``IF(occurred, impact, 0)`` for each risk hitting it, or for a percentage
impact scales its sampled duration by ``1 + IF(occurred, impact, 0)``.
"""

from __future__ import annotations

from converter.analyse.simulate.trace_risks import IMPACT, OCCURRENCE
from converter.write.workbook import formulas as f
from converter.write.workbook.risks_sheet import columns, risk_cell, risks_by_activity

HEADS = ["Risk", "Probability", "Impact low", "Impact likely", "Impact high", "Alpha", "Beta"]
BLOCK_HEADS = ["Occurrence u", "Occurred (u < probability)", "Impact u", "Impact"]
NOTE = (
    " Named risks (the table below the iterations' lines): each risk's occurrence and "
    "impact random numbers in each traced iteration, whether it occurred and its impact; "
    "each activity's duration adds the impacts of the risks that occurred and hit it (a % "
    "impact scales its sampled duration)."
)
MITIGATED = " The trace follows the run without the responses (the mitigated values)."


def has_risks(a) -> bool:
    """Whether the traced iterations carry named risks' draws."""
    trace = a.simulation.trace
    return a.risk_view is not None and bool(trace) and trace[0].delays is not None


def rows_needed(a) -> int:
    """Rows the risk table takes (heads, one per risk, a blank row); 0 without risks."""
    return 3 + len(a.risk_view.risks) if has_risks(a) else 0


def note(a) -> str:
    """The sheet introduction's sentences on the risks ('' without)."""
    if not has_risks(a):
        return ""
    return NOTE + (MITIGATED if a.risk_view.any_mitigated else "")


def write_risk_table(ws, fmt, a, top: int, block_col) -> list[int]:
    """The risk table from row ``top`` (its two head rows); returns each risk's row.
    ``block_col(k)`` is traced iteration ``k``'s first column."""
    view, traced = a.risk_view, a.simulation.trace
    for col, head in enumerate(HEADS):
        ws.merge_range(top, col, top + 1, col, head, fmt.th if col == 0 else fmt.th_center)
    for k, t in enumerate(traced):
        c0 = block_col(k)
        title = f"{t.label}: iteration {t.iteration + 1:,}, named risks"
        ws.merge_range(top, c0, top, c0 + 3, title, fmt.th_center)
        for j, head in enumerate(BLOCK_HEADS):
            ws.write_string(top + 1, c0 + j, head, fmt.th_center)
    ws.set_row(top + 1, 39.0)
    rows = [top + 2 + k for k in range(len(view.risks))]
    for k, r in enumerate(rows):
        _risk_row(ws, fmt, a, k, r)
        for b, t in enumerate(traced):
            _risk_draw_cells(ws, fmt, a, k, r, block_col(b), t)
    return rows


def _risk_row(ws, fmt, a, k: int, r: int) -> None:
    """The risk's ID, probability and impacts (from the Risks sheet), PERT shapes."""
    risk = a.risk_view.risks[k]
    cols = columns(a.risk_view, len(a.paths))
    ws.write_string(r, 0, risk.id)
    ws.write_formula(r, 1, "=" + risk_cell(k, cols["p"]), fmt.prob, risk.probability)
    style = fmt.prob if risk.percent else fmt.num
    for col, key, value in (
        (2, "low", risk.low),
        (3, "likely", risk.likely),
        (4, "high", risk.high),
    ):
        ws.write_formula(r, col, "=" + risk_cell(k, cols[key]), style, float(value))
    if a.schedule.settings.distribution == "pert" and risk.low < risk.high:
        lo, li, hi = (f.ref(r, col) for col in (2, 3, 4))
        span = risk.high - risk.low
        alpha = 1 + 4 * (risk.likely - risk.low) / span
        beta = 1 + 4 * (risk.high - risk.likely) / span
        ws.write_formula(r, 5, f.pert_alpha(lo, li, hi), fmt.num4, alpha)
        ws.write_formula(r, 6, f.pert_beta(lo, li, hi), fmt.num4, beta)


def impact_formula(a, k: int, r: int, v: str) -> str:
    """Risk ``k``'s impact at uniform ``v``: its impact distribution's inverse."""
    risk = a.risk_view.risks[k]
    lo, li, hi = (f.ref(r, col) for col in (2, 3, 4))
    if risk.low >= risk.high:
        return "=" + lo
    kind = a.schedule.settings.distribution
    if kind == "pert":
        return f.pert_inverse(v, f.ref(r, 5), f.ref(r, 6), lo, hi)
    if kind == "triangular":
        return f.triangular_inverse(v, lo, li, hi)
    return f.uniform_inverse(v, lo, hi)


def _risk_draw_cells(ws, fmt, a, k: int, r: int, c0: int, t) -> None:
    """Risk ``k``'s occurrence u, occurred, impact u and impact in traced iteration ``t``."""
    draws = {d.kind: d for d in t.draws if d.risk == k}
    occ, imp = draws[OCCURRENCE], draws[IMPACT]
    style = fmt.prob if a.risk_view.risks[k].percent else fmt.num4
    ws.write_number(r, c0, occ.uniform, fmt.num4)
    occurred = bool(occ.value)
    ws.write_formula(r, c0 + 1, f"={f.ref(r, c0)}<{f.ref(r, 1)}", fmt.center, occurred)
    ws.write_number(r, c0 + 2, imp.uniform, fmt.num4)
    ws.write_formula(r, c0 + 3, impact_formula(a, k, r, f.ref(r, c0 + 2)), style, imp.value)


def with_delays(a, hits: list[int], base: str, rows: list[int], c0: int) -> str:
    """A traced duration formula: ``base`` (a formula of the sampled duration) with the
    delays of the risks ``hits`` (register indices; :func:`hitting`), from the risk
    table's ``rows`` in the block from column ``c0``."""
    if not hits:
        return base
    view = a.risk_view
    fixed, share = [], []
    for k in hits:
        term = f"IF({f.ref(rows[k], c0 + 1)},{f.ref(rows[k], c0 + 3)},0)"
        (share if view.risks[k].percent else fixed).append(term)
    out = f"({base[1:]})*(1+{'+'.join(share)})" if share else base[1:]
    return "=" + "+".join([out, *fixed])


def hitting(a) -> list[list[int]]:
    """Per activity, the risks that hit it (each once); empty lists without risks."""
    if not has_risks(a):
        return [[] for _ in range(a.net.n)]
    return [list(dict.fromkeys(ks)) for ks in risks_by_activity(a.risk_view, a.net.n)]
