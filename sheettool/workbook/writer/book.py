"""Assemble the evaluated workbook: tab order and names, document properties, atomic write.

Tabs, in order: one evaluation tab per characteristic, the scheme-performance tab, one data tab per
characteristic, the method and audit tab, then the hidden limits block and chart-lines tabs.
"""

from __future__ import annotations

import datetime as dt
import os
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from sheettool import TOOL_NAME, __version__
from sheettool.base.errors import OutputError
from sheettool.base.problems import Problem
from sheettool.evaluation.carried import limits_entry
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook.limits_block import LIMITS_SHEET, limits_rows
from sheettool.workbook.report import EvaluationReport, SheetEvaluation
from sheettool.workbook.writer.book_writer import NOTES_TAB, PERFORMANCE_TAB, BookWriter
from sheettool.workbook.writer.data_tab import data_tab_count, plan_data_tab, write_data_tab
from sheettool.workbook.writer.evaluation_tab import write_evaluation_tab
from sheettool.workbook.writer.lines import LINES_SHEET
from sheettool.workbook.writer.notes_tab import Stamp, stamp_for, write_notes_tab
from sheettool.workbook.writer.performance_tab import write_performance_tab
from sheettool.workbook.writer.tab import Tab


@dataclass
class WriterOptions:
    """How the workbook is written: live formulas or values, and the fixed document date."""

    formulas: bool = False
    timestamp: dt.datetime | None = None


