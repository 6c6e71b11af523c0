"""The review pack's summary tab: one row per characteristic, linked to its evaluation tab, and one
row per file or sheet that could not be evaluated."""

from __future__ import annotations

from pathlib import Path

from sheettool.evaluation.summary import STATUS_WORDS, PackRow, Period, pack_key
from sheettool.workbook import style
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.book import Summary, WriterOptions, write_workbook
from sheettool.workbook.writer.notes_tab import CAUTION
from sheettool.workbook.writer.tab import Tab

SUMMARY_TAB = "Review summary"
COLUMNS = ("Source file", "Sheet", "Characteristic", "Chart", "Points in period", "Points signalled",
           "Events open", "Latest signal", "Cpk", "Cpk low", "Cpk high", "In-control ARL", "False alarms per month",
           "Status", "Reason")
WIDTHS = (28, 18, 26, 8, 10, 9, 8, 22, 8, 8, 8, 11, 11, 26, 50)


def write_pack_workbook(rows: list[PackRow], period: Period | None, evaluated: list[tuple[str, EvaluationReport]],
                        path: Path, options: WriterOptions | None = None,
                        kept_log: list[dict[str, str]] | None = None) -> None:
    """Write the pack: summary first, then every characteristic's tabs, then one audit for all inputs.

    evaluated: (source label, report) of every input that was evaluated, in the order of the summary rows;
    kept_log: the earlier action log's entries of characteristics not in this pack (written on unchanged).
    """
    reports = [report for _, report in evaluated]
    keys = [pack_key(source, r.sheet) for source, report in evaluated for r in report.characteristics]
    write_workbook(reports, path, options, Summary(SUMMARY_TAB, lambda tab, eval_tabs:
                                                   _write_summary(tab, rows, period, eval_tabs)), block_keys=keys,
                   kept_log=kept_log)


def _write_summary(tab: Tab, rows: list[PackRow], period: Period | None, eval_tabs: list[str]) -> None:
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, "Review summary", fmt["title"])
    words = f"points dated {period.label}" if period else "all points of each workbook"
    carried = [r for r in rows if r.tab is not None and "uncarried" not in r.flags and r.carried]
    limits = (f"carried for {len(carried)} of {sum(r.tab is not None for r in rows)} characteristics (matched by "
              "identity; see each evaluation tab), the others from their own base period") if any(
        r.carried for r in rows) else "each characteristic's own base period"
    ws.write_string(1, 0, f"Period: {words}. Limits: {limits}.", fmt["text"])
    counts = {word: sum(1 for r in rows if word in r.status.split("; ")) for word in STATUS_WORDS.values()}
    ws.write_string(2, 0, "; ".join(f"{n} {word}" for word, n in counts.items() if n) or "nothing evaluated",
                    fmt["label"])
    ws.merge_range(3, 0, 3, len(COLUMNS) - 1, CAUTION, fmt["caution"])
    tab.fit(CAUTION, sum(WIDTHS), row=3)
    top = 5
    tab.height(style.HEAD_HEIGHT, top)
    last = top + max(len(rows), 1)
    ws.add_table(top, 0, last, len(COLUMNS) - 1, {
        "name": "review_summary", "style": "Table Style Light 1",
        "columns": [{"header": c, "header_format": fmt["head"]} for c in COLUMNS]})
    for i, row in enumerate(rows, start=top + 1):
        ws.write_string(i, 0, row.source, fmt["text"])
        ws.write_string(i, 1, row.sheet, fmt["text"])
        if row.tab is not None:
            ws.write_url(i, 2, cells.internal_link(eval_tabs[row.tab]), fmt["link"], string=row.characteristic)
        else:
            ws.write_string(i, 2, row.characteristic, fmt["text"])
        ws.write_string(i, 3, row.chart, fmt["text"])
        if row.tab is not None:
            for col, value in ((4, row.points), (5, row.points_signalled), (6, row.events_open)):
                ws.write_number(i, col, value, fmt["count"])
        ws.write_string(i, 7, row.latest_signal, fmt["text"])
        for col, value in ((8, row.cpk), (9, row.cpk_low), (10, row.cpk_high)):
            cells.number(ws, i, col, value, fmt["dec2"])
        cells.number(ws, i, 11, row.arl_in_control, fmt["arl"])
        cells.number(ws, i, 12, row.false_alarms_per_month, fmt["dec2"])
        ws.write_string(i, 13, row.status, fmt["label"] if row.flags else fmt["text"])
        ws.write_string(i, 14, row.reason, fmt["wrap"])
        tab.fit(row.reason, WIDTHS[14], row=i)
    for col, width in enumerate(WIDTHS):
        ws.set_column(col, col, width)
    ws.freeze_panes(top + 1, 3)
    cells.print_setup(ws, "review summary")
