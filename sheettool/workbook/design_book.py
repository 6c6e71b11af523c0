"""Write a scheme design as a workbook: the ranked comparison, ARL curves of the leading schemes, the notes.

Native xlsxwriter charts; written atomically through the evaluated workbook's BookWriter and Tab cursor.
"""

from __future__ import annotations

import math
from pathlib import Path

from xlsxwriter.format import Format
from xlsxwriter.utility import xl_rowcol_to_cell
from xlsxwriter.worksheet import Worksheet

from sheettool import TOOL_NAME, __version__
from sheettool.core.design import CURVE_SHIFTS, Candidate, DesignResult, arl_curve, leading
from sheettool.workbook import style
from sheettool.workbook.writer import cells, write_atomically
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.tab import Tab

CAUTION = (
    "The design figures support, and never replace, engineering judgement, the site's quality procedures, customer "
    "requirements and applicable regulations and codes. A scheme chosen here assumes normal, independent points with "
    "known mean and sigma; check those assumptions before a characteristic that bears on safety is monitored with it."
)
LEADING = 5  # schemes drawn in the ARL chart: the best of each chart kind, then the next best
NOTE_WIDTH = 100  # characters: the notes tab's text column


def write_design_workbook(result: DesignResult, path: Path) -> None:
    """Write the design to `path` (temporary file, then renamed into place)."""
    def build(tmp: str) -> None:
        out = BookWriter(tmp)
        out.book.set_properties({"title": "Monitoring scheme design", "author": f"{TOOL_NAME} {__version__}"})
        _comparison(out.add_tab("Scheme comparison"), result)
        _curves(out, out.add_tab("ARL by shift"), leading(result.candidates, LEADING))
        _notes(out.add_tab("About this design"), result)
        out.close()

    write_atomically(Path(path), build)


def requirement_lines(result: DesignResult) -> list[tuple[str, str]]:
    """The requirements and sampling in words, label by label (also used by the terminal output)."""
    req, sampling = result.requirements, result.sampling
    lines = [("Shift that matters", f"{result.shift:.4g} sigma (process standard deviations)"
              + (f" ({req.shift_in_units:g} in the unit, sigma {req.sigma:g})"
                 if req.shift_in_units is not None else ""))]
    if req.arl_in_control is not None:
        lines.append(("In-control ARL at least", f"{req.arl_in_control:g} points"))
    if req.false_alarms_per_month is not None:
        lines.append(("False alarms per month at most", f"{req.false_alarms_per_month:g} "
                      f"({req.hours_per_month:g} production hours per month)"))
    if req.arl_at_shift is not None:
        lines.append(("ARL at the shift at most", f"{req.arl_at_shift:g} points"))
    if req.ats_hours is not None:
        lines.append(("ATS at the shift at most (hours)", f"{req.ats_hours:g}"))
    lines.append(("Subgroup sizes", ", ".join(str(n) for n in sampling.sizes)))
    if sampling.intervals is not None:
        lines.append(("Intervals", ", ".join(f"{t:g} h" for t in sampling.intervals)))
    if sampling.budget is not None:
        lines.append(("Budget", f"{sampling.budget:g} measurements per hour at most"))
    return lines


HEAD = ("Rank", "Scheme", "n", "Interval (h)", "Measurements per hour", "In-control ARL", "False alarms per month",
        "ARL at the shift", "ATS (hours)", "Meets every requirement", "Not met")


def candidate_row(rank: int, c: Candidate) -> list[str | float | None]:
    """One row of the comparison table (numbers stay numbers; None where there is no figure)."""
    return [rank, c.label, c.n, c.interval_hours, c.measurements_per_hour, c.arl_in_control, c.false_alarms_per_month,
            c.arl_at_shift, c.ats_hours, "yes" if c.meets else "no", "; ".join(i.words for i in c.check.missed)]


def _cell(ws: Worksheet, row: int, col: int, value: str | float | None, fmt: Format | None = None) -> None:
    if value is None:
        return
    if isinstance(value, str):
        ws.write_string(row, col, value, fmt)
    elif math.isfinite(value):
        ws.write_number(row, col, float(value), fmt)
    else:
        ws.write_string(row, col, "never" if value > 0 else "-", fmt)


WIDTHS = (6, 30, 5, 9, 14, 11, 13, 10, 10, 12, 48)  # characters: the comparison table's columns
TEXT_CHARS = sum(WIDTHS) - 4  # a line of text merged across the table


def _print_setup(ws: Worksheet, what: str) -> None:
    """Landscape A4, one page wide; the header says it is a scheme design, the footer the page."""
    cells.print_setup(ws, cells.PageHeading(what, characteristic="Monitoring scheme design"))


def _line(tab: Tab, text: str, role: str = "wrap") -> None:
    """A line of text merged across the comparison table, wrapped, its row as tall as the text needs."""
    tab.across(0, len(WIDTHS) - 1, text, role)
    tab.fit(text, TEXT_CHARS)
    tab.row += 1


