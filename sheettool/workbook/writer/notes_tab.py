"""The method and audit tab: what was read, by which tool, with which settings and formulas, what
went wrong, and the caution that the statistics support and never replace engineering judgement.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

from sheettool import TOOL_NAME, __version__
from sheettool.core.constants import constants
from sheettool.core.data import Measurements
from sheettool.core.design import MET_TOLERANCE
from sheettool.evaluation.results import CharacteristicResult
from sheettool.settings import KNOWN_SETTINGS, Setting
from sheettool.workbook import style
from sheettool.workbook.reader import SheetRead
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.book_writer import BookWriter
from sheettool.workbook.writer.data_tab import PRINT_ROWS
from sheettool.workbook.writer.methods import method
from sheettool.workbook.writer.tab import Tab

LABEL_CHARS = 27  # characters per line of the 30-wide label column (bold, a little below what fits)
NOTE_CHARS = 100  # characters per line of the 100-wide text column (a little below what fits: nothing is cut)
CAUTION = (
    "These statistics support, and never replace, engineering judgement, the site's quality "
    "procedures, customer requirements and applicable regulations and codes. Characteristics that "
    "bear on safety need the review those procedures require before any decision is taken."
)
GENERAL_METHODS = (
    ("Pattern rules", "each rule is applied to the plotted points in standard errors from the center line; "
                      "while fewer points exist than a rule's window, the window is what there is. They apply to "
                      "the location chart (means, individuals) only: ranges and standard deviations are not normal "
                      "and successive moving ranges share a reading, so a spread chart signals beyond its limits. "
                      "The rules are published ones under presets named here: a point beyond 3-sigma limits "
                      "(Shewhart 1931), the zone, run, trend and alternation tests as collected by Nelson (1984); "
                      "their run lengths by Champ and Woodall (1987)"),
    ("Standard errors", "the spread of the plotted point (sigma / sqrt(n) for a mean of n, the rate's own for "
                        "p, np, c and u): rules and rate shifts are in standard errors; mean shifts are in process "
                        "standard deviations, the spread of single readings"),
    ("Zone-rule run lengths", "Markov chain of the rule windows (Champ and Woodall 1987)"),
    ("Shewhart run lengths", "points signal independently; the run length is geometric, ARL = 1 / p"),
    ("Capability intervals", "Cp: chi-square interval; Cpk: Bissell (1990) normal approximation"),
)


@dataclass
class Stamp:
    """The document date and where it came from (fixed, so that a re-run gives the same file)."""

    when: dt.datetime
    origin: str


def write_notes_tab(out: BookWriter, tab: Tab, reports: list[EvaluationReport], stamp: Stamp,
                    as_values: list[str], eval_tabs: list[str], heading: cells.PageHeading) -> None:
    """Write the method and audit notes as label / text rows, for one input or a pack of them."""
    ws, fmt, live = tab.ws, tab.fmt, out.live
    results = [result for report in reports for result in report.characteristics]
    ws.set_column(0, 0, 30)
    ws.set_column(1, 1, 100)
    ws.write_string(0, 0, "Method and audit", fmt["title"])
    tab.row = 2

    def line(label: str, text: str, role: str = "wrap") -> None:
        tab.text(0, label, "lead")  # a long label wraps in its column rather than running under the text
        tab.text(1, text, role)
        height = max(style.row_height(text, NOTE_CHARS), style.row_height(label, LABEL_CHARS))
        if height > style.line_height():
            tab.height(height)
        tab.row += 1

    def section(title: str) -> None:
        tab.row += 1
        tab.text(0, title, "section")
        tab.text(1, "", "section")
        tab.row += 1

    line("Caution", CAUTION, "caution")
    for result, eval_tab in zip(results, eval_tabs, strict=True):
        tab.text(0, "Chart tab", "label")
        ws.write_url(tab.row, 1, cells.internal_link(eval_tab), fmt["link"], string=result.identity)
        tab.row += 1
    for report in reports:
        section("Input" if len(reports) == 1 else f"Input: {report.input.name}")
        line("Input file", str(report.input) if len(reports) > 1 else report.input.name)
        line("Size (bytes)", f"{report.input_size:,}")
        line("SHA-256", report.input_sha256)
        for sheet in report.sheets:
            line(f"Sheet '{sheet.read.sheet}'", _read_words(sheet.read))
    section("This file")
    line("Written by", f"{TOOL_NAME} {__version__}")
    line("Document date", f"{stamp.when:%Y-%m-%d %H:%M:%S} ({stamp.origin})")
    line("Live formulas", ("yes: per-subgroup statistics and constant limits are formulas over the copied data, "
                           "with the computed values stored beside them" if live else
                           "no: every number is a value (run with --formulas to get formulas)"))
    if live and as_values:
        line("Written as values", "no checked formula for: " + "; ".join(as_values))
    line("Printing", "each characteristic's summary prints as one landscape page; chart tabs (NAME chart) print one "
                     f"page wide; data tabs (NAME data) print their first {PRINT_ROWS} subgroups at 80%, the point and "
                     "date repeated on the pages across (select rows and print the selection for more)")
    line("Protection", "every sheet is locked against editing (--protect); the digest above names the input read"
         if out.locked else "none: the sheets can be edited (run with --protect to lock them)")
    line("Hidden tabs", "limits-block (the machine-readable limits next month's run reads back) and chart-lines "
                        "(the axis labels, zone and specification lines and histograms the charts draw)")
    section("Settings")
    for result in results:
        if not result.settings:
            line(result.characteristic.name, "built-in defaults (no settings recorded)")
        rules = ", ".join(r.text for r in result.rules)
        for setting in result.settings.values():
            line(result.characteristic.name, setting_words(setting, rules if setting.name == "rules" else ""))
        if "rules" not in result.settings:
            line(result.characteristic.name, f"Pattern rules in use: {rules}")
    section("Formulas and constants")
    for chart in dict.fromkeys(r.fit.chart for r in results):
        about = method(chart)
        line(f"Chart kind {chart}", f"{about.words}: {about.formulas}")
        if about.published:
            line("  published", about.published)
    for result in results:
        if isinstance(result.characteristic.data, Measurements):
            line(f"{result.characteristic.name}: constants", _constants_words(result.fit.subgroup_size))
        line(f"{result.characteristic.name}: run length", result.performance.method)
        for what, text in _check_methods(result):
            line(f"{result.characteristic.name}: {what}", text)
    for label, text in GENERAL_METHODS:
        line(label, text)
    section("Problems found")
    problems = [p for r in reports for p in r.problems] + [p for c in results for p in c.problems]
    if not problems:
        line("None", "no problems were found while reading and evaluating")
    for p in problems:
        line(p.severity, f"{p.where}: {p.message}")
    cells.print_setup(ws, heading)


def _check_methods(result: CharacteristicResult) -> list[tuple[str, str]]:
    """The method of each extra check the evaluation made, in the checks' own words where they carry them."""
    out = []
    if result.estimated_limits is not None:
        out.append(("estimated limits", result.estimated_limits.method))
    if result.data_shape is not None:
        out.append(("data shape", result.data_shape.method))
    if result.requirements_check is not None:
        out.append(("requirements", "each requirement of the settings against this scheme's in-control ARL and its "
                                    "ARL and ATS at the shift judged, from the run-length figures above; met within "
                                    f"{MET_TOLERANCE:.1%} of the required figure"))
    return out


