"""Many workbooks at once: find the inputs, spread the work over processes, keep a stable order.

Only regular files are read (a named pipe, socket or device is never opened), each folder is
searched once however many links lead to it, and sheettool's own outputs are passed over; each
file left out is named with the reason. Each input is evaluated in a worker process that holds
one input at a time, so that one input that kills its process or runs past its time limit costs
that input alone.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import signal
import sys
import time
from collections import deque
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any, TextIO, TypeVar

from sheettool.app.api import evaluate_file
from sheettool.app.outputs import file_kind, is_sheettool_output, write_failure
from sheettool.base.errors import InputError, SheettoolError
from sheettool.settings import Setting
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import WriterOptions

T = TypeVar("T")
R = TypeVar("R")

WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")
OUTPUT_NOTE = "an output of sheettool (it carries a limits block), not measurement data"


@dataclass
class Skipped:
    """A file or folder left out of the inputs, and why in words."""

    path: Path
    reason: str


@dataclass
class Inputs:
    """The files to evaluate, in order, and those left out with a reason."""

    files: list[Path] = field(default_factory=list)
    skipped: list[Skipped] = field(default_factory=list)


def collect_inputs(paths: Iterable[Path], skip: Iterable[Path] = ()) -> list[Path]:
    """The files search_inputs finds to evaluate, without the notes on those left out."""
    return search_inputs(paths, skip).files


def search_inputs(paths: Iterable[Path], skip: Iterable[Path] = ()) -> Inputs:
    """Workbooks named or found below the folders named (recursively, links followed once), in order, each once.

    Lock files of open workbooks (~$name.xlsx), hidden files and the paths in `skip` are left out
    silently; named pipes, sockets and devices, sheettool's own outputs and links to folders already
    searched are left out with a note.
    """
    silent = {Path(p).resolve() for p in skip}
    inputs = Inputs()
    seen: dict[Path, Path] = {}
    searched: set[str] = set()

    def consider(candidate: Path) -> None:
        resolved = candidate.resolve()
        if resolved in silent or resolved in seen:
            return
        kind = file_kind(candidate)
        if kind:
            inputs.skipped.append(Skipped(candidate, f"{kind}, not a file; only regular files are read"))
        elif is_sheettool_output(candidate):
            inputs.skipped.append(Skipped(candidate, OUTPUT_NOTE))
        else:
            seen[resolved] = candidate
            inputs.files.append(candidate)

    def search(folder: Path) -> None:
        real = os.path.realpath(folder)
        if real in searched:
            inputs.skipped.append(Skipped(folder, f"a link to a folder already searched ({real})"))
            return
        searched.add(real)
        try:
            entries = sorted(os.scandir(folder), key=lambda e: e.name)
        except OSError as exc:
            inputs.skipped.append(Skipped(folder, f"the folder cannot be read ({exc.strerror})"))
            return
        for entry in entries:
            candidate = folder / entry.name
            if entry.is_dir():  # follows a link to a folder
                search(candidate)
            elif Path(entry.name).suffix.lower() in WORKBOOK_SUFFIXES and not entry.name.startswith(("~$", ".")):
                if entry.is_symlink() and not candidate.exists():
                    inputs.skipped.append(Skipped(candidate, "a link to a file that does not exist"))
                else:
                    consider(candidate)

    for path in map(Path, paths):
        if path.is_dir():
            search(path)
        else:
            consider(path)
    return inputs


class Progress:
    """A one-line progress bar on a terminal; silent when quiet or when stderr is not a terminal."""

    def __init__(self, total: int, quiet: bool = False, stream: TextIO | None = None) -> None:
        self.stream = stream or sys.stderr
        self.quiet = quiet
        self.expect(total)

    def expect(self, total: int) -> None:
        """Start counting `total` inputs (when the number is known only after the search)."""
        self.total = total
        self.done = 0
        self.active = not self.quiet and total > 0 and self.stream.isatty()

    def step(self) -> None:
        """Count one finished input and redraw the bar."""
        self.done += 1
        if self.active:
            width = 30
            filled = width * self.done // self.total
            self.stream.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {self.done}/{self.total}")
            if self.done == self.total:
                self.stream.write("\n")
            self.stream.flush()


def run_parallel(func: Callable[[T], R], items: Sequence[T], jobs: int, progress: Progress,
                 lost: Callable[[T, str], R] | None = None, time_limit: float | None = None) -> list[R]:
    """func over items in `jobs` worker processes; results in input order.

    Without a time limit, one process or one item runs here in this process. Otherwise an item whose
    worker dies, or that runs past `time_limit` seconds, gets `lost(item, reason)` as its result, its
    worker is replaced and the other items go on (without `lost`, a SheettoolError with the reason).
    """
    if time_limit is None and (jobs <= 1 or len(items) <= 1):
        results = []
        for item in items:
            results.append(func(item))
            progress.step()
        return results
    return _Workers(func, lost, max(1, min(jobs, len(items))), time_limit).run(items, progress)


def _serve(func: Callable[[Any], Any], conn: Connection) -> None:
    """A worker's loop: take an item, send back (index, True, result) or (index, False, reason), until told to stop."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # on an interrupt the parent stops its workers
    while True:
        try:
            task = conn.recv()
        except EOFError:
            return
        if task is None:
            return
        index, item = task
        try:
            conn.send((index, True, func(item)))
        except Exception as exc:  # the item's own failure, or a result that cannot be sent back
            conn.send((index, False, f"{type(exc).__name__}: {exc}"))


