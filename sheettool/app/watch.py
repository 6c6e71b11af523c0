"""A drop folder: evaluate every measurement workbook saved into a folder, each version once.

The folder is polled (listed every few seconds) rather than watched through change notifications:
notifications are not delivered reliably for network shares, where drop folders usually live, and
listing works the same everywhere. A file is read only once it has been unchanged for the settle
time and, for a workbook, is a complete zip package; its SHA-256 decides whether it is new.
"""

from __future__ import annotations

import datetime as dt
import multiprocessing
import os
import signal
import threading
import time
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sheettool import TOOL_NAME
from sheettool.app.api import default_output
from sheettool.app.batch import FileJob, Progress, evaluate_job, run_parallel
from sheettool.app.json_form import report_json
from sheettool.app.watch_state import (
    EVALUATED,
    NOT_EVALUATED,
    SKIPPED,
    Content,
    Known,
    WatchState,
    append_log,
    examine,
    remove_temporaries,
    scan,
    write_text_atomically,
)
from sheettool.base.errors import InputError, OutputError, SheettoolError, UsageError
from sheettool.evaluation.options import options_for
from sheettool.settings import Setting
from sheettool.workbook.limits_block import read_limits_block
from sheettool.workbook.reader import read_workbook
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import WriterOptions, write_evaluated_workbook


@dataclass
class WatchTask:
    """One settled version of one input, with everything its evaluation needs (sent to a worker)."""

    rel: str  # relative to the watched folder, with "/"
    path: Path
    content: Content
    output: Path
    settings: dict[str, Setting]
    writer: WriterOptions
    carried: dict[str, dict[str, Any]] | None = None  # --limits-from: the same limits for every input
    carried_from: str = ""
    earlier: list[tuple[Path, frozenset[str]]] = field(default_factory=list)  # other outputs, newest first
    want_json: bool = False


@dataclass
class TaskResult:
    """What became of one task: evaluated (sheets, points signalled, problems, limits) or why not."""

    task: WatchTask
    error: str = ""
    code: int = 0
    changed: bool = False  # the file changed while it was read: it is looked at again once settled
    sheets: list[str] = field(default_factory=list)
    points: int = 0
    problems: list[str] = field(default_factory=list)  # errors and warnings in words, errors first
    limits: str = ""
    json: dict[str, Any] | None = None


def evaluate_task(task: WatchTask) -> TaskResult:
    """Evaluate one version and write its output, only if the bytes read are the bytes hashed."""
    if multiprocessing.parent_process() is not None:  # a worker: the watcher decides when to stop
        signal.signal(signal.SIGINT, signal.SIG_IGN)
        signal.signal(signal.SIGTERM, signal.SIG_IGN)
    carried, carried_from, words = carried_limits(task)
    outcome = evaluate_job(FileJob(task.path, task.rel, task.settings, carried, carried_from, None, task.writer))
    report = outcome.report
    if report is None:
        return TaskResult(task, changed=True) if _changed(task) else TaskResult(task, error=outcome.error,
                                                                                code=outcome.code)
    if report.input_sha256 != task.content.sha256:
        return TaskResult(task, changed=True)
    try:
        write_evaluated_workbook(report, task.output, task.writer)
    except SheettoolError as exc:
        return TaskResult(task, error=str(exc), code=exc.exit_code)
    report.output = task.output
    sheets = [c.sheet for c in report.characteristics]
    return TaskResult(task, sheets=sheets, points=signalled_points(report), problems=problem_words(report),
                      limits=limits_words(words, sheets), json=report_json(report) if task.want_json else None)


def _changed(task: WatchTask) -> bool:
    """Whether the file is no longer the version hashed (then a failure may be a half-saved file's)."""
    try:
        info = os.stat(task.path)
    except OSError:
        return True
    return (info.st_size, info.st_mtime_ns) != (task.content.size, task.content.mtime_ns)


