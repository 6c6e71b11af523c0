"""The small Python API the command line calls, and scripts can call too."""

from __future__ import annotations

import hashlib
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem

if TYPE_CHECKING:
    from sheettool.core.design import DesignResult, Requirements, Sampling, SearchGrid
    from sheettool.core.design.candidates import Progress
    from sheettool.evaluation.carried import Match
    from sheettool.evaluation.results import Fitted
    from sheettool.settings import Setting
    from sheettool.workbook.report import EvaluationReport
    from sheettool.workbook.writer import WriterOptions


def default_output(input_path: Path) -> Path:
    """IN.xlsx -> IN-evaluated.xlsx beside the input (always .xlsx, even for .xlsm input)."""
    return input_path.with_name(f"{input_path.stem}-evaluated.xlsx")


def file_digest(path: Path) -> tuple[str, int]:
    """SHA-256 and size of a file, read in blocks."""
    digest = hashlib.sha256()
    size = 0
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
            size += len(block)
    return digest.hexdigest(), size


def evaluate_file(input_path: Path, output: Path | None = None,
                  settings: dict[str, Setting] | None = None, write: bool = True,
                  carried: dict[str, dict[str, Any] | None] | None = None, carried_from: str = "",
                  writer: WriterOptions | None = None, source: str = "", log: list[dict[str, Any]] | None = None,
                  require_match: bool = False) -> EvaluationReport:
    """Read a workbook, evaluate every characteristic in it and write the evaluated workbook.

    `settings` (e.g. from the command line) override the workbook's own; each sheet gets its own
    options from its settings sheet section and labelled cells. A sheet whose settings or data
    cannot be evaluated is a problem; the others go on. carried: limits-block entries (from
    `read_limits_block`), matched to each characteristic by its identity (`match_entry`; `source` is
    the file's name in the block, a pack's source label); a characteristic without one gets its own
    base period and a warning saying so, and with `require_match` a file none of whose characteristics
    matched is an InputError. log: the action-log entries of the earlier output, put back on the events
    of the characteristic of the same identity. `writer` chooses live formulas and the fixed document
    date of the output (see WriterOptions).
    """
    # imported here, as the design search is in design_schemes: each command loads only its own half
    from sheettool.evaluation.carried import match_entry
    from sheettool.evaluation.evaluate import evaluate
    from sheettool.evaluation.events import identity_of
    from sheettool.evaluation.options import options_for
    from sheettool.workbook.reader import read_workbook
    from sheettool.workbook.report import EvaluationReport, SheetEvaluation
    from sheettool.workbook.writer import write_evaluated_workbook

    input_path = Path(input_path)
    settings = settings or {}
    read = read_workbook(input_path, settings)
    try:
        sha, size = file_digest(input_path)
    except OSError as exc:
        raise InputError(f"{input_path}: cannot be read ({exc.strerror})") from None
    planned, problems = [], list(read.problems)
    for sheet in read.sheets:
        try:
            options, used = options_for(sheet, read.settings, settings)
        except ValueError as exc:
            problems.append(Problem("error", str(exc), input_path.name, sheet.sheet))
            continue
        identity = identity_of(options.part, options.characteristic, sheet.sheet)
        match = match_entry(carried, identity, sheet.sheet, source or input_path.name) if carried is not None else None
        planned.append((sheet, options, used, match))
    if require_match and carried is not None and planned and not any(m and m.entry for _, _, _, m in planned):
        names = "; ".join(identity_of(o.part, o.characteristic, s.sheet) for s, o, _, _ in planned)
        raise InputError(f"{input_path}: the limits file {carried_from} carries limits for none of its "
                         f"characteristics ({names}); give the earlier output of this characteristic, or leave "
                         "out --limits-from to set limits from a base period")
    sheets = []
    for sheet, options, used, match in planned:
        try:
            if match is not None:
                options = replace(options, carried=match.entry)
            named = sheet.characteristic  # a Characteristic cell or setting names it; else its sheet does
            if options.characteristic:
                named = replace(named, name=options.characteristic)
            result = evaluate(named, sheet.sheet, options)
            fitted = _with_log(result.fitted, log or [], input_path.name)
            if match is not None and match.warning:
                said = Problem("warning", f"{match.warning} (limits file {carried_from or 'given'})", sheet=sheet.sheet)
                fitted = replace(fitted, problems=(*fitted.problems, said))
            result = replace(result, settings=used, file=input_path.name, carried=_carried_words(match),
                             fitted=fitted)
            sheets.append(SheetEvaluation(sheet, result))
        except ValueError as exc:
            problems.append(Problem("error", str(exc), input_path.name, sheet.sheet))
    if not sheets:
        detail = "; ".join(f"{p.where}: {p.message}" for p in problems)
        raise InputError(f"{input_path}: nothing could be evaluated ({detail})")
    out = Path(output) if output else default_output(input_path)
    report = EvaluationReport(input=input_path, input_sha256=sha, input_size=size,
                              output=out if write else None, sheets=sheets, problems=problems)
    if write:
        write_evaluated_workbook(report, out, writer)
    return report


def _carried_words(match: Match | None) -> str:
    """How the characteristic's carried limits were found: "" when none were asked for, "none" when none matched."""
    if match is None:
        return ""
    return match.how if match.entry is not None or match.how else "none"


def _with_log(fitted: Fitted, log: list[dict[str, Any]], file: str) -> Fitted:
    """The fitted result with the action log's entries of its identity put back on its events."""
    from sheettool.evaluation.events import attach_log, identity_key

    key = identity_key(fitted.identity)
    mine = [e for e in log if identity_key(str(e.get("identity") or "")) == key]
    if not mine:
        return fitted
    dated = any(d is not None for d in fitted.characteristic.dates)
    events, earlier = attach_log(list(fitted.events), mine, file, dated)
    return replace(fitted, events=tuple(events), earlier_events=tuple(earlier))


def design_schemes(requirements: Requirements, sampling: Sampling, grid: SearchGrid,
                   output: Path | None = None, progress: Progress | None = None) -> DesignResult:
    """Search and rank monitoring schemes against the requirements (telling `progress` how far the search is);
    write the design workbook when asked."""
    from sheettool.core.design import design
    from sheettool.workbook.design_book import write_design_workbook

    result = design(requirements, sampling, grid, progress)
    if output is not None:
        write_design_workbook(result, Path(output))
    return result
