"""Where outputs go, and which files are sheettool's own outputs.

Every output name is distinct and never a file the command reads (an input, the --limits-from
workbook); a name spelled differently but naming the same file (links, `..`, a hard link) counts
as the same. A workbook sheettool wrote is recognised by its limits-block sheet whose first cell
holds the marker, read from the package cheaply: a bounded read of the workbook part and its
relationships, and a streaming read of the one sheet and, where needed, the shared strings up to
the marker's entry; never a whole part.
"""

from __future__ import annotations

import html
import itertools
import os
import posixpath
import re
import stat
import zipfile
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import IO

from defusedxml.ElementTree import iterparse

from sheettool.app.api import default_output
from sheettool.base.errors import OutputError, UsageError
from sheettool.workbook.limits_block import LIMITS_SHEET, MARKER
from sheettool.workbook.writer.book import os_error_cause

HEAD_BYTES = 1 << 20  # of the workbook part and its relationships: the sheet list comes first
SHEET_BYTES = 1 << 16  # of the limits-block sheet: its first cell comes first
STRINGS_BYTES = 1 << 24  # of the shared strings, streamed up to the marker's entry
_TAG = re.compile(rb"<(?:[\w.-]+:)?(sheet|Relationship)\s([^>]*)>")
_ATTRIBUTE = re.compile(rb'([\w.:-]+)\s*=\s*"([^"]*)"')


def same_file(a: Path, b: Path) -> bool:
    """True when the two paths name one file: the same resolved path, or the same file on disk (a hard link)."""
    try:
        if os.path.samefile(a, b):
            return True
    except OSError:  # one of them does not exist (yet)
        pass
    return Path(a).resolve() == Path(b).resolve()


def file_kind(path: Path) -> str:
    """"" for a regular file (or a path that does not exist); otherwise what it is, in words."""
    try:
        mode = os.stat(path).st_mode
    except OSError:
        return ""
    if stat.S_ISREG(mode):
        return ""
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "a device"


def check_output(output: Path, read: Sequence[tuple[Path, str]]) -> None:
    """UsageError when `output` names one of the files read; read: (path, what it is, e.g. "the input")."""
    for path, what in read:
        if same_file(output, path):
            raise UsageError(f"-o {output}: names the same file as {what} {path}, which is never written over; "
                             "choose another name with -o")


def plan_outputs(inputs: Sequence[Path], read: Sequence[tuple[Path, str]]) -> list[tuple[Path, str]]:
    """A distinct output beside each input, never a file read (read: (path, what it is)) nor another's output.

    Each input gets IN-evaluated.xlsx where that is free, else IN-EXT-evaluated.xlsx (e.g. in-csv-evaluated.xlsx),
    then IN-EXT-evaluated-2.xlsx and so on. Returns (output, why it is not the usual name, or "") per input.
    """
    taken: list[tuple[Path, str]] = list(read)
    planned: list[tuple[Path, str]] = []
    for path in inputs:
        why = ""
        for candidate in _names(path):
            clash = next((what for other, what in taken if same_file(candidate, other)), None)
            if clash is None:
                break
            why = why or f"{candidate.name} is {clash}"
        taken.append((candidate, f"the output of {path.name}"))
        planned.append((candidate, why))
    return planned


def _names(path: Path) -> Iterator[Path]:
    yield default_output(path)
    tag = path.suffix.lstrip(".").lower() or "file"
    yield path.with_name(f"{path.stem}-{tag}-evaluated.xlsx")
    for n in itertools.count(2):
        yield path.with_name(f"{path.stem}-{tag}-evaluated-{n}.xlsx")


def write_failure(path: Path, exc: BaseException) -> OutputError | None:
    """The OutputError naming the real cause when `exc` (a library's wrapper, say) carries an OS error; else None."""
    cause = os_error_cause(exc)
    return None if cause is None else OutputError(f"{path}: cannot write the output ({cause.strerror or cause})")


