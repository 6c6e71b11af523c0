"""The action log tab: one row per event (consecutive signalled points) of every characteristic, with the input's
notes beside it and the columns the technician fills in: cause, action taken, by, date, closed.

Events of earlier months read back from the --limits-from output come first, as they were written, so nothing
written is lost and an open event stays open until its "Closed" cell is filled; then this evaluation's events.
"""

from __future__ import annotations

from collections.abc import Sequence

from sheettool.evaluation.results import CharacteristicResult, Event
from sheettool.workbook import style
from sheettool.workbook.action_log import COLUMNS, FILLED_IN
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.notes_tab import CAUTION
from sheettool.workbook.writer.tab import Tab

WIDTHS = {"identity": 24, "event": 6, "first_point": 7, "last_point": 7, "first_label": 16, "last_label": 16,
          "points": 8, "rules": 20, "note": 24, "found_in": 18, "cause": 28, "action": 28, "by": 10, "date": 11,
          "closed": 8}
INTRO = ("One row per event: signalled points that follow each other, looked into once. Fill in the cause, the "
         "action taken, by whom and when, and write yes (or the date) under Closed when it is closed. Next month "
         "give this workbook with --limits-from: these entries are carried forward, open events stay open until "
         "closed, and closed ones keep their record.")


def event_cells(identity: str, number: int, event: Event, file: str) -> dict[str, str | int]:
    """One row of the log by field: what sheettool found and what the technician wrote."""
    return {"identity": identity, "event": number, "first_point": event.first_point, "last_point": event.last_point,
            "first_label": event.first_label, "last_label": event.last_label, "points": len(event.points),
            "rules": "; ".join(event.rules), "note": event.note, "found_in": event.found_in or file,
            **{name: getattr(event, name) for name in FILLED_IN}}


def write_action_log_tab(tab: Tab, results: list[CharacteristicResult], heading: cells.PageHeading,
                         kept: Sequence[dict[str, str]] = ()) -> None:
    """Write the log of every characteristic's events, earlier months' first, then `kept`: the earlier log's entries
    of characteristics not evaluated this time, as they were read; every printed page says so in `heading`."""
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, "Action log", fmt["title"])
    last = len(COLUMNS) - 1
    for row, (text, role) in enumerate(((INTRO, "wrap"), (CAUTION, "caution")), start=1):
        ws.merge_range(row, 0, row, last, "", fmt[role])
        ws.write_string(row, 0, text, fmt[role])
        tab.fit(text, sum(WIDTHS.values()), row=row)
    top = 4
    rows = [event_cells(result.identity, n, e, result.file) for result in results
            for n, e in enumerate((*result.fitted.earlier_events, *result.events), start=1)]
    rows += [{name: entry.get(name, "") for name, _ in COLUMNS} for entry in kept]
    for c, (name, header) in enumerate(COLUMNS):
        ws.write_string(top, c, header, fmt["head"])
        ws.set_column(c, c, WIDTHS[name])
    tab.height(style.HEAD_HEIGHT, top)
    if not rows:
        ws.write_string(top + 1, 0, "No events: no point signalled under the rules in use.")
    for r, values in enumerate(rows, start=top + 1):
        for c, (name, _) in enumerate(COLUMNS):
            value = values[name]
            if isinstance(value, int):
                ws.write_number(r, c, value, fmt["flag"])
            else:
                ws.write_string(r, c, value, fmt["entry" if name in FILLED_IN else "wrap"])
        height = max(style.row_height(str(values[n]), WIDTHS[n]) for n in WIDTHS)
        if height > style.line_height():
            tab.height(height, r)
    ws.freeze_panes(top + 1, 1)
    ws.autofilter(top, 0, top + max(len(rows), 1), last)
    cells.print_setup(ws, heading)
    ws.repeat_rows(top)
