"""A sheet as opened, before any meaning is given to it: its grid of values and the marks on its cells.

Both ways of reading an .xlsx (fast_grid and public_grid) and the .csv reader hand back a RawSheet,
gathering rows with the same RowCollector so that they agree on what a row holds.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from openpyxl.utils import get_column_letter
from openpyxl.utils.cell import coordinate_to_tuple

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem

MAX_CELLS = 20_000_000  # larger sheets are refused before memory runs short (about 1 GB read)


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
    """Gathers a sheet's rows as they stream in: rows missing from the file become empty rows, cells
    are counted against MAX_CELLS, and cells without a value are noted (formulas without a cached
    value are among them)."""

    def __init__(self, path: Path, title: str) -> None:
        self.path, self.title = path, title
        self.rows: list[list[object]] = []
        self.empty: set[str] = set()
        self._cells = 0

    def add(self, index: int, row: list[object]) -> None:
        """Take sheet row `index` (1-based): its values from column A to its last cell."""
        rows = self.rows
        if len(rows) < index - 1:
            rows.extend([] for _ in range(index - 1 - len(rows)))
        if None in row:
            self.empty.update(f"{get_column_letter(c + 1)}{index}" for c, v in enumerate(row) if v is None)
        rows.append(row)
        self._cells += len(row)
        if self._cells > MAX_CELLS:
            raise InputError(f"{self.path}: sheet '{self.title}' holds more than {MAX_CELLS:,} cells; "
                             "split it into smaller workbooks")

    def uncached(self, formulas: set[str]) -> list[str]:
        """The cells among `formulas` that hold no value, in sheet order."""
        return sorted(formulas & self.empty, key=coordinate_to_tuple)
