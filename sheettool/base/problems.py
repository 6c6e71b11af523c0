"""Problems found while reading or evaluating: collected, reported, never raised."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """Something the technician should know. severity: "error", "warning" or "note"."""

    severity: str
    where: str  # file, sheet, cell or row, as precise as is known
    message: str
