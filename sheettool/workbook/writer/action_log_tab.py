"""The action log tab: one row per event (consecutive signalled points) of every characteristic, with the input's
notes beside it and the columns the technician fills in: cause, action taken, by, date, closed.

Events of earlier months read back from the --limits-from output come first, as they were written, so nothing
written is lost and an open event stays open until its "Closed" cell is filled; then this evaluation's events.
"""

from __future__ import annotations

from sheettool.evaluation.results import CharacteristicResult, Event
from sheettool.workbook.action_log import COLUMNS, FILLED_IN
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.notes_tab import CAUTION
from sheettool.workbook.writer.tab import Tab

WIDTHS = {"identity": 26, "event": 7, "first_point": 8, "last_point": 8, "first_label": 17, "last_label": 17,
          "points": 9, "rules": 30, "note": 28, "found_in": 22, "cause": 30, "action": 30, "by": 10, "date": 12,
          "closed": 10}
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


def write_action_log_tab(tab: Tab, results: list[CharacteristicResult], eval_tabs: list[str]) -> None:
    """Write the log of every characteristic, each identity linked to its evaluation tab."""
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, "Action log", fmt["title"])
    last = len(COLUMNS) - 1
    for row, (text, role) in enumerate(((INTRO, "wrap"), (CAUTION, "caution")), start=1):
        ws.merge_range(row, 0, row, last, "", fmt[role])
        ws.write_string(row, 0, text, fmt[role])
        tab.fit(text, sum(WIDTHS.values()), row=row)
    top = 4
    rows = [(tab_name, event_cells(result.identity, n, e, result.file))
            for result, tab_name in zip(results, eval_tabs, strict=True)
            for n, e in enumerate((*result.fitted.earlier_events, *result.events), start=1)]
    for c, (name, header) in enumerate(COLUMNS):
        ws.write_string(top, c, header, fmt["head"])
        ws.set_column(c, c, WIDTHS[name])
    if not rows:
        ws.write_string(top + 1, 0, "No events: no point signalled under the rules in use.")
    for r, (tab_name, values) in enumerate(rows, start=top + 1):
        for c, (name, _) in enumerate(COLUMNS):
            value = values[name]
            role = "entry" if name in FILLED_IN else "wrap"
            if name == "identity":
                ws.write_url(r, c, cells.internal_link(tab_name), fmt["link"], string=str(value))
            elif isinstance(value, int):
                ws.write_number(r, c, value, fmt["count"])
            else:
                ws.write_string(r, c, value, fmt[role])
        tab.fit([str(values[n]) for n in ("rules", "note", "cause", "action")], min(WIDTHS["rules"], WIDTHS["note"]),
                row=r)
    ws.freeze_panes(top + 1, 1)
    ws.autofilter(top, 0, top + max(len(rows), 1), last)
    cells.print_setup(ws, "action log")
    ws.repeat_rows(top)
