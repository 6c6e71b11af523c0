"""What reading a sheet found beside its data: subgroups kept out of the limits, the account of the
cells read (not numbers, blanks, hidden cells, formulas without a value), dates out of order, repeated
or implausible, and the problems saying so.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass

import numpy as np
from openpyxl.utils import get_column_letter

from sheettool.base.problems import Problem
from sheettool.core.data import Measurements
from sheettool.workbook.reader.cell_grid import ValueCells
from sheettool.workbook.reader.cells import address
from sheettool.workbook.reader.columns import Columns
from sheettool.workbook.reader.header import Frame
from sheettool.workbook.reader.layouts import Subgroups
from sheettool.workbook.reader.raw_sheet import RawSheet

MIN_READINGS = 2  # a subgroup with fewer readings (where subgroups are larger) stays out of the limits
EARLIEST_DATE = dt.datetime(1980, 1, 1)  # a subgroup dated before it is taken for a typing or conversion error
LATEST_AHEAD = dt.timedelta(days=365)  # nor more than this after the time of the evaluation
ROWS_NAMED = 50  # rows named in one problem, the rest counted
EXCLUDE_WORDS = re.compile(r"\b(exclude[ds]?|excluding|ignore[ds]?|omit(?:s|ted)?|discard(?:s|ed)?|"
                           r"do not use|don'?t use)\b", re.IGNORECASE)
# Notes that read like a reason to keep a subgroup out of the limits (a special cause, a measuring fault) but lack an
# exclusion word: the subgroup stays in, with a hint.
REASON_WORDS = re.compile(r"\b(gauge|gage|dropped|broken|damaged|faulty|wrong|mistake|error|mix-?up|mixed up|"
                          r"recalibrat\w*|out of calibration|quarantin\w*|scrap(?:ped)?|set-?up|trial|test piece|"
                          r"power (?:cut|failure)|outage|crash(?:ed)?|contaminat\w*|spill(?:ed)?|re-?measured?)\b",
                          re.IGNORECASE)
WORKED_EXAMPLE = re.compile(r"^\s*worked example\b", re.IGNORECASE)  # the templates' first row, never data


@dataclass
class Exclusions:
    """The subgroups kept out of the limits, by their note or their size (still plotted)."""

    excluded: np.ndarray  # bool, one per subgroup
    notes: list[str]  # the subgroups' notes, with the reason where the size keeps one out
    short: int  # subgroups with fewer readings than the largest
    reasons: list[int]  # subgroups (0-based) kept in whose note reads like a reason to keep them out


def example_rows(rows: list[list[object]], note: int | None, data: list[int]) -> list[int]:
    """The data rows (0-based) whose note marks a template's worked example: never evaluated, never plotted."""
    if note is None:
        return []
    return [r for r in data if note < len(rows[r]) and isinstance(rows[r][note], str)
            and WORKED_EXAMPLE.match(rows[r][note])]


@dataclass
class Account:
    """The cells read beside the data, kept in SheetRead and said in the problems."""

    not_numbers: list[str]  # cell addresses, treated as missing
    passed_rows: list[int]  # 1-based data rows without a reading
    hidden_rows: list[int]  # within the data rows
    hidden_columns: list[str]  # among the columns used
    formulas_without_value: list[str]  # cell addresses


def exclusions(shape: Subgroups) -> Exclusions:
    """Subgroups whose note says to leave them out, and those with fewer than MIN_READINGS readings."""
    data, notes = shape.data, list(shape.notes)
    excluded = np.array([bool(EXCLUDE_WORDS.search(n)) for n in notes])
    short = 0
    if isinstance(data, Measurements) and data.values.shape[1] >= MIN_READINGS:
        sizes = data.sizes
        short = int(np.sum(sizes < data.values.shape[1]))
        few = sizes < MIN_READINGS
        for i in np.flatnonzero(few & ~excluded):
            notes[i] = "; ".join(x for x in (notes[i], f"only {sizes[i]} reading: kept out of the limits") if x)
        excluded |= few
    reasons = [i for i, n in enumerate(shape.notes) if not excluded[i] and REASON_WORDS.search(n)]
    return Exclusions(excluded=excluded, notes=notes, short=short, reasons=reasons)


def account(raw: RawSheet, frame: Frame, columns: Columns, cells: ValueCells) -> Account:
    """The account of a sheet's cells: those not numbers, rows passed over, hidden cells, formulas without value."""
    used = sorted({c for c, r in enumerate(columns.roles) if r not in ("empty", "text")})
    sheet = address(raw.title, 1, 1).rsplit("!", 1)[0]
    return Account(not_numbers=cells.not_numbers,
                   passed_rows=[i + 1 for i in sorted(set(frame.data) - set(cells.rows))],
                   hidden_rows=sorted(r for r in raw.hidden_rows if frame.first <= r <= frame.last),
                   hidden_columns=[get_column_letter(c + 1) for c in used if c + 1 in raw.hidden_columns],
                   formulas_without_value=[f"{sheet}!{ref}" for ref in raw.uncached])


def problems(title: str, seen: Account, shape: Subgroups, out: Exclusions) -> list[Problem]:
    """The problems of one sheet, in the order a reader meets them: cells, rows, counts, subgroups, hidden cells,
    formulas."""
    found = [*_cell_problems(seen, shape), *_subgroup_problems(shape, out), *_hidden_problems(seen)]
    return [Problem(severity, message, sheet=title) for severity, message in found] + [
        Problem("warning", message, sheet=title, cell=rows) for message, rows in date_problems(shape)]


