"""Find a sheet's header, its data rows and the meaning of each column; build the Characteristic.

Header: among the rows holding text and no number, the one with the most numbers below it under
its text cells, counted down to the next text cell in the column that is not a unit word (so a
label row above the header does not claim the data; ties go to the lower row, nearest the data).
A row of units ("mm", "(µm)") right under the header is recognised as such. Column meaning comes
from the cells (numbers, dates, text) and the header words; the layout from the columns: a count
column and an inspected column make attribute counts, two or more measurement columns subgroups
across, one measurement column with a repeating key (lot, sample, date) readings down, otherwise
individuals.
"""

from __future__ import annotations

import datetime as dt
import itertools
import re
from dataclasses import dataclass, replace

import numpy as np
from openpyxl.utils import get_column_letter

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem
from sheettool.core.data import Characteristic, Counts, Measurements
from sheettool.settings import Setting
from sheettool.settings.convert import merge
from sheettool.workbook.reader.cells import (
    BLANK,
    DATE,
    NUMBER,
    TEXT,
    address,
    date_of,
    kind_of,
    number_of,
    text_of,
    time_of,
)
from sheettool.workbook.reader.columns import UNIT_WORD, column_names, column_role, columns_meaning, unit_of
from sheettool.workbook.reader.labels import labelled_settings
from sheettool.workbook.reader.model import SheetRead
from sheettool.workbook.reader.raw_sheet import RawSheet

MIN_READINGS = 2  # a subgroup with fewer readings (where subgroups are larger) stays out of the limits
MIN_SUBGROUPS = 2  # fewer subgroups cannot set limits; 20 or more are common practice
EXCLUDE_WORDS = re.compile(r"\b(exclude[ds]?|excluding|ignore[ds]?|omit(?:s|ted)?|discard(?:s|ed)?|"
                           r"do not use|don'?t use)\b", re.IGNORECASE)
_MAX_MERGE_CELLS = 100_000
_HEADER_ROWS = 100  # rows searched for headings typed as numbers


def _fill_merged(raw: RawSheet, last_row: int, kinds: np.ndarray, numbers: np.ndarray) -> None:
    """Give the cells of a merged range the value of its top-left cell: every range that starts at or
    above `last_row` (1-based: the header), so a header cell spanning columns names each of them,
    and below it ranges within one column, such as a lot number merged down its subgroup's rows."""
    rows = raw.rows
    for r1, c1, r2, c2 in raw.merged:
        if r1 > len(rows) or (r1 > last_row and c1 != c2) or (r2 - r1 + 1) * (c2 - c1 + 1) > _MAX_MERGE_CELLS:
            continue
        first = rows[r1 - 1]
        value = first[c1 - 1] if c1 - 1 < len(first) else None
        if value is None:
            continue
        for r in range(r1 - 1, min(r2, len(rows))):
            row = rows[r]
            if len(row) < c2:
                row.extend([None] * (c2 - len(row)))
            for c in range(c1 - 1, min(c2, kinds.shape[1])):
                if row[c] is None:
                    row[c] = value
                    kinds[r, c], numbers[r, c] = kinds[r1 - 1, c1 - 1], numbers[r1 - 1, c1 - 1]


_FAST_KIND = {float: NUMBER, int: NUMBER, type(None): BLANK, dt.datetime: DATE, dt.date: DATE, dt.time: DATE}


def _grid(rows: list[list[object]], width: int) -> tuple[np.ndarray, np.ndarray]:
    """Cell kinds and numbers (NaN elsewhere) as matrices; numbers typed as text become numbers in
    `rows` too. Typed cells take one dictionary look-up in a flat pass, only text a closer look."""
    lengths = np.fromiter((len(r) for r in rows), dtype=np.int64, count=len(rows))
    flat = [_FAST_KIND.get(type(v), -1) for row in rows for v in row]
    kinds_flat = np.array(flat, dtype=np.int8)
    starts = np.concatenate([[0], np.cumsum(lengths)[:-1]]) if len(rows) else np.zeros(0, dtype=np.int64)
    row_of = np.repeat(np.arange(len(rows)), lengths)
    col_of = np.arange(kinds_flat.size) - np.repeat(starts, lengths)
    for at in np.flatnonzero(kinds_flat == -1):  # text and other types: look closer
        r, c = int(row_of[at]), int(col_of[at])
        kinds_flat[at] = kind_of(rows[r][c])
        if kinds_flat[at] == NUMBER:
            rows[r][c] = number_of(rows[r][c])
    numbers_flat = np.full(kinds_flat.size, np.nan)
    where = np.flatnonzero(kinds_flat == NUMBER)
    if where.size:
        values = [v for row in rows for v in row]
        numbers_flat[where] = [values[i] for i in where.tolist()]
    kinds = np.zeros((len(rows), width), dtype=np.int8)
    numbers = np.full((len(rows), width), np.nan)
    kinds[row_of, col_of] = kinds_flat
    numbers[row_of, col_of] = numbers_flat
    return kinds, numbers