def _plain_file_mode() -> int:
    """The mode a newly created file gets under this process's umask (0o666 less the umask)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


_PLAIN_FILE_MODE = _plain_file_mode()


def write_atomically(path: Path, build: Callable[[str], None], protect: Path | None = None) -> None:
    """Build a workbook into a temporary file beside `path`, then rename it into place."""
    path = Path(path)
    if protect is not None and path.resolve() == Path(protect).resolve():
        raise OutputError(f"{path}: refusing to write the output over the input; choose another name with -o")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{path}: the folder {folder} does not exist")
    try:
        fd, tmp = tempfile.mkstemp(prefix=".sheettool-", suffix=".xlsx", dir=folder)
        os.close(fd)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {folder} ({exc.strerror})") from None
    try:
        build(tmp)
        os.chmod(tmp, _PLAIN_FILE_MODE)  # mkstemp makes the file private; an output is an ordinary file
        os.replace(tmp, path)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write the output ({exc.strerror or exc})") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


@dataclass
class Summary:
    """A tab written first, before the evaluation tabs (the pack's summary); it gets the evaluation tab names."""

    name: str
    write: Callable[[Tab, list[str]], None]  # (its tab, the evaluation tab names)


def write_evaluated_workbook(report: EvaluationReport, path: Path, options: WriterOptions | None = None) -> None:
    """Write the report's workbook to `path` (.xlsx, never macro-enabled) atomically, never over the input."""
    write_workbook([report], path, options)


def write_workbook(reports: list[EvaluationReport], path: Path, options: WriterOptions | None = None,
                   summary: Summary | None = None, block_keys: list[str] | None = None) -> None:
    """Write the evaluated workbook of one or more inputs (a pack) atomically, never over an input.

    block_keys names each characteristic in the limits block (default: its sheet name).
    """
    options = options or WriterOptions()
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise OutputError(f"{path}: the output is always an .xlsx workbook without macros; "
                          "choose a name ending in .xlsx with -o")
    for report in reports:
        if path.resolve() == report.input.resolve():
            raise OutputError(f"{path}: refusing to write the output over the input; choose another name with -o")
    stamp = stamp_for(reports, options.timestamp)

    def build(tmp: str) -> None:
        fixed = (NOTES_TAB, LIMITS_SHEET, PERFORMANCE_TAB, LINES_SHEET) + ((summary.name,) if summary else ())
        out = BookWriter(tmp, live=options.formulas, reserved=fixed, file=path.name)
        with out.catching():
            _properties(out, reports, stamp)
            out.book.set_calc_mode("auto")
            _tabs(out, reports, stamp, summary, block_keys or [])
            out.close()
            _hand_back(reports[0].problems, out.found())

    write_atomically(path, build)


def _properties(out: BookWriter, reports: list[EvaluationReport], stamp: Stamp) -> None:
    """Document properties: what was evaluated, by which version, from which inputs (with their digests)."""
    inputs = ", ".join(r.input.name for r in reports)
    names = dict.fromkeys(c.characteristic.name for r in reports for c in r.characteristics)
    out.book.set_properties({
        "title": f"Evaluation of {inputs}" if len(reports) == 1 else f"Review pack of {len(reports)} workbooks",
        "subject": "Control charts, signals, capability and scheme performance of " + ", ".join(names),
        "author": f"{TOOL_NAME} {__version__}", "manager": "", "company": "",
        "comments": f"Written by {TOOL_NAME} {__version__} from "
                    + "; ".join(f"{r.input.name} (SHA-256 {r.input_sha256})" for r in reports),
        "created": stamp.when})


def _tabs(out: BookWriter, reports: list[EvaluationReport], stamp: Stamp, summary: Summary | None,
          block_keys: list[str]) -> None:
    """Add the tabs in their order, then write each: evaluation and data tabs per characteristic, then the rest."""
    sheets = [sheet for report in reports for sheet in report.sheets]
    tells = [_tells(sheet, report) for report in reports for sheet in report.sheets]
    owners = [report for report in reports for _ in report.sheets]
    names = [(out.tab_name(s.result.characteristic.name, "chart", t),
              [out.tab_name(s.result.characteristic.name, "data" + (f" {k}" if k > 1 else ""), t)
               for k in range(1, data_tab_count(s.result.characteristic.data.subgroups) + 1)])
             for s, t in zip(sheets, tells, strict=True)]
    summary_tab = out.add_tab(summary.name) if summary is not None else None
    eval_tabs = [out.add_tab(chart) for chart, _ in names]
    performance_tab = out.add_tab(PERFORMANCE_TAB)
    data_tabs = [[out.add_tab(data) for data in datas] for _, datas in names]
    notes_tab = out.add_tab(NOTES_TAB)
    block_tab = out.add_tab(LIMITS_SHEET)
    lines_tab = out.add_tab(LINES_SHEET)
    as_values: list[str] = []
    for i, (sheet, eval_tab, data_tab) in enumerate(zip(sheets, eval_tabs, data_tabs, strict=True), start=1):
        result = sheet.result
        layout = plan_data_tab(result, sheet.read, data_tab[0].name, eval_tab.name, out.live,
                               tuple(t.name for t in data_tab[1:]))
        with out.values_only(layout.split):
            written = write_evaluation_tab(out, eval_tab, result, layout, f"signals_{i}")
            stats_as_values = write_data_tab(out, data_tab, layout, sheet, written.limit_names if out.live else {},
                                             f"data_{i}")
        as_values += [f"{result.characteristic.name}: {what}" for what in stats_as_values + written.as_values]
        _hand_back(owners[i - 1].problems, out.found())
    tab_names = [tab.name for tab in eval_tabs]
    results = [sheet.result for sheet in sheets]
    if summary is not None and summary_tab is not None:
        summary.write(summary_tab, tab_names)
    write_performance_tab(out, performance_tab, results, tab_names)
    _hand_back(reports[0].problems, out.found())
    write_notes_tab(out, notes_tab, reports, stamp, as_values, tab_names)
    _limits_block(block_tab, results, block_keys)
    out.lines.write(lines_tab.ws, lambda name: out.add_tab(name).ws)
    (summary_tab or eval_tabs[0]).ws.activate()


def _hand_back(problems: list[Problem], found: list[Problem]) -> None:
    """Add the problems met while writing to a report's own (once: a report may be written twice)."""
    problems += [p for p in found if p not in problems]


def _tells(sheet: SheetEvaluation, report: EvaluationReport) -> tuple[str, ...]:
    """What tells a characteristic's tabs apart from another of the same name: its part, its sheet, its input."""
    part = sheet.result.settings.get("part")
    own = [str(part.value)] if part is not None and part.value not in (None, "") else []
    if sheet.read.sheet != sheet.result.characteristic.name:
        own.append(sheet.read.sheet)
    return (*own, report.input.stem)


def _limits_block(tab: Tab, results: list[CharacteristicResult], keys: list[str]) -> None:
    """The hidden machine-readable limits block next month's run reads back; keys name its entries in a pack."""
    entries = [limits_entry(c) for c in results]
    for entry, key in zip(entries, keys, strict=False):
        entry["key"] = key
    for r, row in enumerate(limits_rows(entries)):
        for c, value in enumerate(row):
            if isinstance(value, str):
                tab.ws.write_string(r, c, value)
            else:
                tab.ws.write_number(r, c, value)
    tab.ws.hide()
