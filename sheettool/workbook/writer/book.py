"""Assemble the evaluated workbook: tab order and names, document properties, atomic write.

Tabs, in order: per characteristic its one-page summary and its evaluation tab, the action log, the
scheme-performance tab, the data tabs of each characteristic, the method and audit tab, then the hidden limits
block and chart-lines tabs.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import gc
import os
import re
import shutil
import socket
import sys
import tempfile
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from sheettool import TOOL_NAME, __version__
from sheettool.base.errors import OutputError
from sheettool.base.problems import Problem
from sheettool.evaluation.carried import limits_entry
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook.action_log import ACTION_LOG_TAB
from sheettool.workbook.limits_block import LIMITS_SHEET, limits_rows
from sheettool.workbook.report import EvaluationReport, SheetEvaluation
from sheettool.workbook.writer.action_log_tab import write_action_log_tab
from sheettool.workbook.writer.book_writer import NOTES_TAB, PERFORMANCE_TAB, BookWriter
from sheettool.workbook.writer.cells import PageHeading
from sheettool.workbook.writer.data_tab import data_tab_count, plan_data_tab, write_data_tab
from sheettool.workbook.writer.evaluation_tab import write_evaluation_tab
from sheettool.workbook.writer.lines import LINES_SHEET
from sheettool.workbook.writer.notes_tab import Stamp, stamp_for, write_notes_tab
from sheettool.workbook.writer.one_page import PageFacts, period_words, write_one_page
from sheettool.workbook.writer.performance_tab import write_performance_tab
from sheettool.workbook.writer.tab import Tab


@dataclass
class WriterOptions:
    """How the workbook is written: live formulas or values, the fixed document date, sheets locked or not."""

    formulas: bool = False
    timestamp: dt.datetime | None = None
    protect: str | None = None  # --protect: lock every sheet ("" locks without a password)


def _plain_file_mode() -> int:
    """The mode a newly created file gets under this process's umask (0o666 less the umask)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


_PLAIN_FILE_MODE = _plain_file_mode()
TEMP_PREFIX = ".sheettool-"  # a run's private work folder beside its output: .sheettool-HOST-PID-XXXXXXXX
STALE_SECONDS = 3600  # a work folder older than this, or whose process on this host is gone, is a killed run's


def write_atomically(path: Path, build: Callable[[str], None], protect: Path | None = None) -> None:
    """Build a workbook in a private work folder beside `path`, then rename it into place.

    Everything the build writes (the workbook and the writing library's own temporary parts) stays
    in that folder, removed on every path out; nothing partial ever has the output's name. A full
    disk or any other OS error is OutputError (exit 4) with its cause. Work folders that killed
    runs left in the output's folder are removed first.
    """
    path = Path(path)
    if protect is not None and path.resolve() == Path(protect).resolve():
        raise OutputError(f"{path}: refusing to write the output over the input; choose another name with -o")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{path}: the folder {folder} does not exist")
    clean_stale(folder)
    try:
        work = tempfile.mkdtemp(prefix=f"{TEMP_PREFIX}{_owner()}-", dir=folder)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {folder} ({exc.strerror or exc})") from None
    tmp = os.path.join(work, ".partial.xlsx")  # hidden: a search of the folder for inputs passes over it
    failure: OutputError | None = None
    try:
        with _leftovers_quiet():
            try:
                build(tmp)
                os.chmod(tmp, _PLAIN_FILE_MODE)  # files made in a private folder are private; an output is not
                os.replace(tmp, path)
            except Exception as exc:
                cause = os_error_cause(exc)
                if cause is None:
                    raise
                failure = OutputError(f"{path}: cannot write the output ({cause.strerror or cause})")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    if failure is not None:
        raise failure


def os_error_cause(exc: BaseException) -> OSError | None:
    """The OS error behind `exc` (itself, its causes, or an argument of a library's wrapper), or None."""
    seen: list[BaseException] = []
    todo: list[object] = [exc]
    while todo and len(seen) < 20:
        item = todo.pop(0)
        if not isinstance(item, BaseException) or item in seen:
            continue
        if isinstance(item, OSError):
            return item
        seen.append(item)
        todo += [item.__cause__, item.__context__, *item.args]
    return None


@contextlib.contextmanager
def _leftovers_quiet() -> Iterator[None]:
    """Objects a failed write leaves half-closed (a zip package, temporary parts) fail again when collected
    and Python prints "Exception ignored ... OSError"; collect them here, their OS errors already reported."""
    hook = sys.unraisablehook

    def quiet(unraisable: Any) -> None:
        if not isinstance(unraisable.exc_value, OSError):
            hook(unraisable)

    sys.unraisablehook = quiet
    try:
        yield
    finally:
        gc.collect()
        sys.unraisablehook = hook


def _owner() -> str:
    """This host and process, as written in a work folder's name so that a later run can tell it is gone."""
    host = "".join(c for c in socket.gethostname() if c.isalnum())[:40] or "host"
    return f"{host}-{os.getpid()}"


