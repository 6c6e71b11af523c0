"""Many workbooks at once: find the inputs, spread the work over processes, keep a stable order."""

from __future__ import annotations

import os
import sys
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, TextIO, TypeVar

from sheettool.app.api import evaluate_file
from sheettool.base.errors import InputError, SheettoolError
from sheettool.settings import Setting
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import WriterOptions

T = TypeVar("T")
R = TypeVar("R")

WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")


def collect_inputs(paths: Iterable[Path], skip: Iterable[Path] = ()) -> list[Path]:
    """Workbooks named or found below the folders named (recursively), sorted, without duplicates.

    Lock files of open workbooks (~$name.xlsx), sheettool's own outputs (*-evaluated.xlsx) and the
    paths in `skip` (e.g. the pack being written) are left out.
    """
    skipped = {Path(p).resolve() for p in skip}
    found: dict[Path, Path] = {}
    for path in map(Path, paths):
        candidates = sorted(path.rglob("*")) if path.is_dir() else [path]
        for candidate in candidates:
            name = candidate.name
            if path.is_dir() and (candidate.suffix.lower() not in WORKBOOK_SUFFIXES or name.startswith("~$")
                                  or name.startswith(".") or candidate.stem.endswith("-evaluated")):
                continue
            resolved = candidate.resolve()
            if resolved not in skipped:
                found.setdefault(resolved, candidate)
    return list(found.values())


def default_jobs() -> int:
    """All cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


class Progress:
    """A one-line progress bar on a terminal; silent when quiet or when stderr is not a terminal."""

    def __init__(self, total: int, quiet: bool = False, stream: TextIO | None = None) -> None:
        self.stream = stream or sys.stderr
        self.total = total
        self.done = 0
        self.active = not quiet and total > 0 and self.stream.isatty()

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


def run_parallel(func: Callable[[T], R], items: Sequence[T], jobs: int, progress: Progress) -> list[R]:
    """func over items in `jobs` processes (in this process when jobs is 1); results in input order."""
    if jobs <= 1 or len(items) <= 1:
        results = []
        for item in items:
            results.append(func(item))
            progress.step()
        return results
    out: list[R | None] = [None] * len(items)
    with ProcessPoolExecutor(max_workers=min(jobs, len(items))) as pool:
        futures = {pool.submit(func, item): i for i, item in enumerate(items)}
        for future in as_completed(futures):
            out[futures[future]] = future.result()
            progress.step()
    return out  # type: ignore[return-value]


@dataclass
class FileJob:
    """One input to evaluate: the file, its label, its settings and carried limits, and where its own
    output goes (None: evaluate only, as for a pack)."""

    path: Path
    source: str
    settings: dict[str, Setting]
    carried: dict[str, dict[str, Any]] | None = None
    carried_from: str = ""
    output: Path | None = None
    writer: WriterOptions = field(default_factory=WriterOptions)


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
    try:
        report = evaluate_file(job.path, job.output, job.settings, write=job.output is not None,
                               carried=job.carried, carried_from=job.carried_from, writer=job.writer)
    except SheettoolError as exc:
        return FileOutcome(job, error=str(exc), code=exc.exit_code)
    except Exception as exc:  # the batch boundary: report it against the file and go on
        return FileOutcome(job, error=f"{job.path}: could not be evaluated ({type(exc).__name__}: {exc})",
                           code=InputError.exit_code)
    return FileOutcome(job, report=report)
