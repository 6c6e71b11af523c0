"""The one-page summary of a characteristic, first in its section: what it is, its charts, the histogram of its
readings against the specification, and the figures a meeting decides on; it prints as exactly one landscape page.

Layout (pixels at the default row height of 20): the facts in rows 1-5, the location chart with the spread chart
under it on the left, the histogram on the right with the key figures under it, the caution at the foot.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sheettool.core.capability import AttributeRate, Capability
from sheettool.core.data import Measurements
from sheettool.core.johnson import Family
from sheettool.core.timing import SignalsAgainstChance
from sheettool.evaluation.results import CharacteristicResult
from sheettool.evaluation.summary import chance_of, odds
from sheettool.workbook import style
from sheettool.workbook.writer import cells, charts
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.charts import Spec
from sheettool.workbook.writer.data_tab import DataLayout
from sheettool.workbook.writer.methods import method
from sheettool.workbook.writer.notes_tab import CAUTION
from sheettool.workbook.writer.tab import Tab

WIDTHS = (16, 15, 15, 15, 15, 15, 31, 12, 12, 12)  # characters: A-F under the charts, G-J beside them
CHARTS_LEFT = 6  # columns under the control charts
ROW_PX = 20
CHART_TOP = 7  # the first row of the charts
LEFT_PX = sum(round(w * 7 + 5) for w in WIDTHS[:CHARTS_LEFT])
RIGHT_PX = sum(round(w * 7 + 5) for w in WIDTHS[CHARTS_LEFT:])
LOCATION_ROWS, SPREAD_ROWS, HISTOGRAM_ROWS = 18, 16, 16


@dataclass(frozen=True)
class PageFacts:
    """Where a characteristic came from, as its pages say it: part, source file and sheet, period."""

    part: str
    source: str
    period: str


def spec_of(result: CharacteristicResult) -> Spec:
    """The specification limits and target, from the capability or else the settings."""
    cap = result.capability
    if isinstance(cap, Capability):
        return Spec(cap.lsl, cap.usl, cap.target)

    def given(key: str) -> float | None:
        setting = result.settings.get(key)
        value = setting.value if setting is not None else None
        return float(value) if isinstance(value, int | float) and not isinstance(value, bool) else None

    return Spec(given("lsl"), given("usl"), given("target"))


def chart_words(result: CharacteristicResult, about_words: str) -> str:
    """The chart in words with its size: subgroups of n readings, or the typical units inspected of a count."""
    fit = result.fit
    if isinstance(result.characteristic.data, Measurements):
        return f"{about_words}; subgroups of {fit.subgroup_size:g}"
    return f"{about_words}; typical units inspected {fit.subgroup_size:g}"


def period_words(result: CharacteristicResult) -> str:
    """The period the points cover: first and last date (ISO), else the first and last label."""
    ch = result.characteristic
    dates = [d for d in ch.dates if d is not None]
    if dates:
        first, last = min(dates), max(dates)
        shape = "%Y-%m-%d" if all(d.hour == 0 and d.minute == 0 for d in (first, last)) else "%Y-%m-%d %H:%M"
        return f"{first:{shape}} to {last:{shape}}"
    return f"points {ch.labels[0]} to {ch.labels[-1]}" if ch.labels else "no dates given"


def chance_words(chance: SignalsAgainstChance) -> str:
    """The comparison in a sentence a meeting can judge."""
    if chance.signalled == 0:
        return "no point signalled"
    p = chance.probability
    judged = ("more than false alarms explain: look for a cause" if p < 0.01 else
              "hard to explain by false alarms alone" if p < 0.05 else "within what false alarms give")
    return f"chance of {chance.signalled} or more from false alarms alone: {odds(p)} ({judged})"


def _curve(result: CharacteristicResult, readings: np.ndarray, hist: charts.Histogram) -> tuple[str, np.ndarray,
                                                                                                    np.ndarray]:
    """The fitted density scaled to counts: the shape the data-shape check chose, else the normal with the
    readings' mean and overall standard deviation."""
    n, width = readings.size, hist.width
    shape = result.data_shape.shape if result.data_shape is not None else None
    x = np.linspace(hist.edges[0] - 2 * width, hist.edges[-1] + 2 * width, 121)
    if shape is not None and shape.family != "normal":
        family, name = Family(shape.family, tuple(shape.parameters)), f"fitted {shape.family} (data-shape check)"
    else:
        mean, sd = float(np.mean(readings)), float(np.std(readings, ddof=1)) if n > 1 else 0.0
        if not (sd > 0 and math.isfinite(sd)):
            return "fitted normal", np.array([]), np.array([])
        family, name = Family("normal", (mean, sd)), "fitted normal (mean, overall sigma)"
    return name, x, n * width * np.exp(family.logpdf(x))


