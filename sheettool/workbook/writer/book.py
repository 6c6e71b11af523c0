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
from typing import Any

import xlsxwriter

from sheettool import TOOL_NAME, __version__
from sheettool.base.errors import OutputError
from sheettool.evaluation.carried import limits_entry
from sheettool.workbook import style
from sheettool.workbook.limits_block import LIMITS_SHEET, limits_rows
from sheettool.workbook.reader import SheetRead
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.charts import LINES_SHEET, LineSheet
from sheettool.workbook.writer.data_tab import PRINT_ROWS, plan_data_tab, write_data_tab
from sheettool.workbook.writer.evaluation_tab import Links, write_evaluation_tab
from sheettool.workbook.writer.notes_tab import NOTES_TAB, stamp_for, write_notes_tab
from sheettool.workbook.writer.performance_tab import PERFORMANCE_TAB, write_performance_tab


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
    """A tab written first, before the evaluation tabs (the pack's summary); it gets the tab names."""

    name: str
    write: Callable[[Any, Any, dict[str, Any], list[str]], None]  # (book, ws, fmt, evaluation tab names)


def write_evaluated_workbook(report: EvaluationReport, reads: list[SheetRead], path: Path,
                             options: WriterOptions | None = None) -> None:
    """Write the report's workbook to `path` (.xlsx, never macro-enabled) atomically, never over the input."""
    write_workbook([(report, reads)], path, options)


def write_workbook(sources: list[tuple[EvaluationReport, list[SheetRead]]], path: Path,
                   options: WriterOptions | None = None, summary: Summary | None = None,
                   block_keys: list[str] | None = None) -> None:
    """Write the evaluated workbook of one or more inputs (a pack) atomically, never over an input.

    block_keys names each characteristic in the limits block (default: its sheet name).
    """
    options = options or WriterOptions()
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise OutputError(f"{path}: the output is always an .xlsx workbook without macros; "
                          "choose a name ending in .xlsx with -o")
    for report, _ in sources:
        if path.resolve() == report.input.resolve():
            raise OutputError(f"{path}: refusing to write the output over the input; choose another name with -o")
    reports = [report for report, _ in sources]
    stamp = stamp_for(reports, options.timestamp)
    live = options.formulas
    pairs = [(result, read) for report, reads in sources for result, read in zip(report.characteristics, reads,
                                                                                   strict=True)]
    results = [result for result, _ in pairs]

    def build(tmp: str) -> None:
        book = xlsxwriter.Workbook(tmp, {"strings_to_formulas": False, "strings_to_urls": False,
                                         "strings_to_numbers": False, "nan_inf_to_errors": False})
        inputs = ", ".join(r.input.name for r in reports)
        book.set_properties({
            "title": f"Evaluation of {inputs}" if len(reports) == 1 else f"Review pack of {len(reports)} workbooks",
            "subject": "Control charts, signals, capability and scheme performance of "
                       + ", ".join(dict.fromkeys(c.characteristic.name for c in results)),
            "author": f"{TOOL_NAME} {__version__}", "manager": "", "company": "",
            "comments": f"Written by {TOOL_NAME} {__version__} from "
                        + "; ".join(f"{r.input.name} (SHA-256 {r.input_sha256})" for r in reports),
            "created": stamp.when})
        book.set_calc_mode("auto")
        fmt = style.formats(book)
        used: set[str] = {NOTES_TAB.lower(), LIMITS_SHEET.lower(), PERFORMANCE_TAB.lower(), LINES_SHEET.lower()}
        if summary is not None:
            used.add(summary.name.lower())
        names = [(cells.tab_name(r.characteristic.name, "chart", used), cells.tab_name(r.characteristic.name,
                                                                                        "data", used))
                 for r in results]
        summary_ws = book.add_worksheet(summary.name) if summary is not None else None
        eval_ws = [book.add_worksheet(e) for e, _ in names]
        perf_ws = book.add_worksheet(PERFORMANCE_TAB)
        data_ws = [book.add_worksheet(d) for _, d in names]
        notes_ws = book.add_worksheet(NOTES_TAB)
        block_ws = book.add_worksheet(LIMITS_SHEET)
        lines_ws = book.add_worksheet(LINES_SHEET)
        lines = LineSheet()
        links = Links(performance=PERFORMANCE_TAB, notes=NOTES_TAB)
        defined: set[str] = set()
        as_values: list[str] = []
        for i, (result, read) in enumerate(pairs):
            eval_tab, data_tab = names[i]
            layout = plan_data_tab(result, read, data_tab, eval_tab, live)
            written = write_evaluation_tab(book, eval_ws[i], fmt, result, layout, lines, links, live, defined, i + 1)
            limit_names = written.limit_names if live else {}
            stats_as_values = write_data_tab(data_ws[i], fmt, layout, result, read, limit_names, live, f"data_{i + 1}")
            as_values += [f"{result.characteristic.name}: {what}" for what in stats_as_values + written.as_values]
        eval_tabs = [e for e, _ in names]
        if summary is not None:
            summary.write(book, summary_ws, fmt, eval_tabs)
        write_performance_tab(book, perf_ws, fmt, results, eval_tabs)
        write_notes_tab(notes_ws, fmt, sources, stamp, live, as_values, PRINT_ROWS, eval_tabs)
        entries = [limits_entry(c) for c in results]
        for entry, key in zip(entries, block_keys or [], strict=False):
            entry["key"] = key
        for r, row in enumerate(limits_rows(entries)):
            for c, value in enumerate(row):
                if isinstance(value, str):
                    block_ws.write_string(r, c, value)
                else:
                    block_ws.write_number(r, c, value)
        block_ws.hide()
        lines.write(lines_ws)
        (summary_ws or eval_ws[0]).activate()
        book.close()

    write_atomically(path, build)