def _read_words(read: SheetRead) -> str:
    columns = ", ".join(f"{letter}: {meaning}" for letter, meaning in read.columns.items())
    text = (f"header in row {read.header_row}, data rows {read.first_row} to {read.last_row}; "
            f"{len(read.rows)} rows kept; columns {columns}")
    info = getattr(read, "read_info", None)
    return f"{text}; {info}" if info else text


def _constants_words(n: int) -> str:
    try:
        k = constants(n)
    except ValueError:
        return f"subgroups of {n}: no tabulated constants"
    return (f"subgroups of {n}: d2 {k.d2:.6f}, d3 {k.d3:.6f}, c4 {k.c4:.6f}, A2 {k.A2:.6f}, A3 {k.A3:.6f}, "
            f"B3 {k.B3:.6f}, B4 {k.B4:.6f}, D3 {k.D3:.6f}, D4 {k.D4:.6f}")


def stamp_for(given: dt.datetime | None, now: dt.datetime | None = None) -> Stamp:
    """The document date: --timestamp when given (a re-run then gives the same file), else the evaluation
    time (UTC, whole seconds)."""
    if given is not None:
        return Stamp(given.replace(tzinfo=None) if given.tzinfo is None else
                     given.astimezone(dt.UTC).replace(tzinfo=None), "given with --timestamp")
    when = (now or dt.datetime.now(dt.UTC)).astimezone(dt.UTC).replace(tzinfo=None, microsecond=0)
    return Stamp(when, "the evaluation time, UTC")


def setting_words(setting: Setting, rules: str = "") -> str:
    """A setting in words for the audit: what it is, its value and where it came from ("Upper specification limit:
    12.05 (cell 'Bore'!B6)"); `rules` spells out the rules a preset holds."""
    value = setting.value
    if value is None:
        shown = "chosen from the data" if setting.name == "chart" else "not given"
    elif isinstance(value, bool):
        shown = "yes" if value else "no"
    elif isinstance(value, float):
        shown = f"{value:g}"
    elif isinstance(value, dt.datetime):
        shown = f"{value:%Y-%m-%d %H:%M}"
    else:
        shown = str(value)
    if rules and rules != shown:
        shown += f" = {rules}"
    origin = setting.origin
    where = "built-in default" if origin == "default" else origin if origin.startswith("cell") or "!" not in origin \
        else f"cell {origin}"
    what = KNOWN_SETTINGS.get(setting.name, setting.name.replace("_", " "))
    return f"{what[:1].upper()}{what[1:]}: {shown} ({where})"
