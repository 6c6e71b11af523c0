"""Numbers and dates typed as text, as technicians type them.

Numbers: a decimal point or a decimal comma ("12.003", "12,003", " +1.2e-3 "); a lone comma
between digits is a decimal comma, as in most European workbooks (so "1,000" is one, not a
thousand). Dates: ISO "2026-11-02[ 06:00]", day first "02.11.2026" and "02/11/2026" (month first
only where the second number exceeds 12).
"""

from __future__ import annotations

import datetime as dt
import re

_NUMBER_TEXT = re.compile(r"^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$")
_ISO_DATE = re.compile(r"^(\d{4})-(\d{1,2})-(\d{1,2})(?:[ T](\d{1,2}):(\d{2})(?::(\d{2}))?)?$")
_DMY_DATE = re.compile(r"^(\d{1,2})([./])(\d{1,2})\2(\d{4})(?:\s+(\d{1,2}):(\d{2})(?::(\d{2}))?)?$")


def number_text(text: str) -> float | None:
    """The number a text stands for, or None ("12,003" -> 12.003)."""
    s = text.strip().replace("\u00a0", "").replace(" ", "")
    if not s or len(s) > 40 or not _NUMBER_TEXT.match(s):
        return None
    return float(s.replace(",", "."))


def date_text(text: str) -> dt.datetime | None:
    """The date (and time) a text stands for, or None."""
    s = text.strip()
    if len(s) < 8 or len(s) > 25 or not s[0].isdigit():
        return None
    try:
        if m := _ISO_DATE.match(s):
            y, mo, d, hh, mm, ss = m.groups()
            return dt.datetime(int(y), int(mo), int(d), int(hh or 0), int(mm or 0), int(ss or 0))
        if m := _DMY_DATE.match(s):
            a, _, b, y, hh, mm, ss = m.groups()
            day, month = (int(a), int(b)) if int(a) > 12 or int(b) <= 12 else (int(b), int(a))
            return dt.datetime(int(y), month, day, int(hh or 0), int(mm or 0), int(ss or 0))
    except ValueError:  # 31.02.2026 and the like: not a date
        return None
    return None
