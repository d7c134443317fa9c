"""Read: a file (.xlsx .xlsm .xls .ods .csv) -> raw sheets of cell values with their places."""
