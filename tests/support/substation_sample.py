"""Make ``samples/substation-upgrade.xlsx``: a schedule as a planning tool would export it.

    python tests/support/substation_sample.py            # rewrites the sample
    python tests/support/substation_sample.py OUT.xlsx --in-flight   # the same, in flight

An invented 33/11 kV substation transformer and switchgear replacement: 32 activities
under 7 WBS summary rows; estimates with units (``3d``, ``2w``, ``16h``); a ladder
(start-to-start and finish-to-finish with lags on one pair, on the Links sheet); rows with
only a Duration and a range class (Ranges sheet, a ``Default range``); ``Not before``
constraints; a link from a summary row; a Risks sheet of 7 named risks (one grouped pair,
mitigated values, one percentage impact); a settings sheet with start date, due date and
holidays. ``--in-flight`` adds a status date and actual dates (the project a few months
on), for trying ``--baseline``.

All names, figures and dates are invented. Not a test module.
"""

from __future__ import annotations

import argparse
import datetime as dt
from pathlib import Path

import xlsxwriter

SAMPLE = Path(__file__).resolve().parents[2] / "samples" / "substation-upgrade.xlsx"

HEADERS = (
    "WBS",
    "ID",
    "Description",
    "Predecessors",
    "Optimistic",
    "Most likely",
    "Pessimistic",
    "Duration",
    "Range",
    "Not before",
)

# WBS, ID, description, predecessors, O, M, P, duration, range, not before
ROWS: tuple[tuple, ...] = (
    ("1", "SU-1", "Design and approvals", "", "", "", "", "", "", ""),
    (
        "1.1",
        "D01",
        "Site survey and condition assessment of the existing 11 kV switchboard, "
        "earthing and cable routes",
        "",
        "3d",
        "4d",
        "6d",
        "",
        "",
        "",
    ),
    (
        "1.2",
        "D02",
        "Primary and protection design: single-line diagram, relay settings "
        "philosophy, cable schedules and the civil layout of the new plinth",
        "D01",
        "",
        "",
        "",
        "3w",
        "Design",
        "",
    ),
    (
        "1.3",
        "D03",
        "Network operator design review and approval",
        "D02",
        "",
        "",
        "",
        10,
        "Approval",
        "",
    ),
    (
        "1.4",
        "D04",
        "Book the outage window with the network control centre",
        "D03[SS+5d]",
        "",
        "",
        "",
        "2d",
        "",
        "",
    ),
    ("2", "SU-2", "Procurement", "", "", "", "", "", "", ""),
    ("2.1", "P01", "Order the 33/11 kV 12 MVA transformer", "D02", 1, 1, 2, "", "", ""),
    (
        "2.2",
        "P02",
        "Transformer manufacture and factory acceptance test at the works",
        "P01",
        "12w",
        "15w",
        "20w",
        "",
        "",
        "",
    ),
    ("2.3", "P03", "Order switchgear and relay panels", "D02", "", "", "", "2d", "Tight", ""),
    (
        "2.4",
        "P04",
        "Switchgear and relay panel manufacture",
        "P03",
        "",
        "",
        "",
        "10w",
        "Supplier",
        "",
    ),
    (
        "2.5",
        "P05",
        "Transformer delivery by low-loader (abnormal load road permit, police "
        "escort) and offload by mobile crane",
        "P02",
        "2d",
        "3d",
        "5d",
        "",
        "",
        "",
    ),
    ("3", "SU-3", "Civil works", "", "", "", "", "", "", ""),
    (
        "3.1",
        "C01",
        "Mobilise the civil contractor and set up the compound",
        "D03",
        2,
        3,
        5,
        "",
        "",
        dt.date(2027, 6, 7),
    ),
    (
        "3.2",
        "C02",
        "Excavate, form and pour the transformer plinth and oil bund",
        "C01",
        8,
        10,
        15,
        "",
        "",
        "",
    ),
    (
        "3.3",
        "C03",
        "Cable trenching and ducts between plinth and control building",
        "",
        5,
        7,
        11,
        "",
        "",
        "",
    ),
    (
        "3.4",
        "C04",
        "Control building extension: blockwork, roof and cable basement",
        "C01",
        "",
        "",
        "",
        "4w",
        "Building",
        "",
    ),
    (
        "3.5",
        "C05",
        "Concrete curing before the plinth takes the transformer's weight",
        "C02",
        5,
        7,
        7,
        "",
        "",
        "",
    ),
    ("4", "SU-4", "Installation", "", "", "", "", "", "", ""),
    (
        "4.1",
        "I01",
        "Place, dress and bolt down the transformer on its plinth",
        "P05, C05",
        3,
        4,
        6,
        "",
        "",
        "",
    ),
    (
        "4.2",
        "I02",
        "Oil filling, vacuum treatment and standing time",
        "I01",
        "16h",
        "24h",
        "40h",
        "",
        "",
        "",
    ),
    (
        "4.3",
        "I03",
        "Install switchgear and relay panels in the control building",
        "P04, C04",
        5,
        6,
        9,
        "",
        "",
        "",
    ),
    (
        "4.4",
        "I04",
        "Pull, glove and terminate the 11 kV and multicore control cables",
        "C03, I03[SS+2d]",
        "",
        "",
        "",
        "2w",
        "",
        "",
    ),
    ("4.5", "I05", "Extend the earthing grid and test it", "C03", "", "", "", "4d", "Tight", ""),
    ("5", "SU-5", "Testing and commissioning", "", "", "", "", "", "", ""),
    (
        "5.1",
        "T01",
        "Transformer tests: ratio, winding resistance, insulation, oil sample",
        "I02",
        1,
        2,
        3,
        "",
        "",
        "",
    ),
    (
        "5.2",
        "T02",
        "Secondary injection of the protection relays and trip checks",
        "I03, I04",
        "",
        "",
        "",
        "5d",
        "Testing",
        "",
    ),
    (
        "5.3",
        "T03",
        "SCADA point-to-point checks with the control room",
        "T02[SS+1d]",
        2,
        3,
        5,
        "",
        "",
        "",
    ),
    (
        "5.4",
        "T04",
        "Pre-energisation inspection and issue of the permit to work",
        "T01, T02, T03, I05",
        "4h",
        "8h",
        "12h",
        "",
        "",
        "",
    ),
    ("6", "SU-6", "Cut-over outage", "", "", "", "", "", "", ""),
    (
        "6.1",
        "X01",
        "Outage: isolate and earth the existing transformer",
        "T04, D04",
        "",
        "",
        "",
        "6h",
        "",
        dt.date(2027, 10, 11),
    ),
    (
        "6.2",
        "X02",
        "Transfer the 11 kV feeders to the new switchboard",
        "X01",
        "8h",
        "12h",
        "20h",
        "",
        "",
        "",
    ),
    (
        "6.3",
        "X03",
        "Energise the new transformer: on-load checks and phasing",
        "X02",
        "4h",
        "6h",
        "10h",
        "",
        "",
        "",
    ),
    (
        "6.4",
        "X04",
        "Return to service and hand back to the control centre",
        "X03",
        "",
        "2h",
        "",
        "",
        "",
        "",
    ),
    ("7", "SU-7", "Decommissioning and close-out", "", "", "", "", "", "", ""),
    ("7.1", "Z01", "Drain, dismantle and remove the old transformer", "X04", 3, 4, 6, "", "", ""),
    (
        "7.2",
        "Z02",
        "Strip out the redundant switchgear and cables",
        "X04",
        "",
        "",
        "",
        "2w",
        "",
        "",
    ),
    (
        "7.3",
        "Z03",
        "As-built drawings, test records and O&M manuals to the network operator",
        "SU-6",
        5,
        8,
        12,
        "",
        "",
        "",
    ),
    ("7.4", "Z04", "Site reinstatement and demobilisation", "Z01, Z02", "", "", "", "4d", "", ""),
    ("7.5", "Z05", "Handover certificate and project close", "Z03, Z04", 1, 1, 2, "", "", ""),
)

