"""Small cell-level helpers shared by the tabs: safe copying, references, names, decimals, widths."""

from __future__ import annotations

import datetime as dt
import math
import re
from dataclasses import dataclass

import numpy as np
from xlsxwriter.format import Format
from xlsxwriter.utility import xl_col_to_name, xl_rowcol_to_cell
from xlsxwriter.worksheet import Worksheet

from sheettool import TOOL_NAME

EXCEL_EPOCH = dt.datetime(1899, 12, 30)


def put(ws: Worksheet, row: int, col: int, value: object, fmt: Format | None = None) -> None:
    """Write a copied input value: numbers as numbers, dates as dates, everything else as text.

    Text always goes through write_string, so a cell that begins with =, +, - or @ stays text and
    can never become a formula in the output.
    """
    if value is None:
        return
    if isinstance(value, bool):
        ws.write_string(row, col, str(value), fmt)
    elif isinstance(value, int | float):
        if math.isfinite(value):
            ws.write_number(row, col, float(value), fmt)
    elif isinstance(value, dt.datetime | dt.date | dt.time):
        ws.write_datetime(row, col, value, fmt)
    else:
        ws.write_string(row, col, str(value), fmt)


def number(ws: Worksheet, row: int, col: int, value: float | None, fmt: Format | None = None) -> None:
    """Write a computed number; NaN, infinities and None leave the cell empty."""
    if value is not None and math.isfinite(value):
        ws.write_number(row, col, float(value), fmt)


def quoted(tab: str) -> str:
    """A sheet name quoted for use in a formula or chart reference."""
    return "'" + tab.replace("'", "''") + "'"


def cell(tab: str, row: int, col: int) -> str:
    """Absolute reference to one cell on a tab, e.g. 'Bore data'!$C$4."""
    return f"{quoted(tab)}!{xl_rowcol_to_cell(row, col, True, True)}"


def column_range(tab: str, col: int, first: int, last: int) -> str:
    """Absolute reference to rows first..last (0-based, inclusive) of one column."""
    return f"{quoted(tab)}!{xl_rowcol_to_cell(first, col, True, True)}:{xl_rowcol_to_cell(last, col, True, True)}"


def internal_link(tab: str, row: int = 0, col: int = 0) -> str:
    """A hyperlink target inside the workbook."""
    return f"internal:{quoted(tab)}!{xl_rowcol_to_cell(row, col)}"


TAB_UNITS = 31  # the format's longest tab name, in UTF-16 code units (a character past U+FFFF counts 2)


def utf16_len(text: str) -> int:
    """Length in UTF-16 code units, as the format counts tab names."""
    return sum(2 if ord(ch) > 0xFFFF else 1 for ch in text)


def utf16_cut(text: str, units: int) -> str:
    """The longest start of `text` within `units` UTF-16 units; a character is never cut in half."""
    out, used = [], 0
    for ch in text:
        used += 2 if ord(ch) > 0xFFFF else 1
        if used > units:
            break
        out.append(ch)
    return "".join(out)


def tab_name(base: str, suffix: str, used: set[str], tells: tuple[str, ...] = (), always: bool = False) -> str:
    """A unique tab name of at most 31 UTF-16 units, free of the characters tab names refuse.

    A name already taken (or any name, when `always`: a name that others share) is told apart by the first of
    `tells` (a part, an input's name) that makes it unique; "~2", "~3"... is the last resort.
    """
    clean = _tab_clean(base) or "sheet"
    room = TAB_UNITS - utf16_len(suffix) - (1 if suffix else 0)
    name = f"{utf16_cut(clean, room).rstrip()} {suffix}".strip()
    for k, tell in enumerate(t for t in (_tab_clean(t) for t in tells) if t):
        if name.lower() not in used and not (always and k == 0):
            break
        tag = f" ({utf16_cut(tell, max(min(6, room // 2), room - utf16_len(clean) - 3))})"  # the name first
        name = f"{utf16_cut(clean, room - utf16_len(tag)).rstrip()}{tag} {suffix}".strip()
    i = 2
    while name.lower() in used:
        tag = f"~{i}"
        name = f"{utf16_cut(clean, room - len(tag))}{tag} {suffix}".strip()
        i += 1
    used.add(name.lower())
    return name


