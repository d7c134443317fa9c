"""The Trace sheet with a risk register, a status date and a Not before constraint.

Checks against the outside:
- scipy's quantile functions (scipy.stats.beta.ppf, triang.ppf, uniform.ppf) recompute
  every traced duration, named risks' delays included, from the random numbers the sheet
  shows: the risk occurred when its occurrence u is below its probability (the register's
  semantics, issue 12), its impact is the quantile of its impact u, and a % impact scales
  the sampled duration;
- the remaining work of the activity in progress and the finished activity's actual
  duration are worked by hand in the comments (status offset 6);
- LibreOffice recalculates every formula of the workbook (tests/support/recalc.py) and
  must reproduce every cached value; each recalculated traced finish equals the finish
  the simulation recorded for that iteration within the bound the sheet states;
- determinism: the same seed gives the same Trace sheet with one worker process and with
  two (common practice for seeded parallel simulation).
"""

from __future__ import annotations

import math

import openpyxl
import pytest
from helpers import write_xlsx
from recalc import compare_recalculated
from scipy import stats

from converter.analyse.simulate import inputs
from converter.api import ConvertOptions, convert
from converter.write.workbook import trace as trace_sheet
from converter.write.workbook.layout import TRACE_FIRST

HEAD = ["ID", "Description", "Predecessors", "Optimistic", "Most likely", "Pessimistic"]
HEAD += ["Distribution", "Not before", "Actual start", "Actual finish", "Remaining"]
#: An invented project in flight (status offset 6): A finished (0 to 3), B in progress since
#: 3 with 2 left, C not before 10, the rest not started (so not before 6).
ROWS = [
    HEAD,
    ["A", "Survey", None, 2, 3, 5, None, None, 0, 3, None],
    ["B", "Design", "A", 4, 5, 8, None, None, 3, None, 2],
    ["C", "Order", "A", 1, 2, 4, "triangular", 10, None, None, None],
    ["D", "Build", "B;C", 5, 8, 12, None, None, None, None, None],
    ["E", "Roof", "D", 2, 4, 9, "triangular", None, None, None, None],
    ["F", "Fit out", "D[SS+1]", 1, 3, 6, "uniform", None, None, None, None],
    ["G", "Hand over", "E;F", 0.5, 1, 2, None, None, None, None, None],
]
RISK_HEAD = ["Risk", "Description", "Probability", "Impact low", "Impact likely"]
RISK_HEAD += ["Impact high", "Activities", "Mitigated probability", "Group"]
#: An invented register: a PERT impact, a % impact on two activities, a group of two
#: (one constant impact) and a risk on the activity in progress; R1 has a response.
RISKS = [
    RISK_HEAD,
    ["R1", "rock", 0.6, 1, 2, 5, "D", "30%", None],
    ["R2", "late drawings", 0.5, "10%", "20%", "50%", "E, F", None, None],
    ["R3", "storm", 0.4, 2, 2, 2, "C", None, "weather"],
    ["R4", "flood", 0.4, 1, 2, 3, "G", None, "weather"],
    ["R5", "staff", 0.5, 1, 1.5, 2, "B", None, None],
]
REGISTER = {r[0]: (r[2], r[3], r[4], r[5], r[6]) for r in RISKS[1:]}
PERCENT = {"R2"}
SETTINGS = [["Setting", "Value"], ["Status date", 6]]
STATUS, ELAPSED_B = 6.0, 3.0  # B started at 3: 3 worked by the status offset
#: B's remaining O, M, P: Remaining 2 scales its own ratios, 2*4/5, 2, 2*8/5
REMAINING_B = (1.6, 2.0, 3.2)


def _convert(root, **options):
    sheets = {"Activities": ROWS, "Risks": RISKS, "Settings": SETTINGS}
    source = write_xlsx(root / "flight.xlsx", sheets)
    opts = ConvertOptions(iterations=3000, seed=5, trace="50,80,max", **options)
    result = convert(source, opts, outdir=root / "out")
    assert result.ok, [str(p) for p in result.problems]
    return result.workbook


@pytest.fixture(scope="module")
def traced(tmp_path_factory):
    return _convert(tmp_path_factory.mktemp("trace_flight"))


def _places(ws):
    """(summary row, first column) per traced iteration; rows of the risks and activities
    (1-based, by the IDs in column A)."""
    return _places_of(ws, [row[0] for row in ROWS[1:]], list(REGISTER))


