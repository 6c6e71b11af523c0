"""The four layouts (see model.LAYOUTS) and how each makes subgroups out of a sheet's value cells.

The layout comes from the columns: a count column makes attribute counts, two or more measurement
columns subgroups across, one measurement column with a repeating key (lot, sample, date) or a
subgroup size readings down, otherwise individuals.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field, replace

import numpy as np
from openpyxl.utils import get_column_letter

from sheettool.base.errors import InputError
from sheettool.core.data import Counts, Measurements
from sheettool.settings import Setting
from sheettool.workbook.reader.cell_grid import CellGrid, ValueCells
from sheettool.workbook.reader.cells import date_of, text_of, time_of
from sheettool.workbook.reader.columns import Columns

MIN_SUBGROUPS = 2  # fewer subgroups cannot set limits; 20 or more are common practice


@dataclass
class Subgroups:
    """A sheet's data in its layout's form, one entry per subgroup."""

    layout: str
    data: Measurements | Counts
    readings: int
    labels: list[str]
    notes: list[str]
    dates: list
    rows: list[tuple]  # as SheetRead.rows
    header: list[str]  # as SheetRead.header
    starts: list[int]  # 0-based sheet row where each subgroup starts
    impossible: list[int] = field(default_factory=list)  # attribute counts: 1-based rows whose count cannot be
    one_unit_per_row: bool = False  # attribute counts without a column of units inspected


def subgroups(grid: CellGrid, columns: Columns, cells: ValueCells, size: Setting | None) -> Subgroups:
    """The subgroups of the sheet in its layout; InputError for fewer than MIN_SUBGROUPS."""
    rows, kept, values = grid.rows, cells.rows, cells.values
    note, key, date = columns.first("note"), columns.first("key"), columns.first("date")
    notes = [text_of(v) for v in grid.column(kept, note)] if note is not None else [""] * len(kept)
    dates = _dates(grid, kept, date, columns.first("time"))
    keys = [text_of(v) for v in grid.column(kept, key)] if key is not None else None
    layout = ("attribute counts" if columns.count is not None else "subgroups across" if len(columns.measure) > 1
              else "readings down" if _repeats(keys) or _repeats_dates(dates) or size is not None
              else "individuals")
    width = grid.width
    across = Subgroups(layout=layout, data=Measurements(values), readings=int(np.sum(~np.isnan(values))),
                       labels=_labels(keys, dates), notes=notes, dates=dates,
                       rows=[(*rows[i], *(None,) * (width - len(rows[i]))) for i in kept],
                       header=columns.names[:], starts=kept)
    if layout == "attribute counts":
        shape = _counts(across, values, columns)
    elif layout == "readings down":
        names = columns.names
        lead = names[key] if key is not None else names[date] if date is not None else "Subgroup"
        shape = _down(across, values[:, 0], keys, size, lead or "Subgroup", names[columns.measure[0]] or "Reading")
    else:
        shape = across
    if shape.data.subgroups < MIN_SUBGROUPS:
        raise InputError(f"only one subgroup (row {shape.starts[0] + 1}); control limits need at least "
                         f"{MIN_SUBGROUPS} subgroups, and 20 or more are usual for trustworthy limits")
    return shape


MAX_UNITS = 1e12  # more units (or defects) in one subgroup than any inspection records: a typing or export error


def _counts(across: Subgroups, values: np.ndarray, columns: Columns) -> Subgroups:
    """Attribute counts: the count column, the units inspected (one unit a row for defects without it)."""
    kind = columns.roles[columns.count]  # type: ignore[index]
    has_inspected = columns.first("inspected") is not None
    inspected = values[:, 1] if has_inspected else np.ones(len(values))
    if not has_inspected and kind == "defectives":
        raise InputError(f"column {get_column_letter(columns.count + 1)} counts defectives but no column gives "  # type: ignore[operator]
                         "the number inspected; add one headed 'inspected'")
    counts = values[:, 0]
    impossible = (np.isnan(counts) | (counts < 0) | np.isnan(inspected) | (inspected <= 0)
                  | (counts > MAX_UNITS) | (inspected > MAX_UNITS))
    if kind == "defectives":  # units that fail are counted out of whole units; a u chart's size may be an area
        impossible |= (counts > inspected) | (np.mod(inspected, 1) != 0)
    notes = list(across.notes)
    for i in np.flatnonzero(impossible):
        notes[i] = "; ".join(x for x in (notes[i], "count impossible: excluded") if x)
    return replace(across, data=Counts(counts, inspected, kind=kind), readings=len(values), notes=notes,
                   impossible=[across.starts[i] + 1 for i in np.flatnonzero(impossible)],
                   one_unit_per_row=not has_inspected)


def _down(across: Subgroups, readings: np.ndarray, keys: list[str] | None, size: Setting | None, lead: str,
          measured: str) -> Subgroups:
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
    return Subgroups(layout=across.layout, data=Measurements(matrix), readings=int(np.sum(~np.isnan(matrix))),
                     labels=labels, notes=notes, dates=[dates[g[0]] for g in groups], rows=rows,
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


def _dates(grid: CellGrid, rows: list[int], date_col: int | None, time_col: int | None) -> list:
    if date_col is None:
        return [None] * len(rows)
    dates = [date_of(v) for v in grid.column(rows, date_col)]
    if time_col is not None:
        for n, t in enumerate(time_of(v) for v in grid.column(rows, time_col)):
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
