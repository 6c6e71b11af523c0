"""The machine-readable limits block: what next month's run reads back with --limits-from.

A hidden sheet named LIMITS_SHEET; cell A1 holds the marker and version, and from row 3 each row
holds a characteristic's sheet name, chart kind and a JSON object with its fitted parameters and
limits. Version 1; a reader refuses versions it does not know.
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path
from typing import Any

import openpyxl
from openpyxl.utils.exceptions import InvalidFileException

from sheettool.base.errors import InputError

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
