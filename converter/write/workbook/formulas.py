"""Formula text builders: one function per derived figure, so each reads like its method.

Cell references come from ``xlsxwriter.utility``; every builder returns text with a
leading ``=``. Builders never compute values: cached values come from the Analysis.
"""

from __future__ import annotations

from xlsxwriter.utility import quote_sheetname, xl_rowcol_to_cell

from converter.analyse.network import critical_tolerance
from converter.model import FF, FS, SF, SS

#: Functions newer than the first OOXML edition are stored with the ``_xlfn.`` prefix
#: (ECMA-376 / Microsoft's "future functions" list); spreadsheets show the plain name.
NORM_S_DIST = "_xlfn.NORM.S.DIST"
NORM_S_INV = "_xlfn.NORM.S.INV"
MAXIFS = "_xlfn.MAXIFS"
MINIFS = "_xlfn.MINIFS"
BETA_INV = "_xlfn.BETA.INV"

#: Longest formula a spreadsheet accepts (Excel's documented limit).
FORMULA_LIMIT = 8192


def number(x: float) -> str:
    """A number as formula text: ``44``, ``0.5``, ``1E-9`` (shortest round-trip digits).

    Examples
    --------
    >>> number(44.0), number(0.5), number(1e-9), number(2.5e-08)
    ('44', '0.5', '1E-9', '2.5E-8')
    """
    text = repr(float(x))
    if "e" in text:
        mantissa, exponent = text.split("e")
        text = f"{mantissa.removesuffix('.0')}E{int(exponent)}"
    return text.removesuffix(".0")


#: The float tolerance relative to the project length, as ``network.critical_tolerance``
#: computes it: its value for a project of length 0 (or 1) is the factor.
TOLERANCE_FACTOR = critical_tolerance(0.0)

#: The same rule in words, for the Method sheet.
TOLERANCE_WORDS = f"within {number(TOLERANCE_FACTOR).lower()} of the project length"


def float_tolerance(finish: str) -> str:
    """Float at or below this counts as zero (``network.critical_tolerance``)."""
    return f"={number(TOLERANCE_FACTOR)}*MAX(1,ABS({finish}))"


def ref(row: int, col: int, sheet: str | None = None, absolute: bool = False) -> str:
    """A1 reference of zero-based ``row, col``, optionally on another sheet."""
    cell = xl_rowcol_to_cell(row, col, row_abs=absolute, col_abs=absolute)
    return f"{quote_sheetname(sheet)}!{cell}" if sheet else cell


def span(first_row: int, last_row: int, col: int, sheet: str | None = None) -> str:
    """Absolute column range ``$C$5:$C$40``."""
    a = xl_rowcol_to_cell(first_row, col, row_abs=True, col_abs=True)
    b = xl_rowcol_to_cell(last_row, col, row_abs=True, col_abs=True)
    return f"{quote_sheetname(sheet)}!{a}:{b}" if sheet else f"{a}:{b}"


def expected_time(o: str, m: str, p: str) -> str:
    """TE = (O + 4M + P) / 6."""
    return f"=({o}+4*{m}+{p})/6"


def pert_variance(o: str, p: str) -> str:
    """((P - O) / 6)^2."""
    return f"=(({p}-{o})/6)^2"


def early_start(pushes: list[str]) -> str:
    """ES = the largest start the incoming links allow, never before the project start."""
    return "=MAX(" + ",".join(["0", *pushes]) + ")"


def plus(a: str, b: str) -> str:
    return f"={a}+{b}"


def minus(a: str, b: str) -> str:
    return f"={a}-{b}"


def late_finish(pulls: list[str], finish_name: str = "ProjectFinish") -> str:
    """LF = the earliest finish the outgoing links and the project finish require."""
    return "=MIN(" + ",".join([finish_name, *pulls]) + ")"


def free_float(ef: str, slacks: list[str], finish_name: str = "ProjectFinish") -> str:
    """Free float = least slack over the outgoing links and to the project finish."""
    return "=MIN(" + ",".join([f"{finish_name}-{ef}", *slacks]) + ")"


def is_critical(total_float: str, tolerance_name: str = "FloatTolerance") -> str:
    return f'=IF({total_float}<={tolerance_name},"Yes","No")'


def link_push(kind: int, pred_es: str, pred_ef: str, lag: str, succ_te: str) -> str:
    """The earliest start a link allows its successor (precedence diagramming rules)."""
    if kind == FS:
        return f"={pred_ef}+{lag}"
    if kind == SS:
        return f"={pred_es}+{lag}"
    if kind == FF:
        return f"={pred_ef}+{lag}-{succ_te}"
    if kind == SF:
        return f"={pred_es}+{lag}-{succ_te}"
    raise ValueError(kind)


