"""The machine-readable limits block: what next month's run reads back with --limits-from.

A hidden sheet named LIMITS_SHEET; cell A1 holds the marker and version, and from row 3 each row
holds a characteristic's sheet name, chart kind and a JSON object with its fitted parameters and
limits. Version 1; a reader refuses versions it does not know.
"""

from __future__ import annotations

import json
from typing import Any

from sheettool.evaluation import CharacteristicResult

LIMITS_SHEET = "limits-block"
MARKER = "sheettool limits block"
VERSION = 1


def limits_rows(entries: list[dict[str, Any]]) -> list[list[str | int]]:
    """The block's cell rows for a list of {"sheet", "chart", ...} entries."""
    rows: list[list[str | int]] = [[MARKER, "version", VERSION], ["sheet", "chart", "parameters (JSON)"]]
    for entry in entries:
        rows.append([entry["sheet"], entry["chart"], json.dumps(entry, sort_keys=True)])
    return rows


def parse_limits_rows(rows: list[tuple[Any, ...]]) -> dict[str, dict[str, Any]]:
    """Entries by sheet name from the block's cell rows; ValueError if it is not a known block."""
    if not rows or rows[0][0] != MARKER:
        raise ValueError("no sheettool limits block found")
    if len(rows[0]) < 3 or rows[0][2] != VERSION:
        raise ValueError(f"limits block version {rows[0][2] if len(rows[0]) > 2 else '?'} is not known")
    out: dict[str, dict[str, Any]] = {}
    for row in rows[2:]:
        if row and row[0] is not None and len(row) > 2 and row[2]:
            out[str(row[0])] = json.loads(row[2])
    return out


def limits_entry(result: CharacteristicResult) -> dict[str, Any]:
    """What the block keeps of one characteristic: enough to apply the same limits next month."""
    fit = result.fit
    return {
        "sheet": result.sheet,
        "chart": fit.chart,
        "subgroup_size": fit.subgroup_size,
        "process_mean": fit.process_mean,
        "sigma_within": fit.sigma_within,
        "parameters": fit.parameters,
        "limits": {s.name: {"center": float(s.center[0]), "lcl": float(s.lcl[0]), "ucl": float(s.ucl[0])}
                   for s in fit.statistics},
    }
