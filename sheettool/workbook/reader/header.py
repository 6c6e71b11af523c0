"""Where a sheet's data sits: its header row, a units row under it, and the data rows below.

Header: among the rows holding text and no number, the one with the most numbers below it under
its text cells, counted down to the next text cell in the column that is not a unit word (so a
label row above the header does not claim the data; ties go to the lower row, nearest the data).
A row of units ("mm", "(µm)") right under the header is recognised as such. Data rows: the rows
below the header (and units row) down to the last one holding a number, blank rows passed over.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sheettool.base.errors import InputError
from sheettool.workbook.reader.cell_grid import CellGrid
from sheettool.workbook.reader.cells import NUMBER, TEXT
from sheettool.workbook.reader.columns import UNIT_WORD

_HEADER_ROWS = 100  # rows searched for headings typed as numbers


@dataclass(frozen=True)
class Frame:
    """The rows of a sheet that frame its data (0-based indices)."""

    header: int | None  # None: the sheet has no header
    units_row: int | None
    data: list[int]  # rows below the header (and units row) to the last number that hold anything
    blank_rows: int  # empty rows among those

    @property
    def first(self) -> int:
        """The first data row, 1-based."""
        return self.data[0] + 1

    @property
    def last(self) -> int:
        """The last data row, 1-based."""
        return self.data[-1] + 1


def find_header(grid: CellGrid) -> tuple[int | None, int | None]:
    """(header, units row), 0-based or None, by the rule in the module docstring. Column headings
    typed as the numbers 1, 2, 3, ... beside a text heading count as text."""
    kinds, rows = grid.kinds, grid.rows
    text, number = kinds == TEXT, (kinds == NUMBER).copy()
    for i in np.flatnonzero(text[:_HEADER_ROWS].any(axis=1) & number[:_HEADER_ROWS].any(axis=1)):
        found = grid.numbers[i][number[i]]
        if found.size >= 2 and np.array_equal(found, np.arange(1, found.size + 1)):
            text[i] |= number[i]
            number[i] = False
    score = np.where(text.any(axis=1) & ~number.any(axis=1), (text * _numbers_below(text, number, rows)).sum(axis=1), 0)
    if score.size == 0 or score.max() == 0:
        return None, None
    best = int(np.flatnonzero(score == score.max())[-1])
    cells = [str(v).strip() for v in rows[best] if isinstance(v, str) and v.strip()]
    above = best - 1
    while above >= 0 and not kinds[above].any():
        above -= 1
    if cells and all(UNIT_WORD.match(c) for c in cells) and above >= 0 and score[above] > 0:
        return above, best
    return best, None


def frame_of(grid: CellGrid, header: int | None, units_row: int | None) -> Frame:
    """The data rows under the header (and units row); InputError when no number is below them."""
    start = (units_row if units_row is not None else header if header is not None else -1) + 1
    has_number = (grid.kinds[start:] == NUMBER).any(axis=1)
    if not has_number.any():
        raise InputError("no numeric data on this sheet")
    region = grid.kinds[start:start + int(np.flatnonzero(has_number)[-1]) + 1]
    filled = region.any(axis=1)
    return Frame(header=header, units_row=units_row, data=[start + int(i) for i in np.flatnonzero(filled)],
                 blank_rows=int(len(region) - filled.sum()))


def _numbers_below(text: np.ndarray, number: np.ndarray, rows: list[list[object]]) -> np.ndarray:
    """Per cell, the numbers below it in its column down to the next heading-like text cell: a label
    row above the header ("Part number | HF-220") counts only the values of the labels under it, not
    the data below the real header. Text further down than _HEADER_ROWS and unit words never stop it."""
    m, width = number.shape
    stops = np.zeros_like(text)
    for r, c in zip(*np.nonzero(text[:_HEADER_ROWS]), strict=True):
        value = rows[r][c] if c < len(rows[r]) else None
        stops[r, c] = not (isinstance(value, str) and UNIT_WORD.match(value.strip()))
    after = np.vstack([np.cumsum(number[::-1], axis=0)[::-1], np.zeros((1, width), dtype=np.int64)])  # rows r..end
    index = np.where(stops, np.arange(m)[:, None], m)
    next_stop = np.vstack([np.minimum.accumulate(index[::-1], axis=0)[::-1][1:], np.full((1, width), m)])
    return after[1:] - np.take_along_axis(after, next_stop, 0)