@dataclass
class _Worker:
    process: Any
    conn: Connection
    index: int | None = None  # the item it holds
    deadline: float = float("inf")


class _Workers:
    """Worker processes that each hold one item at a time, replaced when one dies or runs out of time."""

    def __init__(self, func: Callable[[Any], Any], lost: Callable[[Any, str], Any] | None, size: int,
                 time_limit: float | None) -> None:
        self.func, self.size, self.time_limit = func, size, time_limit
        self.lost = lost or _raise
        self.context = multiprocessing.get_context()
        self.workers: list[_Worker] = []

    def run(self, items: Sequence[Any], progress: Progress) -> list[Any]:
        """Every item's result (or lost result), in input order."""
        out: list[Any] = [None] * len(items)
        pending = deque(range(len(items)))
        try:
            while pending or any(w.index is not None for w in self.workers):
                self._hand_out(items, pending)
                for index, result in self._collect(items):
                    out[index] = result
                    progress.step()
        finally:
            self._stop()
        return out

    def _start(self) -> _Worker:
        parent, child = self.context.Pipe()
        process = self.context.Process(target=_serve, args=(self.func, child), daemon=True)
        process.start()
        child.close()
        worker = _Worker(process, parent)
        self.workers.append(worker)
        return worker

    def _hand_out(self, items: Sequence[Any], pending: deque[int]) -> None:
        for worker in [w for w in self.workers if w.index is None and not w.process.is_alive()]:
            self._drop(worker)  # died while idle: not an item's fault
        while pending:
            idle = next((w for w in self.workers if w.index is None), None)
            if idle is None:
                if len(self.workers) >= self.size:
                    return
                idle = self._start()
            index = pending.popleft()
            try:
                idle.conn.send((index, items[index]))
            except OSError:
                pending.appendleft(index)
                self._drop(idle)
                continue
            idle.index = index
            idle.deadline = time.monotonic() + self.time_limit if self.time_limit is not None else float("inf")

    def _collect(self, items: Sequence[Any]) -> list[tuple[int, Any]]:
        """Wait for the next finished, dead or overdue items; their (index, result)."""
        busy = [w for w in self.workers if w.index is not None]
        timeout = max(0.0, min(w.deadline for w in busy) - time.monotonic()) if self.time_limit is not None else None
        ready = wait([w.conn for w in busy] + [w.process.sentinel for w in busy], timeout)
        done: list[tuple[int, Any]] = []
        for worker in busy:
            index = worker.index
            assert index is not None
            if worker.conn in ready or worker.process.sentinel in ready:
                try:
                    got, ok, value = worker.conn.recv() if worker.conn.poll() else (index, None, None)
                except (EOFError, OSError, ValueError, TypeError):
                    got, ok, value = index, None, None
                if ok is None:  # the process ended without an answer
                    worker.process.join(1)
                    done.append((index, self.lost(items[index], _ended(worker.process.exitcode))))
                    self._drop(worker)
                    continue
                worker.index = None
                done.append((got, value if ok else self.lost(items[got], f"could not be evaluated ({value})")))
            elif time.monotonic() >= worker.deadline:
                done.append((index, self.lost(items[index], f"stopped after {self.time_limit:g} s, "
                                                            "the time limit per file")))
                self._drop(worker)
        return done

    def _drop(self, worker: _Worker) -> None:
        if worker.process.is_alive():
            worker.process.kill()
        worker.process.join()
        worker.conn.close()
        self.workers.remove(worker)

    def _stop(self) -> None:
        for worker in self.workers:
            if worker.index is None:
                with contextlib.suppress(OSError):
                    worker.conn.send(None)
        for worker in list(self.workers):
            if worker.index is None:
                worker.process.join(5)
            self._drop(worker)


