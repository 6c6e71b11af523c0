"""The monthly review pack: many workbooks evaluated into one summary, a row per characteristic.

A bad file or sheet never stops the pack: it becomes an error row naming the file, the sheet and
the reason, and the pack's exit code says that some inputs failed.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sheettool.app.batch import FileJob, FileOutcome, Progress, collect_inputs, evaluate_job, run_parallel
from sheettool.evaluation.summary import PackRow, Period, failed_row, pack_key, summary_row
from sheettool.settings import Setting
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import WriterOptions
from sheettool.workbook.writer.summary_tab import write_pack_workbook

__all__ = ["Pack", "PackRow", "Period", "build_pack", "source_label", "write_pack"]

def source_label(path: Path, roots: list[Path]) -> str:
    """The file's path relative to the folder it was found in, for the summary."""
    for root in roots:
        try:
            return str(path.resolve().relative_to(root.resolve()))
        except ValueError:
            continue
    return path.name


@dataclass
class Pack:
    """The evaluated pack: every input's outcome in input order, and the summary rows."""

    outcomes: list[FileOutcome]
    rows: list[PackRow]
    period: Period | None

    @property
    def evaluated(self) -> list[FileOutcome]:
        """The outcomes with a report, in input order (the order of the evaluation tabs)."""
        return [o for o in self.outcomes if o.report is not None]

    @property
    def sources(self) -> list[tuple[str, EvaluationReport]]:
        """(source label, report) of every evaluated input, as the pack workbook's writer takes them."""
        return [(o.job.source, o.report) for o in self.evaluated if o.report is not None]

    @property
    def failed(self) -> bool:
        """True when an input or a sheet could not be evaluated."""
        return any("failed" in row.flags for row in self.rows)


def build_pack(paths: list[Path], settings: dict[str, Setting], period: Period | None = None,
               carried: dict[str, dict[str, Any]] | None = None, jobs: int = 1,
               progress: Progress | None = None, skip: tuple[Path, ...] = ()) -> Pack:
    """Evaluate every workbook found in `paths` and summarise each characteristic over the period."""
    roots = [p for p in map(Path, paths) if p.is_dir()]
    missing = [p for p in map(Path, paths) if not p.exists()]
    files = collect_inputs([p for p in map(Path, paths) if p.exists()], skip=skip)
    todo = []
    for path in files:
        source = source_label(path, roots)
        mine = None
        if carried is not None:
            prefix = pack_key(source, "")
            mine = {key[len(prefix):]: entry for key, entry in carried.items() if key.startswith(prefix)}
        todo.append(FileJob(path, source, settings, mine, carried_from="the previous pack"))
    progress = progress or Progress(len(todo), quiet=True)
    outcomes = run_parallel(evaluate_job, todo, jobs, progress)
    rows = [failed_row(str(p), "", f"{p}: not found") for p in missing]
    tab = 0
    for outcome in outcomes:
        source = outcome.job.source
        if outcome.report is None:
            rows.append(failed_row(source, "", outcome.error))
            continue
        for result in outcome.report.characteristics:
            rows.append(summary_row(source, result, period))
            rows[-1].tab = tab
            tab += 1
        for problem in outcome.report.problems:
            if problem.severity == "error":
                rows.append(failed_row(source, problem.sheet, problem.message))
    return Pack(outcomes=outcomes, rows=rows, period=period)


def write_pack(pack: Pack, path: Path, options: WriterOptions | None = None) -> None:
    """Write the pack workbook: the summary first, then every evaluated characteristic, one audit for all."""
    write_pack_workbook(pack.rows, pack.period, pack.sources, path, options)