def _numbers_below(text: np.ndarray, number: np.ndarray, rows: list[list[object]]) -> np.ndarray:
    """Per cell, the numbers below it in its column down to the next heading-like text cell: a label
    row above the header ("Part number | HF-220") counts only the values of the labels under it, not
    the data below the real header. Text further down than _HEADER_ROWS and unit words never stop it."""
    m, width = number.shape
    stops = np.zeros_like(text)
    for r, c in zip(*np.nonzero(text[:_HEADER_ROWS]), strict=True):
        value = rows[r][c] if c < len(rows[r]) else None
        stops[r, c] = not (isinstance(value, str) and UNIT_WORD.match(value.strip()))
    after = np.vstack([np.cumsum(number[::-1], axis=0)[::-1], np.zeros((1, width), dtype=np.int64)])  # rows r..end
    index = np.where(stops, np.arange(m)[:, None], m)
    next_stop = np.vstack([np.minimum.accumulate(index[::-1], axis=0)[::-1][1:], np.full((1, width), m)])
    return after[1:] - np.take_along_axis(after, next_stop, 0)


def _header(kinds: np.ndarray, numbers: np.ndarray, rows: list[list[object]]) -> tuple[int | None, int | None]:
    """(header index, units-row index) 0-based, by the rule in the module docstring. Column headings
    typed as the numbers 1, 2, 3, ... beside a text heading count as text."""
    text, number = kinds == TEXT, (kinds == NUMBER).copy()
    for i in np.flatnonzero(text[:_HEADER_ROWS].any(axis=1) & number[:_HEADER_ROWS].any(axis=1)):
        found = numbers[i][number[i]]
        if found.size >= 2 and np.array_equal(found, np.arange(1, found.size + 1)):
            text[i] |= number[i]
            number[i] = False
    score = np.where(text.any(axis=1) & ~number.any(axis=1), (text * _numbers_below(text, number, rows)).sum(axis=1), 0)
    if score.size == 0 or score.max() == 0:
        return None, None
    best = int(np.flatnonzero(score == score.max())[-1])
    cells = [str(v).strip() for v in rows[best] if isinstance(v, str) and v.strip()]
    above = best - 1
    while above >= 0 and not kinds[above].any():
        above -= 1
    if cells and all(UNIT_WORD.match(c) for c in cells) and above >= 0 and score[above] > 0:
        return above, best
    return best, None


def read_sheet(raw: RawSheet, workbook_layer: dict[str, Setting], cli_layer: dict[str, Setting]) -> SheetRead:
    """Read one sheet. The settings sheet's and the command line's settings are given for the two
    the reader itself needs (unit, subgroup size), beside the sheet's labelled cells found here."""
    rows, title = raw.rows, raw.title
    width = max((len(r) for r in rows), default=0)
    if width == 0:
        raise InputError("the sheet is empty")
    kinds, numbers = _grid(rows, width)
    header, units_row = _header(kinds, numbers, rows)  # before merged cells are filled: a wide title must not win
    if header is not None:
        _fill_merged(raw, header + 1, kinds, numbers)
    start = (units_row if units_row is not None else header if header is not None else -1) + 1
    labelled = labelled_settings(title, rows, header if header is not None else 0)
    try:
        resolved = merge(*[{k: s for k, s in layer.items() if k in ("unit", "subgroup_size")}
                           for layer in (workbook_layer, labelled, cli_layer)])
    except ValueError as exc:
        raise InputError(str(exc)) from None
    region = kinds[start:]
    has_number = (region == NUMBER).any(axis=1)
    if not has_number.any():
        raise InputError("no numeric data on this sheet")
    end = start + int(np.flatnonzero(has_number)[-1]) + 1
    region = kinds[start:end]
    filled = region.any(axis=1)
    data_idx = [start + int(i) for i in np.flatnonzero(filled)]
    names = column_names(rows, header, width)
    counts = np.stack([(region[filled] == k).sum(axis=0) for k in (BLANK, NUMBER, DATE, TEXT)], axis=1)
    roles = [column_role(names[c], counts[c], [rows[i][c] if c < len(rows[i]) else None for i in data_idx[:200]])
             for c in range(width)]
    if not any(r in ("defectives", "defects") for r in roles):  # "n", "units" alone are no count layout
        roles = ["measurement" if r == "inspected" else r for r in roles]
    return _build(raw, rows, kinds, numbers, names, roles, header, units_row, data_idx, int(len(region) - filled.sum()),
                  labelled, resolved)


