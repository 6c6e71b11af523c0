"""The monthly review pack: many workbooks evaluated into one summary, a row per characteristic.

A bad file or sheet never stops the pack: it becomes an error row naming the file, the sheet and
the reason, and the pack's exit code says that some inputs failed.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from sheettool.batch import FileJob, FileOutcome, Progress, collect_inputs, evaluate_job, run_parallel
from sheettool.core.capability import Capability
from sheettool.evaluation import CharacteristicResult
from sheettool.settings import Setting

MIN_BASE_SUBGROUPS = 20  # fewer subgroups than this set the limits: "too little data" (common practice: 20-25)
CAPABILITY_TARGET = 1.33  # Cpk below this: "below capability target" (common practice minimum)

STATUS_WORDS = {
    "steady": "in control",
    "signals": "signals to review",
    "capability": "below capability target",
    "little": "too little data",
    "failed": "not evaluated",
}


@dataclass(frozen=True)
class Period:
    """The reporting window: points dated from `start` (inclusive) to `end` (exclusive)."""

    start: dt.datetime
    end: dt.datetime
    label: str

    @classmethod
    def month(cls, text: str) -> Period:
        """Parse YYYY-MM; ValueError with a plain message otherwise."""
        try:
            start = dt.datetime.strptime(text.strip(), "%Y-%m")
        except ValueError:
            raise ValueError(f"period '{text}' is not a month; write it as YYYY-MM, e.g. 2026-11") from None
        end = start.replace(year=start.year + (start.month == 12), month=start.month % 12 + 1)
        return cls(start, end, text.strip())

    @classmethod
    def between(cls, start: str | None, end: str | None) -> Period:
        """Parse --from and --to dates (YYYY-MM-DD, both inclusive; either may be open)."""
        def day(text: str | None, default: dt.datetime) -> dt.datetime:
            if text is None:
                return default
            try:
                return dt.datetime.strptime(text.strip(), "%Y-%m-%d")
            except ValueError:
                raise ValueError(f"date '{text}' is not understood; write it as YYYY-MM-DD") from None
        low = day(start, dt.datetime.min)
        high = day(end, dt.datetime.max - dt.timedelta(days=1)) + dt.timedelta(days=1)
        if high <= low:
            raise ValueError("--to is before --from")
        return cls(low, high, f"{start or '...'} to {end or '...'}")

    def mask(self, dates: list[dt.datetime | None]) -> np.ndarray:
        """True for the points dated inside the period."""
        return np.array([d is not None and self.start <= d < self.end for d in dates], dtype=bool)


@dataclass
class PackRow:
    """One summary row: a characteristic, or a file or sheet that could not be evaluated."""

    source: str
    sheet: str
    characteristic: str
    chart: str = ""
    points: int = 0
    signals: int = 0
    latest_signal: str = ""
    cpk: float | None = None
    cpk_low: float | None = None
    cpk_high: float | None = None
    arl_in_control: float | None = None
    false_alarms_per_month: float | None = None
    status: str = ""
    reason: str = ""
    flags: list[str] = field(default_factory=list)
    tab: int | None = None  # position of the characteristic's evaluation tab in the pack


def period_points(result: CharacteristicResult, period: Period | None) -> np.ndarray:
    """Which plotted points belong to the period (all points without a period, or without dates)."""
    dates = result.characteristic.dates
    if period is None or not any(d is not None for d in dates):
        return np.ones(result.characteristic.data.subgroups, dtype=bool)
    return period.mask(dates)


def summary_row(source: str, result: CharacteristicResult, period: Period | None) -> PackRow:
    """The summary of one evaluated characteristic over the period."""
    inside = period_points(result, period)
    signals = [s for s in result.signals if inside[s.subgroup - 1]]
    row = PackRow(source=source, sheet=result.sheet, characteristic=result.characteristic.name,
                  chart=result.fit.chart, points=int(inside.sum()), signals=len(signals))
    if signals:
        last = max(signals, key=lambda s: s.subgroup)
        row.latest_signal = f"point {last.subgroup} ({last.label})" if last.label != str(last.subgroup) \
            else f"point {last.subgroup}"
    cap = result.capability
    if isinstance(cap, Capability) and cap.cpk is not None:
        row.cpk = cap.cpk
        interval = cap.ci.get("cpk")
        if interval is not None:
            row.cpk_low, row.cpk_high = interval.low, interval.high
    perf = result.performance
    row.arl_in_control = perf.arl_in_control if np.isfinite(perf.arl_in_control) else None
    row.false_alarms_per_month = perf.false_alarms_per_month
    if int(result.fit.base.sum()) < MIN_BASE_SUBGROUPS:
        row.flags.append("little")
    if signals:
        row.flags.append("signals")
    if row.cpk is not None and row.cpk < CAPABILITY_TARGET:
        row.flags.append("capability")
    row.status = "; ".join(STATUS_WORDS[f] for f in row.flags) or STATUS_WORDS["steady"]
    return row


def failed_row(source: str, sheet: str, reason: str) -> PackRow:
    """The row of a file or sheet that could not be evaluated."""
    return PackRow(source=source, sheet=sheet, characteristic="", status=STATUS_WORDS["failed"],
                   reason=reason, flags=["failed"])


def source_label(path: Path, roots: list[Path]) -> str:
    """The file's path relative to the folder it was found in, for the summary."""
    for root in roots:
        try:
            return str(path.resolve().relative_to(root.resolve()))
        except ValueError:
            continue
    return path.name


def pack_key(source: str, sheet: str) -> str:
    """How a characteristic is named in the pack's limits block: source file and sheet."""
    return f"{source} :: {sheet}"


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
                rows.append(failed_row(source, _sheet_of(problem.where), problem.message))
    return Pack(outcomes=outcomes, rows=rows, period=period)


def _sheet_of(where: str) -> str:
    """The sheet named in a problem's place ("file, sheet 'X'"), or ""."""
    marker = "sheet '"
    return where.split(marker, 1)[1].rstrip("'") if marker in where else ""
