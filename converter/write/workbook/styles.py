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


class Formats:
    """Cell formats, created once per workbook."""

    def __init__(self, wb):
        add = wb.add_format
        self.title = add({"bold": True, "font_size": TITLE_SIZE, "font_color": PALETTE["ink"]})
        self.subtitle = add({"italic": True, "font_color": "#555555"})
        self.header = add(
            {
                "bold": True,
                "bg_color": PALETTE["mist"],
                "bottom": 1,
                "text_wrap": True,
                "valign": "top",
            }
        )
        self.label = add({"bold": True, "valign": "top"})  # top: beside the first line
        self.text = add({})
        self.wrap = add({"text_wrap": True, "valign": "top"})
        self.input_num = add({"bg_color": PALETTE["sand"], "num_format": "0.###"})
        self.num = add({"num_format": NUMBER_FORMAT})
        self.num4 = add({"num_format": "0.0000"})
        self.int = add({"num_format": "0"})
        self.sci = add({"num_format": "0.0E+00"})
        self.prob = add({"num_format": PROB_FORMAT})
        self.prob2 = add({"num_format": "0.00%"})
        self.date = add({"num_format": DATE_FORMAT})
        self.input_date = add({"num_format": DATE_FORMAT, "bg_color": PALETTE["sand"]})
        self.big = add({"bold": True, "font_size": 12, "num_format": NUMBER_FORMAT})
        self.big_prob = add({"bold": True, "font_size": 12, "num_format": PROB_FORMAT})
        self.big_date = add({"bold": True, "font_size": 12, "num_format": DATE_FORMAT})
        self.flag = add({"bold": True, "font_color": PALETTE["clay"]})
        self.good = add({"font_color": PALETTE["moss"], "bold": True})
        self.caution = add(
            {"text_wrap": True, "valign": "top", "font_color": PALETTE["clay"], "italic": True}
        )
        self.critical = add({"bold": True, "font_color": PALETTE["ink"], "align": "center"})
        self.center = add({"align": "center"})
        self.int_center = add({"num_format": "0", "align": "center"})
        # added for print and screen layout (indent needs "left": Excel and LibreOffice
        # ignore it under the general alignment; headers over numbers, notes apart from
        # figures, labels at the top of tall rows)
        # table heads at 9 pt: left over text, centred over numbers
        head = {
            "bold": True,
            "font_size": TABLE_HEAD_SIZE,
            "bg_color": PALETTE["mist"],
            "bottom": 1,
            "text_wrap": True,
        }
        self.th = add(head)
        self.th_center = add({**head, "align": "center"})
        self.th_indent = add({**head, "indent": 1, "align": "left"})
        self.section_title = add(
            {
                "bold": True,
                "font_size": 12,
                "font_color": PALETTE["ink"],
                "bottom": 1,
                "bottom_color": PALETTE["slate"],
            }
        )
        self.section_head = add(
            {
                "bold": True,
                "font_color": PALETTE["ink"],
                "bottom": 1,
                "bottom_color": PALETTE["slate"],
                "align": "right",
                "text_wrap": True,
            }
        )
        self.label_wrap = add({"bold": True, "text_wrap": True})
        self.note = add({"text_wrap": True, "valign": "top", "indent": 1, "align": "left"})
        self.note_italic = add(
            {
                "text_wrap": True,
                "valign": "top",
                "indent": 1,
                "align": "left",
                "italic": True,
                "font_color": "#555555",
            }
        )
        self.wrap_flag = add(
            {
                "text_wrap": True,
                "valign": "top",
                "bold": True,
                "font_color": PALETTE["clay"],
                "indent": 1,
                "align": "left",
            }
        )
        self.wrap_indent = add({"text_wrap": True, "valign": "top", "indent": 1, "align": "left"})
        self.wrap_center = add({"text_wrap": True, "align": "center"})
        self.wrap_flag_center = add(
            {"text_wrap": True, "bold": True, "align": "center", "font_color": PALETTE["clay"]}
        )
        self.text_right = add({"align": "right"})
        self.text_indent = add({"indent": 1, "align": "left"})
        self.big_value = add(
            {"bold": True, "num_format": NUMBER_FORMAT, "bg_color": PALETTE["mist"]}
        )
        self.big_value_date = add(
            {"bold": True, "num_format": DATE_FORMAT, "bg_color": PALETTE["mist"]}
        )
        # top-aligned and left-aligned variants for tables with wrapped text
        self.label_top = add({"bold": True, "valign": "top", "text_wrap": True})
        self.section = add(
            {
                "bold": True,
                "font_color": PALETTE["ink"],
                "bottom": 1,
                "bottom_color": PALETTE["slate"],
            }
        )
        self.int_top = add({"num_format": "0", "align": "center", "valign": "top"})
        self.prob_top = add({"num_format": PROB_FORMAT, "valign": "top"})
        self.good_top = add(
            {"font_color": PALETTE["moss"], "bold": True, "valign": "top", "align": "center"}
        )
        self.flag_top = add(
            {"bold": True, "font_color": PALETTE["clay"], "valign": "top", "align": "center"}
        )
        self.subtitle_wrap = add(
            {"italic": True, "font_color": "#555555", "text_wrap": True, "valign": "top"}
        )
        self.left = add({"align": "left", "valign": "top"})
        self.num_left = add({"align": "left", "valign": "top", "num_format": "General"})
        self.date_left = add({"num_format": DATE_FORMAT, "align": "left", "valign": "top"})