def write_one_page(out: BookWriter, tab: Tab, result: CharacteristicResult, layout: DataLayout, facts: PageFacts,
                   eval_tab: str, heading: cells.PageHeading) -> None:
    """Write the one-page summary tab of one characteristic."""
    ws, fmt, ch, fit = tab.ws, tab.fmt, result.characteristic, result.fit
    for c, w in enumerate(WIDTHS):
        ws.set_column(c, c, w)
    spec = spec_of(result)
    ws.write_string(0, 0, f"{ch.name}: summary", fmt["title"])
    ws.write_url(0, 7, cells.internal_link(eval_tab), fmt["link"], string="Charts, signals and method")
    about = method(fit.chart)
    left = [("Part", facts.part or "not given"), ("Characteristic", ch.name + (f" ({ch.unit})" if ch.unit else "")),
            ("Source", facts.source), ("Period", facts.period)]
    right = [("Specification", ", ".join(f"{k} {v:g}" for k, v in spec.lines()) or "none given"),
             ("Chart", chart_words(result, about.words)),
             ("Limits set by", fit.limits_source), ("Points", f"{ch.data.subgroups:,} plotted")]
    room = (sum(WIDTHS[1:CHARTS_LEFT]), sum(WIDTHS[CHARTS_LEFT + 1:]))
    for i, ((la, va), (lb, vb)) in enumerate(zip(left, right, strict=True), start=2):
        for col, label, value, last in ((0, la, va, CHARTS_LEFT - 1), (CHARTS_LEFT, lb, vb, len(WIDTHS) - 1)):
            ws.write_string(i, col, label, fmt["label"])
            ws.merge_range(i, col + 1, i, last, "", fmt["wrap"])
            ws.write_string(i, col + 1, value, fmt["wrap"])
        tab.height(max(style.row_height(va, room[0] - 2), style.row_height(vb, room[1] - 2)), i)
    stats = list(layout.stats.values())
    measured = isinstance(ch.data, Measurements)
    unit = ch.unit if measured else ""
    zones = charts.zones_in_use(result.rules)
    two = len(stats) > 1
    heights = (LOCATION_ROWS, SPREAD_ROWS) if two else (LOCATION_ROWS + SPREAD_ROWS, 0)
    row = CHART_TOP
    for sc, rows in zip(stats[:2], heights, strict=False):
        own_spec = spec if sc.stat.name == "individual" else None  # never on a chart of means (common practice)
        chart = charts.control_chart(out, layout, sc, zones and sc is stats[0], f"{sc.stat.label}: {ch.name}", unit,
                                     [s for s in result.signals if s.statistic == sc.stat.name], ch.excluded,
                                     own_spec, (LEFT_PX - 8, rows * ROW_PX - 6))
        ws.insert_chart(row, 0, chart, {"x_offset": 2, "y_offset": 2, "object_position": 3})
        row += rows
    tab.row = CHART_TOP
    if measured:  # the histogram beside the charts, the key figures under it
        readings = np.asarray(ch.data.values, dtype=float)
        readings = readings[np.isfinite(readings)]
        hist = charts.histogram_bins(readings, layout.decimals)
        chart = charts.histogram_chart(out, f"Readings of {ch.name}", hist, _curve(result, readings, hist), spec,
                                       unit, layout.decimals, (RIGHT_PX - 8, HISTOGRAM_ROWS * ROW_PX - 6))
        ws.insert_chart(CHART_TOP, CHARTS_LEFT, chart, {"x_offset": 2, "y_offset": 2, "object_position": 3})
        tab.row = CHART_TOP + HISTOGRAM_ROWS + 1
    _key_figures(tab, result, layout, CHARTS_LEFT)
    bottom = max(row, tab.row)
    bottom += 1
    ws.merge_range(bottom, 0, bottom, len(WIDTHS) - 1, "", fmt["caution"])
    ws.write_string(bottom, 0, CAUTION, fmt["caution"])
    tab.height(style.row_height(CAUTION, sum(WIDTHS) - 10), bottom)
    ws.print_area(0, 0, bottom, len(WIDTHS) - 1)
    cells.print_setup(ws, heading, fit="page")


