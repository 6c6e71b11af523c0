"""The data tab of one characteristic: the input rows copied as values, and beside them the
per-subgroup statistics, limits and signal flags, as one filterable spreadsheet table.

Printing: only the first PRINT_ROWS subgroups are in the print area, so a month of hourly data
does not turn into hundreds of pages (the method notes say so). Subgroups past the rows a tab holds
continue on "NAME data 2" and so on, and columns past the format's last are left out (format_limits),
each said in a problem; every tab of the data carries the same columns.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from xlsxwriter.format import Format
from xlsxwriter.utility import xl_cell_to_rowcol
from xlsxwriter.worksheet import Worksheet

from sheettool.base.problems import Problem
from sheettool.core.charts import PlottedStatistic
from sheettool.core.data import Measurements
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook import style
from sheettool.workbook.reader import SheetRead
from sheettool.workbook.report import SheetEvaluation
from sheettool.workbook.writer import cells, format_limits, formulas
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.tab import Tab

HEADER_ROW = 2  # title in row 0, note in row 1, table header in row 2
HEADER_HEIGHT = 48  # points: the table head's words wrap to three lines in the narrow computed columns
PRINT_ROWS = 60


@dataclass
class StatColumns:
    """Where one plotted statistic's columns stand on the data tab."""

    stat: PlottedStatistic
    value: int
    center: int
    lcl: int
    ucl: int
    signal: int


@dataclass
class DataLayout:
    """The data tab's geometry, shared by the charts, the limits formulas and the evaluation tab."""

    tab: str
    eval_tab: str
    m: int
    x: np.ndarray  # chart x of each subgroup: point number or spreadsheet day number
    x_is_date: bool
    x_col: int
    copy_col: int
    reading_cols: list[int]
    base_col: int
    stats: dict[str, StatColumns]
    flags_col: int
    readings: np.ndarray | None  # the copied readings as numbers, for checking formulas
    decimals: int = 3
    headers: list[str] = field(default_factory=list)
    parts: list[tuple[str, int, int]] = field(default_factory=list)  # (tab, first, end subgroup index) of each tab
    copied: int = 0  # input columns copied: all of them, unless the format's last column came first
    left_out: int = 0  # input columns left out for the format's last column
    file: str = ""  # the input file and sheet, where the problems of this data say they are
    sheet: str = ""

    @property
    def first_row(self) -> int:
        """0-based row of the first subgroup."""
        return HEADER_ROW + 1

    @property
    def last_row(self) -> int:
        """0-based row of the last subgroup on the (first) data tab."""
        return HEADER_ROW + (self.parts[0][2] if self.parts else self.m)

    @property
    def split(self) -> bool:
        """True when the subgroups continue on more than one data tab."""
        return len(self.parts) > 1

    def range(self, col: int) -> str:
        """Absolute reference to a column's subgroup rows (on the first data tab)."""
        return cells.column_range(self.tab, col, self.first_row, self.last_row)

    def window(self, col: int, first: int) -> str | None:
        """Reference to a column's rows of subgroups first.. to the last, or None when they span two tabs."""
        for tab, start, end in self.parts or [(self.tab, 0, self.m)]:
            if start <= first and end == self.m:
                return cells.column_range(tab, col, self.first_row + first - start, HEADER_ROW + end - start)
        return None


def rows_per_tab() -> int:
    """Subgroups one data tab holds below its title, note and table head."""
    return format_limits.ROWS - HEADER_ROW - 1


def data_tab_count(m: int) -> int:
    """How many data tabs m subgroups take."""
    return len(format_limits.spans(m, rows_per_tab()))


def _dates(result: CharacteristicResult) -> np.ndarray | None:
    dates = result.characteristic.dates
    if not dates or any(not isinstance(d, dt.datetime) for d in dates):
        return None
    x = np.array([cells.excel_serial(d) for d in dates])
    return x if x.size < 2 or np.all(np.diff(x) > 0) else None


