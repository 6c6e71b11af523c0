"""Read measurement workbooks into Characteristics, one per sheet that holds data.

Layout detection: the header is the last row with text above the first row of numbers; the
measurement columns are those numeric in most data rows, less columns whose header names a
subgroup key (sample, lot, date...). openpyxl parses the package XML through defusedxml when it
is installed, which sheettool requires, so entity-expansion tricks are refused.
"""

from __future__ import annotations

import datetime as dt
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import openpyxl
from openpyxl.utils import get_column_letter
from openpyxl.utils.exceptions import InvalidFileException

from sheettool.core.data import Characteristic, Measurements
from sheettool.errors import InputError
from sheettool.problems import Problem

_KEY_WORDS = re.compile(r"(subgroup|sample|lot|batch|point|date|time|shift|operator|no\b|#|id\b|number)",
                        re.IGNORECASE)
_NOTE_WORDS = re.compile(r"(note|comment|remark)", re.IGNORECASE)


@dataclass
class SheetRead:
    """One sheet read as a characteristic, with an account of what was read."""

    sheet: str
    characteristic: Characteristic
    header_row: int
    first_row: int
    last_row: int
    columns: dict[str, str]  # column letter -> meaning
    header: list[str] = field(default_factory=list)
    rows: list[tuple] = field(default_factory=list)  # the data rows' values, for copying


@dataclass
class WorkbookRead:
    """All sheets read from one file, with the problems met on the way."""

    path: Path
    sheets: list[SheetRead]
    problems: list[Problem]


def _is_number(value: object) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def read_workbook(path: Path) -> WorkbookRead:
    """Read every sheet of `path`; raise InputError when nothing in it can be evaluated."""
    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: file not found; check the name and folder")
    if path.is_dir():
        raise InputError(f"{path}: is a folder, not a workbook")
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, InvalidFileException, KeyError, OSError, ValueError) as exc:
        raise InputError(f"{path}: not a readable .xlsx workbook ({type(exc).__name__}); "
                         "save it from the spreadsheet application as .xlsx and try again") from None
    try:
        sheets: list[SheetRead] = []
        problems: list[Problem] = []
        for ws in book.worksheets:
            rows = [tuple(r) for r in ws.iter_rows(values_only=True)]
            try:
                sheets.append(_read_sheet(ws.title, rows))
            except InputError as exc:
                problems.append(Problem("warning", f"{path.name}, sheet '{ws.title}'", str(exc)))
    finally:
        book.close()
    if not sheets:
        detail = "; ".join(p.message for p in problems) or "the workbook has no sheets"
        raise InputError(f"{path}: no sheet holds measurement data ({detail})")
    return WorkbookRead(path=path, sheets=sheets, problems=problems)


def _read_sheet(title: str, rows: list[tuple]) -> SheetRead:
    numeric_rows = [i for i, r in enumerate(rows) if sum(_is_number(v) for v in r) >= 1]
    if not numeric_rows:
        raise InputError("no numeric data on this sheet")
    first = numeric_rows[0]
    header_idx = next((i for i in range(first - 1, -1, -1)
                       if any(isinstance(v, str) and v.strip() for v in rows[i])), None)
    header = [str(v).strip() if v is not None else "" for v in rows[header_idx]] if header_idx is not None else []
    data = rows[first:]
    width = max(len(r) for r in data)
    header += [""] * (width - len(header))
    data = [tuple(r) + (None,) * (width - len(r)) for r in data]
    data = [r for r in data if any(v is not None and v != "" for v in r)]
    measure_cols, columns, label_col, note_col = [], {}, None, None
    for c in range(width):
        col = [r[c] for r in data]
        letter = get_column_letter(c + 1)
        numeric = sum(_is_number(v) for v in col)
        name = header[c]
        if _NOTE_WORDS.search(name):
            note_col = c
            columns[letter] = f"note ({name})"
        elif (name and _KEY_WORDS.search(name)) or any(isinstance(v, dt.datetime) for v in col):
            label_col = c if label_col is None else label_col
            columns[letter] = f"subgroup key ({name or 'dates'})"
        elif numeric >= max(1, len(col) // 2):
            measure_cols.append(c)
            columns[letter] = f"measurement ({name or 'no header'})"
    if not measure_cols:
        raise InputError("no column of measurements found under the header")
    values = np.array([[float(r[c]) if _is_number(r[c]) else np.nan for c in measure_cols] for r in data])
    keep = ~np.all(np.isnan(values), axis=1)
    data = [r for r, k in zip(data, keep, strict=True) if k]
    values = values[keep]
    labels = [_label(r[label_col]) if label_col is not None else str(i + 1) for i, r in enumerate(data)]
    notes = [str(r[note_col]) if note_col is not None and r[note_col] is not None else "" for r in data]
    characteristic = Characteristic(name=title, data=Measurements(values), labels=labels, notes=notes)
    return SheetRead(
        sheet=title,
        characteristic=characteristic,
        header_row=(header_idx + 1) if header_idx is not None else 0,
        first_row=first + 1,
        last_row=len(rows),
        columns=columns,
        header=header,
        rows=data,
    )


def _label(value: object) -> str:
    if isinstance(value, dt.datetime):
        return value.strftime("%Y-%m-%d %H:%M") if (value.hour or value.minute) else value.strftime("%Y-%m-%d")
    if _is_number(value) and float(value).is_integer():
        return str(int(value))
    return "" if value is None else str(value)