def _key_figures(tab: Tab, result: CharacteristicResult, layout: DataLayout, col: int) -> None:
    """Limits, capability with intervals, out of specification, false alarms and signals against chance."""
    ws, fmt = tab.ws, tab.fmt
    heads = ("Key figures", "Center line", "LCL", "UCL")
    for c, h in enumerate(heads):
        ws.write_string(tab.row, col + c, h, fmt["head" if not c else "head_number"])
    tab.row += 1
    for sc in layout.stats.values():
        limit_fmt = fmt[style.limit_role(sc.stat.name, layout.decimals)]
        ws.write_string(tab.row, col, sc.stat.label, fmt["text"])
        for c, key in enumerate(("center", "lcl", "ucl"), start=1):
            arr = getattr(sc.stat, key)
            finite = arr[np.isfinite(arr)]
            if finite.size and float(np.ptp(finite)) == 0 and finite.size == arr.size:
                cells.number(ws, tab.row, col + c, float(finite[0]), limit_fmt)
            else:
                ws.write_string(tab.row, col + c, "varies" if finite.size else "none", fmt["text_right"])
        tab.row += 1
    cap = result.capability
    rows: list[tuple[str, float | None, str, tuple[float, float] | None]] = []
    if isinstance(cap, Capability):
        level = f"{cap.confidence:.0%}"
        for name, value, key in (("Cpk", cap.cpk, "cpk"), ("Ppk", cap.ppk, "ppk")):
            ci = cap.ci.get(key)
            rows.append((name, value, "ratio", (ci.low, ci.high) if ci else None))
        rows.append(("Out of specification (ppm)", cap.ppm_out, "arl", None))
        interval_head = f"{level} interval"
    elif isinstance(cap, AttributeRate):
        what = "Proportion defective" if cap.kind == "proportion" else "Defects per unit"
        shown = "percent2" if cap.kind == "proportion" else "ratio"
        rows.append((what, cap.estimate, shown, (cap.ci.low, cap.ci.high)))
        interval_head = f"{cap.confidence:.0%} interval"
    else:
        interval_head = ""
    perf = result.performance
    chance = chance_of(result)
    rows += [("In-control ARL (points)", perf.arl_in_control, "arl", None),
             ("False alarms per month", perf.false_alarms_per_month, "ratio", None),
             ("Points signalled", float(chance.signalled), "count", None),
             ("Events open (see the Action log)", float(result.events_open), "count", None),
             (f"False alarms expected ({chance.points:,} points)", chance.expected, "ratio", None)]
    tab.row += 1
    for c, h in enumerate(("Figure", "Estimate", interval_head, "")):
        ws.write_string(tab.row, col + c, h, fmt["head" if not c else "head_number"])
    tab.row += 1
    for name, value, role, ci in rows:
        ws.write_string(tab.row, col, name, fmt["text"])
        if value is None or not math.isfinite(value):
            ws.write_string(tab.row, col + 1, "not given" if "month" in name else "not defined", fmt["text_right"])
        else:
            cells.number(ws, tab.row, col + 1, value, fmt[role])
        if ci is not None:
            cells.number(ws, tab.row, col + 2, ci[0], fmt[role])
            cells.number(ws, tab.row, col + 3, ci[1], fmt[role])
        tab.row += 1
    ws.merge_range(tab.row, col, tab.row + 1, col + 3, "", fmt["lead"])
    ws.write_string(tab.row, col, chance_words(chance).capitalize(), fmt["lead"])
    tab.row += 2