def _raise(item: Any, reason: str) -> Any:
    raise SheettoolError(f"{item}: {reason}")


def _ended(code: int | None) -> str:
    """Why a worker process ended, in words."""
    if code is not None and code < 0:
        try:
            name = signal.Signals(-code).name
        except ValueError:
            name = f"signal {-code}"
        memory = " (the system may have run out of memory)" if -code == signal.SIGKILL else ""
        return f"its process was stopped by {name}{memory}; the other files went on"
    return f"its process ended unexpectedly (exit status {code}); the other files went on"


@dataclass
class FileJob:
    """One input to evaluate: the file, its label, its settings and carried limits, and where its own
    output goes (None: evaluate only, as for a pack)."""

    path: Path
    source: str
    settings: dict[str, Setting]
    carried: dict[str, dict[str, Any] | None] | None = None
    carried_from: str = ""
    output: Path | None = None
    writer: WriterOptions = field(default_factory=WriterOptions)
    log: list[dict[str, Any]] = field(default_factory=list)  # the earlier output's action log
    require_match: bool = False  # carried limits that match none of this file's characteristics are an error


@dataclass
class FileOutcome:
    """What became of one input: its report, or the reason and exit code of its failure."""

    job: FileJob
    report: EvaluationReport | None = None
    error: str = ""
    code: int = 0


def evaluate_job(job: FileJob) -> FileOutcome:
    """Evaluate one input (and write its output when the job names one); a failure becomes the
    outcome's error, never an exception, so that one bad file does not stop the others."""
    kind = file_kind(job.path)
    if kind:
        return FileOutcome(job, error=f"{job.path}: {kind}, not a file; give a workbook file",
                           code=InputError.exit_code)
    try:
        report = evaluate_file(job.path, job.output, job.settings, write=job.output is not None,
                               carried=job.carried, carried_from=job.carried_from, writer=job.writer,
                               source=job.source, log=job.log, require_match=job.require_match)
    except SheettoolError as exc:
        return FileOutcome(job, error=str(exc), code=exc.exit_code)
    except Exception as exc:  # the batch boundary: report it against the file and go on
        failure = write_failure(job.output, exc) if job.output is not None else None
        if failure is not None:  # an OS error escaping the library that writes: the output's fault
            return FileOutcome(job, error=str(failure), code=failure.exit_code)
        return FileOutcome(job, error=f"{job.path}: could not be evaluated ({type(exc).__name__}: {exc})",
                           code=InputError.exit_code)
    return FileOutcome(job, report=report)


def lost_job(job: FileJob, reason: str) -> FileOutcome:
    """The outcome of an input whose worker did not give an answer (it died or ran out of time)."""
    return FileOutcome(job, error=f"{job.path}: not evaluated: {reason}", code=InputError.exit_code)
