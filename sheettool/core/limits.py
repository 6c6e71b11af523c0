"""Where limits come from: a base period (Phase I), given values (standards or carried), revision.

Once set, the limits apply unchanged to every later point (Phase II); the fit records which
points set them (`ChartFit.base`) and says so in words (`ChartFit.limits_source`).
"""

from __future__ import annotations

import datetime as dt
import re

import numpy as np

from sheettool.core.charts import ChartFit, ChartKind, beyond_limits
from sheettool.core.data import Characteristic

_FIRST = re.compile(r"^first\s+(\d+)(?:\s+subgroups?)?$")


BASE_WORDS = "base period: "  # how limits_source begins when this workbook's base period set the limits

def _day(text: str, end: bool) -> dt.datetime:
    try:
        when = dt.datetime.fromisoformat(text.strip())
    except ValueError:
        raise ValueError(f"'{text.strip()}' is not a date; write dates as 2026-11-01") from None
    if end and len(text.strip()) <= 10:  # a bare date runs to the end of that day
        when += dt.timedelta(days=1) - dt.timedelta(microseconds=1)
    return when.replace(tzinfo=None)


def _as_datetime(value: dt.date) -> dt.datetime:
    if not isinstance(value, dt.datetime):
        return dt.datetime.combine(value, dt.time())
    return value.replace(tzinfo=None)


def base_period(characteristic: Characteristic, spec: str) -> tuple[np.ndarray, str]:
    """The subgroups a base_period setting names ("all", "first N", "FROM..TO" dates), less excluded ones."""
    m = characteristic.data.subgroups
    text = " ".join(str(spec or "all").strip().lower().split())
    first = _FIRST.match(text)
    if text == "all":
        mask, words = np.ones(m, dtype=bool), "all subgroups"
    elif first:
        count = int(first[1])
        if not 1 <= count <= m:
            raise ValueError(f"base period '{spec}' names {count} subgroups but there are {m}; "
                             f"give a number from 1 to {m}")
        mask, words = np.arange(m) < count, f"the first {count} subgroups"
    elif ".." in text:
        low_text, high_text = text.split("..", 1)
        low, high = _day(low_text, end=False), _day(high_text, end=True)
        if low > high:
            raise ValueError(f"base period '{spec}': the first date is after the second")
        dates = characteristic.dates
        if not any(d is not None for d in dates):
            raise ValueError(f"base period '{spec}' is a date range but the subgroups have no dates")
        mask = np.array([d is not None and low <= _as_datetime(d) <= high for d in dates], dtype=bool)
        if not mask.any():
            raise ValueError(f"base period '{spec}': no subgroup is dated in that range")
        words = f"subgroups dated {low_text.strip()} to {high_text.strip()}"
    else:
        raise ValueError(f"base period '{spec}' is not understood; write all, first N (e.g. first 25) "
                         "or a date range like 2026-11-01..2026-11-15")
    excluded = np.asarray(characteristic.excluded, dtype=bool) & mask
    if excluded.any():
        words += f", less {int(excluded.sum())} excluded"
    mask = mask & ~excluded
    if not mask.any():
        raise ValueError(f"base period '{spec}': every subgroup in the base period is excluded")
    return mask, words


def _positions(mask: np.ndarray) -> str:
    """1-based positions as compact ranges: "1-20, 23, 25-30"."""
    idx = np.flatnonzero(mask) + 1
    parts, start = [], None
    for i, p in enumerate(idx):
        start = p if start is None else start
        if i + 1 == len(idx) or idx[i + 1] != p + 1:
            parts.append(f"{start}" if start == p else f"{start}-{p}")
            start = None
    return ", ".join(parts)


def fit_limits(kind: ChartKind, characteristic: Characteristic, base_period_spec: str = "all",
               given: dict[str, float] | None = None, given_words: str = "", revise: bool = False) -> ChartFit:
    """Fit `kind` with limits from the base period, completed or replaced by `given` values.

    revise: drop base points beyond the limits and refit until none is left (Montgomery 2009,
    sec. 5.4, "trial control limits"); every removed point is listed in `removed` and a note.
    """
    base, words = base_period(characteristic, base_period_spec)
    fit = kind.fit(characteristic, base, given, given_words)
    uses_base = bool(fit.base.any())
    removed: list[int] = []
    if revise and uses_base and kind.time_weighted:
        fit.notes.append("revision of the base period is done for Shewhart charts only; the EWMA and CUSUM "
                         "points are not independent, so their limits were not revised")
    elif revise and uses_base:
        for _ in range(characteristic.data.subgroups):
            out = beyond_limits(fit) & base
            if not out.any():
                break
            removed.extend(int(i) + 1 for i in np.flatnonzero(out))
            base = base & ~out
            if not base.any():
                raise ValueError("revision removed every base subgroup; the data are not in control "
                                 "enough to set limits from; give standard values or fix the data")
            fit = kind.fit(characteristic, base, given, given_words)
        removed.sort()
        fit.notes.append("revision removed " + (f"point(s) {', '.join(map(str, removed))} (beyond the limits) "
                                                "from the base period" if removed else "nothing: no base point "
                                                "lies beyond the limits"))
    fit.removed = removed
    if uses_base:
        fit.limits_source = f"{BASE_WORDS}{words} (points {_positions(fit.base)})"
        if given_words:
            fit.limits_source += f"; {given_words}"
    else:
        fit.limits_source = given_words
    return fit
