"""The data tab of one characteristic: the input rows copied as values, and beside them the
per-subgroup statistics, limits and signal flags, as one filterable spreadsheet table.

Printing: only the first PRINT_ROWS subgroups are in the print area, so a month of hourly data
does not turn into hundreds of pages (the method notes say so).
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
from xlsxwriter.format import Format
from xlsxwriter.utility import xl_cell_to_rowcol
from xlsxwriter.worksheet import Worksheet

from sheettool.core.charts import PlottedStatistic
from sheettool.core.data import Measurements
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook import style
from sheettool.workbook.reader import SheetRead
from sheettool.workbook.report import SheetEvaluation
from sheettool.workbook.writer import cells, formulas
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

    @property
    def first_row(self) -> int:
        """0-based row of the first subgroup."""
        return HEADER_ROW + 1

    @property
    def last_row(self) -> int:
        """0-based row of the last subgroup."""
        return HEADER_ROW + self.m

    def range(self, col: int) -> str:
        """Absolute reference to a column's subgroup rows."""
        return cells.column_range(self.tab, col, self.first_row, self.last_row)


def _dates(result: CharacteristicResult) -> np.ndarray | None:
    dates = result.characteristic.dates
    if not dates or any(not isinstance(d, dt.datetime) for d in dates):
        return None
    x = np.array([cells.excel_serial(d) for d in dates])
    return x if x.size < 2 or np.all(np.diff(x) > 0) else None


def plan_data_tab(result: CharacteristicResult, read: SheetRead, tab: str, eval_tab: str,
                  live: bool = False) -> DataLayout:
    """Decide the columns of the data tab; with `live`, gather the copied readings to check formulas on."""
    m = result.characteristic.data.subgroups
    dates = _dates(result)
    headers = ["Point"] + (["Date"] if dates is not None else [])
    copy_col = len(headers)
    width = max([len(read.header)] + [len(r) for r in read.rows[:1]])
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
    if live and reading_cols and len(read.rows) == m:
        readings = np.array([[_as_float(row[c - copy_col]) if c - copy_col < len(row) else np.nan
                              for c in reading_cols] for row in read.rows], dtype=float).reshape(m, len(reading_cols))
    data = result.characteristic.data
    source = (data.values if isinstance(data, Measurements)
              else np.concatenate([s.values for s in result.fit.statistics]))
    return DataLayout(
        tab=tab, eval_tab=eval_tab, m=m,
        x=dates if dates is not None else np.arange(1, m + 1, dtype=float),
        x_is_date=dates is not None, x_col=1 if dates is not None else 0,
        copy_col=copy_col, reading_cols=reading_cols, base_col=base_col, stats=stats, flags_col=flags_col,
        readings=readings, decimals=cells.decimals(source), headers=cells.unique_headers(headers),
    )


def _column_index(letter: str) -> int:
    return xl_cell_to_rowcol(f"{letter}1")[1]


def _as_float(value: object) -> float:
    if isinstance(value, int | float) and not isinstance(value, bool):
        return float(value)
    return np.nan


def write_data_tab(out: BookWriter, tab: Tab, layout: DataLayout, sheet: SheetEvaluation,
                   limit_names: dict[tuple[str, str], str], table: str) -> list[str]:
    """Write the tab; return the statistics that were written as values although --formulas was asked."""
    result, read, live = sheet.result, sheet.read, out.live
    ws, fmt = tab.ws, tab.fmt
    ch = result.characteristic
    ws.write_string(0, 0, f"Data of {ch.name}", fmt["title"])
    ws.write_url(0, 4, cells.internal_link(layout.eval_tab), fmt["link"], string="Back to the evaluation")
    ws.write_string(1, 0, "The input rows copied as values; statistics, limits and signals beside them were "
                    "computed by sheettool." + (" Statistics and limits are live formulas." if live else ""))
    base = np.asarray(result.fit.base, dtype=bool)
    read_fmt = fmt[f"dec{min(10, layout.decimals)}"]
    stat_fmt = fmt[f"dec{min(10, layout.decimals + 1)}"]
    limit_fmt = fmt[f"dec{min(10, layout.decimals + 2)}"]
    reading_set = set(layout.reading_cols)
    flags = _signal_flags(result)
    builders: dict[str, Callable[[int], str] | None] = {}
    as_values: list[str] = []
    for name, sc in layout.stats.items():
        builders[name] = (formulas.statistic_formula(name, sc.stat.values, layout.readings, layout.reading_cols)
                          if live else None)
        if live and builders[name] is None:
            as_values.append(sc.stat.label)
    signalled = {name: {s.subgroup - 1 for s in result.signals if s.statistic == name} for name in layout.stats}
    # One job per computed column: (column, values, format, formula builder or None); the loop below is
    # the hot path for large files, so it is kept free of lookups.
    jobs: list[tuple[int, list[float], Format, Callable[[int], str] | None]] = []
    for name, sc in layout.stats.items():
        jobs.append((sc.value, sc.stat.values.tolist(), stat_fmt, builders[name]))
        for key, col in (("center", sc.center), ("lcl", sc.lcl), ("ucl", sc.ucl)):
            ref = limit_names.get((name, key))
            jobs.append((col, getattr(sc.stat, key).tolist(), limit_fmt, None if ref is None else _constant(ref)))
    copy_fmt = [read_fmt if layout.copy_col + c in reading_set else None for c in range(len(layout.headers))]
    rows = read.rows if len(read.rows) == layout.m else [()] * layout.m
    write_number, write_formula, copy_col = ws.write_number, ws.write_formula, layout.copy_col
    base_col, flags_col = layout.base_col, layout.flags_col
    base_list = base.tolist()
    for i in range(layout.m):
        r = layout.first_row + i
        write_number(r, 0, i + 1)
        if layout.x_is_date:
            ws.write_datetime(r, 1, ch.dates[i], fmt["date"])
        for c, value in enumerate(rows[i]):
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
            ws.write_string(r, flags_col, flags[i])
    for name, sc in layout.stats.items():
        values = sc.stat.values
        for i in sorted(signalled[name]):
            cells.number(ws, layout.first_row + i, sc.signal, float(values[i]), stat_fmt)
    last = layout.flags_col
    ws.add_table(HEADER_ROW, 0, layout.last_row, last, {
        "name": table, "style": "Table Style Light 1",
        "columns": [{"header": h, "header_format": fmt["head"]} for h in layout.headers]})
    ws.freeze_panes(layout.first_row, 1)
    _widths(tab, layout, read)
    cells.print_setup(ws, f"data of {ch.name}")
    ws.repeat_rows(HEADER_ROW)
    ws.print_area(0, 0, min(layout.last_row, layout.first_row + PRINT_ROWS - 1), last)
    return as_values


def _constant(text: str) -> Callable[[int], str]:
    return lambda row: text


def _copy(ws: Worksheet, row: int, col: int, value: object, fmt: style.Formats) -> None:
    """The slow path of copying: dates with a date format, everything else through cells.put."""
    if isinstance(value, dt.datetime | dt.date):
        ws.write_datetime(row, col, value, fmt["date"])
    else:
        cells.put(ws, row, col, value)


def _signal_flags(result: CharacteristicResult) -> dict[int, str]:
    labels = {s.name: s.label for s in result.fit.statistics}
    out: dict[int, list[str]] = {}
    for s in result.signals:
        out.setdefault(s.subgroup - 1, []).append(f"{labels.get(s.statistic, s.statistic)}: {s.rule}")
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
            size = cells.width([_shown(r[c], layout.decimals) for r in sample if c < len(r)], least=9, most=30)
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