def plan_data_tab(result: CharacteristicResult, read: SheetRead, tab: str, eval_tab: str,
                  live: bool = False, more: tuple[str, ...] = ()) -> DataLayout:
    """Decide the columns of the data tab; with `live`, gather the copied readings to check formulas on.

    `more` names the tabs the subgroups continue on past the rows one tab holds (see data_tab_count).
    """
    m = result.characteristic.data.subgroups
    dates = _dates(result)
    headers = ["Point"] + (["Date"] if dates is not None else [])
    copy_col = len(headers)
    width = max([len(read.header)] + [len(r) for r in read.rows[:1]])
    computed = 2 + 5 * len(result.fit.statistics)  # base, five per statistic, flags
    left_out = max(0, copy_col + width + computed - format_limits.COLUMNS)
    width -= left_out
    headers += [read.header[c] if c < len(read.header) else "" for c in range(width)]
    measured = sorted(_column_index(letter) for letter, meaning in read.columns.items()
                      if meaning.startswith("measurement"))
    reading_cols = [copy_col + c for c in measured if c < width]
    base_col = len(headers)
    headers.append("Sets limits (1 = yes)")
    stats: dict[str, StatColumns] = {}
    for stat in result.fit.statistics:
        col = len(headers)
        stats[stat.name] = StatColumns(stat, col, col + 1, col + 2, col + 3, col + 4)
        headers += [stat.label, f"{stat.label}: center line", f"{stat.label}: LCL", f"{stat.label}: UCL",
                    f"{stat.label}: signal"]
    flags_col = len(headers)
    headers.append("Signals at this point")
    readings = None
    if live and reading_cols and len(read.rows) == m and not left_out:
        readings = np.array([[_as_float(row[c - copy_col]) if c - copy_col < len(row) else np.nan
                              for c in reading_cols] for row in read.rows], dtype=float).reshape(m, len(reading_cols))
    data = result.characteristic.data
    source = (data.values if isinstance(data, Measurements)
              else np.concatenate([s.values for s in result.fit.statistics]))
    spans = format_limits.spans(m, rows_per_tab())
    return DataLayout(
        tab=tab, eval_tab=eval_tab, m=m,
        x=dates if dates is not None else np.arange(1, m + 1, dtype=float),
        x_is_date=dates is not None, x_col=1 if dates is not None else 0,
        copy_col=copy_col, reading_cols=reading_cols, base_col=base_col, stats=stats, flags_col=flags_col,
        readings=readings, decimals=cells.decimals(source), headers=cells.unique_headers(headers),
        parts=[(name, first, end) for name, (first, end) in zip((tab, *more), spans, strict=True)],
        copied=width, left_out=left_out, file=result.file, sheet=read.sheet,
    )


def _column_index(letter: str) -> int:
    return xl_cell_to_rowcol(f"{letter}1")[1]


def _as_float(value: object) -> float:
    if isinstance(value, int | float) and not isinstance(value, bool):
        return float(value)
    return np.nan


def write_data_tab(out: BookWriter, tabs: list[Tab], layout: DataLayout, sheet: SheetEvaluation,
                   limit_names: dict[tuple[str, str], str], table: str, heading: cells.PageHeading) -> list[str]:
    """Write the data tab (and the tabs it continues on); return the statistics written as values although
    --formulas was asked."""
    result, read, live = sheet.result, sheet.read, out.live
    ch = result.characteristic
    decimals = layout.decimals
    fmts = (tabs[0].fmt[f"dec{min(10, decimals)}"], tabs[0].fmt[f"dec{min(10, decimals + 1)}"],
            tabs[0].fmt[f"dec{min(10, decimals + 2)}"])
    builders: dict[str, Callable[[int], str] | None] = {}
    as_values: list[str] = []
    for name, sc in layout.stats.items():
        builders[name] = (formulas.statistic_formula(name, sc.stat.values, layout.readings, layout.reading_cols)
                          if live else None)
        if live and builders[name] is None:
            as_values.append(sc.stat.label)
    # One job per computed column: (column, values, format, formula builder or None); the loop in _rows is
    # the hot path for large files, so it is kept free of lookups.
    jobs: list[tuple[int, list[float], Format, Callable[[int], str] | None]] = []
    for name, sc in layout.stats.items():
        jobs.append((sc.value, sc.stat.values.tolist(), fmts[1], builders[name]))
        for key, col in (("center", sc.center), ("lcl", sc.lcl), ("ucl", sc.ucl)):
            ref = limit_names.get((name, key))
            jobs.append((col, getattr(sc.stat, key).tolist(), fmts[2], None if ref is None else _constant(ref)))
    note = ("The input rows copied as values; statistics, limits and signals beside them were computed by "
            "sheettool." + (" Statistics and limits are live formulas." if live else ""))
    for k, (tab, (_, first, end)) in enumerate(zip(tabs, layout.parts, strict=True)):
        told = note + _continued(layout, k)
        _head(tab, layout, f"Data of {result.identity}" + (f" ({k + 1} of {len(tabs)})" if layout.split else ""), told)
        _rows(tab, layout, sheet, jobs, fmts, first, end)
        _table(tab, layout, read, f"{table}_{k + 1}" if k else table, end - first, heading)
    _said(out, layout, ch.dates)
    return as_values


