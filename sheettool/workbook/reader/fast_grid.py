"""The fast way to read a sheet: openpyxl's own streaming sheet parser, driven directly.

openpyxl's read-only mode parses a sheet with its private WorkSheetParser and then makes an object
per cell; driving the parser directly skips those objects, and the parser's record of hidden rows and
columns and merged ranges comes for free. Private names can change in any release, so this is the only
module that uses them, and only for the openpyxl series it was tested with (TESTED_SERIES; the suite
runs on 3.1.5, and the private names used here read the same in the source of 3.1.0) when all of them
are there. Otherwise `why_not` says why, and the sheet is read by public_grid, which gives the same
RawSheet more slowly.
"""

from __future__ import annotations

from pathlib import Path

import openpyxl
from openpyxl.utils.cell import coordinate_to_tuple

from sheettool.workbook.reader.limits import CellBudget, GuardedSource, column_span
from sheettool.workbook.reader.raw_sheet import RawSheet, RowCollector
from sheettool.workbook.reader.sheet_xml import formula_cells

try:
    from openpyxl.worksheet._reader import WorkSheetParser
except ImportError:  # a release that moved or renamed it
    WorkSheetParser = None

TESTED_SERIES = ("3.1",)  # openpyxl major.minor; pyproject.toml bounds openpyxl to the same
_BOOK_NAMES = ("epoch", "_date_formats", "_timedelta_formats")
_SHEET_NAMES = ("_get_source", "_shared_strings", "_worksheet_path")


def why_not(book: object, ws: object | None) -> str:
    """"" when the fast path can read the sheets of `book` (ws: one of them); otherwise why not, in words."""
    version = openpyxl.__version__
    if ".".join(version.split(".")[:2]) not in TESTED_SERIES:
        return f"openpyxl {version} is not a version this reader was tested with ({', '.join(TESTED_SERIES)})"
    missing = [name for name in _BOOK_NAMES if not hasattr(book, name)]
    missing += [name for name in _SHEET_NAMES if ws is not None and not hasattr(ws, name)]
    if WorkSheetParser is None or not hasattr(WorkSheetParser, "parse"):
        missing.insert(0, "WorkSheetParser")
    if missing:
        return f"openpyxl {version} lacks internal parts the fast reading uses ({', '.join(missing)})"
    return ""


def read_fast(path: Path, book: object, ws: object, budget: CellBudget) -> RawSheet:
    """Stream one sheet's XML into a grid (what openpyxl's read-only mode does, without its cell objects),
    through a GuardedSource that spends the workbook's cell `budget`."""
    title: str = ws.title  # type: ignore[attr-defined]
    collector = RowCollector(path, title, budget)
    add = collector.add
    with GuardedSource(ws._get_source(), budget, title, ws._worksheet_path) as source:  # type: ignore[attr-defined]
        parser = WorkSheetParser(source, ws._shared_strings, data_only=True, epoch=book.epoch,  # type: ignore[attr-defined]
                                 date_formats=book._date_formats,  # type: ignore[attr-defined]
                                 timedelta_formats=book._timedelta_formats)  # type: ignore[attr-defined]
        for index, cells in parser.parse():
            if cells and cells[-1]["column"] == len(cells):
                row = [cell["value"] for cell in cells]
            else:
                row = []
                for cell in cells:
                    col = cell["column"]
                    if col > len(row) + 1:
                        row.extend([None] * (col - 1 - len(row)))
                    if col == len(row) + 1:
                        row.append(cell["value"])
            add(index, row)
    uncached: list[str] = []
    if collector.empty:
        with ws._get_source() as source:  # type: ignore[attr-defined]
            uncached = collector.uncached(formula_cells(source))
    hidden_rows = {int(r) for r, attrs in parser.row_dimensions.items() if attrs.get("hidden") in ("1", "true")}
    hidden_columns = {c for attrs in parser.column_dimensions.values() if attrs.get("hidden") in ("1", "true")
                      for c in column_span(attrs.get("min"), attrs.get("max", attrs.get("min")))}
    merged = []
    if parser.merged_cells is not None:
        for item in parser.merged_cells.mergeCell:
            ref = item.ref.replace("$", "")
            lo, hi = ([*ref.split(":"), ref])[:2]
            (r1, c1), (r2, c2) = coordinate_to_tuple(lo), coordinate_to_tuple(hi)
            merged.append((r1, c1, r2, c2))
    return RawSheet(title=title, rows=collector.rows, hidden_rows=hidden_rows, hidden_columns=hidden_columns,
                    merged=merged, uncached=uncached, hidden=getattr(ws, "sheet_state", "visible") != "visible")
