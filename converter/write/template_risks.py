"""The template's Risks sheet: the register's headers, checks on the cells, an example row.

The example row's Risk ID starts with ``Example``: the reader skips such a row
(:data:`converter.model.RISK_EXAMPLE_PREFIX`), so a filled-in template converts with it
left in place.
"""

from __future__ import annotations

from converter.model import RISK_EXAMPLE_PREFIX as EXAMPLE_PREFIX

ROWS = 200  # formatted, checked input rows below the header

#: header, width, input message
RISK_COLUMNS: tuple[tuple[str, int, str], ...] = (
    ("Risk", 12, "A short unique ID for the risk, e.g. R1."),
    ("Description", 40, "What may happen, in plain words."),
    ("Probability", 12, "The chance it happens: 0.3, 30% or 30 (read as percent); above 0."),
    ("Impact low", 11, "Delay if it happens, at best: 2, 2d, 16h, 1w, or 10% of the duration."),
    ("Impact likely", 11, "Most likely delay if it happens (units or % as the row's others)."),
    ("Impact high", 11, "Delay if it happens, at worst."),
    ("Activities", 22, "IDs of the activities it delays, separated by commas or semicolons."),
    ("Mitigated probability", 12, "Optional: the chance after the planned response."),
    ("Mitigated impact low", 11, "Optional: the impact after the planned response, at best."),
    ("Mitigated impact likely", 11, "Optional: most likely impact after the response."),
    ("Mitigated impact high", 11, "Optional: the impact after the response, at worst."),
    ("Group", 12, "Optional: risks of one group happen together (same probability)."),
)
EXAMPLE = (
    f"{EXAMPLE_PREFIX} R1",
    "Ground worse than surveyed (an example row: it is not read)",
    0.3,
    2,
    4,
    10,
    "A3, A4",
    0.1,
    1,
    2,
    5,
    None,
)
PROBABILITY_RULE = "AND(ISNUMBER({c}),{c}>0,{c}<=100)"


def write_risks_sheet(wb, ws, bold, fmt) -> None:
    """Headers with their input messages, the example row, checks on the probabilities."""
    example = wb.add_format({"italic": True, "font_color": "#7F7F7F"})
    for c, (head, width, message) in enumerate(RISK_COLUMNS):
        ws.set_column(c, c, width)
        ws.write_string(0, c, head, bold)
        ws.data_validation(
            0, c, 0, c, {"validate": "any", "input_title": head[:32], "input_message": message}
        )
        value = EXAMPLE[c]
        if isinstance(value, str):
            ws.write_string(1, c, value, example)
        elif value is not None:
            ws.write_number(1, c, value, example)
        for r in range(2, ROWS + 2):
            ws.write_blank(r, c, None, fmt["general"])
    ws.freeze_panes(1, 0)
    for c in (2, 7):  # Probability, Mitigated probability
        cell = f"{chr(ord('A') + c)}3"
        ws.data_validation(
            2,
            c,
            ROWS + 1,
            c,
            {
                "validate": "custom",
                "value": "=" + PROBABILITY_RULE.format(c=cell),
                "error_title": RISK_COLUMNS[c][0][:32],
                "error_message": "Enter a probability above 0: 0.3, 30% or 30.",
            },
        )