def carried_limits(task: WatchTask) -> tuple[dict[str, Any] | None, str, dict[str, str]]:
    """The limits each sheet carries, the outputs they come from, and per sheet in words where its limits come from.

    Each sheet takes the entry of the newest earlier output whose limits block has one under its
    sheet name (or of the --limits-from output); a sheet whose settings say new_limits yes (its cells,
    the settings sheet or --set) sets its limits afresh from its own base period (None: nothing
    carried, nothing missing).
    """
    blocks: dict[Path, dict[str, dict[str, Any]]] = {}
    earlier = task.earlier
    if task.carried is not None:  # --limits-from: that output for every file
        blocks[Path(task.carried_from)] = task.carried
        earlier = [(Path(task.carried_from), frozenset(task.carried))]
    if not earlier:
        return None, "", {}
    try:
        read = read_workbook(task.path, task.settings)
    except SheettoolError:
        return None, "", {}  # the evaluation reports it in the command line's words
    carried: dict[str, Any] = {}
    words: dict[str, str] = {}
    sources: list[str] = []
    for sheet in read.sheets:
        try:
            asked = options_for(sheet, read.settings, task.settings)[1].get("new_limits")
            own = asked is not None and asked.value is True
        except ValueError:
            own = False  # a bad setting: the evaluation reports it
        if own:
            carried[sheet.sheet] = None
            words[sheet.sheet] = "own base period, as its settings ask"
            continue
        for output, names in earlier:
            if sheet.sheet in names:
                if output not in blocks:
                    try:
                        blocks[output] = read_limits_block(output)
                    except InputError:
                        blocks[output] = {}  # moved away or damaged: the next one
                if sheet.sheet in blocks[output]:
                    carried[sheet.sheet] = blocks[output][sheet.sheet]
                    words[sheet.sheet] = f"carried from {output.name}"
                    sources.append(output.name)
                    break
    if not any(carried.values()):
        return None, "", words
    return carried, ", ".join(dict.fromkeys(sources)), words


def signalled_points(report: EvaluationReport) -> int:
    """Points signalled: distinct signalled subgroups per characteristic (not rule hits), summed."""
    return sum(c.points_signalled for c in report.characteristics)


def problem_words(report: EvaluationReport) -> list[str]:
    """The report's errors and warnings (not its notes) as 'place: message', errors first."""
    found = [p for p in report.problems + [q for c in report.characteristics for q in c.problems]
             if p.severity != "note"]
    return [f"{p.where}: {p.message}" for p in sorted(found, key=lambda p: p.severity != "error")]


def limits_words(words: dict[str, str], sheets: list[str]) -> str:
    """Where the limits came from: 'carried from FILE' or 'own base period', per sheet where they differ."""
    said = {sheet: words.get(sheet, "own base period") for sheet in sheets}
    if len(set(said.values())) == 1:
        return next(iter(said.values()))
    return "; ".join(f"{sheet}: {w}" for sheet, w in said.items())


class WatchEvents:
    """What the watcher tells its caller (the command line draws it); these defaults say nothing."""

    def evaluating(self, tasks: list[WatchTask]) -> None:
        """A group of files is about to be evaluated."""

    def finished(self, result: TaskResult) -> None:
        """A file was evaluated or not, and recorded."""

    def idle(self, waiting: int) -> None:
        """A look at the folder is done; `waiting` files have not settled yet."""


@dataclass
class WatchConfig:
    """What to watch, where to write, and the options of every evaluation."""

    folder: Path
    output: Path
    settings: dict[str, Setting] = field(default_factory=dict)
    writer: WriterOptions = field(default_factory=WriterOptions)
    carried: dict[str, dict[str, Any]] | None = None
    carried_from: str = ""
    jobs: int = 1
    settle: float = 5.0
    want_json: bool = False


