"""Formula text builders: numbers written into formulas, the float tolerance's formula.

Outside references: Python's float parser (``float(text)`` reads back the number a
formula states; spreadsheet number literals use the same decimal / E notation) and
LibreOffice, whose recalculation of FloatTolerance is compared with the cached value
in tests/write/test_workbook.py.
"""

from __future__ import annotations

import pytest

from converter.analyse.network import critical_tolerance
from converter.write.workbook import formulas as f


@pytest.mark.parametrize("x", [44.0, 5, 0.5, 1e-9, 2.5e-8, 0.7142857142857143, 1e21, -3.25])
def test_number_reads_back_exactly(x):
    text = f.number(x)
    assert float(text) == x
    assert "e" not in text and not text.endswith(".0")


def test_float_tolerance_formula_states_the_analysis_rule():
    # =<factor>*MAX(1,ABS(finish)) with the factor of network.critical_tolerance
    formula = f.float_tolerance("ProjectFinish")
    assert formula == "=1E-9*MAX(1,ABS(ProjectFinish))"
    factor = float(formula[1:].split("*")[0])
    for finish in (0.0, 0.5, 1.0, 37.25, 1e6):
        assert factor * max(1.0, abs(finish)) == critical_tolerance(finish)
    assert "1e-9" in f.TOLERANCE_WORDS