def _comparison(tab: Tab, result: DesignResult) -> None:
    ws, fmt = tab.ws, tab.fmt
    _print_setup(ws, "scheme comparison")
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    ws.write_string(0, 0, "Monitoring scheme design", fmt["title"])
    tab.row = 2
    for label, text in requirement_lines(result):
        tab.across(0, 1, label, "label")
        tab.ws.merge_range(tab.row, 2, tab.row, len(WIDTHS) - 1, "", fmt["text"])
        tab.text(2, text, "text")
        tab.row += 1
    tab.row += 1
    _line(tab, "Schemes meeting every requirement are listed first." if result.feasible
          else "No scheme searched meets every requirement.", "lead")
    for line in [*result.messages, *result.notes]:
        _line(tab, line)
    tab.row += 1
    _line(tab, "Trade-off", "lead")
    for line in result.trade_off:
        _line(tab, line)
    tab.row += 1
    top = row = tab.row
    ws.repeat_rows(top)  # the table head on every printed page
    ws.write_row(row, 0, HEAD, fmt["head"])
    tab.height(3 * style.LINE_HEIGHT, row)  # the heads wrap to three lines in their narrow columns
    number = {0: fmt["count"], 1: fmt["text"], 2: fmt["count"], 3: fmt["figure"], 4: fmt["figure"], 5: fmt["arl"],
              6: fmt["figure"], 7: fmt["arl"], 8: fmt["figure"], 9: fmt["flag"]}
    for rank, c in enumerate(result.candidates, start=1):
        row += 1
        values = candidate_row(rank, c)
        for col, value in enumerate(values):
            _cell(ws, row, col, value, fmt["wrap"] if col == len(HEAD) - 1 else number.get(col))
        tab.fit(str(values[-1] or ""), WIDTHS[-1] - 2, row=row)
    if result.candidates:
        ws.autofilter(top, 0, row, len(HEAD) - 1)
    ws.freeze_panes(top + 1, 2)


def _curves(out: BookWriter, tab: Tab, leading: list[Candidate]) -> None:
    ws, fmt = tab.ws, tab.fmt
    _print_setup(ws, "ARL by shift of the leading schemes")
    ws.set_column(0, len(leading), 22)
    ws.set_row(0, 4 * style.LINE_HEIGHT)  # a scheme's name and sampling wrap to up to four lines
    ws.write_string(0, 0, "Mean shift (process standard deviations)", fmt["head"])
    for r, s in enumerate(CURVE_SHIFTS, start=1):
        ws.write_number(r, 0, s)
    chart = out.scatter_chart("straight")
    last = len(CURVE_SHIFTS)
    for col, c in enumerate(leading, start=1):
        name = f"{c.label}, {c.sampling_words}"
        ws.write_string(0, col, name, fmt["head"])
        for r, arl in enumerate(arl_curve(c, CURVE_SHIFTS), start=1):
            _cell(ws, r, col, arl, fmt["arl"])
        chart.add_series({
            "name": ["ARL by shift", 0, col, 0, col],
            "categories": ["ARL by shift", 1, 0, last, 0],
            "values": ["ARL by shift", 1, col, last, col],
            **style.performance_look(col - 1),
        })
    chart.set_title({"name": "ARL against shift, leading schemes", "name_font": {"size": 11}})
    chart.set_x_axis({"name": "Mean shift (process standard deviations)", "min": 0, "max": CURVE_SHIFTS[-1]})
    chart.set_y_axis({"name": "ARL (points, log scale)", "log_base": 10, "min": 1,
                      "major_gridlines": {"visible": True, "line": {"color": style.MIST}}})
    chart.set_legend({"position": "bottom"})
    note = ("ARL: average number of points until the scheme signals, from a fresh start with the shift present from "
            "the first point. Schemes sampled at different intervals compare in time on the comparison tab.")
    tab.row = last + 2
    tab.across(0, max(1, len(leading)), note, "wrap")
    tab.fit(note, 22 * (len(leading) + 1) - 4)
    if leading:  # under the table, as wide as it: nothing beside it to overlap or to cut at the page's edge
        chart.set_size({"width": min(style.CHART_WIDTH, 159 * (len(leading) + 1)), "height": style.CHART_HEIGHT + 130})
        ws.set_h_pagebreaks([last + 4])  # the chart starts a page of its own: never cut by a page's edge
        ws.insert_chart(xl_rowcol_to_cell(last + 4, 0), chart, {"x_offset": 4})


def _notes(tab: Tab, result: DesignResult) -> None:
    _print_setup(tab.ws, "about this design")
    tab.ws.set_column(0, 0, 26)
    tab.ws.set_column(1, 1, NOTE_WIDTH)
    tab.text(0, "About this design", "title")
    lines = [("Caution", CAUTION), ("Method", result.method), ("Schemes searched", str(len(result.candidates))),
             ("Written by", f"{TOOL_NAME} {__version__}")]
    lines += [("Note", n) for n in result.notes]
    for row, (label, text) in enumerate(lines, start=2):
        tab.row = row
        tab.text(0, label, "label")
        tab.text(1, text, "caution" if label == "Caution" else "wrap")
        tab.fit(text, NOTE_WIDTH)