def _places_of(ws, ids: list[str], risk_ids: list[str] = ()):
    count = 0
    while ws.cell(TRACE_FIRST + 1 + count, 1).value:
        count += 1
    blocks = [(TRACE_FIRST + 1 + k, trace_sheet.FIXED + 1 + 4 * k) for k in range(count)]
    col_a = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    risks = {rid: col_a[rid] for rid in risk_ids}
    acts = {i: col_a[i] for i in ids}
    return blocks, risks, acts


def _pct(x) -> float:
    return float(x[:-1]) / 100.0 if isinstance(x, str) else float(x)


def _impact(rid: str, v: float) -> float:
    """Scipy's PERT-beta quantile of the register's impact (the constant when low = high)."""
    _, low, likely, high, _ = (
        _pct(x) if isinstance(x, str) and x.endswith("%") else x for x in REGISTER[rid]
    )
    if low == high:
        return float(low)
    r = (likely - low) / (high - low)
    return float(stats.beta.ppf(v, 1 + 4 * r, 1 + 4 * (1 - r), loc=low, scale=high - low))


def _sampled(act: str, u: float) -> float:
    """Scipy's quantile of the activity's distribution (remaining work for B, the actual
    duration for the finished A), before any risk's delay."""
    row = next(r for r in ROWS[1:] if r[0] == act)
    if act == "A":
        return 3.0  # finished: actual finish 3 - actual start 0
    o, m, p = REMAINING_B if act == "B" else row[3:6]
    kind = row[6] or "pert"
    if kind == "pert":
        r = (m - o) / (p - o)
        x = stats.beta.ppf(u, 1 + 4 * r, 1 + 4 * (1 - r), loc=o, scale=p - o)
    elif kind == "triangular":
        x = stats.triang.ppf(u, (m - o) / (p - o), loc=o, scale=p - o)
    else:
        x = stats.uniform.ppf(u, loc=o, scale=p - o)
    return float(x) + (ELAPSED_B if act == "B" else 0.0)


def _expected_durations(ws, c: int, risks: dict, acts: dict) -> dict[str, float]:
    """Every activity's traced duration recomputed from the sheet's random numbers."""
    occurred, impact = {}, {}
    for rid, r in risks.items():
        occurred[rid] = ws.cell(r, c).value < _pct(REGISTER[rid][0])
        impact[rid] = _impact(rid, ws.cell(r, c + 2).value)
    out = {}
    for act, r in acts.items():
        base = _sampled(act, ws.cell(r, c).value)
        hits = [rid for rid, reg in REGISTER.items() if act in reg[4].replace(" ", "").split(",")]
        share = sum(impact[h] for h in hits if h in PERCENT and occurred[h])
        fixed = sum(impact[h] for h in hits if h not in PERCENT and occurred[h])
        out[act] = base * (1.0 + share) + fixed
    return out, occurred, impact


def test_traced_delays_equal_scipy_recomputation(traced):
    ws = openpyxl.load_workbook(traced, data_only=True)["Trace"]
    blocks, risks, acts = _places(ws)
    seen = {"occurred": set(), "not": set()}
    for _, c in blocks:
        expected, occurred, impact = _expected_durations(ws, c, risks, acts)
        for rid, r in risks.items():
            assert ws.cell(r, c + 1).value is occurred[rid]
            assert ws.cell(r, c + 3).value == pytest.approx(impact[rid], rel=1e-9, abs=1e-12)
            seen["occurred" if occurred[rid] else "not"].add(rid)
        # a group is one draw: R3 and R4 occur together
        assert ws.cell(risks["R3"], c).value == ws.cell(risks["R4"], c).value
        assert occurred["R3"] == occurred["R4"]
        for act, r in acts.items():
            assert ws.cell(r, c + 1).value == pytest.approx(expected[act], rel=1e-9, abs=1e-12)
    # the demo exercises both branches, the % impact occurring at least once
    assert seen["occurred"] and seen["not"] and "R2" in seen["occurred"]


