"""The evaluation tab of one characteristic: header block, limits, charts, signals, capability and
a small performance table, in that order, laid out to print landscape one page wide.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from sheettool.core.capability import AttributeRate
from sheettool.core.charts import CHART_KINDS
from sheettool.core.data import Measurements
from sheettool.core.limits import BASE_WORDS
from sheettool.evaluation.results import CharacteristicResult, spans
from sheettool.workbook import style
from sheettool.workbook.writer import cells, charts, formulas
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.data_tab import DataLayout
from sheettool.workbook.writer.methods import method
from sheettool.workbook.writer.notes_tab import CAUTION
from sheettool.workbook.writer.one_page import chart_words, period_words, spec_of
from sheettool.workbook.writer.performance_tab import shift_heading
from sheettool.workbook.writer.tab import Tab
from sheettool.workbook.writer.trust_block import has_checks, write_trust_block

LIMIT_KEYS = (("center", "Center line"), ("lcl", "LCL"), ("ucl", "UCL"))


@dataclass
class EvaluationWritten:
    """What the other tabs need back: the workbook names of constant limits, formulas not used."""

    limit_names: dict[tuple[str, str], str] = field(default_factory=dict)
    as_values: list[str] = field(default_factory=list)


def _spec_words(result: CharacteristicResult) -> str:
    given = spec_of(result).lines()
    return ", ".join(f"{k} {v:g}" for k, v in given) if given else "none given"


def _counts(result: CharacteristicResult) -> str:
    ch = result.characteristic
    m = ch.data.subgroups
    parts = [f"{m} subgroups"]
    if isinstance(ch.data, Measurements):
        parts.append(f"{int(ch.data.sizes.sum())} readings")
    parts.append(f"{int(np.sum(ch.excluded))} excluded from the limits by a note or their size")
    parts.append(f"{result.points_signalled} point(s) signalled in {len(result.events)} event(s), "
                 f"{result.events_open} open")
    return ", ".join(parts)


def write_evaluation_tab(out: BookWriter, tab: Tab, result: CharacteristicResult, layout: DataLayout,
                         table: str, heading: cells.PageHeading, summary_tab: str) -> EvaluationWritten:
    """Write the evaluation tab; return the names of its constant limits (for the data tab's formulas).

    `table` names the tab's signal table (unique in the workbook); `summary_tab` is the characteristic's summary.
    """
    fit, ch = result.fit, result.characteristic
    ws, fmt = tab.ws, tab.fmt
    about = method(fit.chart)
    for c, w in enumerate(style.EVAL_COLUMNS):
        ws.set_column(c, c, w)
    written = EvaluationWritten()
    ws.write_string(0, 0, f"{ch.name}: {about.words}", fmt["title"])
    links = out.links
    targets = ((summary_tab, summary_tab), (layout.tab, layout.tab), ("Scheme performance", links.performance),
               ("Method and audit", links.notes))
    for r, (text, target) in enumerate(targets, start=1):  # each link named as its tab, one a line
        ws.write_url(r, 1, cells.internal_link(target), fmt["link"], string=text)
    ws.write_string(1, 0, "Go to:", fmt["label"])
    tab.row = 1 + len(targets)
    tab.section("About this chart")
    tab.fact("Characteristic", ch.name)
    tab.fact("Identity", f"{result.identity} (next month's limits and action log are matched by it)")
    tab.fact("Sheet read", result.sheet)
    tab.fact("Unit", ch.unit or "not given")
    tab.fact("Specification limits", _spec_words(result))
    counted = not isinstance(ch.data, Measurements)
    tab.fact("Chart", chart_words(result, about.words))
    source, base_set = fit.limits_source, fit.limits_source.startswith(BASE_WORDS)
    tab.fact("Base period" if base_set else "Limits set by", source.removeprefix(BASE_WORDS) if base_set else source,
             wrap=True)
    tab.fact("Origin of the limits", result.limits_origin.words, wrap=True)
    tab.fact("Points that set the limits", spans(np.asarray(fit.base, dtype=bool)) or "none in this workbook",
             wrap=True)
    if not counted:  # a p, np, c or u chart's limits come from its rate alone
        tab.fact("Sigma within, base period", f"{fit.sigma_within:.6g} ({fit.sigma_words})")
    kind = CHART_KINDS[fit.chart]()
    if kind.time_weighted:
        tab.fact("Signals when", kind.signal_words(fit), wrap=True)
    else:
        tab.fact("Rules in use", "; ".join(f"{r.text}: {r.words}" for r in result.rules), wrap=True)
    tab.fact("Period covered", period_words(result))
    tab.fact("Counts", _counts(result))
    _limits_table(out, tab, result, layout, written)
    _capability(tab, result)  # the first page: what was charted, its limits and its capability
    tab.row += 1
    breaks = [tab.row]  # the charts start a printed page, two to a page
    zones = charts.zones_in_use(result.rules)  # on the location chart only: the rules apply to it alone
    unit = ch.unit if isinstance(ch.data, Measurements) else ""
    spec = spec_of(result)
    for i, sc in enumerate(layout.stats.values()):
        if i and i % 2 == 0:
            breaks.append(tab.row)
        chart = charts.control_chart(out, layout, sc, zones and not i, f"{sc.stat.label}: {ch.name}", unit,
                                     [s for s in result.signals if s.statistic == sc.stat.name], ch.excluded,
                                     spec if sc.stat.name == "individual" else None)
        ws.insert_chart(tab.row, 0, chart, {"x_offset": 4, "y_offset": 4})
        tab.row += style.CHART_ROWS
    breaks.append(tab.row)  # then how far to trust the limits on a page of its own
    if has_checks(result):
        write_trust_block(tab, result)
        tab.row += 1
        breaks.append(tab.row)
    _performance(tab, result, links.performance)  # how the scheme behaves, then the signals, their head repeated
    tab.row += 1
    tab.across(0, 4, CAUTION, "caution")
    tab.fit(CAUTION, sum(style.EVAL_COLUMNS), least=3)  # room around the caution, whatever its length
    tab.row += 1
    ws.set_h_pagebreaks(breaks)
    _signals(tab, result, table)
    cells.print_setup(ws, heading)
    return written


def _limits_table(out: BookWriter, tab: Tab, result: CharacteristicResult, layout: DataLayout,
                  written: EvaluationWritten) -> None:
    ws, fmt, live = tab.ws, tab.fmt, out.live
    sums = result.fit.chart == "cusum"  # the sums start at 0 and signal above h: no lower limit
    tab.section("Decision interval" if sums else "Control limits")
    tab.head(["Statistic", "Starts at", "", "Decision interval", "Note"] if sums else
             ["Statistic", "Center line", "LCL", "UCL", "Note"], (1, 2, 3))
    first = tab.row
    stats = list(layout.stats.values())
    place = {sc.stat.name: first + i for i, sc in enumerate(stats)}
    const_row = first + len(stats) + 1  # constants (live formulas only) below the limits
    const_at: dict[str, int] = {}

    def refs(leaf: tuple) -> str:
        if leaf[0] == "mean_of":
            sc = layout.stats[leaf[1]]
            return f"AVERAGEIF({layout.range(layout.base_col)},1,{layout.range(sc.value)})"
        if leaf[0] == "const":
            const_at.setdefault(leaf[1], const_row + 1 + len(const_at))
            return cells.cell(layout.eval_tab, const_at[leaf[1]], 1)
        return cells.cell(layout.eval_tab, place[leaf[1]], 1 + [k for k, _ in LIMIT_KEYS].index(leaf[2]))

    consts, live_cells = formulas.limit_cells(result, refs) if live else ({}, {})
    for sc in stats:
        stat = sc.stat
        limit_fmt = fmt[style.limit_role(stat.name, layout.decimals)]
        ws.write_string(tab.row, 0, stat.label, fmt["text"])
        notes = []
        for c, (key, word) in enumerate(LIMIT_KEYS, start=1):
            if sums and key == "lcl":
                continue
            arr = getattr(stat, key)
            finite = arr[np.isfinite(arr)]
            if finite.size == arr.size and np.ptp(arr) == 0:
                live_cell = live_cells.get((stat.name, key))
                if live_cell is not None and live_cell.formula is not None:
                    ws.write_formula(tab.row, c, "=" + live_cell.formula, limit_fmt, live_cell.value)
                else:
                    cells.number(ws, tab.row, c, float(arr[0]), limit_fmt)
                name = cells.defined_name(layout.eval_tab, stat.name, word.replace(" ", "_"))
                written.limit_names[(stat.name, key)] = out.define(name, cells.cell(layout.eval_tab, tab.row, c))
            elif finite.size == 0:
                ws.write_string(tab.row, c, "none", fmt["text_right"])
            else:
                ws.write_string(tab.row, c, "varies", fmt["text_right"])
                shape = ".2%" if stat.name in style.PERCENT_STATISTICS else f".{layout.decimals + 2}f"
                notes.append(f"{word} {float(finite.min()):{shape}} to {float(finite.max()):{shape}}")
        text = ("varies by point: see data tab; " + ", ".join(notes)) if notes else "the same at every point"
        if stat.lcl_floored:
            text += "; LCL below zero by formula, shown as 0"
        tab.text(4, text, "note")
        tab.fit(text, style.EVAL_COLUMNS[4], per_line=style.EVAL_COLUMNS[4] - 4)
        tab.row += 1
    if live:
        written.as_values = [f"{sc.stat.label} {word}" for sc in stats for key, word in LIMIT_KEYS
                             if (sc.stat.name, key) in written.limit_names and (sc.stat.name, key) not in live_cells]
    if const_at:
        tab.row = const_row
        tab.head(["Constant", "Value", "What it is"], (1,))
        for name, row in sorted(const_at.items(), key=lambda kv: kv[1]):
            value, meaning = consts[name]
            ws.write_string(row, 0, name)
            ws.write_number(row, 1, value, fmt["dec6"])
            ws.write_string(row, 2, meaning, fmt["note"])
        tab.row = const_row + 1 + len(const_at)


SIGNAL_COLUMNS = ("Point", "Label", "Statistic", "Rules broken", "Note in the input")


def _signals(tab: Tab, result: CharacteristicResult, table: str) -> None:
    """One row per signalled point and statistic: the rules it broke and the input's note of its subgroup."""
    ws = tab.ws
    tab.section(f"Points signalled ({result.points_signalled}, in {len(result.events)} event(s): see the Action log)")
    if not result.signals:
        ws.write_string(tab.row, 0, "No point signalled under the rules in use.")
        tab.row += 1
        return
    labels = {s.name: s.label for s in result.fit.statistics}
    top = tab.row
    for i, s in enumerate(result.signals, start=1):
        rules = "; ".join(s.rules)  # what each rule looks for is under "Rules in use" above
        ws.write_number(top + i, 0, s.point, tab.fmt["point"])
        ws.write_string(top + i, 1, s.label)
        ws.write_string(top + i, 2, labels.get(s.statistic, s.statistic))
        ws.write_string(top + i, 3, rules, tab.fmt["wrap"])
        ws.write_string(top + i, 4, s.note, tab.fmt["note"])
        tab.fit(rules, style.EVAL_COLUMNS[3], row=top + i)
        tab.fit([rules, s.note], style.EVAL_COLUMNS[4], per_line=style.EVAL_COLUMNS[4] - 4, row=top + i)
    tab.ws.repeat_rows(top)
    ws.add_table(top, 0, top + len(result.signals), 4, {
        "name": table,
        "style": "Table Style Light 1",
        "columns": [{"header": h, "header_format": tab.fmt["head"]} for h in SIGNAL_COLUMNS]})
    tab.row = top + len(result.signals) + 1


def _capability(tab: Tab, result: CharacteristicResult) -> None:
    ws, fmt = tab.ws, tab.fmt
    cap = result.capability
    tab.section("Capability")
    if cap is None:
        ws.write_string(tab.row, 0, "Not computed: no specification limits were given for this characteristic."
                        if isinstance(result.characteristic.data, Measurements) else "Not computed.")
        tab.row += 1
        return
    if isinstance(cap, AttributeRate):
        what = "proportion defective" if cap.kind == "proportion" else "defects per unit"
        tab.head(["Estimate", "Value", f"{cap.confidence:.0%} interval: low", "high", ""], (1, 2, 3))
        ws.write_string(tab.row, 0, f"Average {what}")
        for c, v in enumerate((cap.estimate, cap.ci.low, cap.ci.high), start=1):
            cells.number(ws, tab.row, c, v, fmt["percent2" if cap.kind == "proportion" else "dec6"])
        tab.row += 1
        return
    if not cap.stable:
        ws.merge_range(tab.row, 0, tab.row, 4, "", fmt["warn"])
        ws.write_string(tab.row, 0, "Not a stable process: the chart signals, so these indices describe the "
                        "data seen, not what the process will make.", fmt["warn"])
        tab.row += 1
    tab.head(["Index", "Estimate", f"{cap.confidence:.0%} interval: low", "high", "Note"], (1, 2, 3))
    for name, value, key, note in (
            ("Cp", cap.cp, "cp", "spread against the tolerance, sigma within"),
            ("Cpk", cap.cpk, "cpk", "nearer specification limit, sigma within"),
            ("Pp", cap.pp, "pp", "spread against the tolerance, overall sigma"),
            ("Ppk", cap.ppk, "ppk", "nearer specification limit, overall sigma"),
            ("Cpm", cap.cpm, "cpm", "against the target")):
        ws.write_string(tab.row, 0, name)
        if value is None:
            ws.write_string(tab.row, 1, "not defined")
        else:
            cells.number(ws, tab.row, 1, value, fmt["ratio"])
        if key in cap.ci:
            cells.number(ws, tab.row, 2, cap.ci[key].low, fmt["ratio"])
            cells.number(ws, tab.row, 3, cap.ci[key].high, fmt["ratio"])
        ws.write_string(tab.row, 4, note, fmt["note"])
        tab.row += 1
    facts = [("Mean", f"{cap.mean:.6g}"), ("Sigma within, all subgroups", f"{cap.sigma_within:.6g} (every "
             "subgroup not excluded; the limits use the base period's)"), ("Sigma overall", f"{cap.sigma_overall:.6g}")]
    if cap.ppm_out is not None:
        facts.append(("Out of specification", f"{cap.ppm_out:,.1f} parts per million (normal model)"))
    if cap.normality_p is not None:
        facts.append(("Normality test p-value", f"{cap.normality_p:.4f}"))
    for label, value in facts:
        tab.fact(label, value)
    for note in cap.notes:
        tab.fact("Note", note, wrap=True)


def _performance(tab: Tab, result: CharacteristicResult, performance_tab: str) -> None:
    ws, fmt = tab.ws, tab.fmt
    perf = result.performance
    tab.section("How this scheme behaves")
    tab.fact("Method", perf.method, wrap=True)
    ws.write_string(tab.row, 0, "In-control ARL (points)", fmt["label"])
    cells.number(ws, tab.row, 1, perf.arl_in_control, fmt["arl"])
    tab.row += 1
    if perf.components:
        tab.fact("Each chart alone", "; ".join(f"{k}: {v:,.1f}" for k, v in perf.components.items()))
    ws.write_string(tab.row, 0, "False alarms per month", fmt["label"])
    if perf.false_alarms_per_month is not None:
        cells.number(ws, tab.row, 1, perf.false_alarms_per_month, fmt["ratio"])
    else:
        ws.write_string(tab.row, 1, "sampling interval not given")
    tab.row += 1
    tab.row += 1
    heading = shift_heading(perf)
    tab.head([heading, "ARL (points)", "ATS (hours)", "", ""], (0, 1, 2))
    tab.height(style.row_height(heading, style.EVAL_COLUMNS[0] - 1), tab.row - 1)  # the shift's unit wraps
    for s in perf.shifts:
        cells.number(ws, tab.row, 0, s.shift, fmt["dec2"])
        cells.number(ws, tab.row, 1, s.arl, fmt["arl"])
        cells.number(ws, tab.row, 2, s.ats_hours, fmt["hours"])
        tab.row += 1
    ws.write_url(tab.row, 0, cells.internal_link(performance_tab), fmt["link"],
                 string="ARL over a finer grid of shifts: Scheme performance")
    tab.row += 1
