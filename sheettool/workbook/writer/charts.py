"""Native chart builders: a control chart per plotted statistic and the ARL-against-shift chart.

Control charts are line charts on a category axis: the points in sequence, labelled by date and time
or point number, so nights and weekends leave no gaps. Their series are the data tab's own columns
where they can be; zone lines, specification lines, points kept out of the limits and copies past a
data tab's rows sit on the hidden chart-lines tab (lines.LineSheet, owned by the BookWriter). A chart
draws at most format_limits.chart_points() subgroups, the last ones, and says so in its title; a
chart never holds more series than the format's CHART_SERIES. The histogram and the ARL chart are
scatter charts.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from xlsxwriter.chart_line import ChartLine
from xlsxwriter.chart_scatter import ChartScatter

from sheettool.base.problems import Problem
from sheettool.core.charts import PlottedStatistic
from sheettool.core.rules import Rule
from sheettool.evaluation.results import Signal
from sheettool.workbook import style
from sheettool.workbook.writer import cells, format_limits
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.data_tab import DataLayout, StatColumns

ZONES = (2.0, 1.0, -1.0, -2.0)  # zone lines, in standard errors from the center line


_LOOKS_LIKE_REFERENCE = re.compile(r"^=?[^!]+!\$?[A-Z]+\$?\d+")  # what xlsxwriter takes for a cell reference


def zones_in_use(rules: list[Rule]) -> bool:
    """Zone lines are drawn when a rule other than the plain 3-sigma limit looks at zones."""
    return any(r.is_zone and not (r.k == 1 and r.m == 1 and r.z >= 3) for r in rules)


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
    never_negative = lo >= 0
    if hi == lo:
        pad = abs(hi) * 0.05 or 1.0
        lo, hi = lo - pad, hi + pad
    step = nice_step(hi - lo, 6)
    low = math.floor(lo / step - 0.25) * step
    if never_negative and low < 0:  # ranges, deviations, counts: no axis below zero
        low = 0.0
    return {"min": low, "max": math.ceil(hi / step + 0.25) * step, "major_unit": step}


LABEL_PX = 115  # room for one x-axis label ("2026-11-02 06:00" at 8 points) on a control chart
DENSE = 300  # more points than this: every point labelled, the spreadsheet application skips labels itself


def category_axis(out: BookWriter, layout: DataLayout, win: Window, width: int) -> tuple[str, dict[str, Any]]:
    """Categories and x axis of a control chart: the points in sequence, so nights and weekends leave no gaps,
    labelled by date and time (ISO) or point number at every few points, as many as the width holds.

    The labels are a column of text on the chart-lines tab, blank between labelled points (charts share it):
    the skip-labels setting of the format is not honoured by every spreadsheet application.
    """
    every = max(1, math.ceil(nice_step(win.x.size, max(3, width // (LABEL_PX if layout.x_is_date else 45)))))
    key = (layout.tab, win.first, every)
    if key not in out.lines.named:
        if layout.x_is_date:
            shape = "%Y-%m-%d" if np.all(np.abs(win.x - np.round(win.x)) < 1e-9) else "%Y-%m-%d %H:%M"
            shown = [(cells.EXCEL_EPOCH + dt.timedelta(seconds=round(float(v) * 86400))).strftime(shape)
                     for v in win.x]
        else:
            shown = [f"{v:g}" for v in win.x]
        # point numbers at round multiples, dates every few points from the first; past DENSE points every point
        # is labelled and the application skips labels itself (one that finds blank labels at its own interval
        # would show none)
        at = win.x % every == 0 if not layout.x_is_date else np.arange(win.x.size) % every == 0
        labels: list[float | str | None] = [t if at[i] or win.x.size > DENSE else None for i, t in enumerate(shown)]
        if labels and labels[-1] is None:
            labels[-1] = ""  # the column reaches the last point
        out.lines.named[key] = out.lines.add(f"{layout.tab}: labels every {every}", labels)
    name = ("Date" if layout.x_is_date and np.all(np.abs(win.x - np.round(win.x)) < 1e-9) else
            "Date and time" if layout.x_is_date else "Point")
    return out.lines.ref(out.lines.named[key]), {
        "name": name, "text_axis": True, "num_font": {"size": 8}, "name_font": {"size": 9},
        **({} if win.x.size > DENSE else {"interval_unit": 1}),
        "major_tick_mark": "none", "minor_tick_mark": "none"}


@dataclass
class Window:
    """The subgroups a control chart draws: all, or the last `chart_points()` of them (the rule in its title)."""

    first: int  # index of the first subgroup drawn
    x: np.ndarray  # their dates (spreadsheet day numbers) or point numbers
    rule: str  # "" when every subgroup is drawn


def chart_window(layout: DataLayout) -> Window:
    """All subgroups while they fit one column of the chart-lines tab, else the last ones that do."""
    m, most = layout.m, format_limits.chart_points()
    first = max(0, m - most)
    return Window(first, layout.x[first:], f"last {most:,} of {m:,} subgroups" if first else "")


@dataclass
class Spec:
    """A characteristic's specification: LSL, USL and target, each None when not given."""

    lsl: float | None = None
    usl: float | None = None
    target: float | None = None

    def lines(self) -> list[tuple[str, float]]:
        """(name, value) of the limits and target given."""
        return [(name, v) for name, v in (("LSL", self.lsl), ("USL", self.usl), ("target", self.target))
                if v is not None and math.isfinite(v)]


