"""Light scans of an .xlsx package's XML for what openpyxl's public read-only interface does not show.

`sheet_parts` finds each worksheet's part from the package's relationships (small files, parsed with
defusedxml). `formula_cells` and `scan_marks` read a sheet part as a byte stream with plain patterns,
in pieces cut between tags, so a sheet of any size takes little memory: they look for formula cells,
hidden rows and columns and merged ranges, tags with or without a namespace prefix. They parse no
entity and run after openpyxl has parsed the same part through defusedxml (which refuses entity
declarations), so a hostile package is refused before they see it.
"""

from __future__ import annotations

import posixpath
import re
import zipfile
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO

from defusedxml import ElementTree
from openpyxl.utils.cell import coordinate_to_tuple

from sheettool.workbook.reader.limits import column_span, read_small

_P = rb"<(?:[A-Za-z_][\w.-]*:)?"  # a tag's start, with its namespace prefix if any
FORMULA_CELL = re.compile(_P + rb'c\b[^>]*?\br="([A-Z]{1,3}[0-9]+)"[^>]*>\s*' + _P + rb"f\b")
_OPEN_CELL_AT_END = re.compile(_P + rb"c\b[^<>]*>\s*$")
_ROW = re.compile(_P + rb"row\b([^>]*)>")
_COL = re.compile(_P + rb"col\b([^>]*)>")
_MERGE = re.compile(_P + rb"mergeCell\b([^>]*)>")
_ATTR = re.compile(rb"""\b([\w:.-]+)\s*=\s*(?:"([^"]*)"|'([^']*)')""")
_HIDDEN = (b"1", b"true")
_PIECE = 1 << 22


@dataclass
class SheetMarks:
    """What a scan of one sheet part found: as openpyxl's own sheet parser records it."""

    hidden_rows: set[int] = field(default_factory=set)
    hidden_columns: set[int] = field(default_factory=set)
    merged: list[tuple[int, int, int, int]] = field(default_factory=list)  # min_row, min_col, max_row, max_col
    formulas: set[str] = field(default_factory=set)  # cells holding a formula, e.g. "B3"
    last_row: int = 0  # the highest row number


def pieces(source: IO[bytes]) -> Iterator[bytes]:
    """The stream in pieces of about 4 MB, each cut before a tag, and never between a cell's start tag and
    what follows it (a formula cell is known by the <f> right after it)."""
    tail = b""
    while chunk := source.read(_PIECE):
        buffer = tail + chunk
        cut = buffer.rfind(b"<")
        if (open_cell := _OPEN_CELL_AT_END.search(buffer, max(0, cut - 512), max(cut, 0))) is not None:
            cut = open_cell.start()
        if cut <= 0:
            tail = buffer
            continue
        yield buffer[:cut]
        tail = buffer[cut:]
    if tail:
        yield tail


def formula_cells(source: IO[bytes]) -> set[str]:
    """Every cell of a sheet part that holds a formula (most parts hold none: a plain search first)."""
    found: set[str] = set()
    for piece in pieces(source):
        if b"<f" in piece or b":f" in piece:
            found.update(m.group(1).decode() for m in FORMULA_CELL.finditer(piece))
    return found


def scan_marks(source: IO[bytes]) -> SheetMarks:
    """Hidden rows and columns, merged ranges and formula cells of a sheet part, in one pass."""
    marks = SheetMarks()
    row = 0
    for piece in pieces(source):
        for m in _ROW.finditer(piece):
            attrs = _attributes(m.group(1))
            row = int(float(attrs["r"])) if "r" in attrs else row + 1  # rows without a number follow the last
            marks.last_row = max(marks.last_row, row)
            if attrs.get("hidden") in _HIDDEN:
                marks.hidden_rows.add(row)
        for m in _COL.finditer(piece):
            attrs = _attributes(m.group(1))
            if attrs.get("hidden") in _HIDDEN and "min" in attrs:
                marks.hidden_columns.update(column_span(attrs["min"], attrs.get("max", attrs["min"])))
        for m in _MERGE.finditer(piece):
            if ref := _attributes(m.group(1)).get("ref", b"").decode().replace("$", ""):
                lo, hi = ([*ref.split(":"), ref])[:2]
                (r1, c1), (r2, c2) = coordinate_to_tuple(lo), coordinate_to_tuple(hi)
                marks.merged.append((r1, c1, r2, c2))
        if b"<f" in piece or b":f" in piece:
            marks.formulas.update(m.group(1).decode() for m in FORMULA_CELL.finditer(piece))
    return marks


def _attributes(text: bytes) -> dict[str, bytes]:
    """A start tag's attributes by their local name (a namespace prefix dropped)."""
    return {m.group(1).rsplit(b":", 1)[-1].decode(): m.group(2) if m.group(2) is not None else m.group(3)
            for m in _ATTR.finditer(text)}


def sheet_parts(path: Path, package: zipfile.ZipFile) -> dict[str, str]:
    """Worksheet name -> its part in the package, by the package's and the workbook's relationships
    (parts read whole, each within the limit for that)."""
    book = _target(path, package, "", "_rels/.rels", "officeDocument")
    folder, name = posixpath.split(book)
    rels = _relations(path, package, folder, posixpath.join(folder, "_rels", f"{name}.rels"))
    parts: dict[str, str] = {}
    for element in ElementTree.fromstring(read_small(path, package, book)).iter():
        if _local(element.tag) == "sheet":
            rid = next((v for k, v in element.attrib.items() if _local(k) == "id"), None)
            if rid in rels:
                parts[element.attrib.get("name", "")] = rels[rid][1]
    return parts


def _target(path: Path, package: zipfile.ZipFile, folder: str, rels_part: str, kind: str) -> str:
    """The part a relationship of `kind` (the end of its type) points to."""
    for target_type, target in _relations(path, package, folder, rels_part).values():
        if target_type.rsplit("/", 1)[-1] == kind:
            return target
    raise KeyError(f"no {kind} relationship in {rels_part}")


def _relations(path: Path, package: zipfile.ZipFile, folder: str, rels_part: str) -> dict[str, tuple[str, str]]:
    """Relationship id -> (type, target part name resolved against `folder`)."""
    found: dict[str, tuple[str, str]] = {}
    for element in ElementTree.fromstring(read_small(path, package, rels_part)).iter():
        if _local(element.tag) == "Relationship":
            target = element.attrib.get("Target", "")
            part = target.lstrip("/") if target.startswith("/") else posixpath.normpath(posixpath.join(folder, target))
            found[element.attrib.get("Id", "")] = (element.attrib.get("Type", ""), part)
    return found


def _local(tag: str) -> str:
    return tag.rsplit("}", 1)[-1]