def _tab_clean(text: str) -> str:
    """Text with the characters tab names refuse replaced, no control characters, no leading or trailing blanks."""
    text = re.sub(r"[\[\]:*?/\\']", "_", text)
    return "".join(ch if ch.isprintable() else " " for ch in text).strip()


def defined_name(*parts: str) -> str:
    """A workbook-level name built from parts: letters, digits and underscores, never a cell address."""
    text = "_".join(re.sub(r"[^A-Za-z0-9]+", "_", p).strip("_") for p in parts if p)
    return f"{TOOL_NAME}_" + (text or "name")


def decimals(values: np.ndarray, most: int = 6) -> int:
    """The number of decimals the readings were recorded with (the largest needed by any reading)."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return 2
    scale = np.maximum(1.0, np.abs(v))
    for d in range(most + 1):
        if np.all(np.abs(np.round(v, d) - v) <= 1e-9 * scale):
            return d
    return most


def excel_serial(when: dt.datetime) -> float:
    """A date and time as the spreadsheet's day number (days since 1899-12-30)."""
    if when.tzinfo is not None:
        when = when.replace(tzinfo=None)
    return (when - EXCEL_EPOCH).total_seconds() / 86400.0


def width(texts: list[str], least: int = 8, most: int = 48) -> int:
    """A column width (characters) that fits the longest of a few texts."""
    longest = max((len(t) for t in texts), default=0)
    return max(least, min(most, longest + 2))


def unique_headers(names: list[str], first_letter: int = 0) -> list[str]:
    """Table headers must be unique and non-empty: fill blanks and number repeats."""
    out: list[str] = []
    seen: set[str] = set()
    for i, name in enumerate(names):
        base = name.strip() or f"Column {xl_col_to_name(first_letter + i)}"
        candidate, k = base, 2
        while candidate.lower() in seen:
            candidate, k = f"{base} ({k})", k + 1
        seen.add(candidate.lower())
        out.append(candidate)
    return out


@dataclass(frozen=True)
class PageHeading:
    """What every printed page of a tab says it shows: the tab's content, the characteristic and its part,
    the source file and sheet, the period covered, and the evaluation date (ISO)."""

    what: str
    characteristic: str = ""
    part: str = ""
    source: str = ""
    period: str = ""
    date: str = ""
    section: str = ""  # in a pack: "section 3", which the contents list


def _header_text(text: str, most: int) -> str:
    """Text for a header or footer: & doubled (it starts a code there), cut to `most` characters."""
    text = " ".join(text.split())
    if len(text) > most:
        text = text[:most - 3].rstrip() + "..."
    return text.replace("&", "&&")


def print_setup(ws: Worksheet, heading: PageHeading, fit: str = "width") -> None:
    """Landscape; `fit` is "width" (one page wide), "page" (exactly one page) or "scale" (80%, pages across
    as the columns need: for wide tables); the header names the characteristic, its part, the source and the
    period, the footer the tab's content, the evaluation date and "page x of y"."""
    ws.set_landscape()
    ws.set_paper(9)  # A4; a Letter printer scales it to fit
    if fit == "scale":
        ws.set_print_scale(80)
    else:
        ws.fit_to_pages(1, 1 if fit == "page" else 0)
    ws.set_margins(left=0.4, right=0.4, top=0.75, bottom=0.65)
    who = " · ".join(t for t in (heading.part, heading.characteristic) if t) or heading.what
    right = "\n".join(_header_text(t, 60) for t in (heading.source, heading.period) if t)
    ws.set_header(f"&L&9&B{_header_text(who, 60)}&B&R&8{right}", {"margin": 0.25})
    left = "; ".join(t for t in (heading.what, heading.section, f"evaluated {heading.date}" if heading.date else "")
                     if t)
    ws.set_footer(f"&L&8{_header_text('sheettool: ' + left, 110)}&R&8page &P of &N", {"margin": 0.3})