def clean_stale(folder: Path, now: float | None = None) -> None:
    """Remove the work folders (and the older hidden temporary files) killed runs left in `folder`: those
    older than STALE_SECONDS, and on this host those whose process is gone. Another run's are left alone."""
    now = time.time() if now is None else now
    host = _owner().rpartition("-")[0]
    try:
        entries = [e for e in os.scandir(folder) if e.name.startswith(TEMP_PREFIX)]
    except OSError:
        return  # the folder cannot be listed: the write says why
    for entry in entries:
        try:
            age = now - entry.stat(follow_symlinks=False).st_mtime
        except OSError:
            continue
        parts = entry.name[len(TEMP_PREFIX):].split("-")
        gone = len(parts) == 3 and parts[0] == host and parts[1].isdigit() and not _alive(int(parts[1]))
        if age < STALE_SECONDS and not gone:
            continue
        if entry.is_dir(follow_symlinks=False):
            shutil.rmtree(entry.path, ignore_errors=True)
        elif entry.name.endswith(".xlsx"):  # an earlier version's temporary file (.sheettool-XXXXXXXX.xlsx)
            with contextlib.suppress(OSError):
                os.unlink(entry.path)


def _alive(pid: int) -> bool:
    """True when a process with this id exists on this host (or cannot be told apart from one)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # it exists but belongs to someone else
        return True
    return True


@dataclass(frozen=True)
class Section:
    """One characteristic's part of the workbook: its title (name, told apart from others of the same name), its
    source, and its tabs: summary, chart tab, first data tab."""

    title: str
    source: str
    tabs: tuple[str, str, str]

    @property
    def first_tab(self) -> str:
        """The tab the section opens with: its one-page summary."""
        return self.tabs[0]


@dataclass
class Summary:
    """A tab written first, before the evaluation tabs (the pack's summary); it gets the sections."""

    name: str
    write: Callable[[BookWriter, Tab, list[Section], PageHeading], None]  # (its tab, the sections, its heading)


def write_evaluated_workbook(report: EvaluationReport, path: Path, options: WriterOptions | None = None) -> None:
    """Write the report's workbook to `path` (.xlsx, never macro-enabled) atomically, never over the input."""
    write_workbook([report], path, options)


def write_workbook(reports: list[EvaluationReport], path: Path, options: WriterOptions | None = None,
                   summary: Summary | None = None, block_keys: list[str] | None = None,
                   kept_log: list[dict[str, str]] | None = None) -> None:
    """Write the evaluated workbook of one or more inputs (a pack) atomically, never over an input.

    block_keys names each characteristic in the limits block (default: its sheet name); kept_log holds the earlier
    action log's entries of characteristics not evaluated this time, written on unchanged.
    """
    options = options or WriterOptions()
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise OutputError(f"{path}: the output is always an .xlsx workbook without macros; "
                          "choose a name ending in .xlsx with -o")
    for report in reports:
        if path.resolve() == report.input.resolve():
            raise OutputError(f"{path}: refusing to write the output over the input; choose another name with -o")
    stamp = stamp_for(options.timestamp)

    def build(tmp: str) -> None:
        fixed = (NOTES_TAB, LIMITS_SHEET, PERFORMANCE_TAB, LINES_SHEET, ACTION_LOG_TAB) + (
            (summary.name,) if summary else ())
        out = BookWriter(tmp, live=options.formulas, reserved=fixed, file=path.name)
        out.locked = options.protect is not None
        with out.catching():
            _properties(out, reports, stamp)
            out.book.set_calc_mode("auto")
            _tabs(out, reports, stamp, summary, block_keys or [], kept_log or [])
            if options.protect is not None:
                out.protect(options.protect)
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
          block_keys: list[str], kept_log: list[dict[str, str]]) -> None:
    """Add the tabs in their order, then write each: per characteristic its one-page summary and evaluation tab,
    then the action log, scheme performance, the data tabs, the audit and the hidden tabs."""
    sheets = [sheet for report in reports for sheet in report.sheets]
    owners = [report for report in reports for _ in report.sheets]
    tells = _told_apart(sheets, owners)
    date = f"{stamp.when:%Y-%m-%d}"
    names = [(out.tab_name(s.result.characteristic.name, "summary", t, bool(t)),
              out.tab_name(s.result.characteristic.name, "chart", t, bool(t)),
              [out.tab_name(s.result.characteristic.name, "data" + (f" {k}" if k > 1 else ""), t, bool(t))
               for k in range(1, data_tab_count(s.result.characteristic.data.subgroups) + 1)])
             for s, t in zip(sheets, tells, strict=True)]
    summary_tab = out.add_tab(summary.name) if summary is not None else None
    page_tabs, eval_tabs = [], []
    for page, chart, _ in names:
        page_tabs.append(out.add_tab(page))
        eval_tabs.append(out.add_tab(chart))
    log_tab = out.add_tab(ACTION_LOG_TAB)
    performance_tab = out.add_tab(PERFORMANCE_TAB)
    data_tabs = [[out.add_tab(data) for data in datas] for _, _, datas in names]
    notes_tab = out.add_tab(NOTES_TAB)
    block_tab = out.add_tab(LIMITS_SHEET)
    lines_tab = out.add_tab(LINES_SHEET)
    as_values: list[str] = []
    for i, (sheet, page_tab, eval_tab, data_tab) in enumerate(zip(sheets, page_tabs, eval_tabs, data_tabs,
                                                                  strict=True), start=1):
        result, report = sheet.result, owners[i - 1]
        facts = page_facts(sheet, report)
        heading = PageHeading("", result.characteristic.name, facts.part, facts.source, facts.period, date,
                              f"section {i}" if summary is not None else "")
        layout = plan_data_tab(result, sheet.read, data_tab[0].name, eval_tab.name, out.live,
                               tuple(t.name for t in data_tab[1:]))
        with out.values_only(layout.split):
            written = write_evaluation_tab(out, eval_tab, result, layout, f"signals_{i}",
                                           replace(heading, what="charts, signals, capability and performance"),
                                           page_tab.name)
            write_one_page(out, page_tab, result, layout, facts, eval_tab.name, replace(heading, what="summary"))
            stats_as_values = write_data_tab(out, data_tab, layout, sheet, written.limit_names if out.live else {},
                                             f"data_{i}", replace(heading, what="data and statistics"))
        as_values += [f"{result.characteristic.name}: {what}" for what in stats_as_values + written.as_values]
        _hand_back(report.problems, out.found())
    tab_names = [tab.name for tab in eval_tabs]
    results = [sheet.result for sheet in sheets]
    whole = PageHeading("", source=", ".join(r.input.name for r in reports), date=date)
    if summary is not None and summary_tab is not None:
        sections = [Section(chart.removesuffix(" chart"), page_facts(sheet, report).source, (page, chart, datas[0]))
                    for (page, chart, datas), sheet, report in zip(names, sheets, owners, strict=True)]
        summary.write(out, summary_tab, sections, replace(whole, what="review summary"))
    write_action_log_tab(log_tab, results, replace(whole, what="action log"), kept_log)
    write_performance_tab(out, performance_tab, results, tab_names, replace(whole, what="scheme performance"))
    _hand_back(reports[0].problems, out.found())
    write_notes_tab(out, notes_tab, reports, stamp, as_values, tab_names, replace(whole, what="method and audit"))
    _limits_block(block_tab, results, block_keys)
    out.lines.write(lines_tab.ws, lambda name: out.add_tab(name).ws)
    (summary_tab or page_tabs[0]).ws.activate()


