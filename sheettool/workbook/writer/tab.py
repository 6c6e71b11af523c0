"""One tab of an output workbook and a cursor over its rows, shared by every tab writer.

Sections follow each other without counting rows by hand, and every wrapped row gets its height
from the one rule in style.row_height.
"""

from __future__ import annotations

from collections.abc import Sequence

from xlsxwriter.worksheet import Worksheet

from sheettool.workbook import style
from sheettool.workbook.writer import cells, format_limits

FACT_CHARS = 105  # characters a line of a fact's merged B:E cell (112 wide) holds, less a margin so none is cut


class Tab:
    """A worksheet, its workbook's formats and the row the next line goes to.

    Facts, sections and table heads span columns 0 to `last_col` (the evaluation tab's layout).
    """

    def __init__(self, ws: Worksheet, fmt: style.Formats, name: str, last_col: int = 4) -> None:
        self.ws, self.fmt, self.name, self.last_col = ws, fmt, name, last_col
        self.row = 0

    def text(self, col: int, value: str, role: str | None = None) -> None:
        """Text in a column of the cursor's row (always text, never a formula)."""
        self.ws.write_string(self.row, col, value, self.fmt[role] if role else None)

    def number(self, col: int, value: float | None, role: str | None = None) -> None:
        """A computed number in a column of the cursor's row; NaN, infinities and None leave it empty."""
        cells.number(self.ws, self.row, col, value, self.fmt[role] if role else None)

    def across(self, first: int, last: int, text: str, role: str) -> None:
        """Text in one cell merged over columns first..last of the cursor's row."""
        self.ws.merge_range(self.row, first, self.row, last, "", self.fmt[role])
        self.ws.write_string(self.row, first, text, self.fmt[role])

    def fit(self, texts: str | Sequence[str], width: float, per_line: float | None = None, least: int = 1,
            row: int | None = None) -> None:
        """Make a row (default the cursor's) tall enough for the longest of `texts` wrapped in `width` characters.

        The row keeps the default height while one line is enough (see style.row_height).
        """
        items = [texts] if isinstance(texts, str) else texts
        height = max(style.row_height(t, width, per_line=per_line, least=least) for t in items)
        if height > style.line_height():
            self.height(height, row)

    def height(self, points: float, row: int | None = None) -> None:
        """Give a row (default the cursor's) a fixed height in points, at most the format's tallest row."""
        self.ws.set_row(self.row if row is None else row, min(points, format_limits.ROW_HEIGHT))

    def fact(self, label: str, value: str, wrap: bool = False) -> None:
        """A label and its value on one row; a wrapped value takes the merged columns 1 to last_col."""
        self.text(0, label, "label")
        if wrap:
            self.ws.merge_range(self.row, 1, self.row, self.last_col, "", self.fmt["wrap"])
            self.fit(value, FACT_CHARS)
        self.text(1, value, "wrap" if wrap else None)
        self.row += 1

    def section(self, title: str) -> None:
        """A blank row, then a section title across the tab."""
        self.row += 1
        self.across(0, self.last_col, title, "section")
        self.row += 1

    def head(self, titles: list[str], numeric: tuple[int, ...] = (), centered: tuple[int, ...] = ()) -> None:
        """A table head: numeric columns right-aligned, centered ones centered, the last one (a note) indented."""
        for c, t in enumerate(titles):
            role = ("head_number" if c in numeric else "head_center" if c in centered else
                    "head_note" if c == self.last_col else "head")
            self.text(c, t, role)
        self.row += 1