class Watcher:
    """Looks at the folder, evaluates what is new and settled, and records each version once."""

    def __init__(self, config: WatchConfig, events: WatchEvents | None = None) -> None:
        self.config = config
        self.events = events or WatchEvents()
        folder, output = Path(config.folder), Path(config.output)
        if not folder.is_dir():
            raise InputError(f"{folder}: no such folder; give the folder to watch")
        if folder.resolve() == output.resolve() or folder.resolve().is_relative_to(output.resolve()):
            raise UsageError(f"{output}: the output folder must not be the watched folder or hold it; "
                             "give a folder inside it or elsewhere with -o")
        try:
            output.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise OutputError(f"{output}: cannot make the output folder ({exc.strerror or exc})") from None
        self.state = WatchState(output)
        remove_temporaries(output)
        self.waiting: dict[str, tuple[int, int, float]] = {}  # rel -> size, mtime, unchanged since
        self.unlogged: list[list[str]] = []  # log lines not written yet (the log was busy)
        self.left: list[str] = []  # --once: files still being written when it gave up on them

    def close(self) -> None:
        """Write what the log still owes and release the state."""
        self.flush_log()
        self.state.close()

    def run(self, stop: threading.Event, poll: float, once: bool = False) -> int:
        """Look at the folder every `poll` seconds until stopped (or, once, until nothing is left to
        wait for); return the highest exit code of the files that could not be evaluated."""
        worst = 0
        patience = max(10 * self.config.settle, 30.0)  # --once: how long a file may go on changing
        while not stop.is_set():
            worst = max([worst] + [r.code for r in self.look(stop)])
            if once:
                now = time.monotonic()
                self.left = sorted(rel for rel, (_, _, since) in self.waiting.items() if now - since > patience)
                if len(self.left) == len(self.waiting):
                    break
            if stop.is_set():
                break
            self.events.idle(len(self.waiting))
            stop.wait(poll)
        return worst

    def look(self, stop: threading.Event) -> list[TaskResult]:
        """One look: evaluate the new versions that have settled; files sharing a sheet name one after
        another, oldest first, so that each can carry the limits of the one before."""
        tasks, results = self._ready(time.monotonic())
        for result in results:
            self._commit(result)
        fatal = ""
        for chunk in _chunks(tasks, self.config.jobs):
            if stop.is_set() or fatal:
                break
            if self.config.carried is None:
                earlier = [(self.config.output / target, sheets) for target, sheets in
                           self.state.earlier_outputs()]
                for task in chunk:
                    task.earlier = [(out, sheets) for out, sheets in earlier if out != task.output]
            self.events.evaluating(chunk)
            for result in run_parallel(evaluate_task, chunk, self.config.jobs, Progress(0, quiet=True)):
                if result.code == OutputError.exit_code:
                    fatal = fatal or result.error  # the output folder, not the file: stop and say so
                    continue
                self._commit(result)
                results.append(result)
        self.flush_log()
        if fatal:
            raise OutputError(fatal)
        return results

    def flush_log(self) -> None:
        """Append the pending log lines; kept for the next try while the log is busy."""
        if self.unlogged:
            try:
                append_log(self.config.output, self.unlogged)
                self.unlogged = []
            except OSError:
                pass

    def _there(self, known: Known) -> bool:
        return known.status == SKIPPED or (self.config.output / known.target).exists()

    def _ready(self, now: float) -> tuple[list[WatchTask], list[TaskResult]]:
        """The settled new versions as tasks, oldest first, and the results of those refused before evaluation."""
        config = self.config
        found = scan(config.folder, config.output)
        self.waiting = {rel: v for rel, v in self.waiting.items() if rel in found}
        tasks: list[WatchTask] = []
        refused: list[TaskResult] = []
        claimed: dict[str, str] = {}
        for rel, seen in sorted(found.items(), key=lambda item: (item[1].mtime_ns, item[0])):
            known = self.state.known(rel)
            if known and (known.size, known.mtime_ns) == (seen.size, seen.mtime_ns) and self._there(known):
                self.waiting.pop(rel, None)
                continue
            first = self.waiting.get(rel)
            if first is None or first[:2] != (seen.size, seen.mtime_ns):
                first = self.waiting[rel] = (seen.size, seen.mtime_ns, now)
            quiet = now - first[2]
            if quiet < config.settle:
                continue
            try:
                content = examine(seen.path, accept_incomplete=quiet >= 3 * config.settle)
            except OSError:
                continue  # gone or swapped: listed again next time
            if content is None:
                continue  # not yet a complete package
            if (content.size, content.mtime_ns) != (seen.size, seen.mtime_ns):
                self.waiting.pop(rel)  # changed since it was listed: wait for it to settle again
                continue
            done = known is not None and known.sha256 == content.sha256 and self._there(known)
            if done or content.own_output:  # the same bytes saved again, or a sheettool output
                status, target = (known.status, known.target) if done and known else (SKIPPED, "")
                self.state.remember(rel, content.size, content.mtime_ns, content.sha256, status, target)
                self.waiting.pop(rel)
                continue
            out_rel = default_output(Path(rel)).as_posix()
            task = WatchTask(rel, seen.path, content, config.output / out_rel, config.settings, config.writer,
                             config.carried, config.carried_from, want_json=config.want_json)
            owners = [o for o in self.state.output_owners(out_rel, rel) if (config.folder / o).exists()]
            owner = claimed.get(out_rel.lower()) or next(iter(owners), None)
            if owner:
                refused.append(TaskResult(task, code=InputError.exit_code, error=(
                    f"{seen.path}: its evaluated workbook would be {out_rel}, which {owner} already has; "
                    "rename one of the two files")))
                continue
            claimed[out_rel.lower()] = rel
            task.output.parent.mkdir(parents=True, exist_ok=True)
            tasks.append(task)
        return tasks, refused

    def _commit(self, result: TaskResult) -> None:
        """Record a result: output kept, note written or removed, state and log updated."""
        task, content = result.task, result.task.content
        self.waiting.pop(task.rel, None)
        if result.changed:
            return
        when = dt.datetime.now().astimezone().isoformat(timespec="seconds")
        note = task.output.with_name(f"{Path(task.rel).name}-not-evaluated.txt")  # a.xlsx and a.csv: two notes
        note_rel = note.relative_to(self.config.output).as_posix()
        out_rel = task.output.relative_to(self.config.output).as_posix()
        if not result.error:
            try:
                note.unlink(missing_ok=True)
            except OSError as exc:
                raise OutputError(f"{note}: cannot remove the note ({exc.strerror or exc})") from None
            self.state.record(task.rel, content.size, content.mtime_ns, content.sha256, when, EVALUATED, 0,
                              out_rel, result.sheets)
            row = [when, task.rel, content.sha256, EVALUATED, str(result.points), str(len(result.problems)),
                   " | ".join(result.problems[:2]), result.limits, out_rel]
        else:
            write_text_atomically(note, note_text(result, when))
            self.state.record(task.rel, content.size, content.mtime_ns, content.sha256, when, NOT_EVALUATED,
                              result.code, note_rel, [])
            row = [when, task.rel, content.sha256, NOT_EVALUATED, "", "", result.error, "", note_rel]
        self.unlogged.append(row)
        self.events.finished(result)


def note_text(result: TaskResult, when: str) -> str:
    """The note beside a file's would-be output: the command line's message, then what to do."""
    task = result.task
    lines = [f"{TOOL_NAME}: {result.error}", "",
             f"{task.rel} was not evaluated ({when}, SHA-256 {task.content.sha256}).",
             "Correct it and save it again under the same name: the new version is evaluated and this note removed."]
    if task.output.exists():
        lines.append(f"{task.output.name} beside this note is the evaluated workbook of an earlier version.")
    return "\n".join(lines) + "\n"


def _chunks(tasks: list[WatchTask], size: int) -> Iterator[list[WatchTask]]:
    """Groups of at most `size` tasks to run at once; a task waits for every earlier one sharing a sheet name."""
    remaining = tasks
    while remaining:
        chunk: list[WatchTask] = []
        later: list[WatchTask] = []
        taken: set[str] = set()
        for task in remaining:
            (chunk if len(chunk) < size and not task.content.sheets & taken else later).append(task)
            taken |= task.content.sheets
        yield chunk
        remaining = later