def _continued(layout: DataLayout, k: int) -> str:
    """What a data tab says of the tabs its subgroups continue on, and of input columns left out."""
    text = ""
    if layout.split:
        _, first, end = layout.parts[k]
        others = ", ".join(f"'{tab}'" for tab, _, _ in layout.parts)
        text += (f" Subgroups {first + 1:,} to {end:,} of {layout.m:,}: one tab holds {rows_per_tab():,} "
                 f"(the format's {format_limits.ROWS:,} rows); the data is on {others}.")
    if layout.left_out:
        text += (f" The last {layout.left_out:,} input column(s) are left out: a tab holds "
                 f"{format_limits.COLUMNS:,} columns.")
    return text


def _said(out: BookWriter, layout: DataLayout, dates: list) -> None:
    """The problems of the data tab: subgroups continued on more tabs, columns left out, dates not used."""
    where = {"file": layout.file, "sheet": layout.sheet}
    if not layout.x_is_date and any(isinstance(d, dt.datetime) for d in dates):
        out.problems.append(Problem("note", "the charts are drawn by point number, not by date: not every subgroup "
                                    "has a date, each later than the one before", **where))
    if layout.split:
        out.problems.append(Problem("note", f"{layout.m:,} subgroups are more than one tab holds "
                                    f"({rows_per_tab():,} below the head; the format has {format_limits.ROWS:,} "
                                    f"rows): the data continues on " + ", ".join(f"'{t}'" for t, _, _ in
                                                                                layout.parts[1:])
                                    + "; every reading is kept" + ("; its numbers are values, not formulas (a "
                                                                   "formula cannot reach over several tabs)"
                                                                   if out.formulas else ""), **where))
    if layout.left_out:
        out.problems.append(Problem("warning", f"the data tab leaves out the input's last {layout.left_out:,} "
                                    f"column(s): with the computed columns they pass the format's "
                                    f"{format_limits.COLUMNS:,} columns", **where))


def _head(tab: Tab, layout: DataLayout, title: str, note: str) -> None:
    """Title, link back to the evaluation and the note above the table."""
    ws, fmt = tab.ws, tab.fmt
    ws.write_string(0, 0, title, fmt["title"])
    ws.write_url(0, 4, cells.internal_link(layout.eval_tab), fmt["link"], string=layout.eval_tab)
    ws.write_string(1, 0, note)


