"""Native chart builders: a control chart per plotted statistic and the ARL-against-shift chart.

Charts are xlsxwriter scatter charts with straight lines, so the x axis can be subgroup numbers or
real dates and the limit lines can be drawn as steps. The geometry of center lines, limits and
zone lines lives on the hidden chart-lines tab (lines.LineSheet, owned by the BookWriter). A chart
draws at most format_limits.chart_points() subgroups, the last ones, and says so in its title; a
chart never holds more series than the format's CHART_SERIES.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from xlsxwriter.chart_scatter import ChartScatter

from sheettool.base.problems import Problem
from sheettool.core.charts import PlottedStatistic
from sheettool.evaluation.results import Signal
from sheettool.workbook import style
from sheettool.workbook.writer import format_limits
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.data_tab import DataLayout, StatColumns
from sheettool.workbook.writer.lines import bounds

ZONES = (2.0, 1.0, -1.0, -2.0)  # zone lines, in standard errors from the center line


_LOOKS_LIKE_REFERENCE = re.compile(r"^=?[^!]+!\$?[A-Z]+\$?\d+")  # what xlsxwriter takes for a cell reference


def chart_text(text: str) -> str:
    """A series name from the input, kept literal: a name that looks like Sheet!A1 gets a space after the !,
    so xlsxwriter does not turn it into a reference to another cell (or another file)."""
    return text.replace("!", "! ") if _LOOKS_LIKE_REFERENCE.match(text) else text


def nice_step(span: float, parts: int) -> float:
    """A round step (1, 2, 2.5 or 5 times a power of ten) that cuts `span` into about `parts`."""
    if not math.isfinite(span) or span <= 0:
        return 1.0
    raw = span / parts
    power = 10 ** math.floor(math.log10(raw))
    return next(f * power for f in (1, 2, 2.5, 5, 10) if f * power >= raw)


def value_axis(arrays: list[np.ndarray]) -> dict[str, float]:
    """y axis min, max and major unit from the data and the limits, never simply from zero."""
    joined = np.concatenate([a[np.isfinite(a)] for a in arrays] or [np.array([0.0])])
    lo, hi = (float(joined.min()), float(joined.max())) if joined.size else (0.0, 1.0)
    if hi == lo:
        pad = abs(hi) * 0.05 or 1.0
        lo, hi = lo - pad, hi + pad
    step = nice_step(hi - lo, 6)
    low = math.floor(lo / step - 0.25) * step
    if lo >= 0 > low:  # ranges, deviations, counts: no axis below zero
        low = 0.0
    return {"min": low, "max": math.ceil(hi / step + 0.25) * step, "major_unit": step}


_DATE_UNITS = (1 / 24, 2 / 24, 3 / 24, 4 / 24, 6 / 24, 12 / 24, 1, 2, 7, 14, 28, 56, 91, 182, 365)


def subgroup_axis(layout: DataLayout, x: np.ndarray | None = None) -> dict[str, Any]:
    """x axis by subgroup number, or by date and time when every subgroup has a date (over `x`, default all)."""
    edges = bounds(layout.x if x is None else x)
    lo, hi = float(edges[0]), float(edges[-1])
    font = {"size": 8}
    if layout.x_is_date:
        unit = next((u for u in _DATE_UNITS if u >= (hi - lo) / 10), 365.0)
        return {"name": "Date and time", "min": lo, "max": hi, "major_unit": unit,
                "num_format": "yyyy-mm-dd" if unit >= 1 else "mm-dd hh:mm",
                "num_font": {**font, "rotation": -45}, "name_font": {"size": 9}}
    step = max(1.0, nice_step(hi - lo, 12))
    if step != int(step):  # 2.5 would print as 3: subgroup numbers need whole steps
        step = float(int(step))
    return {"name": "Subgroup", "min": math.floor(lo), "max": math.ceil(hi), "major_unit": step,
            "num_format": "0", "num_font": font, "name_font": {"size": 9}}


@dataclass
class Window:
    """The subgroups a control chart draws: all, or the last `chart_points()` of them (the rule in its title)."""

    first: int  # index of the first subgroup drawn
    x: np.ndarray
    x_ref: str
    tab: str  # the chart-lines key of its x geometry
    rule: str  # "" when every subgroup is drawn


def chart_window(out: BookWriter, layout: DataLayout) -> Window:
    """All subgroups while their stepped lines fit the chart-lines tab, else the last ones that do."""
    m, most = layout.m, format_limits.chart_points()
    if m <= most:
        return Window(0, layout.x, layout.range(layout.x_col), layout.tab, "")
    first = m - most
    x = layout.x[first:]
    tab = f"{layout.tab} (last {most})"
    x_ref = layout.window(layout.x_col, first) or out.lines.ref(out.lines.add(f"{tab}: x", x.tolist()))
    return Window(first, x, x_ref, tab, f"last {most:,} of {m:,} subgroups")


def control_chart(out: BookWriter, layout: DataLayout, sc: StatColumns, zones: bool, title: str, unit: str,
                  signals: list[Signal]) -> ChartScatter:
    """The control chart of one statistic: zones, limits, center, the points and its signals on top.

    Past `format_limits.chart_points()` subgroups it draws the last ones, says so in its title, and adds a note.
    """
    stat, lines = sc.stat, out.lines
    win = chart_window(out, layout)
    if win.first:
        stat = _last(stat, win.first)
        title += f" ({win.rule})"
        out.problems.append(Problem("note", f"the {sc.stat.label} chart draws the {win.rule}: a chart's lines take "
                                    "two rows of the hidden chart-lines tab a subgroup, within the format's "
                                    f"{format_limits.ROWS:,} rows; every subgroup is on the data tab",
                                    file=layout.file, sheet=layout.sheet))
    m = stat.values.size
    chart = out.scatter_chart("straight")
    legend_off: list[int] = []
    if zones:
        for i, z in enumerate(ZONES):
            xs, ys = lines.line(win.tab, win.x, f"{stat.label}: {z:+g} standard errors", _zone(stat, z))
            chart.add_series({"name": "zone lines (1 and 2 standard errors)", "categories": xs, "values": ys,
                              **style.series_look("zone", m)})
            if i:
                legend_off.append(i)
    first_limit = len(chart.series)
    for key, arr in (("ucl", stat.ucl), ("lcl", stat.lcl)):
        xs, ys = lines.line(win.tab, win.x, f"{stat.label}: {key.upper()}", arr)
        chart.add_series({"name": "UCL and LCL", "categories": xs, "values": ys, **style.series_look("limit", m)})
    legend_off.append(first_limit + 1)
    xs, ys = lines.line(win.tab, win.x, f"{stat.label}: center line", stat.center)
    chart.add_series({"name": "center line", "categories": xs, "values": ys, **style.series_look("center", m)})
    values = layout.window(sc.value, win.first) if win.first else layout.range(sc.value)
    if values is None:
        values = lines.ref(lines.add(f"{stat.label}: {win.rule}",
                                     [v if math.isfinite(v) else None for v in stat.values.tolist()]))
    chart.add_series({"name": chart_text(stat.label), "categories": win.x_ref, "values": values,
                      **style.series_look("values", m)})
    hits = sorted({s.point - 1 - win.first for s in signals if s.point > win.first})
    if hits:  # a compact list of the signalling points, so a long chart carries no column of blanks
        xs = lines.ref(lines.add(f"{stat.label}: signal x", [float(win.x[i]) for i in hits]))
        ys = lines.ref(lines.add(f"{stat.label}: signal", [float(stat.values[i]) for i in hits]))
        chart.add_series({"name": "signal", "categories": xs, "values": ys, **style.series_look("signal", m)})
    arrays = [stat.values, stat.lcl, stat.ucl, stat.center]
    if zones:
        arrays += [_zone(stat, z) for z in ZONES]
    y_axis = value_axis(arrays)
    chart.set_title({"name": chart_text(title), "name_font": {"size": 11, "bold": True, "color": style.SLATE}})
    chart.set_x_axis({**subgroup_axis(layout, win.x), "major_gridlines": {"visible": False},
                      "line": {"color": style.HAIRLINE}})
    y_name = chart_text(f"{stat.label}{f' ({unit})' if unit else ''}")
    chart.set_y_axis({**y_axis, "name": y_name, "name_font": {"size": 9},
                      "num_font": {"size": 8}, "num_format": style.number_format(_axis_decimals(y_axis["major_unit"])),
                      "major_gridlines": {"visible": True, "line": {"color": style.MIST, "width": 0.5}},
                      "line": {"color": style.HAIRLINE}})
    chart.set_legend({"position": "bottom", "font": {"size": 8}, "delete_series": legend_off})
    chart.set_chartarea({"border": {"none": True}})
    chart.set_size({"width": style.CHART_WIDTH, "height": style.CHART_HEIGHT})
    chart.show_blanks_as("gap")
    chart.show_hidden_data()
    return chart


def _last(stat: PlottedStatistic, first: int) -> PlottedStatistic:
    """The statistic from subgroup index `first` on: its points, center, limits and standard errors."""
    return replace(stat, values=stat.values[first:], center=stat.center[first:], lcl=stat.lcl[first:],
                   ucl=stat.ucl[first:], sigma=stat.sigma[first:])


def _zone(stat: PlottedStatistic, z: float) -> np.ndarray:
    """A zone line z standard errors from the center, kept between the limits (a floored LCL stays the floor)."""
    return np.clip(stat.center + z * stat.sigma, stat.lcl, stat.ucl)


def _axis_decimals(step: float) -> int:
    """Decimals that show every label of an axis with this major unit (2.5 needs one more)."""
    power = math.floor(math.log10(step) + 1e-9)
    extra = 1 if abs(step / 10**power - 2.5) < 1e-9 else 0
    return max(0, extra - power)


def arl_chart(out: BookWriter, series: list[tuple[str, str, str]], largest: float, widest: float,
              part: str = "") -> ChartScatter:
    """ARL against mean shift, one line per scheme, logarithmic y axis. series: (name, x ref, y ref), at most
    format_limits.CHART_SERIES; `part` says which characteristics a chart of several holds."""
    chart = out.scatter_chart("straight_with_markers")
    for i, (name, xs, ys) in enumerate(series):
        chart.add_series({"name": chart_text(name), "categories": xs, "values": ys, **style.performance_look(i)})
    top = 10 ** math.ceil(math.log10(max(largest, 10.0)))
    chart.set_title({"name": "Average run length against the size of a mean shift" + part,
                     "name_font": {"size": 11, "bold": True, "color": style.SLATE}})
    chart.set_x_axis({"name": "Mean shift (process standard deviations)", "name_font": {"size": 9},
                      "num_font": {"size": 8}, "min": 0, "max": widest if widest > 0 else None,
                      "major_gridlines": {"visible": False}})
    chart.set_y_axis({"name": "ARL: points plotted until a signal (log scale)", "log_base": 10, "min": 1,
                      "max": top, "name_font": {"size": 9}, "num_font": {"size": 8}, "num_format": "#,##0",
                      "major_gridlines": {"visible": True, "line": {"color": style.MIST, "width": 0.5}}})
    chart.set_legend({"position": "bottom", "font": {"size": 8}})
    chart.set_chartarea({"border": {"none": True}})
    chart.set_size({"width": style.CHART_WIDTH, "height": style.CHART_HEIGHT + 40})
    return chart
