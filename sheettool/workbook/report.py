"""What the writer takes for one input file: its results beside what the reader took from each sheet."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from sheettool.base.problems import Problem
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook.reader.model import SheetRead


@dataclass
class EvaluationReport:
    """Results for every characteristic of one input workbook."""

    input: Path
    input_sha256: str
    input_size: int
    output: Path | None
    characteristics: list[CharacteristicResult]
    problems: list[Problem] = field(default_factory=list)
    reads: list[SheetRead] = field(default_factory=list)  # what was read, aligned with characteristics
