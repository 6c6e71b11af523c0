"""The public way to read a sheet: openpyxl's read-only interface, and a light scan of the sheet's XML.

Taken where fast_grid cannot be (an openpyxl release it was not tested with, or its private names
gone). After `reset_dimensions` (so that a wrong size written in the file does not cut or pad rows),
`iter_rows` gives each row from column A to its last cell, as the fast path does. The scan runs first,
through a GuardedSource, so the part is known to be within the limits before openpyxl parses it. The read-only
interface shows neither hidden rows and columns, nor merged ranges, nor which cells hold a formula:
sheet_xml finds them in the sheet's part. The RawSheet is the same as the fast path's, read more
slowly (an object per cell, and the part read twice). Only XML no spreadsheet application writes
(two cells at one address, cells out of order in a row) could read differently.
"""

from __future__ import annotations

import zipfile
from pathlib import Path

from sheettool.workbook.reader.limits import CellBudget, GuardedSource
from sheettool.workbook.reader.raw_sheet import RawSheet, RowCollector
from sheettool.workbook.reader.sheet_xml import scan_marks


def read_public(path: Path, ws: object, package: zipfile.ZipFile, part: str, budget: CellBudget) -> RawSheet:
    """One read-only worksheet `ws` as a grid; `part` is its XML inside `package` (see sheet_xml.sheet_parts);
    its cells spend the workbook's `budget`."""
    title: str = ws.title  # type: ignore[attr-defined]
    with GuardedSource(package.open(part), budget, title, part) as source:
        marks = scan_marks(source)
    collector = RowCollector(path, title, budget)
    collector.check_row(marks.last_row)  # before openpyxl makes the empty rows up to it
    ws.reset_dimensions()  # type: ignore[attr-defined]
    for index, values in enumerate(ws.iter_rows(values_only=True), start=1):  # type: ignore[attr-defined]
        collector.add(index, list(values))
    return RawSheet(title=title, rows=collector.rows, hidden_rows=marks.hidden_rows,
                    hidden_columns=marks.hidden_columns, merged=marks.merged,
                    uncached=collector.uncached(marks.formulas),
                    hidden=ws.sheet_state != "visible")  # type: ignore[attr-defined]
