"""A sheet's cell values as a grid: the kind of every cell (see cells.py) and its number, as matrices.

The grid is made once per sheet; merged ranges are then filled from their top-left cell, and the
measurement (or count) cells of the data rows are read out of it, with the cells that are not numbers.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from sheettool.base.errors import InputError
from sheettool.workbook.reader.cells import BLANK, DATE, NUMBER, TEXT, address, kind_of, number_of

_MAX_MERGE_CELLS = 100_000
_FAST_KIND = {float: NUMBER, int: NUMBER, type(None): BLANK, dt.datetime: DATE, dt.date: DATE, dt.time: DATE}


@dataclass
class CellGrid:
    """Every cell of a sheet: its value, its kind and its number (NaN where it holds none)."""

    rows: list[list[object]]  # the sheet's rows, numbers typed as text replaced by the numbers
    kinds: np.ndarray  # rows x width, BLANK, NUMBER, DATE or TEXT
    numbers: np.ndarray  # rows x width; NaN also where a NUMBER is not finite (1e999 overflows), never a reading

    @property
    def width(self) -> int:
        """Columns from A to the last cell of the longest row."""
        return int(self.kinds.shape[1])

    def column(self, rows: list[int], c: int) -> list[object]:
        """The values of column `c` (0-based) in `rows` (0-based), None past the end of a row."""
        return [self.rows[i][c] if c < len(self.rows[i]) else None for i in rows]


@dataclass
class ValueCells:
    """The measurement (or count) cells of the data rows: what the subgroups are made of."""

    columns: list[int]  # 0-based value columns
    values: np.ndarray  # one row per sheet row with a reading, one column per value column
    rows: list[int]  # 0-based sheet rows with at least one reading, aligned with values
    not_numbers: list[str]  # addresses of text or date cells among them, treated as missing
    blanks: int  # blank value cells in the rows with a reading


def cell_grid(rows: list[list[object]]) -> CellGrid:
    """Cell kinds and numbers of `rows` (numbers typed as text become numbers in `rows` too). Typed
    cells take one dictionary look-up in a flat pass, only text a closer look."""
    width = max((len(r) for r in rows), default=0)
    if width == 0:
        raise InputError("the sheet is empty")
    lengths = np.fromiter((len(r) for r in rows), dtype=np.int64, count=len(rows))
    flat = [_FAST_KIND.get(type(v), -1) for row in rows for v in row]
    kinds_flat = np.array(flat, dtype=np.int8)
    starts = np.concatenate([[0], np.cumsum(lengths)[:-1]])
    row_of = np.repeat(np.arange(len(rows)), lengths)
    col_of = np.arange(kinds_flat.size) - np.repeat(starts, lengths)
    for at in np.flatnonzero(kinds_flat == -1):  # text and other types: look closer
        r, c = int(row_of[at]), int(col_of[at])
        kinds_flat[at] = kind_of(rows[r][c])
        if kinds_flat[at] == NUMBER:
            rows[r][c] = number_of(rows[r][c])
    numbers_flat = np.full(kinds_flat.size, np.nan)
    where = np.flatnonzero(kinds_flat == NUMBER)
    if where.size:
        values = [v for row in rows for v in row]
        numbers_flat[where] = [values[i] for i in where.tolist()]
        numbers_flat[where[~np.isfinite(numbers_flat[where])]] = np.nan  # 1e999, inf, nan: numbers but no reading
    kinds = np.zeros((len(rows), width), dtype=np.int8)
    numbers = np.full((len(rows), width), np.nan)
    kinds[row_of, col_of] = kinds_flat
    numbers[row_of, col_of] = numbers_flat
    return CellGrid(rows=rows, kinds=kinds, numbers=numbers)


def fill_merged(grid: CellGrid, merged: list[tuple[int, int, int, int]], last_row: int) -> None:
    """Give the cells of a merged range the value of its top-left cell: every range that starts at or
    above `last_row` (1-based: the header), so a header cell spanning columns names each of them,
    and below it ranges within one column, such as a lot number merged down its subgroup's rows."""
    rows, kinds, numbers = grid.rows, grid.kinds, grid.numbers
    for r1, c1, r2, c2 in merged:
        if r1 > len(rows) or (r1 > last_row and c1 != c2) or (r2 - r1 + 1) * (c2 - c1 + 1) > _MAX_MERGE_CELLS:
            continue
        first = rows[r1 - 1]
        value = first[c1 - 1] if c1 - 1 < len(first) else None
        if value is None:
            continue
        for r in range(r1 - 1, min(r2, len(rows))):
            row = rows[r]
            if len(row) < c2:
                row.extend([None] * (c2 - len(row)))
            for c in range(c1 - 1, min(c2, kinds.shape[1])):
                if row[c] is None:
                    row[c] = value
                    kinds[r, c], numbers[r, c] = kinds[r1 - 1, c1 - 1], numbers[r1 - 1, c1 - 1]


def value_cells(grid: CellGrid, title: str, data: list[int], columns: list[int]) -> ValueCells:
    """The cells of `columns` in the data rows; rows without any reading are left out."""
    if not columns:
        raise InputError("no column of measurements found under the header")
    sub = grid.kinds[data][:, columns] if data else np.zeros((0, len(columns)), dtype=np.int8)
    values = grid.numbers[data][:, columns]
    junk = np.argwhere((sub == TEXT) | (sub == DATE) | ((sub == NUMBER) & np.isnan(values)))  # NaN: not finite
    not_numbers = [address(title, data[i] + 1, columns[j] + 1) for i, j in junk]
    has_reading = ~np.all(np.isnan(values), axis=1)
    kept = [i for i, k in zip(data, has_reading, strict=True) if k]
    if not kept:
        raise InputError("no readings found in the measurement columns")
    return ValueCells(columns=columns, values=values[has_reading], rows=kept, not_numbers=not_numbers,
                      blanks=int(((sub == BLANK) & has_reading[:, None]).sum()))
