"""Write the analysis workbook: formulas that mirror the analysis, cached values from it.

The assembling function reads as a checklist of sheets; each sheet has its own module.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import xlsxwriter
import xlsxwriter.worksheet

from converter.values import printable
from converter.write.json_summary import FORMAT_VERSION
from converter.write.workbook import pages
from converter.write.workbook.activities import write_activities, write_links
from converter.write.workbook.changes import write_changes
from converter.write.workbook.health import write_health
from converter.write.workbook.layout import Layout
from converter.write.workbook.paths_sheet import write_paths
from converter.write.workbook.probability import write_probability
from converter.write.workbook.ranges import write_ranges
from converter.write.workbook.reference import (
    write_input,
    write_method,
    write_settings,
    write_warnings,
)
from converter.write.workbook.risks_sheet import write_risks
from converter.write.workbook.rows import (
    DEFAULT_FONT_SIZE,
    DEFAULT_ROW_PIXELS,
    FONT_NAME,
    height_for_lines,
)
from converter.write.workbook.simulation import write_simulation
from converter.write.workbook.styles import Formats
from converter.write.workbook.summary import write_summary
from converter.write.workbook.timeline import write_timeline
from converter.write.workbook.trace import write_trace


class _PreparedFormulaSheet(xlsxwriter.worksheet.Worksheet):
    """A worksheet that takes formula text as written.

    xlsxwriter scans every formula with dozens of regular expressions to add the
    ``_xlfn.`` prefix of newer functions; with hundreds of thousands of formulas that
    dominated the run time. Our builders write the prefixes themselves
    (``formulas.NORM_S_DIST`` etc.), so the scan is skipped.
    """

    def _prepare_formula(self, formula, expand_future_functions=False):
        if formula.startswith("{"):
            formula = formula[1:]
        if formula.startswith("="):
            formula = formula[1:]
        if formula.endswith("}"):
            formula = formula[:-1]
        return formula

    def _write_string(self, row, col, string, cell_format=None):
        """Also give a row holding larger text (a title) room for one line of it, unless
        the sheet sets that row's height itself (later, or already)."""
        size = getattr(cell_format, "font_size", DEFAULT_FONT_SIZE) if cell_format else None
        if size and size > DEFAULT_FONT_SIZE and row not in self.row_sizes:
            self.set_row(row, height_for_lines(1, size))
        return super()._write_string(row, col, string, cell_format)


class _Workbook(xlsxwriter.Workbook):
    worksheet_class = _PreparedFormulaSheet


#: Fixed document dates so the same input gives the same workbook.
DOCUMENT_DATE = dt.datetime(2024, 1, 1)


def _open(path: str | Path) -> _Workbook:
    """A new workbook at ``path`` with the options and the format mark every one shares."""
    wb = _Workbook(
        str(path),
        {
            "strings_to_formulas": False,  # input text is never a formula (injection)
            "strings_to_urls": False,
            "strings_to_numbers": False,
            "nan_inf_to_errors": True,
            # one font everywhere, not the theme's (scheme "none"): see rows.FONT_NAME;
            # every value at the top of its row, beside the first line of a tall neighbour
            "default_format_properties": {
                "font_name": FONT_NAME,
                "font_size": DEFAULT_FONT_SIZE,
                "font_scheme": "none",
                "valign": "top",
            },
            "default_row_height": DEFAULT_ROW_PIXELS,  # one line of that font
        },
    )
    # what `pertbook compare` looks for to read a workbook back (converter.compare.readback)
    wb.set_custom_property("pertbook format", FORMAT_VERSION)
    return wb


def write_workbook(analysis, path: str | Path, changes=None) -> None:
    """Write ``analysis`` to ``path`` (.xlsx); with ``changes`` (a
    :class:`converter.compare.Changes` against a baseline run) also the Changes sheet."""
    wb = _open(path)
    wb.set_properties(
        {
            "title": "Schedule risk analysis of "
            + printable(Path(analysis.schedule.input_file).name),
            "subject": "CPM / PERT / Monte Carlo schedule risk analysis",
            "author": "pertbook",
            "created": DOCUMENT_DATE,
            "comments": f"Input SHA-256 {analysis.schedule.sha256}",
        }
    )
    wb.set_calc_mode("auto")
    fmt = Formats(wb)
    lay = Layout(
        n=len(analysis.ids),
        n_links=analysis.net.link_count,
        dates=analysis.calendar is not None,
        simulated=analysis.simulation is not None,
        order=analysis.summaries.order if analysis.summaries is not None else None,
        ranged=any(act.duration is not None for act in analysis.schedule.activities),
        not_before=any(act.not_before is not None for act in analysis.schedule.activities),
        status=analysis.schedule.settings.status_date is not None,
        risks=analysis.risk_view is not None,
    )
    write_summary(wb, fmt, analysis, lay)
    if changes is not None:
        write_changes(wb, fmt, changes)
    write_activities(wb, fmt, analysis, lay)
    write_links(wb, fmt, analysis, lay)
    if analysis.schedule.ranges:
        write_ranges(wb, fmt, analysis, lay)
    write_paths(wb, fmt, analysis, lay)
    write_probability(wb, fmt, analysis, lay)
    if analysis.simulation is not None:
        write_simulation(wb, fmt, analysis, lay)
        if analysis.simulation.trace:
            write_trace(wb, fmt, analysis, lay)
    if analysis.risk_view is not None:
        write_risks(wb, fmt, analysis, lay)
    write_timeline(wb, fmt, analysis, lay)
    write_health(wb, fmt, analysis, lay)
    write_settings(wb, fmt, analysis, lay)
    write_method(wb, fmt, analysis, lay)
    write_input(wb, fmt, analysis, lay)
    write_warnings(wb, fmt, analysis, lay)
    for ws in wb.worksheets():  # sheets that did not set up their pages themselves
        if not pages.is_set_up(ws):
            pages.set_up(ws)
    wb.close()


def write_changes_workbook(changes, path: str | Path) -> None:
    """Write the comparison ``changes`` alone (``pertbook compare``) to ``path`` (.xlsx)."""
    wb = _open(path)
    wb.set_properties(
        {
            "title": "What moved between two runs of pertbook",
            "author": "pertbook",
            "created": DOCUMENT_DATE,
        }
    )
    wb.set_calc_mode("auto")
    write_changes(wb, Formats(wb), changes)
    wb.close()