# the ladder: trenching overlaps the plinth works but cannot finish before them
LINKS = (
    ("Predecessor", "Successor", "Type", "Lag"),
    ("C02", "C03", "SS", "3d"),
    ("C02", "C03", "FF", "2d"),
)

RANGES = (
    ("Range", "Low %", "Likely %", "High %"),
    ("Tight", 90, 100, 115),
    ("Standard", 90, 105, 130),
    ("Design", 85, 110, 150),
    ("Approval", 80, 120, 200),
    ("Supplier", 90, 110, 160),
    ("Building", 85, 110, 140),
    ("Testing", 80, 110, 170),
)

RISK_HEADERS = (
    "Risk",
    "Description",
    "Probability",
    "Impact low",
    "Impact likely",
    "Impact high",
    "Activities",
    "Mitigated probability",
    "Mitigated impact low",
    "Mitigated impact likely",
    "Mitigated impact high",
    "Group",
)

RISKS = (
    (
        "R01",
        "Contaminated ground found while excavating for the plinth: sampling, "
        "licensed disposal and a redesign of the bund",
        "20%",
        "5d",
        "10d",
        "4w",
        "C02",
        "10%",
        "",
        "",
        "",
        "",
    ),
    (
        "R02",
        "Transformer fails its factory acceptance test and goes back for rework",
        0.15,
        "3w",
        "5w",
        "8w",
        "P02",
        "",
        "2w",
        "3w",
        "5w",
        "",
    ),
    (
        "R03",
        "Network control centre cancels the outage window at short notice",
        0.1,
        5,
        10,
        15,
        "X01",
        "",
        "",
        "",
        "",
        "",
    ),
    (
        "R04",
        "Abnormal load road permit late",
        0.25,
        2,
        4,
        8,
        "P05",
        "",
        "",
        "",
        "",
        "Heavy transport",
    ),
    (
        "R05",
        "Mobile crane not available on the delivery day",
        0.25,
        1,
        2,
        4,
        "I01",
        "",
        "",
        "",
        "",
        "Heavy transport",
    ),
    (
        "R06",
        "Relay settings reworked after the network operator's review",
        "30%",
        "10%",
        "25%",
        "50%",
        "T02; T03",
        "15%",
        "",
        "",
        "",
        "",
    ),
    (
        "R07",
        "Damaged cable found on an existing feeder during the cut-over",
        0.08,
        "4h",
        "8h",
        "16h",
        "X02",
        "",
        "",
        "",
        "",
        "",
    ),
)

