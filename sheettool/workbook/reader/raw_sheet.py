"""A sheet as opened, before any meaning is given to it: its grid of values and the marks on its cells.

Both ways of reading an .xlsx (fast_grid and public_grid) and the .csv reader hand back a RawSheet,
gathering rows with the same RowCollector so that they agree on what a row holds.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from openpyxl.utils import get_column_letter
from openpyxl.utils.cell import coordinate_to_tuple

from sheettool.base.problems import Problem
from sheettool.workbook.reader.limits import MAX_COLUMNS, MAX_GRID, MAX_ROWS, CellBudget, refuse


@dataclass
class RawSheet:
    """One sheet as a grid: rows[i] holds the values of sheet row i + 1 (short rows are not padded)."""

    title: str
    rows: list[list[object]]
    hidden_rows: set[int] = field(default_factory=set)  # 1-based row numbers
    hidden_columns: set[int] = field(default_factory=set)  # 1-based column numbers
    merged: list[tuple[int, int, int, int]] = field(default_factory=list)  # min_row, min_col, max_row, max_col
    uncached: list[str] = field(default_factory=list)  # cells with a formula and no cached value
    hidden: bool = False  # the sheet itself is hidden


@dataclass
class OpenedFile:
    """Every sheet of a file, and what the opening itself has to say (how the file was read)."""

    sheets: list[RawSheet]
    problems: list[Problem] = field(default_factory=list)


class RowCollector:
    """Gathers a sheet's rows as they stream in: rows missing from the file become empty rows, and
    cells without a value are noted (formulas without a cached value are among them). Row and column
    numbers past the format's maxima, and a grid (rows x columns to the last cell) of more than
    MAX_GRID, are refused before the rows are padded: the file's own dimensions are never trusted.
    Every row's cells spend the workbook's `budget`."""

    def __init__(self, path: Path, title: str, budget: CellBudget) -> None:
        self.path, self.title, self.budget = path, title, budget
        self.rows: list[list[object]] = []
        self.empty: set[str] = set()
        self._width = 0

    def add(self, index: int, row: list[object]) -> None:
        """Take sheet row `index` (1-based): its values from column A to its last cell."""
        rows = self.rows
        self.check_row(max(index, len(rows) + 1))
        if len(row) > MAX_COLUMNS:
            self._refuse(f"has a cell in row {index} past column {get_column_letter(MAX_COLUMNS)} "
                         f"({MAX_COLUMNS:,}), the format's last column")
        self._width = max(self._width, len(row))
        if max(len(rows) + 1, index) * self._width > MAX_GRID:
            self._refuse(f"spans {max(len(rows) + 1, index):,} rows by {self._width:,} columns, more than the limit "
                         f"of {MAX_GRID:,} cells")
        self.budget.spend(len(row), self.title)
        if len(rows) < index - 1:
            rows.extend([] for _ in range(index - 1 - len(rows)))
        if None in row:
            self.empty.update(f"{get_column_letter(c + 1)}{index}" for c, v in enumerate(row) if v is None)
        rows.append(row)

    def check_row(self, index: int) -> None:
        """Refuse row number `index` past the format's last row."""
        if index > MAX_ROWS:
            self._refuse(f"has row {index:,}, past the format's last row ({MAX_ROWS:,})")

    def _refuse(self, what: str) -> None:
        raise refuse(self.path, f"sheet '{self.title}' {what}")

    def uncached(self, formulas: set[str]) -> list[str]:
        """The cells among `formulas` that hold no value, in sheet order."""
        return sorted(formulas & self.empty, key=coordinate_to_tuple)
