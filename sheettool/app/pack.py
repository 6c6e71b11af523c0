"""The monthly review pack: many workbooks evaluated into one summary, a row per characteristic.

A bad file or sheet never stops the pack: it becomes an error row naming the file, the sheet and
the reason, and the pack's exit code says that some inputs failed. Files left out of the search
(sheettool's own outputs, named pipes, links to folders already searched) get a row saying so.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from sheettool.app.batch import (
    FileJob,
    FileOutcome,
    Progress,
    Skipped,
    evaluate_job,
    lost_job,
    run_parallel,
    search_inputs,
)
from sheettool.app.outputs import check_output, same_file, write_failure
from sheettool.base.errors import InputError, SheettoolError
from sheettool.base.problems import Problem
from sheettool.evaluation.events import identity_key
from sheettool.evaluation.summary import PackRow, Period, failed_row, summary_row
from sheettool.settings import Setting
from sheettool.workbook.earlier_packs import TrendPoint
from sheettool.workbook.reader.labels import SETTINGS_SHEET
from sheettool.workbook.report import EvaluationReport
from sheettool.workbook.writer import WriterOptions
from sheettool.workbook.writer.summary_tab import write_pack_workbook

__all__ = ["DEFAULT_TIME_LIMIT", "Pack", "PackRow", "Period", "build_pack", "source_label", "write_pack"]

DEFAULT_TIME_LIMIT = 300.0  # seconds one input may take before its worker is stopped
SKIPPED = "skipped"  # the status of a file left out of the pack


def source_label(path: Path, roots: list[Path]) -> str:
    """The file's path relative to the folder it was found in (through links as found), for the summary."""
    for root in roots:
        for inner, outer in ((path, root), (path.resolve(), root.resolve())):
            try:
                return str(inner.relative_to(outer))
            except ValueError:
                continue
    return path.name


@dataclass
class Pack:
    """The evaluated pack: every input's outcome in input order, and the summary rows."""

    outcomes: list[FileOutcome]
    rows: list[PackRow]
    period: Period | None
    kept_log: list[dict[str, Any]] = field(default_factory=list)  # earlier log entries of characteristics not here

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

    @property
    def skipped(self) -> list[PackRow]:
        """The rows of files left out of the pack, with the reason."""
        return [row for row in self.rows if row.status == SKIPPED]


def build_pack(paths: list[Path], settings: dict[str, Setting], period: Period | None = None,
               carried: dict[str, dict[str, Any]] | None = None, jobs: int = 1,
               progress: Progress | None = None, skip: tuple[Path, ...] = (), output: Path | None = None,
               limits_file: Path | None = None, time_limit: float | None = DEFAULT_TIME_LIMIT,
               log: list[dict[str, Any]] | None = None) -> Pack:
    """Evaluate every workbook found in `paths` and summarise each characteristic over the period.

    output (the pack to be written) and limits_file are checked first: UsageError, before any work,
    when the output would replace an input or the limits file. An earlier output at the output's
    own name is passed over, as are the paths in `skip`. Each input has `time_limit` seconds.
    carried (the limits block's entries) is matched to each characteristic by identity; when it matches
    none of them the pack is an InputError. log: the earlier output's action-log entries.
    """
    roots = [p for p in map(Path, paths) if p.is_dir()]
    missing = [p for p in map(Path, paths) if not p.exists()]
    found = search_inputs([p for p in map(Path, paths) if p.exists()], skip=skip)
    if output is not None:
        check_output(output, [(limits_file, "the limits file")] if limits_file is not None else [])
        named = [p for p in map(Path, paths) if p.exists() and not p.is_dir()]
        check_output(output, [(p, "an input") for p in [*named, *found.files]])
        found.skipped = [s for s in found.skipped if not same_file(s.path, output)]
    if not found.files and not missing:
        left = "".join(f"; skipped {s.path}: {s.reason}" for s in found.skipped)
        raise InputError("no .xlsx or .xlsm workbook found in " + ", ".join(map(str, paths)) + left)
    carried_from = limits_file.name if limits_file is not None else "the previous pack"
    todo = [FileJob(path, source_label(path, roots), settings, carried, carried_from, log=log or [])
            for path in found.files]
    progress = progress or Progress(0, quiet=True)
    progress.expect(len(todo))
    outcomes = run_parallel(evaluate_job, todo, jobs, progress, lost_job, time_limit)
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
        rows += [failed_row(source, sheet, reason) for sheet, reason in unread_sheets(outcome.report)]
    rows += [skipped_row(s, roots) for s in found.skipped]
    if carried is not None and rows and all(r.carried in ("", "none") for r in rows if r.tab is not None) \
            and any(r.tab is not None for r in rows):
        raise InputError(f"{carried_from}: its limits match none of the characteristics found (by identity or file "
                         "and sheet name); give the previous month's pack or output, or leave out --limits-from")
    here = {identity_key(c.identity) for o in outcomes if o.report is not None for c in o.report.characteristics}
    kept = [e for e in log or [] if identity_key(str(e.get("identity") or "")) not in here]
    return Pack(outcomes=outcomes, rows=rows, period=period, kept_log=kept)


def unread_sheets(report: EvaluationReport) -> list[tuple[str, str]]:
    """(sheet, reason) of every sheet of the input that could not be read or evaluated.

    A sheet with no characteristic and a warning or error is one (the settings sheet is never a
    characteristic); the reason is its errors, or else its warnings.
    """
    evaluated = {c.sheet for c in report.characteristics}
    by_sheet: dict[str, list[Problem]] = {}
    for problem in report.problems:
        if (problem.sheet and problem.sheet not in evaluated and problem.severity != "note"
                and problem.sheet.strip().lower() != SETTINGS_SHEET):
            by_sheet.setdefault(problem.sheet, []).append(problem)
    out = []
    for sheet, problems in by_sheet.items():
        worst = [p for p in problems if p.severity == "error"] or problems
        out.append((sheet, "; ".join(p.message for p in worst)))
    return out


def skipped_row(skipped: Skipped, roots: list[Path]) -> PackRow:
    """The summary row of a file left out of the pack: its name and why."""
    return PackRow(source=source_label(skipped.path, roots), sheet="", characteristic="", status=SKIPPED,
                   reason=f"{skipped.path}: {skipped.reason}")


def write_pack(pack: Pack, path: Path, options: WriterOptions | None = None,
               earlier: list[dict[str, TrendPoint]] | None = None) -> None:
    """Write the pack workbook: the summary first (with `earlier` packs read back: trends), then every evaluated
    characteristic, one audit for all.

    OutputError (exit 4) with the real cause when it cannot be written, whatever layer fails.
    """
    try:
        write_pack_workbook(pack.rows, pack.period, pack.sources, path, options, earlier, pack.kept_log)
    except SheettoolError:
        raise
    except Exception as exc:
        failure = write_failure(path, exc)
        if failure is None:
            raise
        raise failure from None
