"""What each column of a sheet means: its header words and the kinds of its cells.

Roles: measurement, note, date, time, key (subgroup, sample, lot...), operator, defectives,
defects, inspected, text (not used), empty. Header words are matched as whole words, in any case.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
from openpyxl.utils import get_column_letter

from sheettool.workbook.reader.cell_grid import CellGrid
from sheettool.workbook.reader.cells import BLANK, DATE, NUMBER, TEXT, number_of, text_of

_NOTE = re.compile(r"\b(notes?|comments?|remarks?|observations?)\b", re.IGNORECASE)
_DEFECTS = re.compile(r"\b(defects?|defect count|nonconformit(?:y|ies)|faults?|flaws?|blemish(?:es)?)\b", re.I)
_DEFECTIVES = re.compile(r"\b(defectives?|rejects?|rejected|fail(?:s|ed|ures?)?|nonconforming|non-conforming|"
                         r"scrap(?:ped)?|bad|nok)\b", re.IGNORECASE)
_INSPECTED = re.compile(r"\b(inspected|tested|checked|examined|sample size|units|quantity|qty|lot size|"
                        r"produced|area|n)\b", re.IGNORECASE)
_SIZED_CHARTS = ("u",)  # a chart whose points are counts per unit: the other number column is the units inspected
_KEY = re.compile(r"(\b(subgroup|sample|lot|batch|point|shift|serial|id|no|nr|number|index|group|order)\b|#)",
                  re.IGNORECASE)
_OPERATOR = re.compile(r"\b(operator|inspector|setter|checked by|by|initials|name)\b", re.IGNORECASE)
_TIME = re.compile(r"\b(time|hour|clock)\b", re.IGNORECASE)
UNIT_WORD = re.compile(r"^[(\[]?\s*(mm|µm|μm|um|cm|m|in|inch|inches|thou|mil|ft|g|kg|mg|lb|oz|n|kn|nm|n·m|n\.m|kgf|lbf|"
                       r"°c|°f|c|f|k|%|%rh|ppm|ppb|bar|mbar|psi|pa|kpa|mpa|hpa|s|ms|µs|min|h|hz|khz|rpm|v|mv|kv|a|ma|"
                       r"w|kw|j|ohm|ω|kω|ra|rz|deg|°|mm/s|m/s|l|ml|l/min|ml/min|mg/l|g/l|cp|mpa·s|db|ph|lux|hrc|hv|hb|"
                       r"shore a|shore d|nmm|g/m²|gsm|units?)\s*[)\]]?$", re.IGNORECASE)
_UNIT_IN_HEADER = re.compile(r"[(\[]\s*([^()\[\]]{1,8}?)\s*[)\]]\s*$")


@dataclass(frozen=True)
class Columns:
    """A sheet's columns (0-based): the header text and the role of each."""

    names: list[str]
    roles: list[str]

    def first(self, role: str) -> int | None:
        """The first column with `role`, or None."""
        return next((c for c, r in enumerate(self.roles) if r == role), None)

    @property
    def measure(self) -> list[int]:
        """The measurement columns."""
        return [c for c, r in enumerate(self.roles) if r == "measurement"]

    @property
    def count(self) -> int | None:
        """The column counting defectives or defects, or None."""
        return next((c for c, r in enumerate(self.roles) if r in ("defectives", "defects")), None)

    @property
    def values(self) -> list[int]:
        """The columns subgroups are made of: the count and the units inspected, or the measurements."""
        if self.count is None:
            return self.measure
        inspected = self.first("inspected")
        return [self.count] + ([inspected] if inspected is not None else [])


def sheet_columns(grid: CellGrid, header: int | None, data: list[int], chart: str | None = None) -> Columns:
    """Each column's header text and role, from the header and the cells of the data rows.

    The units inspected are a size, whole or not (an area of 0.8 to 3.5 m² inspected): named by the
    header, or, with `chart` u and a defects count, the one other number column.
    """
    names = column_names(grid.rows, header, grid.width)
    region = grid.kinds[data]
    counts = np.stack([(region == k).sum(axis=0) for k in (BLANK, NUMBER, DATE, TEXT)], axis=1)
    roles = [column_role(names[c], counts[c], grid.column(data[:200], c)) for c in range(grid.width)]
    if not any(r in ("defectives", "defects") for r in roles):  # "n", "units" alone are no count layout
        roles = ["measurement" if r == "inspected" else r for r in roles]
    elif chart in _SIZED_CHARTS and "inspected" not in roles and roles.count("measurement") == 1:
        roles[roles.index("measurement")] = "inspected"
    return Columns(names=names, roles=roles)


