"""The review pack's summary tab: one row per characteristic, linked to its evaluation tab, and one
row per file or sheet that could not be evaluated."""

from __future__ import annotations

from pathlib import Path

from sheettool.evaluation.summary import STATUS_WORDS, PackRow, Period, pack_key
from sheettool.workbook import style
from sheettool.workbook.earlier_packs import TrendPoint, earlier_point
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.book import Section, Summary, WriterOptions, write_workbook
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.notes_tab import CAUTION
from sheettool.workbook.writer.tab import Tab

SUMMARY_TAB = "Review summary"
COLUMNS = ("Source file", "Sheet", "Characteristic", "Chart", "Points in period", "Points signalled",
           "Events open", "Latest signal", "Cpk", "Cpk low", "Cpk high", "In-control ARL", "False alarms per month",
           "Status", "False alarms expected", "Chance from false alarms alone", "Reason")
WIDTHS = (18, 13, 15, 12, 8, 8, 7, 15, 6, 6, 6, 9, 9, 15, 9, 10, 31)


def write_pack_workbook(rows: list[PackRow], period: Period | None, evaluated: list[tuple[str, EvaluationReport]],
                        path: Path, options: WriterOptions | None = None,
                        earlier: list[dict[str, TrendPoint]] | None = None,
                        kept_log: list[dict[str, str]] | None = None) -> None:
    """Write the pack: summary, contents and (with earlier packs) trends first, then every characteristic's tabs,
    then one audit for all; `kept_log` holds earlier action-log entries of characteristics not in this pack.

    evaluated: (source label, report) of every input that was evaluated, in the order of the summary rows;
    kept_log: the earlier action log's entries of characteristics not in this pack (written on unchanged).
    """
    reports = [report for _, report in evaluated]
    keys = [pack_key(source, r.sheet) for source, report in evaluated for r in report.characteristics]
    summary = Summary(SUMMARY_TAB, lambda out, tab, sections, heading: _write_summary(
        out, tab, rows, period, sections, heading, earlier or []))
    write_workbook(reports, path, options, summary, block_keys=keys, kept_log=kept_log)


def _write_summary(out: BookWriter, tab: Tab, rows: list[PackRow], period: Period | None, sections: list[Section],
                   heading: cells.PageHeading, earlier: list[dict[str, TrendPoint]]) -> None:
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, "Review summary", fmt["title"])
    words = f"points dated {period.label}" if period else "all points of each workbook"
    carried = [r for r in rows if r.tab is not None and "uncarried" not in r.flags and r.carried]
    limits = (f"carried for {len(carried)} of {sum(r.tab is not None for r in rows)} characteristics (matched by "
              "identity; see each chart tab), the others from their own base period") if any(
        r.carried for r in rows) else "each characteristic's own base period"
    ws.write_string(1, 0, f"Period: {words}. Limits: {limits}. The contents follow the table.", fmt["text"])
    counts = {word: sum(1 for r in rows if word in r.status.split("; ")) for word in STATUS_WORDS.values()}
    ws.write_string(2, 0, "; ".join(f"{n} {word}" for word, n in counts.items() if n) or "nothing evaluated",
                    fmt["label"])
    columns = COLUMNS if any(r.reason for r in rows) else COLUMNS[:-1]  # no column left empty
    ws.merge_range(3, 0, 3, len(columns) - 1, CAUTION, fmt["caution"])
    tab.fit(CAUTION, sum(WIDTHS[:len(columns)]), row=3)
    top = 5
    tab.height(4 * style.LINE_HEIGHT, top)
    last = top + max(len(rows), 1)
    ws.add_table(top, 0, last, len(columns) - 1, {
        "name": "review_summary", "style": "Table Style Light 1",
        "columns": [{"header": c, "header_format": fmt["head"]} for c in columns]})
    for i, row in enumerate(rows, start=top + 1):
        ws.write_string(i, 0, row.source, fmt["wrap"])
        ws.write_string(i, 1, row.sheet, fmt["wrap"])
        if row.tab is not None:
            ws.write_url(i, 2, cells.internal_link(sections[row.tab].first_tab), fmt["link_wrap"],
                         string=row.characteristic)
        else:
            ws.write_string(i, 2, row.characteristic, fmt["wrap"])
        ws.write_string(i, 3, row.chart, fmt["wrap"])
        if row.tab is not None:
            for col, value in ((4, row.points), (5, row.points_signalled), (6, row.events_open)):
                ws.write_number(i, col, value, fmt["count"])
        ws.write_string(i, 7, row.latest_signal, fmt["note"])
        for col, value in ((8, row.cpk), (9, row.cpk_low), (10, row.cpk_high)):
            cells.number(ws, i, col, value, fmt["dec2"])
        cells.number(ws, i, 11, row.arl_in_control, fmt["arl"])
        cells.number(ws, i, 12, row.false_alarms_per_month, fmt["dec2"])
        ws.write_string(i, 13, row.status, fmt["warn_wrap"] if row.flags else fmt["wrap"])
        if row.chance is not None:
            cells.number(ws, i, 14, row.chance.expected, fmt["dec2"])
            cells.number(ws, i, 15, row.chance.probability, fmt["chance"])
        if len(columns) == len(COLUMNS):
            ws.write_string(i, 16, row.reason, fmt["wrap"])
        texts = [(row.source, 0), (row.sheet, 1), (row.characteristic, 2), (row.chart, 3), (row.latest_signal, 7),
                 (row.status, 13), (row.reason, 16)]
        tab.height(max(style.row_height(t, WIDTHS[c] - 1) for t, c in texts if c < len(columns)), i)
    for col, width in enumerate(WIDTHS[:len(columns)]):
        ws.set_column(col, col, width)
    ws.freeze_panes(top + 1, 3)
    tab.row = last + 2
    ws.set_h_pagebreaks([tab.row])  # the contents on a page of their own
    _contents(tab, sections, len(columns) - 1)
    if earlier:
        tab.row += 1
        ws.set_h_pagebreaks([last + 2, tab.row])  # the trends start a page of their own too (_trends adds more)
        _trends(out, tab, rows, sections, earlier, len(columns) - 1,
                period.label if period else heading.date or "this pack")
    cells.print_setup(ws, heading)


