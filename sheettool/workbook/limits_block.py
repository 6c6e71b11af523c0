"""The machine-readable limits block: what next month's run reads back with --limits-from.

A hidden sheet named LIMITS_SHEET; cell A1 holds the marker and version, and from row 3 each row
holds a characteristic's sheet name, chart kind and a JSON object with its fitted parameters and
limits. Version 1; a reader refuses versions it does not know.
"""

from __future__ import annotations

import json
import math
import zipfile
from pathlib import Path
from typing import TYPE_CHECKING, Any

import openpyxl
from openpyxl.utils.exceptions import InvalidFileException

from sheettool.errors import InputError

if TYPE_CHECKING:
    from sheettool.evaluation import CharacteristicResult

LIMITS_SHEET = "limits-block"
MARKER = "sheettool limits block"
VERSION = 1


def limits_rows(entries: list[dict[str, Any]]) -> list[list[str | int]]:
    """The block's cell rows for a list of {"sheet", "chart", ...} entries; an entry's "key" (a pack's
    "source :: sheet") names its row instead of the sheet where sheet names alone would collide."""
    rows: list[list[str | int]] = [[MARKER, "version", VERSION], ["sheet", "chart", "parameters (JSON)"]]
    for entry in entries:
        rows.append([entry.get("key", entry["sheet"]), entry["chart"], json.dumps(entry, sort_keys=True)])
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


def _finite(value: float) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


def limits_entry(result: CharacteristicResult) -> dict[str, Any]:
    """What the block keeps of one characteristic: enough to apply the same limits next month.

    process_mean and sigma_within (variables, EWMA, CUSUM) and the chart parameters (p0, c0, u0,
    lambda, L, k, h, reference, n) rebuild the limits through `carried_parameters`; `limits`
    (first point) and `limits_source` are for people reading the block.
    """
    fit = result.fit
    return {
        "sheet": result.sheet,
        "chart": fit.chart,
        "subgroup_size": fit.subgroup_size,
        "process_mean": _finite(fit.process_mean),
        "sigma_within": _finite(fit.sigma_within),
        "sigma_method": fit.sigma_method,
        "parameters": {k: _finite(v) for k, v in fit.parameters.items()},
        "limits_source": fit.limits_source,
        "set_by": fit.origin or fit.limits_source,
        "limits": {s.name: {"center": _finite(s.center[0]), "lcl": _finite(s.lcl[0]), "ucl": _finite(s.ucl[0])}
                   for s in fit.statistics},
    }


def carried_parameters(entry: dict[str, Any]) -> tuple[str, dict[str, float], str, str]:
    """(chart, given parameters, words, origin) that apply a block entry's limits to new data.

    origin says how the limits were first set, carried unchanged through every later month.
    """
    try:
        chart = str(entry["chart"])
        given = {k: float(v) for k, v in entry.get("parameters", {}).items() if v is not None and k != "n"}
        for key, name in (("process_mean", "mean"), ("sigma_within", "sigma")):
            if entry.get(key) is not None:
                given[name] = float(entry[key])
    except (KeyError, TypeError, ValueError, AttributeError):
        raise ValueError("the carried limits entry is incomplete or damaged; evaluate with a base period "
                         "instead") from None
    where = f" from {entry['read_from']}" if entry.get("read_from") else ""
    origin = str(entry.get("set_by") or entry.get("limits_source") or "")
    return chart, given, f"carried{where}" + (f" (first set by {origin})" if origin else ""), origin


def read_limits_block(path: Path) -> dict[str, dict[str, Any]]:
    """Entries by sheet name from an evaluated workbook's limits block; InputError naming the file."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: file not found; --limits-from needs an earlier sheettool output")
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, InvalidFileException, KeyError, OSError, ValueError) as exc:
        raise InputError(f"{path}: not a readable .xlsx workbook ({type(exc).__name__})") from None
    try:
        if LIMITS_SHEET not in book.sheetnames:
            raise InputError(f"{path}: no sheettool limits block (sheet '{LIMITS_SHEET}'); give a workbook "
                             "that sheettool wrote, or leave out --limits-from")
        rows = [tuple(r) for r in book[LIMITS_SHEET].iter_rows(values_only=True)]
    finally:
        book.close()
    try:
        entries = parse_limits_rows(rows)
    except json.JSONDecodeError:
        raise InputError(f"{path}: the limits block is damaged (a row is not valid JSON)") from None
    except ValueError as exc:
        raise InputError(f"{path}: {exc}; this sheettool reads limits block version {VERSION}") from None
    for entry in entries.values():
        entry["read_from"] = path.name
    return entries
