"""Write: Analysis -> files (the workbook, the JSON summary, problem reports, the template)."""
