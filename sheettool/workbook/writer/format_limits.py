"""The .xlsx format's maxima and the one way the writer stays within them, saying so where it must.

Rows, columns, the text of a cell and the series of a chart are bounded by the format; past a bound a
spreadsheet application refuses the file or silently drops what lies beyond. The writer therefore
splits what does not fit (a data tab continues on a second tab, a chart of many series becomes
several charts), limits a chart to its last points with the rule written on the chart, and marks cut
text visibly; each of these becomes a problem in the workbook's method and audit tab. The maxima are
read at call time, so a test can lower them to exercise the same code on small files.
"""

from __future__ import annotations

import warnings

from xlsxwriter.utility import xl_rowcol_to_cell
from xlsxwriter.worksheet import Worksheet

from sheettool.base.problems import Problem
from sheettool.workbook.writer.cells import utf16_cut, utf16_len

ROWS = 1_048_576  # rows of a worksheet
COLUMNS = 16_384  # columns of a worksheet
CELL_TEXT = 32_767  # characters (UTF-16 code units) of one cell's text
CHART_SERIES = 255  # series of one chart
ROW_HEIGHT = 409.0  # points: the tallest row
CUT_MARK = " [... cut: a cell holds at most 32,767 characters]"


def spans(count: int, room: int) -> list[tuple[int, int]]:
    """(first, end) index pairs that cut `count` items into runs of at most `room` (one run when all fit)."""
    room = max(1, room)
    return [(first, min(count, first + room)) for first in range(0, max(count, 1), room)]


def chart_points() -> int:
    """The most subgroups a control chart draws: one row of the chart-lines tab each, below its header row."""
    return ROWS - 1


def cut_text(text: str) -> str:
    """Text cut to what a cell holds, ending with CUT_MARK so the cut can be seen; a character is never halved."""
    return utf16_cut(text, CELL_TEXT - len(CUT_MARK)) + CUT_MARK


class FittedWorksheet(Worksheet):
    """A worksheet whose every text cell stays within CELL_TEXT, cut with a visible mark; the cut cells are kept."""

    def __init__(self) -> None:
        super().__init__()
        self.cut: list[tuple[str, int]] = []  # (cell, characters the text had)

    def _write_string(self, row: int, col: int, string: str, cell_format=None):  # type: ignore[no-untyped-def]
        """Write a text cell, cutting (and recording) a text longer than a cell holds."""
        if len(string) * 2 > CELL_TEXT and utf16_len(string) > CELL_TEXT:
            self.cut.append((xl_rowcol_to_cell(row, col), len(string)))
            string = cut_text(string)
        return super()._write_string(row, col, string, cell_format)


def cut_problems(ws: FittedWorksheet, file: str) -> list[Problem]:
    """The cut text cells of a worksheet as warnings, each naming its tab and cell in the output."""
    return [Problem("warning", f"a text of {size:,} characters is longer than the {CELL_TEXT:,} a cell holds: cut, "
                    f"ending with '{CUT_MARK.strip()}'; the full text is in the input", file, ws.name, cell)
            for cell, size in ws.cut]


def warning_problems(caught: list[warnings.WarningMessage], file: str) -> list[Problem]:
    """Warnings the spreadsheet and number libraries raised while writing, each distinct one a note of the
    tool's own (instead of a raw line on the terminal)."""
    return [Problem("note", f"while writing, a library warned: {message}", file)
            for message in dict.fromkeys(f"{w.category.__name__}: {w.message}" for w in caught)]
