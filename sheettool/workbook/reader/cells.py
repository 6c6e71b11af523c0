"""Cell values as people type them: numbers, numbers typed as text, dates and date texts, blanks.

`kind_of` sorts a raw cell value into BLANK, NUMBER, DATE or TEXT; `number_of` and `date_of` give
the value itself. Numbers and dates typed as text follow sheettool.typed_text.
"""

from __future__ import annotations

import datetime as dt
import re

from openpyxl.utils import get_column_letter

from sheettool.settings.typed_text import date_text, number_text

BLANK, NUMBER, DATE, TEXT = 0, 1, 2, 3
_TIME_TEXT = re.compile(r"^\s*(\d{1,2}):(\d{2})(?::\d{2})?\s*$")

def kind_of(value: object) -> int:
    """BLANK, NUMBER, DATE or TEXT for a raw cell value (numbers and dates typed as text count)."""
    t = type(value)
    if t is float or t is int:
        return NUMBER
    if value is None:
        return BLANK
    if t is str:
        if not value.strip():
            return BLANK
        if number_text(value) is not None:
            return NUMBER
        return DATE if date_text(value) is not None or _TIME_TEXT.match(value) else TEXT
    if isinstance(value, dt.datetime | dt.date | dt.time | dt.timedelta):
        return DATE
    return TEXT  # booleans and anything else


def number_of(value: object) -> float | None:
    """The number in a cell (typed or as text), or None."""
    t = type(value)
    if t is float or t is int:
        return float(value)  # type: ignore[arg-type]
    if t is str:
        return number_text(value)  # type: ignore[arg-type]
    return None


def date_of(value: object) -> dt.datetime | None:
    """The date and time in a cell (real or as text), or None; a date alone is at midnight."""
    if isinstance(value, dt.datetime):
        return value
    if isinstance(value, dt.date):
        return dt.datetime(value.year, value.month, value.day)
    if isinstance(value, str):
        return date_text(value)
    return None


def time_of(value: object) -> dt.time | None:
    """A time of day from a time cell, a datetime or a text "06:00"."""
    if isinstance(value, dt.time):
        return value
    if isinstance(value, dt.datetime):
        return value.time()
    if isinstance(value, dt.timedelta):
        seconds = int(value.total_seconds()) % 86400
        return dt.time(seconds // 3600, seconds // 60 % 60)
    if isinstance(value, str) and (m := _TIME_TEXT.match(value)):
        hour, minute = int(m.group(1)), int(m.group(2))
        return dt.time(hour, minute) if hour < 24 and minute < 60 else None
    return None


def text_of(value: object) -> str:
    """A cell shown as text: "" for blank, whole numbers without ".0", dates as ISO."""
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    if isinstance(value, dt.datetime):
        return value.strftime("%Y-%m-%d %H:%M") if (value.hour or value.minute) else value.strftime("%Y-%m-%d")
    return str(value).strip()


def address(sheet: str, row: int, col: int) -> str:
    """A cell address as a spreadsheet writes it, 1-based: "'Bore diameter'!B2"."""
    return f"'{sheet.replace(chr(39), chr(39) * 2)}'!{get_column_letter(col)}{row}"