def _column(rows: list[list[object]], idx: list[int], c: int) -> list[object]:
    return [rows[i][c] if c < len(rows[i]) else None for i in idx]


def _build(raw: RawSheet, rows: list[list[object]], kinds: np.ndarray, numbers: np.ndarray, names: list[str],
           roles: list[str], header: int | None, units_row: int | None, data_idx: list[int], blank_rows: int,
           labelled: dict[str, Setting], resolved: dict[str, Setting]) -> SheetRead:
    title = raw.title
    width = len(roles)
    measure = [c for c in range(width) if roles[c] == "measurement"]
    count_col = next((c for c in range(width) if roles[c] in ("defectives", "defects")), None)
    inspected_col = next((c for c in range(width) if roles[c] == "inspected"), None)
    note_col = next((c for c in range(width) if roles[c] == "note"), None)
    key_col = next((c for c in range(width) if roles[c] == "key"), None)
    date_col = next((c for c in range(width) if roles[c] == "date"), None)
    time_col = next((c for c in range(width) if roles[c] == "time"), None)
    problems: list[Problem] = []

    # Measurement (or count) cells: numbers, blanks and cells that are not numbers.
    value_cols = [count_col] + ([inspected_col] if inspected_col is not None else []) if count_col is not None \
        else measure
    if not value_cols:
        raise InputError("no column of measurements found under the header")
    sub = kinds[data_idx][:, value_cols] if data_idx else np.zeros((0, len(value_cols)), dtype=np.int8)
    values = numbers[data_idx][:, value_cols]
    junk = np.argwhere((sub == TEXT) | (sub == DATE))
    not_numbers = [address(title, data_idx[i] + 1, value_cols[j] + 1) for i, j in junk]
    has_reading = ~np.all(np.isnan(values), axis=1)
    keep = [i for i, k in zip(data_idx, has_reading, strict=True) if k]
    values = values[has_reading]
    blanks = int(((sub == BLANK) & has_reading[:, None]).sum())
    if not_numbers:
        shown = ", ".join(not_numbers[:10]) + (f" and {len(not_numbers) - 10} more" if len(not_numbers) > 10 else "")
        problems.append(Problem("warning", f"{len(not_numbers)} cell(s) are not numbers and were treated "
                                f"as missing: {shown}", sheet=title))
    if not keep:
        raise InputError("no readings found in the measurement columns")
    if len(keep) < len(data_idx):
        passed = sorted(set(data_idx) - set(keep))
        problems.append(Problem("note", f"{len(passed)} row(s) without readings were passed over: rows "
                                f"{_ranges([i + 1 for i in passed][:50])}", sheet=title))

    notes = [text_of(v) for v in _column(rows, keep, note_col)] if note_col is not None else [""] * len(keep)
    dates = _dates(rows, keep, date_col, time_col)
    keys = [text_of(v) for v in _column(rows, keep, key_col)] if key_col is not None else None
    subgroup_size = resolved.get("subgroup_size")
    layout = ("attribute counts" if count_col is not None else "subgroups across" if len(measure) > 1
              else "readings down" if _repeats(keys) or _repeats_dates(dates) or subgroup_size is not None
              else "individuals")
    across = _Shape(data=Measurements(values), readings=int(np.sum(~np.isnan(values))), labels=_labels(keys, dates),
                    notes=notes, dates=dates, rows=[(*rows[i], *(None,) * (width - len(rows[i]))) for i in keep],
                    header=names[:], starts=keep)
    if layout == "attribute counts":
        shape = _counts(across, values, roles[count_col], count_col, inspected_col is not None, problems, title)
    elif layout == "readings down":
        lead = names[key_col] if key_col is not None else names[date_col] if date_col is not None else "Subgroup"
        shape = _down(across, values[:, 0], keys, subgroup_size, lead or "Subgroup", names[measure[0]] or "Reading")
    else:
        shape = across
    data, readings, labels, notes, dates = shape.data, shape.readings, shape.labels, shape.notes, shape.dates
    sheet_rows, header_out, keep = shape.rows, shape.header, shape.starts
    if data.subgroups < MIN_SUBGROUPS:
        raise InputError(f"only one subgroup (row {keep[0] + 1}); control limits need at least {MIN_SUBGROUPS} "
                         "subgroups, and 20 or more are usual for trustworthy limits")
    excluded = np.array([bool(EXCLUDE_WORDS.search(n)) for n in notes])
    short = 0
    if isinstance(data, Measurements) and data.values.shape[1] >= MIN_READINGS:
        sizes = data.sizes
        short = int(np.sum(sizes < data.values.shape[1]))
        few = sizes < MIN_READINGS
        for i in np.flatnonzero(few & ~excluded):
            notes[i] = "; ".join(x for x in (notes[i], f"only {sizes[i]} reading: kept out of the limits") if x)
        excluded |= few
        if short:
            problems.append(Problem("note", f"{short} subgroup(s) have fewer than {data.values.shape[1]} "
                                    f"readings: plotted with their real size; those with fewer than {MIN_READINGS} "
                                    "readings are kept out of the limits", sheet=title))
    if excluded.any():
        shown = ", ".join(labels[i] for i in np.flatnonzero(excluded)[:10])
        problems.append(Problem("note", f"{int(excluded.sum())} subgroup(s) kept out of the limits by their "
                                f"note or size (still plotted): {shown}", sheet=title))
    if data.subgroups < 20:
        problems.append(Problem("note", f"only {data.subgroups} subgroups: 20 or more are usual before "
                                "limits are trusted", sheet=title))
    columns = columns_meaning(names, roles, layout)
    used = sorted({c for c, r in enumerate(roles) if r not in ("empty", "text")})
    hidden_columns = [get_column_letter(c + 1) for c in used if c + 1 in raw.hidden_columns]
    first, last = data_idx[0] + 1, data_idx[-1] + 1
    hidden_rows = sorted(r for r in raw.hidden_rows if first <= r <= last)
    if hidden_rows or hidden_columns:
        problems.append(Problem("note", "hidden cells were read like the others: "
                                + "; ".join(x for x in (f"rows {_ranges(hidden_rows)}" if hidden_rows else "",
                                                        f"columns {', '.join(hidden_columns)}" if hidden_columns
                                                        else "") if x), sheet=title))
    uncached = [f"{address(title, 1, 1).rsplit('!', 1)[0]}!{ref}" for ref in raw.uncached]
    if uncached:
        shown = ", ".join(uncached[:10]) + (f" and {len(uncached) - 10} more" if len(uncached) > 10 else "")
        problems.append(Problem("warning", f"{len(uncached)} formula cell(s) have no saved value (the file "
                                f"was written by a program that does not calculate): {shown}; open and save the "
                                "file in a spreadsheet application to store the values", sheet=title))
    unit = resolved["unit"].value if "unit" in resolved else unit_of(names, rows, units_row,
                                                                     value_cols if count_col is None else [])
    characteristic = Characteristic(name=title, data=data, labels=labels, unit=str(unit), excluded=excluded,
                                    notes=notes, dates=dates)
    return SheetRead(
        sheet=title, characteristic=characteristic, header_row=header + 1 if header is not None else 0,
        first_row=first, last_row=last, columns=columns, header=header_out, rows=sheet_rows, layout=layout,
        settings=labelled, readings=readings, blanks=blanks, blank_rows=blank_rows, not_numbers=not_numbers,
        hidden_rows=hidden_rows, hidden_columns=hidden_columns, short_subgroups=short,
        units_row=units_row + 1 if units_row is not None else 0, formulas_without_value=uncached,
        problems=problems,
    )


