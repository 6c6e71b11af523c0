"""The hidden chart-lines tab: the geometry of center lines, limits and zone lines that the charts draw.

A constant line is two points from the first to the last subgroup, a varying one a staircase of two
points per subgroup (each limit holds from half way after the previous subgroup to half way before the
next). The columns are collected while the charts are built and written row by row at the end; past
the format's last column they continue on "chart-lines 2" and so on (format_limits.COLUMNS).
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from xlsxwriter.worksheet import Worksheet

from sheettool.workbook.writer import cells, format_limits

LINES_SHEET = "chart-lines"


def bounds(x: np.ndarray) -> np.ndarray:
    """Edges half way between neighbouring subgroups, extended by half a step at both ends."""
    if x.size == 1:
        return np.array([x[0] - 0.5, x[0] + 0.5])
    mids = (x[:-1] + x[1:]) / 2.0
    return np.concatenate([[2 * x[0] - mids[0]], mids, [2 * x[-1] - mids[-1]]])


class LineSheet:
    """Collects the line geometry column by column and writes it row by row at the end."""

    def __init__(self) -> None:
        self.columns: list[tuple[str, list[float | None]]] = []
        self._x: dict[tuple[str, bool], int] = {}

    def add(self, header: str, values: list[float | None]) -> int:
        """Add a column; return its index."""
        self.columns.append((header, values))
        return len(self.columns) - 1

    def ref(self, col: int) -> str:
        """Reference to a column's values (rows 2.. of the hidden tab it falls on)."""
        page, at = divmod(col, format_limits.COLUMNS)
        return cells.column_range(page_name(page), at, 1, max(1, len(self.columns[col][1])))

    def line(self, tab: str, x: np.ndarray, header: str, y: np.ndarray) -> tuple[str, str]:
        """(x reference, y reference) of a center, limit or zone line over the subgroups at `x` of a data tab."""
        edges = bounds(x)
        finite = y[np.isfinite(y)]
        stepped = not (finite.size == y.size and np.ptp(y) == 0)
        key = (tab, stepped)
        if key not in self._x:
            xs = np.repeat(edges, 2)[1:-1] if stepped else edges[[0, -1]]
            self._x[key] = self.add(f"{tab}: x{' (steps)' if stepped else ''}", xs.tolist())
        ys = np.repeat(y, 2) if stepped else np.array([y[0], y[0]])
        col = self.add(header, [v if math.isfinite(v) else None for v in ys.tolist()])
        return self.ref(self._x[key]), self.ref(col)

    def write(self, ws: Worksheet, more: Callable[[str], Worksheet]) -> None:
        """Write the collected columns (header row, then values) and hide the tab; `more` adds a tab by name for
        the columns past the format's last."""
        width = format_limits.COLUMNS
        for page in range(0, max(1, len(self.columns)), width):
            sheet = ws if not page else more(page_name(page // width))
            columns = self.columns[page:page + width]
            for c, (header, _) in enumerate(columns):
                sheet.write_string(0, c, header)
            longest = max((len(v) for _, v in columns), default=0)
            for r in range(longest):
                for c, (_, values) in enumerate(columns):
                    if r < len(values) and values[r] is not None:
                        sheet.write_number(r + 1, c, values[r])
            sheet.hide()


def page_name(page: int) -> str:
    """The chart-lines tab of a page of columns: "chart-lines", then "chart-lines 2", ..."""
    return LINES_SHEET if not page else f"{LINES_SHEET} {page + 1}"
