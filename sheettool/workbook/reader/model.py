"""What the reader hands back: per sheet a Characteristic with a full account of what was read."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from sheettool.base.problems import Problem
from sheettool.core.data import Characteristic
from sheettool.settings import Setting
from sheettool.workbook.reader.labels import SettingsSheet

LAYOUTS = {
    "subgroups across": "one row per subgroup, readings side by side",
    "readings down": "one reading per row, a key column (or the subgroup size) groups them",
    "individuals": "one value per row",
    "attribute counts": "per row a count of defectives or defects and the units inspected",
}


@dataclass
class SheetRead:
    """One sheet read as a characteristic, with an account of what was read.

    rows holds one tuple per subgroup, aligned with header and with the characteristic's subgroups:
    the sheet's own cells (numbers typed as text given as numbers) or, for readings down, the
    subgroup's key, its readings and its notes.
    """

    sheet: str
    characteristic: Characteristic
    header_row: int  # 1-based; 0 when the sheet has no header
    first_row: int
    last_row: int
    columns: dict[str, str]  # column letter -> meaning
    header: list[str] = field(default_factory=list)
    rows: list[tuple] = field(default_factory=list)
    layout: str = "subgroups across"
    settings: dict[str, Setting] = field(default_factory=dict)  # labelled cells above the header
    readings: int = 0
    blanks: int = 0  # blank measurement cells in rows that hold readings
    blank_rows: int = 0
    not_numbers: list[str] = field(default_factory=list)  # cell addresses, treated as missing
    hidden_rows: list[int] = field(default_factory=list)  # used, within the data rows
    hidden_columns: list[str] = field(default_factory=list)  # used
    short_subgroups: int = 0
    units_row: int = 0
    formulas_without_value: list[str] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)

    @property
    def subgroups(self) -> int:
        """Number of subgroups (points) read."""
        return self.characteristic.data.subgroups


@dataclass
class WorkbookRead:
    """All sheets read from one file, with the problems met on the way and its settings sheet."""

    path: Path
    sheets: list[SheetRead]
    problems: list[Problem]
    settings: SettingsSheet = field(default_factory=SettingsSheet)
