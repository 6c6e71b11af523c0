"""The scheme-performance tab: for every characteristic's scheme, ARL and ATS against a grid of mean
shifts, and one native chart of ARL against shift on a logarithmic axis.
"""

from __future__ import annotations

import math

from sheettool.base.problems import Problem
from sheettool.core.runlength.results import Performance
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook import style
from sheettool.workbook.writer import cells, charts, format_limits
from sheettool.workbook.writer.book_writer import PERFORMANCE_TAB, BookWriter
from sheettool.workbook.writer.tab import Tab

BLOCK_WIDTHS = (13, 13, 13, 3)  # one characteristic's columns: shift, ARL, ATS, and a narrow gap
METHOD_CHARS = 34  # characters per line of a method cell, a little below what fits so that no line is cut
INTRO = ("ARL: average number of points plotted until the scheme signals. ATS: the same in hours, where the "
         "sampling interval is known. A shift is measured in process standard deviations; at shift 0 every signal "
         "is a false alarm.")


def write_performance_tab(out: BookWriter, tab: Tab, results: list[CharacteristicResult],
                          eval_tabs: list[str]) -> None:
    """Write the tables (one block of three columns per characteristic, side by side) and the chart.

    Within the format (format_limits): a chart holds at most CHART_SERIES characteristics, so more make
    several charts one below the other; blocks past the last column continue in a band below.
    """
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, "How each monitoring scheme behaves", fmt["title"])
    tab.row = 1
    groups = format_limits.spans(len(results), format_limits.CHART_SERIES)
    per_band = max(1, format_limits.COLUMNS // len(BLOCK_WIDTHS))
    intro = INTRO + _split_words(len(results), len(groups), per_band)
    tab.across(0, 11, intro, "wrap")
    tab.fit(intro, 3 * sum(BLOCK_WIDTHS))  # the merged A:L, three blocks wide
    chart_row = 3
    top = chart_row + len(groups) * (style.CHART_ROWS + 3)
    band_rows = 4 + max(len(r.performance.curve or r.performance.shifts) for r in results)
    series: list[tuple[str, str, str]] = []
    largest, widest = 10.0, 0.0
    for i, (result, eval_tab) in enumerate(zip(results, eval_tabs, strict=True)):
        col, head = (i % per_band) * 4, top + (i // per_band) * band_rows
        perf = result.performance
        grid = perf.curve or perf.shifts
        ws.set_column(col, col + 2, BLOCK_WIDTHS[0])
        ws.set_column(col + 3, col + 3, BLOCK_WIDTHS[3])
        ws.write_url(head, col, cells.internal_link(eval_tab), fmt["link"], string=result.identity)
        ws.merge_range(head + 1, col, head + 1, col + 2, "", fmt["wrap"])
        ws.write_string(head + 1, col, perf.method, fmt["wrap"])
        for c, h in enumerate((shift_heading(perf), "ARL (points)", "ATS (hours)")):
            ws.write_string(head + 2, col + c, h, fmt["head"])
        first = head + 3
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
    for band in range(0, len(results), per_band):
        head = top + (band // per_band) * band_rows
        # the method text sits in a merged cell three columns (39 characters) wide: tall enough for the longest
        tab.fit([r.performance.method for r in results[band:band + per_band]], METHOD_CHARS, least=3, row=head + 1)
        tab.height(style.HEAD_HEIGHT, head + 2)
    for k, (start, end) in enumerate(groups):
        part = f" (characteristics {start + 1} to {end} of {len(results)})" if len(groups) > 1 else ""
        ws.insert_chart(chart_row + k * (style.CHART_ROWS + 3), 0,
                        charts.arl_chart(out, series[start:end], largest, widest, part), {"x_offset": 4})
    if len(groups) > 1:
        out.problems.append(Problem("note", f"the chart of ARL against shift is split into {len(groups)} charts "
                                    f"on the '{PERFORMANCE_TAB}' tab: a chart holds at most "
                                    f"{format_limits.CHART_SERIES} series, one a characteristic", out.file))
    cells.print_setup(ws, "scheme performance")


def _split_words(count: int, charts: int, per_band: int) -> str:
    """What the intro adds when the characteristics need several charts or bands of tables."""
    text = ""
    if charts > 1:
        text += (f" {count} characteristics: {charts} charts of at most {format_limits.CHART_SERIES} each "
                 "(a chart's most series).")
    if count > per_band:
        text += f" The tables continue below after {per_band} characteristics (a tab's last column)."
    return text


def shift_heading(perf: Performance) -> str:
    """The shift column's heading in the unit the scheme's shifts are measured in."""
    if perf.shift_unit == "process standard deviations":
        return "Mean shift (sigma)"
    return "Rate shift (standard errors)"