def date_problems(shape: Subgroups, now: dt.datetime | None = None) -> list[tuple[str, str]]:
    """(message, rows) for subgroups dated before EARLIEST_DATE or more than LATEST_AHEAD after `now` (default: the
    clock), and for those dated before or at the same time as the subgroup above them (implausible dates left out)."""
    latest = (now or dt.datetime.now()) + LATEST_AHEAD
    absurd, earlier, same = [], [], []
    last: dt.datetime | None = None
    for date, start in zip(shape.dates, shape.starts, strict=True):
        if not isinstance(date, dt.datetime):
            continue
        date = date.replace(tzinfo=None)
        if not EARLIEST_DATE <= date <= latest:
            absurd.append(start + 1)
            continue
        if last is not None and date < last:
            earlier.append(start + 1)
        elif last is not None and date == last:
            same.append(start + 1)
        last = date
    found = [(f"{len(rows)} subgroup(s) {words}", _rows_named(rows)) for rows, words in (
        (absurd, f"dated before {EARLIEST_DATE:%Y-%m-%d} or more than a year in the future, which is taken for a "
                 "typing or conversion error; check the date cells"),
        (earlier, "dated before the subgroup above them: the dates are out of order; check the order of the rows "
                  "or their dates"),
        (same, "dated the same as the subgroup above them; give each subgroup its own date and time")) if rows]
    return found


def _rows_named(rows: list[int]) -> str:
    """Rows in words, at most ROWS_NAMED of them: "rows 3, 5-8 and 12 more"."""
    more = len(rows) - ROWS_NAMED
    return f"row{'s' if len(rows) > 1 else ''} {_ranges(rows[:ROWS_NAMED])}" + (f" and {more} more" if more > 0 else "")


def _cell_problems(seen: Account, shape: Subgroups) -> list[tuple[str, str]]:
    found = []
    if seen.not_numbers:
        found.append(("warning", f"{len(seen.not_numbers)} cell(s) are not numbers and were treated as missing: "
                      f"{_shown(seen.not_numbers)}"))
    if seen.passed_rows:
        found.append(("note", f"{len(seen.passed_rows)} row(s) without readings were passed over: rows "
                      f"{_ranges(seen.passed_rows[:50])}"))
    if shape.one_unit_per_row:
        found.append(("note", "no column of units inspected: each row counts as one unit"))
    if shape.impossible:
        found.append(("warning", f"rows {', '.join(map(str, shape.impossible[:10]))}: the count is missing or "
                      "negative, exceeds the units inspected, or no units inspected are given; those rows are kept "
                      "out of the limits"))
    return found


def _subgroup_problems(shape: Subgroups, out: Exclusions) -> list[tuple[str, str]]:
    found = []
    if out.short:
        found.append(("note", f"{out.short} subgroup(s) have fewer than {shape.data.values.shape[1]} readings: "  # type: ignore[union-attr]
                      f"plotted with their real size; those with fewer than {MIN_READINGS} readings are kept out "
                      "of the limits"))
    if out.excluded.any():
        shown = ", ".join(shape.labels[i] for i in np.flatnonzero(out.excluded)[:10])
        found.append(("note", f"{int(out.excluded.sum())} subgroup(s) kept out of the limits by their note or size "
                      f"(still plotted): {shown}"))
    if out.reasons:
        shown = "; ".join(f"{shape.labels[i]}: '{shape.notes[i]}'" for i in out.reasons[:10])
        found.append(("warning", f"{len(out.reasons)} subgroup(s) have a note that reads like a reason to keep them "
                      f"out of the limits, but they stay in ({shown}); write 'exclude' in such a note to keep the "
                      "subgroup out of the limits (it is still plotted)"))
    if shape.data.subgroups < 20:
        found.append(("note", f"only {shape.data.subgroups} subgroups: 20 or more are usual before limits are "
                      "trusted"))
    return found


def _hidden_problems(seen: Account) -> list[tuple[str, str]]:
    found = []
    if seen.hidden_rows or seen.hidden_columns:
        found.append(("note", "hidden cells were read like the others: " + "; ".join(
            x for x in (f"rows {_ranges(seen.hidden_rows)}" if seen.hidden_rows else "",
                        f"columns {', '.join(seen.hidden_columns)}" if seen.hidden_columns else "") if x)))
    if seen.formulas_without_value:
        found.append(("warning", f"{len(seen.formulas_without_value)} formula cell(s) have no saved value (the file "
                      f"was written by a program that does not calculate): {_shown(seen.formulas_without_value)}; "
                      "open and save the file in a spreadsheet application to store the values"))
    return found


def _shown(cells: list[str]) -> str:
    """At most ten cells named, and how many more."""
    return ", ".join(cells[:10]) + (f" and {len(cells) - 10} more" if len(cells) > 10 else "")


def _ranges(numbers: list[int]) -> str:
    """Row numbers in words: "3, 5-8"."""
    parts: list[tuple[int, int]] = []
    for n in numbers:
        if parts and parts[-1][1] == n - 1:
            parts[-1] = (parts[-1][0], n)
        else:
            parts.append((n, n))
    return ", ".join(str(a) if a == b else f"{a}-{b}" for a, b in parts)
