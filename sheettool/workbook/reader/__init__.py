"""Read measurement workbooks into Characteristics, one per sheet that holds data.

Opening: opening.py checks the file and reads each sheet into a RawSheet (raw_sheet.py) by
fast_grid.py (openpyxl's private parser, for the versions tested) or public_grid.py (its public
read-only interface, with sheet_xml.py scanning the XML for what that does not show), within the
bounds of limits.py; a .csv by csv_sheet.py.
Values: cells.py sorts one cell's value, cell_grid.py holds a sheet's kinds and numbers.
Grouping: header.py finds header, units row and data rows, columns.py each column's role,
layouts.py the layout and its subgroups. Findings: findings.py (exclusions, account, problems).
labels.py reads settings written in the workbook; sheet.py runs the steps for one sheet;
model.py holds what is handed back. describe() puts a SheetRead in words.
"""

from __future__ import annotations

from pathlib import Path

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem
from sheettool.settings import Setting
from sheettool.workbook.reader.findings import EXCLUDE_WORDS, MIN_READINGS
from sheettool.workbook.reader.labels import SETTINGS_SHEET, SettingsSheet, read_settings_sheet
from sheettool.workbook.reader.layouts import MIN_SUBGROUPS
from sheettool.workbook.reader.model import LAYOUTS, SheetRead, WorkbookRead
from sheettool.workbook.reader.opening import open_sheets, paused_collection
from sheettool.workbook.reader.sheet import read_sheet

__all__ = ["EXCLUDE_WORDS", "LAYOUTS", "MIN_READINGS", "MIN_SUBGROUPS", "SettingsSheet", "SheetRead",
           "WorkbookRead", "describe", "read_workbook"]


def read_workbook(path: Path, cli_settings: dict[str, Setting] | None = None) -> WorkbookRead:
    """Read every sheet of `path`; a sheet that cannot be read is a problem, the others go on.

    Raises InputError when the file cannot be opened or no sheet holds data.
    """
    with paused_collection():
        return _read(Path(path), cli_settings)


def _read(path: Path, cli_settings: dict[str, Setting] | None) -> WorkbookRead:
    opened = open_sheets(path)
    raws = opened.sheets
    problems: list[Problem] = list(opened.problems)
    settings = SettingsSheet()
    for raw in raws:
        if raw.title.strip().lower() == SETTINGS_SHEET:
            settings, found = read_settings_sheet(raw.rows, raw.title)
            problems.extend(found)
    sheets: list[SheetRead] = []
    for raw in raws:
        if raw.title.strip().lower() == SETTINGS_SHEET:
            continue
        try:
            sheet = read_sheet(raw, settings.for_sheet(raw.title), cli_settings or {})
        except InputError as exc:
            problems.append(Problem("warning", f"{exc}; sheet not evaluated", path.name, raw.title))
            continue
        if raw.hidden:
            problems.append(Problem("note", "the sheet is hidden; it was read like the others", path.name, raw.title))
        problems.extend(p.located(path.name) for p in sheet.problems)
        sheets.append(sheet)
    if not sheets:
        detail = "; ".join(f"{p.where}: {p.message}" for p in problems) or "the workbook has no sheets"
        raise InputError(f"{path}: no sheet holds measurement data ({detail})")
    return WorkbookRead(path=path, sheets=sheets, problems=problems, settings=settings)


def describe(sheet: SheetRead) -> str:
    """One line in words saying what was read from a sheet (for --verbose)."""
    columns = ", ".join(f"{letter} {meaning}" for letter, meaning in sheet.columns.items())
    parts = [
        f"sheet '{sheet.sheet}': {sheet.layout}",
        f"header row {sheet.header_row}" if sheet.header_row else "no header row",
        f"units row {sheet.units_row}" if sheet.units_row else "",
        f"data rows {sheet.first_row}-{sheet.last_row}",
        f"columns: {columns}",
        f"{sheet.subgroups} subgroups, {sheet.readings} readings, {sheet.blanks} blank cells, "
        f"{len(sheet.not_numbers)} cells not numbers, {sheet.blank_rows} blank rows",
        f"{int(sheet.characteristic.excluded.sum())} subgroups excluded from the limits",
        f"hidden rows {', '.join(map(str, sheet.hidden_rows))}" if sheet.hidden_rows else "",
        f"hidden columns {', '.join(sheet.hidden_columns)}" if sheet.hidden_columns else "",
        f"unit {sheet.characteristic.unit}" if sheet.characteristic.unit else "",
    ]
    return "; ".join(p for p in parts if p)
