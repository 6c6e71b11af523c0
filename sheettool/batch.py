"""Many workbooks at once: find the inputs, spread the work over processes, keep a stable order."""

from __future__ import annotations

import os
import sys
from collections.abc import Callable, Iterable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path
from typing import TextIO, TypeVar

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
