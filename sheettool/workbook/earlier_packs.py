"""Earlier review packs read back for the trend view: per characteristic, what each earlier pack said of it.

An earlier pack is a workbook sheettool wrote with `pack`: its document date, the rows of its "Review summary"
table (found by their headers, so a pack of an earlier version with fewer columns still reads) and the center
lines its limits block keeps. Anything else is refused with one line naming the file.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

from sheettool.base.errors import InputError
from sheettool.evaluation.events import identity_key
from sheettool.evaluation.summary import pack_key
from sheettool.workbook.limits_block import earlier_sheet, read_limits_block

SUMMARY_SHEET = "Review summary"
HEADS = {"source": "Source file", "sheet": "Sheet", "characteristic": "Characteristic", "points": "Points in period",
         "signals": "Points signalled", "cpk": "Cpk", "expected": "False alarms expected"}
_PERIOD = re.compile(r"^Period: points dated (\S+?)\.")  # the summary's second line names the pack's period
EARLIER_HEADS = {"Signals": "Points signalled"}  # packs written before signals were counted as points


@dataclass(frozen=True)
class TrendPoint:
    """What one pack said of one characteristic (None where that pack did not say it)."""

    when: str  # the pack's document date, ISO
    center: float | None
    cpk: float | None
    points: float | None
    signals: float | None
    expected: float | None  # false alarms the scheme expected over the period's points


def _number(value: object) -> float | None:
    if isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value):
        return float(value)
    return None


def read_earlier_pack(path: Path) -> dict[str, TrendPoint]:
    """The trend points of an earlier pack by source and sheet (`pack_key`) and by identity (see `earlier_point`), each
    dated by the pack's period where it has one (else by the file's name); InputError naming the file."""
    path = Path(path)
    centers = {key: _first_center(entry) for key, entry in read_limits_block(path).items()}
    rows = earlier_sheet(path, SUMMARY_SHEET, 40, 20_000)
    if rows is None:
        raise InputError(f"{path}: no '{SUMMARY_SHEET}' tab; --earlier takes review packs sheettool wrote")
    when, columns, found = path.stem, {}, {}
    for row in rows:
        said = _PERIOD.match(str(row[0])) if row and row[0] else None
        if said:
            when = said.group(1)
        if not columns:
            heads = [EARLIER_HEADS.get(str(v), str(v)) if v is not None else "" for v in row]
            if HEADS["source"] in heads and HEADS["sheet"] in heads:
                columns = {k: heads.index(h) for k, h in HEADS.items() if h in heads}
            continue
        if not row or row[columns["source"]] in (None, ""):
            break  # the table ends at its first empty row (the contents follow)
        cell = {k: row[c] if c < len(row) else None for k, c in columns.items()}
        key = pack_key(str(cell["source"]), str(cell["sheet"] or ""))
        point = TrendPoint(when, centers.get(key), _number(cell.get("cpk")), _number(cell.get("points")),
                           _number(cell.get("signals")), _number(cell.get("expected")))
        found[key] = point  # by source and sheet, and by identity for files named by their month
        found.setdefault(identity_key(str(cell.get("characteristic") or "")), point)
    if not columns:
        raise InputError(f"{path}: the '{SUMMARY_SHEET}' tab has no table of characteristics")
    return found


def earlier_point(pack: dict[str, TrendPoint], identity: str, key: str) -> TrendPoint | None:
    """What an earlier pack said of a characteristic: by source and sheet where they are the same, else by identity."""
    return pack.get(key) or pack.get(identity_key(identity))


def _first_center(entry: dict) -> float | None:
    """The center line of the entry's first plotted statistic (the location chart)."""
    limits = entry.get("limits")
    if isinstance(limits, dict) and limits:
        first = next(iter(limits.values()))
        if isinstance(first, dict):
            return _number(first.get("center"))
    return None