def page_facts(sheet: SheetEvaluation, report: EvaluationReport) -> PageFacts:
    """The part, source (file and sheet) and period every page of a characteristic names."""
    part = sheet.result.settings.get("part")
    name = "" if part is None or part.value in (None, "") else str(part.value)
    return PageFacts(name, f"{report.input.name}, sheet {sheet.read.sheet}", period_words(sheet.result))


def _hand_back(problems: list[Problem], found: list[Problem]) -> None:
    """Add the problems met while writing to a report's own (once: a report may be written twice)."""
    problems += [p for p in found if p not in problems]


def _told_apart(sheets: list[SheetEvaluation], owners: list[EvaluationReport]) -> list[tuple[str, ...]]:
    """For each characteristic whose name another shares, what tells them apart, the telling word first: its part,
    its sheet, or its input's name (the words of it the others lack), whichever differs among them; () for a name
    no other has."""
    facts = [(page_facts(s, r).part, s.read.sheet, r.input.stem) for s, r in zip(sheets, owners, strict=True)]
    names = [s.result.characteristic.name.lower() for s in sheets]
    out: list[tuple[str, ...]] = []
    for name, own in zip(names, facts, strict=True):
        group = [f for n, f in zip(names, facts, strict=True) if n == name]
        if len(group) == 1:
            out.append(())
            continue
        differs = [k for k in range(3) if len({f[k] for f in group}) > 1 and own[k]]
        order = differs + [k for k in range(3) if k not in differs and own[k]]
        out.append(tuple(_own_words(own[k], [f[k] for f in group]) if k == 2 else own[k] for k in order))
    return out


def _own_words(text: str, group: list[str]) -> str:
    """The words of `text` that not every text of its group shares ("line2-november" among "line3-november":
    "line2"), so that a short tag in a tab name still tells them apart; the whole text when every word is shared."""
    split = re.compile(r"[\s_\-.]+")
    shared = set.intersection(*(set(split.split(t.lower())) for t in group))
    own = [w for w in split.split(text) if w and w.lower() not in shared]
    return " ".join(own) or text


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
