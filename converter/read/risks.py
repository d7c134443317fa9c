"""The risk register's sheet: its name, its header spellings, and finding it.

A sheet named ``Risks`` or ``Risk register`` (compared like headers) whose header row names
a risk ID and a probability is the register; it is then never taken for the activity list
or the links sheet.
"""

from __future__ import annotations

from converter.read.sheets import RawInput, TableMatch, match_header, named
from converter.values import normalise

__all__ = ["RISK_COLUMNS", "RISK_SHEET_NAMES", "find_risk_sheet"]

_IMPACT_WORDS = {
    "low": ("low", "optimistic", "min"),
    "likely": ("likely", "most likely"),
    "high": ("high", "pessimistic", "max"),
}

#: Accepted header spellings for each risk column (compared after `normalise`).
RISK_COLUMNS: dict[str, tuple[str, ...]] = {
    "id": ("risk", "risk id"),
    "description": ("description",),
    "probability": ("probability", "chance", "likelihood"),
    **{f"impact_{k}": tuple(f"impact {w}" for w in v) for k, v in _IMPACT_WORDS.items()},
    "impact": ("impact",),
    "activities": ("activities", "affects", "affected activities"),
    "mitigated_probability": ("mitigated probability",),
    **{
        f"mitigated_{k}": tuple(f"mitigated impact {w}" for w in v)
        for k, v in _IMPACT_WORDS.items()
    },
    "mitigated_impact": ("mitigated impact",),
    "group": ("group",),
}
RISK_SHEET_NAMES = ("risks", "risk register")
RISK_ALIASES = {normalise(a): k for k, v in RISK_COLUMNS.items() for a in v}


def find_risk_sheet(raw: RawInput) -> TableMatch | None:
    """The register's header row on a sheet named as a risk register, or None.

    Examples
    --------
    >>> from pathlib import Path
    >>> from converter.read.sheets import SheetData
    >>> sheet = SheetData("Risks", [["Risk", "Probability", "Impact", "Activities"]])
    >>> find_risk_sheet(RawInput(Path("x.xlsx"), "", [sheet])).columns["activities"]
    3
    """
    for sheet in raw.sheets:
        if not named(sheet, RISK_SHEET_NAMES):
            continue
        match = match_header(sheet, RISK_ALIASES)
        if match is not None and "id" in match.columns:
            return match
    return None