def test_trace_formulas_carry_risks_and_start_floors(traced):
    ws = openpyxl.load_workbook(traced)["Trace"]
    blocks, risks, acts = _places(ws)
    assert "without the responses" in ws["B2"].value and "in flight" in ws["B2"].value
    for _, c in blocks:
        r1 = risks["R1"]
        col = openpyxl.utils.get_column_letter
        assert ws.cell(r1, c + 1).value == f"={col(c)}{r1}<B{r1}"  # =u<probability
        assert ws.cell(r1, c + 3).value.startswith("=_xlfn.BETA.INV(")
        assert ws.cell(r1, 2).value.startswith("=Risks!")  # the Risks sheet's probability
        assert ws.cell(acts["A"], c + 1).value == f"=C{acts['A']}"  # finished: fixed
        assert ws.cell(acts["A"], 3).value.startswith("=Activities!")
        b = ws.cell(acts["B"], c + 1).value
        assert b.startswith("=MAX(0,StatusOffset-Activities!") and "IF(" in b
        assert "*(1+IF(" in ws.cell(acts["E"], c + 1).value  # % impact scales
        # early starts: the Activities sheet's floor terms
        assert "StatusOffset" in ws.cell(acts["C"], c + 2).value
        assert ws.cell(acts["A"], c + 2).value.startswith("=MAX(0,Activities!")


@pytest.mark.libreoffice
def test_libreoffice_recalculates_the_trace_with_risks_and_status(traced, libreoffice, tmp_path):
    copy = libreoffice.recalculate(traced, tmp_path)
    report = compare_recalculated(traced, copy)
    # the Trace sheet's every formula (the other sheets are their own tests' business)
    mismatches = [m for m in report if m.startswith("Trace!")]
    assert not mismatches, "\n".join(mismatches[:20])
    assert report.compared > 300
    values = openpyxl.load_workbook(copy, data_only=True)["Trace"]
    blocks, risks, acts = _places(values)
    for r_sum, c in blocks:
        recomputed, recorded = values.cell(r_sum, 4).value, values.cell(r_sum, 5).value
        assert abs(recomputed - recorded) <= values.cell(r_sum, 7).value
        assert values.cell(r_sum, 8).value == "Yes"
        expected, _, _ = _expected_durations(values, c, risks, acts)
        for act, r in acts.items():  # LibreOffice's BETA.INV against scipy's
            assert math.isclose(values.cell(r, c + 1).value, expected[act], rel_tol=1e-7)
        # hand: C cannot start before its Not before of 10; A started at 0
        assert values.cell(acts["C"], c + 2).value >= 10.0
        assert values.cell(acts["A"], c + 2).value == 0.0
        assert values.cell(acts["D"], c + 2).value >= STATUS


def test_trace_is_the_same_with_one_and_two_workers(tmp_path, monkeypatch):
    monkeypatch.setattr(inputs, "_CHUNK_ELEMENTS", 7 * 64)  # many chunks of 64 iterations
    sheets = []
    for workers in (1, 2):
        root = tmp_path / f"w{workers}"
        root.mkdir()
        wb = openpyxl.load_workbook(_convert(root, simulation_workers=workers), data_only=True)
        ws = wb["Trace"]
        sheets.append([[c.value for c in row] for row in ws.iter_rows()])
    assert sheets[0] == sheets[1]
    blocks, _, _ = _places(wb["Trace"])
    assert len(blocks) == 3


def test_not_before_alone_enters_the_traced_early_start(tmp_path):
    # no status date, no register: only C's Not before of 10 (hand: C's start >= 10)
    rows = [row[:8] for row in ROWS]
    rows[1] = ["A", "Survey", None, 2, 3, 5, None, None]
    rows[2] = ["B", "Design", "A", 4, 5, 8, None, None]
    source = write_xlsx(tmp_path / "nb.xlsx", {"Activities": rows})
    opts = ConvertOptions(iterations=2000, seed=5, trace="80")
    result = convert(source, opts, outdir=tmp_path / "out")
    assert result.ok, [str(p) for p in result.problems]
    formulas = openpyxl.load_workbook(result.workbook)["Trace"]
    values = openpyxl.load_workbook(result.workbook, data_only=True)["Trace"]
    blocks, _, acts = _places_of(values, [r[0] for r in rows[1:]])
    assert "same Not before constraints" in formulas["B2"].value
    (r_sum, c) = blocks[0]
    es = formulas.cell(acts["C"], c + 2).value
    assert es.startswith("=MAX(0,") and "Activities!" in es and "StatusOffset" not in es
    assert values.cell(acts["C"], c + 2).value >= 10.0
    assert (
        abs(values.cell(r_sum, 4).value - values.cell(r_sum, 5).value)
        <= values.cell(r_sum, 7).value
    )
