"""Read: a file (.xlsx .xlsm .xls .ods .csv) -> raw sheets of cell values with their places.

The readable file types are listed once, here; every other part of pertbook (the command
line's help, the drop folder's filter, the reader's own check) takes them from this list.
"""

#: Workbook types read with python-calamine.
WORKBOOK_SUFFIXES: tuple[str, ...] = (".xlsx", ".xlsm", ".xls", ".ods")
#: Every readable file type, lower case with the dot.
SUFFIXES: tuple[str, ...] = WORKBOOK_SUFFIXES + (".csv",)


def suffix_list(joiner: str = ", ", last: str = " or ") -> str:
    """The readable types as words: ``".xlsx, .xlsm, .xls, .ods or .csv"``.

    Examples
    --------
    >>> suffix_list()
    '.xlsx, .xlsm, .xls, .ods or .csv'
    >>> suffix_list(" ", " ")
    '.xlsx .xlsm .xls .ods .csv'
    """
    return joiner.join(SUFFIXES[:-1]) + last + SUFFIXES[-1]


def is_readable_name(name: str) -> bool:
    """Whether a file name ends in one of the readable types (any letter case)."""
    return name.lower().endswith(SUFFIXES)