SETTINGS = (
    ("Setting", "Value"),
    ("Start date", dt.date(2027, 4, 5)),
    ("Time unit", "working days"),
    ("Working days", "Mon-Fri"),
    ("Hours per day", 8),
    ("Holidays", dt.date(2027, 5, 3)),
    ("", dt.date(2027, 5, 31)),
    ("", dt.date(2027, 8, 30)),
    ("", dt.date(2027, 12, 27)),
    ("", dt.date(2027, 12, 28)),
    ("Due date", dt.date(2027, 11, 19)),
    ("Default range", "Standard"),
)

# in flight: ID -> (actual start, actual finish, remaining)
STATUS_DATE = dt.date(2027, 7, 16)
PROGRESS = {
    "D01": (dt.date(2027, 4, 5), dt.date(2027, 4, 9), ""),
    "D02": (dt.date(2027, 4, 12), dt.date(2027, 5, 7), ""),
    "D03": (dt.date(2027, 5, 10), dt.date(2027, 5, 28), ""),
    "D04": (dt.date(2027, 5, 24), dt.date(2027, 5, 26), ""),
    "P01": (dt.date(2027, 5, 10), dt.date(2027, 5, 10), ""),
    "P02": (dt.date(2027, 5, 11), "", "13w"),
    "P03": (dt.date(2027, 5, 10), dt.date(2027, 5, 12), ""),
    "P04": (dt.date(2027, 5, 13), "", "5w"),
    "C01": (dt.date(2027, 6, 7), dt.date(2027, 6, 11), ""),
    "C02": (dt.date(2027, 6, 14), "", "8d"),
    "C03": (dt.date(2027, 6, 21), "", "6d"),
    "C04": (dt.date(2027, 6, 14), "", "2w"),
}


def _write_table(ws, rows, fmt_head, fmt_date) -> None:
    for r, row in enumerate(rows):
        for c, value in enumerate(row):
            if r == 0:
                ws.write_string(r, c, value, fmt_head)
            elif isinstance(value, dt.date):
                ws.write_datetime(r, c, dt.datetime.combine(value, dt.time()), fmt_date)
            elif isinstance(value, (int, float)):
                ws.write_number(r, c, value)
            elif value != "":
                ws.write_string(r, c, value)


def activity_rows(in_flight: bool = False) -> list[tuple]:
    """The Activities sheet's rows, headers first; with the progress columns when in flight."""
    if not in_flight:
        return [HEADERS, *ROWS]
    out = [(*HEADERS, "Actual start", "Actual finish", "Remaining")]
    for row in ROWS:
        out.append((*row, *PROGRESS.get(row[1], ("", "", ""))))
    return out


def build(path: Path = SAMPLE, in_flight: bool = False) -> Path:
    """Write the sample workbook (or its in-flight copy) to ``path``; returns ``path``."""
    wb = xlsxwriter.Workbook(str(path), {"strings_to_numbers": False})
    wb.set_properties({"created": dt.datetime(2027, 3, 15)})
    head = wb.add_format({"bold": True})
    date = wb.add_format({"num_format": "yyyy-mm-dd"})
    settings = list(SETTINGS)
    if in_flight:
        settings.append(("Status date", STATUS_DATE))
    for name, rows, widths in (
        ("Activities", activity_rows(in_flight), (6, 7, 60, 18, 10, 10, 10, 9, 10, 12)),
        ("Links", LINKS, (12, 12, 6, 6)),
        ("Ranges", RANGES, (12, 8, 8, 8)),
        ("Risks", (RISK_HEADERS, *RISKS), (6, 50, 11, 10, 10, 10, 12, 10, 10, 10, 10)),
        ("Settings", settings, (16, 14)),
    ):
        ws = wb.add_worksheet(name)
        for c, width in enumerate(widths):
            ws.set_column(c, c, width)
        _write_table(ws, rows, head, date)
    wb.close()
    return path


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("out", nargs="?", type=Path, default=SAMPLE)
    parser.add_argument("--in-flight", action="store_true", help="add a status date and actuals")
    args = parser.parse_args(argv)
    print(build(args.out, args.in_flight))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