def link_pull(kind: int, succ_ls: str, succ_lf: str, lag: str, pred_te: str) -> str:
    """The latest finish a link allows its predecessor (backward pass)."""
    if kind == FS:
        return f"={succ_ls}-{lag}"
    if kind == SS:
        return f"={succ_ls}-{lag}+{pred_te}"
    if kind == FF:
        return f"={succ_lf}-{lag}"
    if kind == SF:
        return f"={succ_lf}-{lag}+{pred_te}"
    raise ValueError(kind)


def share_passes(count: str, out_of: str, most_percent: float) -> str:
    """ "pass" when count <= most_percent % of out_of (in whole numbers: exactly it passes)."""
    return f'=IF({count}*100<={number(most_percent)}*{out_of},"pass","FAIL")'


def share_at_least(count: str, out_of: str, least_percent: float) -> str:
    """ "pass" when count >= least_percent % of out_of (exactly it passes; none due passes)."""
    return f'=IF({count}*100>={number(least_percent)}*{out_of},"pass","FAIL")'


def count_passes(count: str, most: float) -> str:
    """ "pass" when count <= most."""
    return f'=IF({count}<={number(most)},"pass","FAIL")'


def count_above(values: str, days: float, tolerance: float, days_per_unit: float) -> str:
    """How many values exceed ``days`` working days (+ tolerance), in schedule units."""
    return f'=COUNTIF({values},">"&({number(days)}+{number(tolerance)})/{days_per_unit!r})'


def z_score(value: str, mean: str, sd: str) -> str:
    return f'=IF({sd}>0,({value}-{mean})/{sd},"n/a")'


def p_meet(value: str, mean: str, sd: str) -> str:
    """P(normal duration <= value); 1 or 0 when the spread is zero."""
    return f"=IF({sd}>0,{NORM_S_DIST}(({value}-{mean})/{sd},TRUE),IF({value}>={mean},1,0))"


def duration_at(confidence: str, mean: str = "ProjectMean", sd: str = "ProjectSD") -> str:
    return f"={mean}+{NORM_S_INV}({confidence})*{sd}"


def path_length(coef: str, te: str, lags: str) -> str:
    return f"=SUMPRODUCT({coef},{te})+SUM({lags})"


def path_variance(coef: str, var: str) -> str:
    return f"=SUMPRODUCT({coef},{coef},{var})"


def over_links(outer: str, first: str, conditional: str, values: str, keys: str, key: str) -> str:
    """The same MAX/MIN as a conditional aggregate over the Links table, for an activity
    with so many links that the plain formula would pass the length limit. The ID is
    matched exactly: ``=`` in front, and the wildcards ``* ? ~`` escaped."""
    exact = f'"="&SUBSTITUTE(SUBSTITUTE(SUBSTITUTE({key},"~","~~"),"*","~*"),"?","~?")'
    return f"={outer}({first},{conditional}({values},{keys},{exact}))"


def fits(formula: str) -> bool:
    return len(formula) <= FORMULA_LIMIT


def summary_start(cells: str) -> str:
    """A summary row's start: the earliest start of the rows under it."""
    return f"=MIN({cells})"


def summary_finish(cells: str) -> str:
    """A summary row's finish: the latest finish of the rows under it."""
    return f"=MAX({cells})"


def from_range(duration: str, percent: str) -> str:
    """An estimate made by a range class: duration x percent / 100 (O, M or P)."""
    return f"={duration}*{percent}/100"


def impact_mean(kind: str, low: str, likely: str, high: str) -> str:
    """Mean impact: PERT (L + 4M + H) / 6, triangular (L + M + H) / 3, uniform (L + H) / 2."""
    if kind == "triangular":
        return f"=({low}+{likely}+{high})/3"
    if kind == "uniform":
        return f"=({low}+{high})/2"
    return f"=({low}+4*{likely}+{high})/6"


def impact_variance(kind: str, low: str, likely: str, high: str, mean: str) -> str:
    """Impact variance: PERT-beta (mean - L)(H - mean) / 7, triangular
    (L^2 + M^2 + H^2 - LM - LH - MH) / 18, uniform (H - L)^2 / 12."""
    if kind == "triangular":
        return f"=({low}^2+{likely}^2+{high}^2-{low}*{likely}-{low}*{high}-{likely}*{high})/18"
    if kind == "uniform":
        return f"=({high}-{low})^2/12"
    return f"=({mean}-{low})*({high}-{mean})/7"


