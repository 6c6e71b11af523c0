"""The small Python API the command line calls, and scripts can call too."""

from __future__ import annotations

import hashlib
from pathlib import Path

from sheettool.errors import InputError
from sheettool.evaluation import EvaluationOptions, evaluate
from sheettool.problems import Problem
from sheettool.report import EvaluationReport
from sheettool.workbook.reader import read_workbook
from sheettool.workbook.writer import WriterOptions, write_evaluated_workbook


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
                  options: EvaluationOptions | None = None, write: bool = True,
                  writer: WriterOptions | None = None) -> EvaluationReport:
    """Read a workbook, evaluate every characteristic in it and write the evaluated workbook.

    `writer` chooses live formulas and the fixed document date of the output (see WriterOptions).
    """
    input_path = Path(input_path)
    read = read_workbook(input_path)
    try:
        sha, size = file_digest(input_path)
    except OSError as exc:
        raise InputError(f"{input_path}: cannot be read ({exc.strerror})") from None
    results, reads, problems = [], [], list(read.problems)
    for sheet in read.sheets:
        try:
            results.append(evaluate(sheet.characteristic, sheet.sheet, options))
            reads.append(sheet)
        except ValueError as exc:
            problems.append(Problem("error", f"{input_path.name}, sheet '{sheet.sheet}'", str(exc)))
    if not results:
        detail = "; ".join(f"{p.where}: {p.message}" for p in problems)
        raise InputError(f"{input_path}: nothing could be evaluated ({detail})")
    out = Path(output) if output else default_output(input_path)
    report = EvaluationReport(input=input_path, input_sha256=sha, input_size=size,
                              output=out if write else None, characteristics=results, problems=problems)
    if write:
        write_evaluated_workbook(report, reads, out, writer)
    return report
