"""The machine-readable limits block: what next month's run reads back with --limits-from.

A hidden sheet named LIMITS_SHEET; cell A1 holds the marker and version, and from row 3 each row
holds a characteristic's sheet name, chart kind, a JSON object with its fitted parameters and
limits, and the SHA-256 of that JSON text (column D; blocks written before it have none and still
read). Version 1; a reader refuses versions it does not know. The block is checked as a whole
before any of it is used: bounded in entries, text length and nesting, every number finite, every
entry's limits in order (sheettool.evaluation.carried.entry_problem), each checksum matching; a
block that fails is refused with the cell that fails, never half-trusted.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import re
import zipfile
from pathlib import Path
from typing import Any

import openpyxl
from openpyxl.utils.exceptions import InvalidFileException

from sheettool.base.errors import InputError
from sheettool.evaluation.carried import entry_problem

LIMITS_SHEET = "limits-block"
MARKER = "sheettool limits block"
VERSION = 1
CHECKSUM_HEADER = "SHA-256 of the parameters"
MAX_ENTRIES = 10_000
MAX_TEXT = 20_000  # characters of one entry's JSON text
MAX_NESTING = 8  # levels of JSON objects and lists
_STRINGS = re.compile(r'"(?:[^"\\]|\\.)*"')
_HEX64 = re.compile(r"^[0-9a-f]{64}$")


class BlockError(ValueError):
    """A limits block that cannot be trusted: the cell (e.g. "C5") and what is wrong with it."""

    def __init__(self, cell: str, message: str) -> None:
        super().__init__(f"cell {cell}: {message}")


def checksum(text: str) -> str:
    """The SHA-256 of an entry's JSON text, in hex (what column D holds)."""
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def limits_rows(entries: list[dict[str, Any]]) -> list[list[str | int]]:
    """The block's cell rows for a list of {"sheet", "chart", ...} entries; an entry's "key" (a pack's
    "source :: sheet") names its row instead of the sheet where sheet names alone would collide."""
    rows: list[list[str | int]] = [[MARKER, "version", VERSION],
                                   ["sheet", "chart", "parameters (JSON)", CHECKSUM_HEADER]]
    for entry in entries:
        text = json.dumps(entry, sort_keys=True)
        rows.append([entry.get("key", entry["sheet"]), entry["chart"], text, checksum(text)])
    return rows


def parse_limits_rows(rows: list[tuple[Any, ...]]) -> dict[str, dict[str, Any]]:
    """Entries by sheet name from the block's cell rows; BlockError naming the cell when any of it fails."""
    if not rows or not rows[0] or rows[0][0] != MARKER:
        raise BlockError("A1", "no sheettool limits block found")
    version = rows[0][2] if len(rows[0]) > 2 else None
    if isinstance(version, bool) or not isinstance(version, int | float) or version not in range(1, VERSION + 1):
        raise BlockError("C1", f"limits block version {version if version is not None else '?'} is not known")
    summed = len(rows) > 1 and len(rows[1]) > 3 and rows[1][3] == CHECKSUM_HEADER
    out: dict[str, dict[str, Any]] = {}
    for r, row in enumerate(rows[2:], start=3):
        if not row or all(v is None for v in row):
            continue
        if len(out) == MAX_ENTRIES:
            raise BlockError(f"A{r}", f"more than {MAX_ENTRIES:,} entries")
        key = row[0]
        if not isinstance(key, str) or not key:
            raise BlockError(f"A{r}", "the sheet name is missing or not text")
        if key in out:
            raise BlockError(f"A{r}", f"a second entry for '{key}'")
        text = row[2] if len(row) > 2 else None
        if summed:
            _check_sum(text, row[3] if len(row) > 3 else None, r)
        out[key] = _entry(text, r)
    return out


def _check_sum(text: object, stored: object, r: int) -> None:
    if not isinstance(stored, str) or not _HEX64.match(stored):
        raise BlockError(f"D{r}", "the checksum is missing or not a SHA-256 in hex")
    if not isinstance(text, str) or checksum(text) != stored:
        raise BlockError(f"C{r}", f"the parameters do not match their checksum in D{r} (changed after "
                                  "sheettool wrote them)")


def _entry(text: object, r: int) -> dict[str, Any]:
    """One entry from its JSON text in column C of sheet row r, checked."""
    cell = f"C{r}"
    if not isinstance(text, str):
        raise BlockError(cell, "the parameters are not JSON text")
    if len(text) > MAX_TEXT:
        raise BlockError(cell, f"the parameters are longer than {MAX_TEXT:,} characters")
    if _nesting(text) > MAX_NESTING:
        raise BlockError(cell, f"the parameters are nested deeper than {MAX_NESTING} levels")
    try:
        entry = json.loads(text, parse_constant=_refuse_constant)
    except ValueError as exc:  # JSONDecodeError, NaN or Infinity, an integer too long to convert
        raise BlockError(cell, f"the parameters are not valid JSON ({exc})") from None
    if not isinstance(entry, dict):
        raise BlockError(cell, "the parameters are not a JSON object")
    problem = entry_problem(entry)
    if problem:
        raise BlockError(cell, problem)
    return entry


def _refuse_constant(name: str) -> Any:
    raise ValueError(f"{name} is not a finite number")


def _nesting(text: str) -> int:
    """How deep the JSON objects and lists of `text` nest (brackets inside strings left out)."""
    depth = deepest = 0
    for char in _STRINGS.sub("", text):
        if char in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif char in "]}":
            depth -= 1
    return deepest


def earlier_sheet(path: Path, sheet: str, width: int, most: int) -> list[tuple[Any, ...]] | None:
    """The first `most` rows (`width` cells each) of a sheet of an earlier sheettool output, None when it has no
    such sheet; InputError naming the file when it is missing or cannot be read."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: file not found; --limits-from needs an earlier sheettool output")
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (zipfile.BadZipFile, InvalidFileException, KeyError, OSError, ValueError):
        raise InputError(f"{path}: not a readable .xlsx workbook (damaged, or not a workbook); give the workbook "
                         "as sheettool wrote it") from None
    try:
        if sheet not in book.sheetnames:
            return None
        return [tuple(r) for r in itertools.islice(book[sheet].iter_rows(max_col=width, values_only=True), most)]
    except Exception:  # a damaged sheet part fails in many ways inside openpyxl
        raise InputError(f"{path}: sheet '{sheet}' cannot be read (its part is damaged); give the "
                         "workbook as sheettool wrote it") from None
    finally:
        book.close()


def read_limits_block(path: Path) -> dict[str, dict[str, Any]]:
    """Entries by sheet name from an evaluated workbook's limits block; InputError naming the file."""
    path = Path(path)
    rows = earlier_sheet(path, LIMITS_SHEET, 4, MAX_ENTRIES + 3)  # a row past the limit is refused
    if rows is None:
        raise InputError(f"{path}: no sheettool limits block (sheet '{LIMITS_SHEET}'); give a workbook "
                         "that sheettool wrote, or leave out --limits-from")
    try:
        entries = parse_limits_rows(rows)
    except BlockError as exc:
        raise InputError(f"{path}: sheet '{LIMITS_SHEET}', {exc}; this sheettool reads limits block version "
                         f"{VERSION} as it wrote it: give that workbook unchanged, or leave out --limits-from "
                         "to set limits from a base period") from None
    for entry in entries.values():
        entry["read_from"] = path.name
    return entries