def compound_mean(p: str, mean: str) -> str:
    """Mean of B I with B ~ Bernoulli(p): p mu."""
    return f"={p}*{mean}"


def compound_variance(p: str, mean: str, var: str) -> str:
    """Variance of B I with B ~ Bernoulli(p): p sigma^2 + p (1 - p) mu^2."""
    return f"={p}*{var}+{p}*(1-{p})*{mean}^2"


def risk_delay(terms: list[str]) -> str:
    """An activity's expected delay: the sum of its risks' terms (0 without any)."""
    return "=" + ("+".join(terms) if terms else "0")


def path_risk_mean(delay_mean: str, weights: str) -> str:
    """The risks' expected delay on a path: SUMPRODUCT(p mu, weight)."""
    return f"=SUMPRODUCT({delay_mean},{weights})"


def path_risk_variance(delay_variance: str, weights: str) -> str:
    """The risks' variance on a path: SUMPRODUCT(delay variance, weight, weight)."""
    return f"=SUMPRODUCT({delay_variance},{weights},{weights})"


def te_change(old: tuple[str, str, str], new: tuple[str, str, str]) -> str:
    """The change of TE between two runs: TE(new O, M, P) - TE(old O, M, P)."""
    return f"=({new[0]}+4*{new[1]}+{new[2]})/6-({old[0]}+4*{old[1]}+{old[2]})/6"


def days_moved(old: str, new: str, weekend: str | None, holidays: list[float]) -> str:
    """Working days from the finish date ``old`` to ``new`` (negative: earlier): the
    working days in between counted by NETWORKDAYS.INTL, less the day it starts on (both
    are working days); calendar days (``weekend`` None) are a plain difference.

    Examples
    --------
    >>> days_moved("F9", "G9", "0000011", [])
    '=IF(G9>=F9,NETWORKDAYS.INTL(F9,G9,"0000011")-1,NETWORKDAYS.INTL(F9,G9,"0000011")+1)'
    >>> days_moved("F9", "G9", None, [])
    '=G9-F9'
    """
    if weekend is None:
        return f"={new}-{old}"
    hol = ",{" + ",".join(number(h) for h in holidays) + "}" if holidays else ""
    count = f'NETWORKDAYS.INTL({old},{new},"{weekend}"{hol})'
    return f"=IF({new}>={old},{count}-1,{count}+1)"


def pert_alpha(o: str, m: str, p: str) -> str:
    """The PERT-beta's first shape: alpha = 1 + 4 (M - O) / (P - O)."""
    return f"=1+4*({m}-{o})/({p}-{o})"


def pert_beta(o: str, m: str, p: str) -> str:
    """The PERT-beta's second shape: beta = 1 + 4 (P - M) / (P - O)."""
    return f"=1+4*({p}-{m})/({p}-{o})"


def pert_inverse(u: str, alpha: str, beta: str, o: str, p: str) -> str:
    """The PERT-beta duration of the uniform ``u``: its quantile on [O, P]."""
    return f"={BETA_INV}({u},{alpha},{beta},{o},{p})"


def triangular_inverse(u: str, o: str, m: str, p: str) -> str:
    """The triangular (O, M, P) duration of ``u``, its distribution function inverted."""
    return (
        f"=IF({u}<=({m}-{o})/({p}-{o}),{o}+SQRT({u}*({p}-{o})*({m}-{o})),"
        f"{p}-SQRT((1-{u})*({p}-{o})*({p}-{m})))"
    )


def uniform_inverse(u: str, o: str, p: str) -> str:
    """The uniform [O, P] duration of ``u``: O + u (P - O)."""
    return f"={o}+{u}*({p}-{o})"


def trace_sentence(target: str, label: str, figure: str, iteration: str) -> str:
    """A sentence linking a simulated figure to the traced iteration behind it.

    Examples
    --------
    >>> trace_sentence("#Trace!A5", "P80", "Trace!B5", "Trace!C5")[:56]
    '=HYPERLINK("#Trace!A5","the P80 of "&TEXT(Trace!B5,"0.0"'
    """
    if label == "longest":
        head = f'"the longest finish, "&TEXT({figure},"0.0")&", is that of iteration "'
    else:
        head = f'"the {label} of "&TEXT({figure},"0.0")&" is the finish of iteration "'
    tail = '", recomputed on the Trace sheet from its random numbers"'
    return f'=HYPERLINK("{target}",{head}&TEXT({iteration},"#,##0")&{tail})'