@dataclass
class _Shape:
    """A sheet's data in its layout's form, one entry per subgroup (starts: sheet row index of each)."""

    data: Measurements | Counts
    readings: int
    labels: list[str]
    notes: list[str]
    dates: list
    rows: list[tuple]
    header: list[str]
    starts: list[int]


def _counts(across: _Shape, values: np.ndarray, kind: str, count_col: int, has_inspected: bool,
            problems: list[Problem], title: str) -> _Shape:
    """Attribute counts: the count column, the units inspected (one unit a row for defects without it)."""
    inspected = values[:, 1] if has_inspected else np.ones(len(values))
    if not has_inspected and kind == "defectives":
        raise InputError(f"column {get_column_letter(count_col + 1)} counts defectives but no column gives "
                         "the number inspected; add one headed 'inspected'")
    if not has_inspected:
        problems.append(Problem("note", "no column of units inspected: each row counts as one unit", sheet=title))
    counts = values[:, 0]
    impossible = np.isnan(counts) | (counts < 0) | np.isnan(inspected) | (inspected <= 0)
    if kind == "defectives":
        impossible |= counts > inspected
    notes = list(across.notes)
    if impossible.any():
        shown = ", ".join(str(across.starts[i] + 1) for i in np.flatnonzero(impossible)[:10])
        problems.append(Problem("warning", f"rows {shown}: the count is missing or negative, exceeds the "
                                "units inspected, or no units inspected are given; those rows are kept out of the "
                                "limits", sheet=title))
        for i in np.flatnonzero(impossible):
            notes[i] = "; ".join(x for x in (notes[i], "count impossible: excluded") if x)
    return replace(across, data=Counts(counts, inspected, kind=kind), readings=len(values), notes=notes)