def column_names(rows: list[list[object]], header: int | None, width: int) -> list[str]:
    """The header text of each column ("" without a header); repeated names (a merged header cell)
    are numbered."""
    if header is None:
        return [""] * width
    row = rows[header]
    names = [text_of(row[c]) if c < len(row) else "" for c in range(width)]
    seen: dict[str, int] = {}
    repeated = {name for name in names if name and names.count(name) > 1}
    for c, name in enumerate(names):  # a header merged over several columns: "Readings 1", "Readings 2"...
        if name in repeated:
            seen[name] = seen.get(name, 0) + 1
            names[c] = f"{name} {seen[name]}"
    return names


def column_role(name: str, counts: np.ndarray, values: list[object]) -> str:
    """The meaning of one column from its header words and cell kinds (counts by kind)."""
    _blank, num, date, text = (int(x) for x in counts)
    filled = num + date + text
    if filled == 0:
        return "empty"
    if _NOTE.search(name):
        return "note"
    if date > 0 and date >= num and date >= text:
        return "time" if _TIME.search(name) and not re.search(r"date|day", name, re.I) else "date"
    if num > 0 and num >= text:
        whole = all(float(x).is_integer() for x in (number_of(v) for v in values) if x is not None)
        if _DEFECTS.search(name):
            return "defects"
        if _DEFECTIVES.search(name):
            return "defectives"
        if _INSPECTED.search(name):  # whole or not: the size of a u chart's sample may be an area
            return "inspected"
        if re.search(r"\b(date|day|time)\b", name, re.IGNORECASE):  # dates kept as plain serial numbers
            return "key"
        if _KEY.search(name) and whole and not re.search(r"\d\s*$", name):
            return "key"
        if counts_up(values):  # 1, 2, 3, ... numbering samples, parts or lots, whatever the header says
            return "key"
        return "measurement"
    if _OPERATOR.search(name):
        return "operator"
    if _KEY.search(name):
        return "key"
    return "text"


COUNTER_LENGTH = 5  # consecutive whole numbers, one apart, that make a column a counter rather than readings


def counts_up(values: list[object]) -> bool:
    """True for a column whose numbers are consecutive whole numbers one apart (1, 2, 3, ... or 1001, 1002, ...):
    it numbers the samples, parts, bottles or lots; a reading never climbs by exactly one, row after row."""
    numbers = np.array([x for x in (number_of(v) for v in values) if x is not None], dtype=float)
    return bool(numbers.size >= COUNTER_LENGTH and np.all(np.diff(numbers) == 1) and float(numbers[0]).is_integer())


def unit_of(names: list[str], rows: list[list[object]], units_row: int | None, columns: list[int]) -> str:
    """The unit from the units row over the measurement columns, or from a header like "Bore (mm)"."""
    if units_row is not None:
        row = rows[units_row]
        for c in columns:
            if c < len(row) and isinstance(row[c], str) and row[c].strip():
                return row[c].strip().strip("()[]").strip()
    for c in columns:
        if m := _UNIT_IN_HEADER.search(names[c]):
            return m.group(1)
    return ""


def columns_meaning(names: list[str], roles: list[str], layout: str) -> dict[str, str]:
    """Column letter -> meaning in words with the header, for the report ("C": "measurement (Part 1)")."""
    words = {"measurement": "measurement", "note": "note", "key": "subgroup key", "date": "date",
             "time": "time of day", "defectives": "defectives counted", "defects": "defects counted",
             "inspected": "units inspected", "operator": "operator (not used in the figures)", "text": "text, not used"}
    if layout == "readings down":
        words["measurement"] = "reading"
    return {get_column_letter(c + 1): f"{words[r]} ({names[c] or 'no header'})"
            for c, r in enumerate(roles) if r != "empty"}
