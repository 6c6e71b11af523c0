"""What the core is given: one characteristic's observations, free of any file format."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np


@dataclass
class Measurements:
    """Variables data: one row per subgroup, NaN where a reading is missing (ragged subgroups)."""

    values: np.ndarray  # shape (subgroups, largest subgroup size), float

    def __post_init__(self) -> None:
        self.values = np.atleast_2d(np.asarray(self.values, dtype=float))

    @property
    def sizes(self) -> np.ndarray:
        """Number of readings present in each subgroup."""
        return np.sum(~np.isnan(self.values), axis=1)

    @property
    def subgroups(self) -> int:
        """The number of subgroups (rows)."""
        return int(self.values.shape[0])


@dataclass
class Counts:
    """Attribute data: per subgroup the count found and the number of units inspected.

    kind is "defectives" (units that failed, binomial) or "defects" (nonconformities, Poisson).
    """

    counts: np.ndarray
    inspected: np.ndarray
    kind: str = "defectives"

    def __post_init__(self) -> None:
        self.counts = np.asarray(self.counts, dtype=float)
        self.inspected = np.asarray(self.inspected, dtype=float)

    @property
    def subgroups(self) -> int:
        """The number of subgroups."""
        return int(self.counts.shape[0])


@dataclass
class Characteristic:
    """One characteristic as read: its observations plus the labels that identify each subgroup."""

    name: str
    data: Measurements | Counts
    labels: list[str] = field(default_factory=list)  # subgroup labels as shown to the user
    unit: str = ""
    excluded: np.ndarray | None = None  # True where a subgroup is kept out of the limits
    notes: list[str] = field(default_factory=list)  # per subgroup, "" where none
    dates: list[dt.datetime | None] = field(default_factory=list)  # per subgroup, None where unknown

    def __post_init__(self) -> None:
        m = self.data.subgroups
        if not self.labels:
            self.labels = [str(i + 1) for i in range(m)]
        if self.excluded is None:
            self.excluded = np.zeros(m, dtype=bool)
        if not self.notes:
            self.notes = [""] * m
        if not self.dates:
            self.dates = [None] * m