def _down(across: _Shape, readings: np.ndarray, keys: list[str] | None, size: Setting | None, lead: str,
          measured: str) -> _Shape:
    """Readings down: consecutive rows with the same key (or date), or blocks of the subgroup size."""
    dates = across.dates
    groups = _groups(keys, dates, size, len(readings))
    width = max(len(g) for g in groups)
    matrix = np.full((len(groups), width), np.nan)
    for g, members in enumerate(groups):
        matrix[g, :len(members)] = readings[members]
    first_labels = keys or _date_labels(dates, len(readings))
    labels = [first_labels[g[0]] if keys or any(dates) else str(n + 1) for n, g in enumerate(groups)]
    notes = ["; ".join(dict.fromkeys(across.notes[i] for i in g if across.notes[i])) for g in groups]
    rows = [(labels[n], *(None if np.isnan(v) else float(v) for v in matrix[n]), notes[n]) for n in range(len(groups))]
    return _Shape(data=Measurements(matrix), readings=int(np.sum(~np.isnan(matrix))), labels=labels, notes=notes,
                  dates=[dates[g[0]] for g in groups], rows=rows,
                  header=[lead, *[f"{measured} {j + 1}" for j in range(width)], "Note"],
                  starts=[across.starts[g[0]] for g in groups])


def _repeats(keys: list[str] | None) -> bool:
    return bool(keys) and any(a == b and a for a, b in itertools.pairwise(keys))


def _repeats_dates(dates: list) -> bool:
    return any(a is not None and a == b for a, b in itertools.pairwise(dates))


def _groups(keys: list[str] | None, dates: list, size: Setting | None, m: int) -> list[list[int]]:
    """Consecutive rows with the same key (or date) form a subgroup; else blocks of the subgroup size."""
    if _repeats(keys) or _repeats_dates(dates):
        marks = keys if _repeats(keys) else dates
        groups: list[list[int]] = []
        for i in range(m):
            if groups and marks[i] == marks[groups[-1][0]]:
                groups[-1].append(i)
            else:
                groups.append([i])
        return groups
    n = int(size.value) if size is not None else 1
    return [list(range(i, min(i + n, m))) for i in range(0, m, n)]


def _dates(rows: list[list[object]], idx: list[int], date_col: int | None, time_col: int | None) -> list:
    if date_col is None:
        return [None] * len(idx)
    dates = [date_of(v) for v in _column(rows, idx, date_col)]
    if time_col is not None:
        for n, t in enumerate(time_of(v) for v in _column(rows, idx, time_col)):
            if dates[n] is not None and t is not None:
                dates[n] = dates[n].replace(hour=t.hour, minute=t.minute)
    return dates


def _labels(keys: list[str] | None, dates: list) -> list[str]:
    """Subgroup labels: the key column where its values tell subgroups apart, else dates, else 1, 2, ..."""
    if keys and len(set(keys)) == len(keys):
        return keys
    return _date_labels(dates, len(dates))


def _date_labels(dates: list, m: int) -> list[str]:
    if any(d is not None for d in dates):
        return [text_of(d) if d is not None else str(i + 1) for i, d in enumerate(dates)]
    return [str(i + 1) for i in range(m)]


def _ranges(numbers: list[int]) -> str:
    parts: list[tuple[int, int]] = []
    for n in numbers:
        if parts and parts[-1][1] == n - 1:
            parts[-1] = (parts[-1][0], n)
        else:
            parts.append((n, n))
    return ", ".join(str(a) if a == b else f"{a}-{b}" for a, b in parts)
