"""Rangefold's I/O layer: estimates in from CSV files, workbooks and project files; project
files out, atomically. Qt-free; openpyxl is imported only when a workbook is read.

`readers.read_estimate` and `readers.preview_table` are the entry points; `cells` and `rows`
parse cell text the same way for the importer and the window. `sheet_choice` picks and
combines a workbook's sheets, `subtotals` keeps totals out of the items, `import_summary`
says in words what was read and left out.
"""
