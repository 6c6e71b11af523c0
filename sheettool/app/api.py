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
                  carried: dict[str, dict[str, Any]] | None = None, carried_from: str = "",
                  writer: WriterOptions | None = None) -> EvaluationReport:
    """Read a workbook, evaluate every characteristic in it and write the evaluated workbook.

    `settings` (e.g. from the command line) override the workbook's own; each sheet gets its own
    options from its settings sheet section and labelled cells. A sheet whose settings or data
    cannot be evaluated is a problem; the others go on. carried: limits-block entries by sheet name
    (from `read_limits_block`); a sheet with an entry gets those limits, a sheet without one its own
    base period and a warning saying so. `writer` chooses live formulas and the fixed document date
    of the output (see WriterOptions).
    """
    # imported here, as the design search is in design_schemes: each command loads only its own half
    from sheettool.evaluation.evaluate import evaluate
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
    sheets, problems = [], list(read.problems)
    for sheet in read.sheets:
        if carried is not None and sheet.sheet not in carried:
            source = carried_from or "the limits file"
            problems.append(Problem("warning", f"no carried limits for this sheet in {source}; its limits come from "
                                    "its own base period", input_path.name, sheet.sheet))
        try:
            options, used = options_for(sheet, read.settings, settings)
            if carried is not None:
                options = replace(options, carried=carried.get(sheet.sheet))
            result = evaluate(sheet.characteristic, sheet.sheet, options)
            sheets.append(SheetEvaluation(sheet, replace(result, settings=used, file=input_path.name)))
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
