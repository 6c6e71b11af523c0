"""The action log's columns, and its entries read back from an earlier output (next month's --limits-from).

The tab is the technician's: one row per event, the columns sheettool fills and those the technician fills
(cause, action taken, by, date, closed). Read back by its header words, so moved columns and added rows still
read; every value comes back as text (a typed date as YYYY-MM-DD), nothing of it is trusted as a number.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path
from typing import Any

from sheettool.workbook.limits_block import earlier_sheet

ACTION_LOG_TAB = "Action log"
# (field, header) in the tab's order; the fields are the JSON names of an event
COLUMNS: tuple[tuple[str, str], ...] = (
    ("identity", "Identity"), ("event", "Event"), ("first_point", "First point"), ("last_point", "Last point"),
    ("first_label", "Starts at"), ("last_label", "Ends at"), ("points", "Points signalled"),
    ("rules", "Rules broken"), ("note", "Note in the input"), ("found_in", "Found in"),
    ("cause", "Cause"), ("action", "Action taken"), ("by", "By"), ("date", "Date"), ("closed", "Closed"),
)
FILLED_IN = ("cause", "action", "by", "date", "closed")  # the technician's columns
MAX_ROWS = 100_000  # rows of the tab read back


def _text(value: object) -> str:
    """A cell as the text a technician meant: whole numbers without ".0", dates as YYYY-MM-DD (with the time when
    it is not midnight)."""
    if value is None:
        return ""
    if isinstance(value, dt.datetime):
        return f"{value:%Y-%m-%d}" if value.time() == dt.time() else f"{value:%Y-%m-%d %H:%M}"
    if isinstance(value, dt.date):
        return f"{value:%Y-%m-%d}"
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip()


def log_entries(rows: list[tuple[Any, ...]]) -> list[dict[str, str]]:
    """The entries of the tab's rows: found by the header row (the first whose first cell is "Identity"), one per
    row below it with an identity; a field whose column is missing reads as empty."""
    heads = {header.lower(): name for name, header in COLUMNS}
    top = next((r for r, row in enumerate(rows) if row and _text(row[0]).lower() == "identity"), None)
    if top is None:
        return []
    where = {heads[_text(v).lower()]: c for c, v in enumerate(rows[top]) if _text(v).lower() in heads}
    entries = []
    for row in rows[top + 1:]:
        entry = {name: _text(row[c]) if c < len(row) else "" for name, c in where.items()}
        if entry.get("identity"):
            entries.append(entry)
    return entries


def read_action_log(path: Path) -> list[dict[str, str]]:
    """The action-log entries of an earlier output ([] when it has no action log); InputError naming the file
    when it cannot be read."""
    width = len(COLUMNS) + 10  # room for a column or two the technician added
    return log_entries(earlier_sheet(path, ACTION_LOG_TAB, width, MAX_ROWS) or [])