def is_sheettool_output(path: Path) -> bool:
    """True when `path` is a regular file holding a workbook sheettool wrote (its limits block with the marker)."""
    if file_kind(path) or not Path(path).is_file():
        return False
    try:
        with zipfile.ZipFile(path) as package:
            return _first_cell(package) == MARKER
    except Exception:  # a damaged package fails in many ways; the reader says why when it reads the file
        return False


def _attributes(data: bytes, tag: str) -> Iterator[dict[str, str]]:
    for match in _TAG.finditer(data):
        if match.group(1).decode() == tag:
            yield {k.decode().rpartition(":")[2]: html.unescape(v.decode("utf-8", "replace"))
                   for k, v in _ATTRIBUTE.findall(match.group(2))}


def _head(package: zipfile.ZipFile, name: str) -> bytes:
    with package.open(name) as handle:
        return handle.read(HEAD_BYTES)


def _first_cell(package: zipfile.ZipFile) -> str | None:
    """The text of A1 on the limits-block sheet, or None when there is no such sheet or cell."""
    names = set(package.namelist())
    if "xl/workbook.xml" not in names:
        return None
    sheet = next((a for a in _attributes(_head(package, "xl/workbook.xml"), "sheet") if a.get("name") == LIMITS_SHEET),
                 None)
    if sheet is None or "xl/_rels/workbook.xml.rels" not in names:
        return None
    links = list(_attributes(_head(package, "xl/_rels/workbook.xml.rels"), "Relationship"))
    target = next((_part(a.get("Target", "")) for a in links if a.get("Id") == sheet.get("id")), None)
    strings = next((_part(a.get("Target", "")) for a in links if a.get("Type", "").endswith("/sharedStrings")), None)
    if target not in names:
        return None
    kind, text = _cell_a1(package, target)
    if kind != "s":
        return text
    if strings not in names or text is None or not text.strip().isdigit():
        return None
    return _shared_string(package, strings, int(text))


def _part(target: str) -> str:
    """A relationship's target as a part name in the package (relative to xl/, or absolute)."""
    return target.lstrip("/") if target.startswith("/") else posixpath.normpath(posixpath.join("xl", target))


def _local(tag: str) -> str:
    return tag.rpartition("}")[2]


def _cell_a1(package: zipfile.ZipFile, part: str) -> tuple[str, str | None]:
    """(cell type, value or inline text) of A1, reading no further than the first cell of the sheet."""
    with package.open(part) as handle:
        for _, elem in iterparse(_Capped(handle, SHEET_BYTES), events=("end",)):
            name = _local(elem.tag)
            if name == "row":
                return "", None  # the first row ended without an A1
            if name == "c":
                if elem.get("r", "A1") != "A1":
                    return "", None
                kind = elem.get("t", "n")
                found = [t.text or "" for t in elem.iter() if _local(t.tag) == ("t" if kind == "inlineStr" else "v")]
                return kind, "".join(found)
    return "", None


def _shared_string(package: zipfile.ZipFile, part: str, index: int) -> str | None:
    """Entry `index` of the shared strings, streamed: entries before it are counted and dropped."""
    count = 0
    with package.open(part) as handle:
        for _, elem in iterparse(_Capped(handle, STRINGS_BYTES), events=("end",)):
            if _local(elem.tag) != "si":
                continue
            if count == index:
                return "".join(t.text or "" for t in elem.iter() if _local(t.tag) == "t")
            count += 1
            elem.clear()
    return None


class _Capped:
    """A binary stream that ends after `limit` bytes, so that no part is read further than that."""

    def __init__(self, handle: IO[bytes], limit: int) -> None:
        self.handle = handle
        self.left = limit

    def read(self, size: int = -1) -> bytes:
        """Up to `size` bytes, never past the limit."""
        if self.left <= 0:
            return b""
        size = self.left if size is None or size < 0 else min(size, self.left)
        data = self.handle.read(size)
        self.left -= len(data)
        return data
