"""The scheme-performance tab: for every characteristic's scheme, ARL and ATS against a grid of mean
shifts, and one native chart of ARL against shift on a logarithmic axis.
"""

from __future__ import annotations

import math

from sheettool.core.runlength.results import Performance
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook import style
from sheettool.workbook.writer import cells, charts
from sheettool.workbook.writer.book_writer import PERFORMANCE_TAB, BookWriter
from sheettool.workbook.writer.tab import Tab

BLOCK_WIDTHS = (13, 13, 13, 3)  # one characteristic's columns: shift, ARL, ATS, and a narrow gap
METHOD_CHARS = 34  # characters per line of a method cell, a little below what fits so that no line is cut
INTRO = ("ARL: average number of points plotted until the scheme signals. ATS: the same in hours, where the "
         "sampling interval is known. A shift is measured in process standard deviations; at shift 0 every signal "
         "is a false alarm.")


def write_performance_tab(out: BookWriter, tab: Tab, results: list[CharacteristicResult],
                          eval_tabs: list[str]) -> None:
    """Write the tables (one block of three columns per characteristic, side by side) and the chart."""
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, "How each monitoring scheme behaves", fmt["title"])
    tab.row = 1
    tab.across(0, 11, INTRO, "wrap")
    tab.fit(INTRO, 3 * sum(BLOCK_WIDTHS))  # the merged A:L, three blocks wide
    chart_row = 3
    top = chart_row + style.CHART_ROWS + 3
    series: list[tuple[str, str, str]] = []
    largest, widest = 10.0, 0.0
    for i, (result, eval_tab) in enumerate(zip(results, eval_tabs, strict=True)):
        col = i * 4
        perf = result.performance
        grid = perf.curve or perf.shifts
        ws.set_column(col, col + 2, BLOCK_WIDTHS[0])
        ws.set_column(col + 3, col + 3, BLOCK_WIDTHS[3])
        ws.write_url(top, col, cells.internal_link(eval_tab), fmt["link"], string=result.characteristic.name)
        ws.merge_range(top + 1, col, top + 1, col + 2, "", fmt["wrap"])
        ws.write_string(top + 1, col, perf.method, fmt["wrap"])
        for c, h in enumerate((shift_heading(perf), "ARL (points)", "ATS (hours)")):
            ws.write_string(top + 2, col + c, h, fmt["head"])
        first = top + 3
        for r, s in enumerate(grid, start=first):
            cells.number(ws, r, col, s.shift, fmt["dec2"])
            cells.number(ws, r, col + 1, s.arl, fmt["arl"])
            cells.number(ws, r, col + 2, s.ats_hours, fmt["hours"])
            if math.isfinite(s.arl):
                largest = max(largest, s.arl)
            widest = max(widest, s.shift)
        last = first + max(0, len(grid) - 1)
        series.append((result.characteristic.name, cells.column_range(PERFORMANCE_TAB, col, first, last),
                       cells.column_range(PERFORMANCE_TAB, col + 1, first, last)))
    # the method text sits in a merged cell three columns (39 characters) wide: tall enough for the longest, in full
    tab.fit([r.performance.method for r in results], METHOD_CHARS, least=3, row=top + 1)
    tab.height(style.HEAD_HEIGHT, top + 2)
    ws.insert_chart(chart_row, 0, charts.arl_chart(out, series, largest, widest), {"x_offset": 4})
    cells.print_setup(ws, "scheme performance")


def shift_heading(perf: Performance) -> str:
    """The shift column's heading in the unit the scheme's shifts are measured in."""
    if perf.shift_unit == "process standard deviations":
        return "Mean shift (sigma)"
    return "Rate shift (standard errors)"
