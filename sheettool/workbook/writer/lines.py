"""The hidden chart-lines tab: the columns charts draw that no other tab holds.

Axis labels (a date or point number every few points), zone lines, specification lines and points kept
out of the limits (one row per point drawn), copies
of data past a data tab's rows, and the histogram's bars, curve and specification lines. The columns
are collected while the charts are built and written row by row at the end; past the format's last
column they continue on "chart-lines 2" and so on (format_limits.COLUMNS).
"""

from __future__ import annotations

from collections.abc import Callable

from xlsxwriter.worksheet import Worksheet

from sheettool.workbook.writer import cells, format_limits

LINES_SHEET = "chart-lines"


class LineSheet:
    """Collects the charts' columns one by one and writes them row by row at the end."""

    def __init__(self) -> None:
        self.columns: list[tuple[str, list[float | str | None]]] = []
        self.named: dict[tuple, int] = {}  # columns shared by several charts, by a key of their content

    def add(self, header: str, values: list[float | str | None]) -> int:
        """Add a column; return its index."""
        self.columns.append((header, values))
        return len(self.columns) - 1

    def ref(self, col: int) -> str:
        """Reference to a column's values (rows 2.. of the hidden tab it falls on)."""
        page, at = divmod(col, format_limits.COLUMNS)
        return cells.column_range(page_name(page), at, 1, max(1, len(self.columns[col][1])))

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
                        value = values[r]
                        if isinstance(value, str):
                            sheet.write_string(r + 1, c, value)
                        else:
                            sheet.write_number(r + 1, c, value)
            sheet.hide()


def page_name(page: int) -> str:
    """The chart-lines tab of a page of columns: "chart-lines", then "chart-lines 2", ..."""
    return LINES_SHEET if not page else f"{LINES_SHEET} {page + 1}"
