"""Problems found while reading or evaluating: collected, reported, never raised.

A problem carries its place as fields (file, sheet, cell or row), so that every layer can add what it knows
and every report can say it in the same words without parsing text back.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Literal

Severity = Literal["error", "warning", "note"]


@dataclass(frozen=True)
class Problem:
    """Something the technician should know, and where: as precise as is known (empty fields are unknown)."""

    severity: Severity
    message: str
    file: str = ""
    sheet: str = ""
    cell: str = ""  # a cell or a row, e.g. "B3" or "row 4"

    @property
    def where(self) -> str:
        """The place in words: "demo.xlsx, sheet 'Bore', row 4"."""
        parts = [self.file] if self.file else []
        if self.sheet:
            parts.append(f"sheet '{self.sheet}'")
        if self.cell:
            parts.append(self.cell)
        return ", ".join(parts)

    def located(self, file: str = "", sheet: str = "") -> Problem:
        """The same problem with the file and sheet filled in where they were not known yet."""
        return replace(self, file=self.file or file, sheet=self.sheet or sheet)