def _cells(values: np.ndarray) -> list[float | None]:
    return [v if math.isfinite(v) else None for v in np.asarray(values, dtype=float).tolist()]


def _varies(values: np.ndarray) -> bool:
    finite = values[np.isfinite(values)]
    return finite.size > 0 and (finite.size < values.size or float(np.ptp(finite)) > 0)


def control_chart(out: BookWriter, layout: DataLayout, sc: StatColumns, zones: bool, title: str, unit: str,
                  signals: list[Signal], excluded: np.ndarray | None = None, spec: Spec | None = None,
                  size: tuple[int, int] = (style.CHART_WIDTH, style.CHART_HEIGHT)) -> ChartLine:
    """The control chart of one statistic: zones, limits, center, specification, the points, points kept out
    of the limits, and last its signals, so they are drawn on top. Specification lines are for charts of
    individual readings only (the caller decides: a chart of means is never compared with the specification).

    Past `format_limits.chart_points()` subgroups it draws the last ones, says so in its title, and adds a note.
    """
    stat, lines = sc.stat, out.lines
    win = chart_window(layout)
    if win.first:
        stat = _last(stat, win.first)
        title += f" ({win.rule})"
        note = Problem("note", f"the {sc.stat.label} chart draws the {win.rule}: a chart's points take one row "
                       f"each of the hidden chart-lines tab, within the format's {format_limits.ROWS:,} rows; every "
                       "subgroup is on the data tab", file=layout.file, sheet=layout.sheet)
        if note not in out.problems:  # once, though the summary and the chart tab both draw it
            out.problems.append(note)
    m = stat.values.size
    chart = out.line_chart()
    legend_off: list[int] = []

    def column(col: int | None, values: np.ndarray, header: str) -> str:
        """The data tab's column where it holds the points drawn, else a copy on the chart-lines tab."""
        ref = layout.window(col, win.first) if col is not None else None
        return ref or lines.ref(lines.add(f"{stat.label}: {header}", _cells(values)))

    categories, x_axis = category_axis(out, layout, win, size[0])

    def add(name: str, values: str, role: str, varies: bool = False, legend: bool = True) -> None:
        if not legend:
            legend_off.append(len(chart.series))
        chart.add_series({"name": name, "categories": categories, "values": values,
                          **style.series_look(role, m, varies)})

    if zones:
        for i, z in enumerate(ZONES):
            arr = _zone(stat, z)
            add("zone lines (1 and 2 standard errors)", column(None, arr, f"{z:+g} standard errors"), "zone",
                _varies(arr), legend=not i)
    named = False
    for key, col in (("ucl", sc.ucl), ("lcl", sc.lcl)):
        arr = getattr(stat, key)
        if np.isfinite(arr).any():
            add("UCL and LCL", column(col, arr, key.upper()), "limit", _varies(arr), legend=not named)
            named = True
    add("center line", column(sc.center, stat.center, "center line"), "center", _varies(stat.center))
    shown = [stat.values, stat.lcl, stat.ucl, stat.center]
    for name, value in (spec.lines() if spec else []):
        add(name, lines.ref(lines.add(f"{stat.label}: {name}", [value] * m)), "spec")
        shown.append(np.array([value]))
    add(chart_text(stat.label), column(sc.value, stat.values, "points"), "values")
    kept_out = np.zeros(m, dtype=bool) if excluded is None else np.asarray(excluded, dtype=bool)[win.first:]
    if kept_out.any():
        add("kept out of the limits", lines.ref(lines.add(f"{stat.label}: kept out",
                                                          _cells(np.where(kept_out, stat.values, np.nan)))),
            "excluded")
    hits = sorted({s.point - 1 - win.first for s in signals if s.point > win.first})
    if hits:  # drawn last: on top of every other series
        marked = np.full(m, np.nan)
        marked[hits] = stat.values[hits]
        add("signal", column(sc.signal, marked, "signal"), "signal")
    if zones:
        shown += [_zone(stat, z) for z in ZONES]
    y_axis = value_axis(shown)
    chart.set_title({"name": chart_text(title), "name_font": {"size": 11, "bold": True, "color": style.SLATE},
                     "overlay": False})
    chart.set_x_axis({**x_axis, "major_gridlines": {"visible": False},
                      "line": {"color": style.HAIRLINE}})
    y_name = chart_text(f"{stat.label}{f' ({unit})' if unit else ''}")
    chart.set_y_axis({**y_axis, "name": y_name, "name_font": {"size": 9}, "crossing": "min",
                      "num_font": {"size": 8},
                      "num_format": axis_format(y_axis["major_unit"], stat.name in style.PERCENT_STATISTICS),
                      "major_gridlines": {"visible": True, "line": {"color": style.MIST, "width": 0.5}},
                      "line": {"color": style.HAIRLINE}})
    chart.set_legend({"position": "bottom", "font": {"size": 8}, "delete_series": legend_off})
    chart.set_chartarea({"border": {"none": True}})
    chart.set_size({"width": size[0], "height": size[1]})
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


