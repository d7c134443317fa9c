"""The workbook's palette and cell formats (our own: ink blue, moss, amber, slate)."""

from __future__ import annotations

PALETTE = {
    "ink": "#23395B",  # headings, critical bars
    "moss": "#5B8C5A",  # non-critical bars
    "amber": "#E0A526",  # float, due-date marks
    "slate": "#8A9BA8",  # secondary lines
    "clay": "#B5523B",  # warnings, flagged paths
    "mist": "#EEF2F5",  # header fill
    "sand": "#F6EFE0",  # input cells
}

DATE_FORMAT = "yyyy-mm-dd"
NUMBER_FORMAT = "0.00"
PROB_FORMAT = "0.0%"
TABLE_HEAD_SIZE = 9.0
TITLE_SIZE = 14.0
#: A row holding a title: one line of 14 pt (rows.height_for_lines(1, 14)).
TITLE_ROW = 18.0


#: The table head's look (9 pt, shaded, ruled), shared by its three alignments.
_TABLE_HEAD = {
    "bold": True,
    "font_size": TABLE_HEAD_SIZE,
    "bg_color": PALETTE["mist"],
    "bottom": 1,
    "text_wrap": True,
}

#: Every cell format by name, in the order they are added to the workbook.
FORMATS: dict[str, dict] = {
    "title": {"bold": True, "font_size": TITLE_SIZE, "font_color": PALETTE["ink"]},
    "subtitle": {"italic": True, "font_color": "#555555"},
    "header": {
        "bold": True,
        "bg_color": PALETTE["mist"],
        "bottom": 1,
        "text_wrap": True,
        "valign": "top",
    },
    "label": {"bold": True, "valign": "top"},
    "text": {},
    "wrap": {"text_wrap": True, "valign": "top"},
    "input_num": {"bg_color": PALETTE["sand"], "num_format": "0.###"},
    "num": {"num_format": NUMBER_FORMAT},
    "num4": {"num_format": "0.0000"},
    "int": {"num_format": "0"},
    "sci": {"num_format": "0.0E+00"},
    "prob": {"num_format": PROB_FORMAT},
    "prob2": {"num_format": "0.00%"},
    "date": {"num_format": DATE_FORMAT},
    "input_date": {"num_format": DATE_FORMAT, "bg_color": PALETTE["sand"]},
    "big": {"bold": True, "font_size": 12, "num_format": NUMBER_FORMAT},
    "big_prob": {"bold": True, "font_size": 12, "num_format": PROB_FORMAT},
    "big_date": {"bold": True, "font_size": 12, "num_format": DATE_FORMAT},
    "flag": {"bold": True, "font_color": PALETTE["clay"]},
    "good": {"font_color": PALETTE["moss"], "bold": True},
    "caution": {"text_wrap": True, "valign": "top", "font_color": PALETTE["clay"], "italic": True},
    "critical": {"bold": True, "font_color": PALETTE["ink"], "align": "center"},
    "center": {"align": "center"},
    "int_center": {"num_format": "0", "align": "center"},
    "th": _TABLE_HEAD,
    "th_center": {**_TABLE_HEAD, "align": "center"},
    "th_indent": {**_TABLE_HEAD, "indent": 1, "align": "left"},
    "section_title": {
        "bold": True,
        "font_size": 12,
        "font_color": PALETTE["ink"],
        "bottom": 1,
        "bottom_color": PALETTE["slate"],
    },
    "section_head": {
        "bold": True,
        "font_color": PALETTE["ink"],
        "bottom": 1,
        "bottom_color": PALETTE["slate"],
        "align": "right",
        "text_wrap": True,
    },
    "label_wrap": {"bold": True, "text_wrap": True},
    "note": {"text_wrap": True, "valign": "top", "indent": 1, "align": "left"},
    "note_italic": {
        "text_wrap": True,
        "valign": "top",
        "indent": 1,
        "align": "left",
        "italic": True,
        "font_color": "#555555",
    },
    "wrap_flag": {
        "text_wrap": True,
        "valign": "top",
        "bold": True,
        "font_color": PALETTE["clay"],
        "indent": 1,
        "align": "left",
    },
    "wrap_indent": {"text_wrap": True, "valign": "top", "indent": 1, "align": "left"},
    "wrap_center": {"text_wrap": True, "align": "center"},
    "wrap_flag_center": {
        "text_wrap": True,
        "bold": True,
        "align": "center",
        "font_color": PALETTE["clay"],
    },
    "text_right": {"align": "right"},
    "text_indent": {"indent": 1, "align": "left"},
    "big_value": {"bold": True, "num_format": NUMBER_FORMAT, "bg_color": PALETTE["mist"]},
    "big_value_date": {"bold": True, "num_format": DATE_FORMAT, "bg_color": PALETTE["mist"]},
    "label_top": {"bold": True, "valign": "top", "text_wrap": True},
    "section": {
        "bold": True,
        "font_color": PALETTE["ink"],
        "bottom": 1,
        "bottom_color": PALETTE["slate"],
    },
    "int_top": {"num_format": "0", "align": "center", "valign": "top"},
    "prob_top": {"num_format": PROB_FORMAT, "valign": "top"},
    "good_top": {"font_color": PALETTE["moss"], "bold": True, "valign": "top", "align": "center"},
    "flag_top": {"bold": True, "font_color": PALETTE["clay"], "valign": "top", "align": "center"},
    "subtitle_wrap": {"italic": True, "font_color": "#555555", "text_wrap": True, "valign": "top"},
    "left": {"align": "left", "valign": "top"},
    "num_left": {"align": "left", "valign": "top", "num_format": "General"},
    "date_left": {"num_format": DATE_FORMAT, "align": "left", "valign": "top"},
}


class Formats:
    """Cell formats, created once per workbook."""

    def __init__(self, wb):
        for name, spec in FORMATS.items():
            setattr(self, name, wb.add_format(spec))
