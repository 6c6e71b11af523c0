"""What the writer takes for one input file: each sheet's result beside what the reader took from it."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from sheettool.base.problems import Problem
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook.reader.model import SheetRead


@dataclass(frozen=True)
class SheetEvaluation:
    """One evaluated sheet: what the reader took from it and the result of evaluating it, kept together."""

    read: SheetRead
    result: CharacteristicResult


@dataclass
class EvaluationReport:
    """Results for every characteristic of one input workbook, one pair per evaluated sheet."""

    input: Path
    input_sha256: str
    input_size: int
    output: Path | None
    sheets: list[SheetEvaluation]
    problems: list[Problem] = field(default_factory=list)

    @property
    def characteristics(self) -> list[CharacteristicResult]:
        """The results alone, in sheet order."""
        return [sheet.result for sheet in self.sheets]