def axis_format(step: float, percent: bool = False) -> str:
    """The number format of an axis with this major unit: every label distinct, as a percentage for rates."""
    decimals = _axis_decimals(step)
    return (style.number_format(max(0, decimals - 2)) + "%") if percent else style.number_format(decimals)


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


@dataclass
class Histogram:
    """The bars of a histogram: bin edges and counts."""

    edges: np.ndarray
    counts: np.ndarray

    @property
    def width(self) -> float:
        """The width of a bin."""
        return float(self.edges[1] - self.edges[0])


def histogram_bins(readings: np.ndarray, decimals: int) -> Histogram:
    """Bins of equal, round width on the readings' resolution: about sqrt(n) of them, 6 to 25 (common practice).

    The width is a whole number of resolution steps and the edges fall half a step between recordable values,
    so no reading sits on an edge and no bin is empty merely because of rounding.
    """
    x = np.asarray(readings, dtype=float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return Histogram(np.array([0.0, 1.0]), np.array([0]))
    res = 10.0 ** -decimals
    lo, hi = float(x.min()), float(x.max())
    parts = int(np.clip(math.ceil(math.sqrt(x.size)), 6, 25))
    width = max(res, round(nice_step(hi - lo, parts) / res) * res) if hi > lo else res
    start = math.floor((lo + res / 2) / width) * width - res / 2
    if start > lo:
        start -= width
    bins = max(1, math.ceil((hi - start) / width + 1e-9))
    edges = start + width * np.arange(bins + 1)
    counts, _ = np.histogram(x, edges)
    return Histogram(edges, counts)


def histogram_chart(out: BookWriter, title: str, hist: Histogram, curve: tuple[str, np.ndarray, np.ndarray],
                    spec: Spec, unit: str, decimals: int, size: tuple[int, int]) -> ChartScatter:
    """A histogram of the readings drawn as bar outlines, the fitted curve (scaled to counts) and the
    specification limits and target as vertical lines; all on the chart-lines tab."""
    lines = out.lines
    chart = out.scatter_chart("straight")
    left, right = hist.edges[:-1], hist.edges[1:]
    zero = np.zeros_like(left)
    xs = np.column_stack([left, left, right, right]).ravel()
    ys = np.column_stack([zero, hist.counts, hist.counts, zero]).ravel().astype(float)
    name, cx, cy = curve
    top_value = max(float(hist.counts.max(initial=0)), float(np.nanmax(cy)) if cy.size else 0.0, 1.0)
    step = nice_step(top_value, 5)
    top = math.ceil(top_value * 1.08 / step) * step
    chart.add_series({"name": "readings per bin", "categories": lines.ref(lines.add(f"{title}: bars x", _cells(xs))),
                      "values": lines.ref(lines.add(f"{title}: bars", _cells(ys))),
                      "line": {"color": style.SLATE, "width": 1.25}, "marker": {"type": "none"}})
    chart.add_series({"name": chart_text(name), "categories": lines.ref(lines.add(f"{title}: curve x", _cells(cx))),
                      "values": lines.ref(lines.add(f"{title}: curve", _cells(cy))),
                      "line": {"color": style.STEEL, "width": 2.0}, "marker": {"type": "none"}})
    ends = [float(hist.edges[0]), float(hist.edges[-1])]
    for label, value in spec.lines():
        chart.add_series({"name": label, "categories": lines.ref(lines.add(f"{title}: {label} x", [value, value])),
                          "values": lines.ref(lines.add(f"{title}: {label} y", [0.0, top])),
                          **style.series_look("spec", 2)})
        ends.append(value)
    x_axis = value_axis([np.array(ends), cx[cy > top_value * 0.01] if cy.size else np.array([])])
    chart.set_title({"name": chart_text(title), "name_font": {"size": 11, "bold": True, "color": style.SLATE},
                     "overlay": False})
    chart.set_x_axis({**x_axis, "name": f"Reading{f' ({unit})' if unit else ''}", "name_font": {"size": 9},
                      "num_font": {"size": 8}, "line": {"color": style.HAIRLINE},
                      "num_format": style.number_format(max(decimals, _axis_decimals(x_axis["major_unit"]))),
                      "major_gridlines": {"visible": False}})
    chart.set_y_axis({"min": 0, "max": top, "major_unit": step, "name": "Readings", "name_font": {"size": 9},
                      "num_font": {"size": 8}, "num_format": "0",
                      "major_gridlines": {"visible": True, "line": {"color": style.MIST, "width": 0.5}},
                      "line": {"color": style.HAIRLINE}})
    chart.set_legend({"position": "bottom", "font": {"size": 8}})
    chart.set_chartarea({"border": {"none": True}})
    chart.set_size({"width": size[0], "height": size[1]})
    return chart