def _rows(tab: Tab, layout: DataLayout, sheet: SheetEvaluation,
          jobs: list[tuple[int, list[float], Format, Callable[[int], str] | None]],
          fmts: tuple[Format, Format, Format], first: int, end: int) -> None:
    """The subgroups first..end-1 on one tab: the copied input row, then the computed columns."""
    result, read, ws, fmt = sheet.result, sheet.read, tab.ws, tab.fmt
    ch = result.characteristic
    reading_set = set(layout.reading_cols)
    copy_fmt = [fmts[0] if layout.copy_col + c in reading_set else None for c in range(len(layout.headers))]
    rows = read.rows if len(read.rows) == layout.m else [()] * layout.m
    width = layout.copied if layout.left_out else None
    flags = _signal_flags(result)
    write_number, write_formula, copy_col = ws.write_number, ws.write_formula, layout.copy_col
    base_col, flags_col = layout.base_col, layout.flags_col
    base_list = np.asarray(result.fit.base, dtype=bool).tolist()
    shift = layout.first_row - first
    for i in range(first, end):
        r = i + shift
        write_number(r, 0, i + 1)
        if layout.x_is_date:
            ws.write_datetime(r, 1, ch.dates[i], fmt["date"])
        for c, value in enumerate(rows[i] if width is None else rows[i][:width]):
            kind = type(value)
            if kind is float or kind is int:
                if value - value == 0:
                    write_number(r, copy_col + c, value, copy_fmt[c])
            elif value is not None:
                _copy(ws, r, copy_col + c, value, fmt)
        write_number(r, base_col, 1 if base_list[i] else 0)
        for col, values, cell_fmt, build in jobs:
            v = values[i]
            if v - v == 0:  # finite: NaN and infinities leave the cell empty
                if build is None:
                    write_number(r, col, v, cell_fmt)
                else:
                    write_formula(r, col, "=" + build(r), cell_fmt, v)
        if i in flags:
            ws.write_string(r, flags_col, flags[i], fmt["copied_text"])
    for name, sc in layout.stats.items():
        values = sc.stat.values
        for i in sorted({s.point - 1 for s in result.signals if s.statistic == name}):
            if first <= i < end:
                cells.number(ws, i + shift, sc.signal, float(values[i]), fmts[1])


def _table(tab: Tab, layout: DataLayout, read: SheetRead, table: str, count: int,
           heading: cells.PageHeading) -> None:
    """The filterable table over one tab's rows, frozen head, widths and the print area."""
    ws, fmt = tab.ws, tab.fmt
    last_row, last = HEADER_ROW + count, layout.flags_col
    ws.add_table(HEADER_ROW, 0, last_row, last, {
        "name": table, "style": "Table Style Light 1",
        "columns": [{"header": h, "header_format": fmt["head"]} for h in layout.headers]})
    ws.freeze_panes(layout.first_row, 1)
    _widths(tab, layout, read)
    cells.print_setup(ws, heading, fit="scale")  # a legible size; the columns continue on pages across
    ws.repeat_rows(HEADER_ROW)
    ws.repeat_columns(0, layout.x_col)  # the point (and its date) on every page across
    ws.print_across()
    ws.print_area(0, 0, min(last_row, layout.first_row + PRINT_ROWS - 1), last)


def _constant(text: str) -> Callable[[int], str]:
    return lambda row: text


def _copy(ws: Worksheet, row: int, col: int, value: object, fmt: style.Formats) -> None:
    """The slow path of copying: dates with a date format, text indented off the number beside it, everything
    else through cells.put."""
    if isinstance(value, dt.datetime | dt.date):
        ws.write_datetime(row, col, value, fmt["date"])
    else:
        cells.put(ws, row, col, value, fmt["copied_text"] if isinstance(value, str) else None)


def _signal_flags(result: CharacteristicResult) -> dict[int, str]:
    labels = {s.name: s.label for s in result.fit.statistics}
    out: dict[int, list[str]] = {}
    for s in result.signals:
        out.setdefault(s.point - 1, []).append(f"{labels.get(s.statistic, s.statistic)}: {', '.join(s.rules)}")
    return {i: "; ".join(v) for i, v in out.items()}


def _widths(tab: Tab, layout: DataLayout, read: SheetRead) -> None:
    """Copied columns fit their content; computed columns fit a number (their headers wrap)."""
    ws = tab.ws
    sample = read.rows[:200]
    for col in range(len(layout.headers)):
        c = col - layout.copy_col
        if col == layout.flags_col:
            size = 36
        elif col == 0:
            size = 7
        elif layout.x_is_date and col == layout.x_col:
            size = 17
        elif 0 <= c < max((len(r) for r in sample), default=0):
            size = cells.width([_shown(r[c], layout.decimals) for r in sample if c < len(r)], least=9, most=30) + 1
        else:
            size = max(10, layout.decimals + 6)
        ws.set_column(col, col, size)
    tab.height(HEADER_HEIGHT, HEADER_ROW)


def _shown(value: object, decimals: int) -> str:
    if isinstance(value, dt.datetime | dt.date):
        return "2026-11-02 06:00"
    if isinstance(value, float):
        return f"{value:.{decimals}f}"
    return "" if value is None else str(value)