def _contents(tab: Tab, sections: list[Section], last: int) -> None:
    """One line per characteristic: its section number (printed in the footer of each of its pages), its name and
    source, and links to its summary, charts and data."""
    ws, fmt = tab.ws, tab.fmt
    tab.across(0, last, "Contents", "section")
    tab.row += 1
    ws.write_string(tab.row, 0, "Each printed page names its section in its footer and its characteristic and "
                    "source in its header; the section of a characteristic holds its summary page, its charts and "
                    "signals, and its data.", fmt["text"])
    tab.row += 2
    spans = ((0, 0, "Section"), (1, 2, "Characteristic"), (3, 9, "Source"), (10, 12, "Go to"))
    for first, end, head in spans:
        if end > first:
            ws.merge_range(tab.row, first, tab.row, end, "", fmt["head"])
        ws.write_string(tab.row, first, head, fmt["head"])
    tab.row += 1
    for k, section in enumerate(sections, start=1):
        ws.write_number(tab.row, 0, k, fmt["point"])
        ws.merge_range(tab.row, 1, tab.row, 2, "", fmt["link"])
        ws.write_url(tab.row, 1, cells.internal_link(section.first_tab), fmt["link"], string=section.title)
        ws.merge_range(tab.row, 3, tab.row, 9, "", fmt["text"])
        ws.write_string(tab.row, 3, section.source, fmt["text"])
        for c, (word, target) in enumerate((("summary", section.first_tab), ("charts", section.tabs[1]),
                                            ("data", section.tabs[2])), start=10):
            ws.write_url(tab.row, c, cells.internal_link(target), fmt["link"], string=word)
        tab.row += 1


TRENDS_PER_PAGE = 4
TREND_HEADS = ("Pack of", "Center line", "Cpk", "Points", "Points signalled", "False alarms expected")


def _trends(out: BookWriter, tab: Tab, rows: list[PackRow], sections: list[Section],
            earlier: list[dict[str, TrendPoint]], last: int, today: str) -> None:
    """Per characteristic, what each earlier pack and this one said: a table and a chart of the signals observed
    against the false alarms the scheme expected."""
    ws, fmt = tab.ws, tab.fmt
    tab.across(0, last, "Trends across packs", "section")
    tab.row += 1
    ws.write_string(tab.row, 0, "Each characteristic as the earlier packs given with --earlier and this one saw it: "
                    "points signalled against the false alarms its scheme expected over the period's points.",
                    fmt["text"])
    tab.row += 2
    breaks = list(tab.ws.hbreaks)
    for k, row in enumerate(r for r in rows if r.tab is not None):
        if k and k % TRENDS_PER_PAGE == 0:
            breaks.append(tab.row)  # whole blocks to a printed page: no chart cut by a page's edge
        said = (earlier_point(e, row.characteristic, pack_key(row.source, row.sheet)) for e in earlier)
        history = sorted((p for p in said if p is not None), key=lambda p: p.when)
        now = TrendPoint(today, row.center, row.cpk, float(row.points), float(row.points_signalled),
                         row.chance.expected if row.chance is not None else None)
        points = [*history, now]
        section = sections[row.tab]
        ws.write_url(tab.row, 0, cells.internal_link(section.first_tab), fmt["link"], string=section.title)
        ws.write_string(tab.row, 2, section.source, fmt["text"])
        tab.row += 1
        top = tab.row
        for c, head in enumerate(TREND_HEADS):
            ws.write_string(top, c, head, fmt["head" if not c else "head_number"])
        tab.height(3 * style.LINE_HEIGHT, top)
        for i, p in enumerate(points, start=top + 1):
            ws.write_string(i, 0, p.when, fmt["text"])
            for c, (value, role) in enumerate(((p.center, "figure"), (p.cpk, "dec2"), (p.points, "count"),
                                               (p.signals, "count"), (p.expected, "dec2")), start=1):
                cells.number(ws, i, c, value, fmt[role])
        end = top + len(points)
        chart = out.line_chart()
        for col, name, role in ((4, "points signalled", "values"), (5, "false alarms expected", "limit")):
            chart.add_series({"name": name, "categories": cells.column_range(tab.name, 0, top + 1, end),
                              "values": cells.column_range(tab.name, col, top + 1, end),
                              **style.series_look(role, len(points))})
        chart.set_title({"name": f"Signals against chance: {section.title}", "name_font": {"size": 10}})
        chart.set_y_axis({"min": 0, "num_font": {"size": 8}, "major_gridlines": {"visible": True,
                                                                                  "line": {"color": style.MIST}}})
        chart.set_x_axis({"num_font": {"size": 8}, "text_axis": True})
        chart.set_legend({"position": "bottom", "font": {"size": 8}})
        chart.set_size({"width": 520, "height": 200})
        ws.insert_chart(top, 7, chart, {"x_offset": 6, "object_position": 3})
        tab.row = max(end + 2, top + 11)
    ws.set_h_pagebreaks(breaks)
