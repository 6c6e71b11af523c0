"""How much work any input may ask for: the bounds checked before anything large is read or allocated.

A workbook is a zip package whose declared sizes and dimensions a hostile file can make up. The package's
directory is checked first (`check_package`: every part's uncompressed size and compression ratio, the
total, and the shared strings counted by a streaming scan before openpyxl loads them); each worksheet is
then read through `GuardedSource`, which counts cells per row, cells in all and the longest run of text
between tags as the bytes stream in, so a row of forty million cells or gigabytes of whitespace are
refused after a few megabytes. RowCollector (raw_sheet.py) bounds row and column numbers and the grid
the sheet will make. Every refusal is an InputError (exit 3) naming the limit and the part. The values
let a 300,000-subgroup workbook through with room to spare; any file of up to 10 MB is evaluated or
refused in well under 1 GB of memory.
"""

from __future__ import annotations

import itertools
import re
import zipfile
from pathlib import Path
from typing import IO

from sheettool.base.errors import InputError

MAX_ROWS = 1_048_576  # the format's maxima (Office Open XML spreadsheets)
MAX_COLUMNS = 16_384
MAX_GRID = 20_000_000  # cells of a sheet's grid: rows x columns to its last cell (the grid is made dense)
MAX_CELLS = 10_000_000  # cells read in a workbook, counted from column A to each row's last cell
MAX_ELEMENTS = 3 * MAX_CELLS  # XML elements in a workbook's sheets (a cell and its value are two)
MAX_ROW_ELEMENTS = 8 * MAX_COLUMNS  # elements in one row, or ahead of the first (a cell is 2 to 4)
MAX_TAIL_ELEMENTS = 2 * MAX_ROWS  # elements after the rows: merged ranges (a lot merged down its rows)...
MAX_PART_BYTES = 512 * 2**20  # uncompressed, any part
MAX_TOTAL_BYTES = 1024 * 2**20  # uncompressed, all parts together
MAX_LOADED_BYTES = 64 * 2**20  # uncompressed, an XML part other than a sheet, which openpyxl loads whole
MAX_SHARED_BYTES = 128 * 2**20  # uncompressed, the shared strings
MAX_SHARED_STRINGS = 1_000_000  # openpyxl keeps each one as an object (about 10 s a million on 2 cores)
MAX_RATIO = 200  # uncompressed / compressed, for parts over RATIO_FLOOR (XML sheets are usually 5 to 30)
RATIO_FLOOR = 2**20
MAX_TEXT_RUN = 8 * 2**20  # bytes of text between two tags (a cell holds at most 32,767 characters)
SHARED_STRINGS = re.compile(r"(^|/)sharedStrings\d*\.xml$", re.IGNORECASE)

_TAG = rb"<(?:[A-Za-z_][\w.-]*:)?"
_ROOT = re.compile(rb"<([A-Za-z_][\w.-]*:)?worksheet[\s/>]")
_STRING = re.compile(_TAG + rb"si[\s/>]")
_CHUNK = 1 << 20
_CARRY = 256  # a tag name cut by a chunk's end is carried over to the next one


def _mb(size: int) -> str:
    return f"{size / 2**20:,.0f} MB" if size >= 2**20 else f"{size:,} bytes"


def refuse(path: Path, what: str) -> InputError:
    """The InputError for a file past one of the limits: what was found and the limit, then what to do."""
    return InputError(f"{path}: {what}; split the workbook, or save it again from a spreadsheet application "
                      "(see Limits in docs/reading-workbooks.md)")


def read_small(path: Path, package: zipfile.ZipFile, name: str) -> bytes:
    """A part that is parsed whole (relationships, the workbook part), refused past MAX_LOADED_BYTES."""
    size = package.getinfo(name).file_size
    if size > MAX_LOADED_BYTES:
        raise refuse(path, f"part {name} unpacks to {_mb(size)}, more than the limit of {_mb(MAX_LOADED_BYTES)} "
                     "for a part that is not a sheet")
    return package.read(name)


def check_package(path: Path, package: zipfile.ZipFile) -> None:
    """Refuse a package whose directory claims more than the limits, before any part is read whole; the
    shared strings are counted by a streaming scan."""
    total = 0
    for info in package.infolist():
        name, size = info.filename, info.file_size
        total += size
        if size > MAX_PART_BYTES:
            raise refuse(path, f"part {name} unpacks to {_mb(size)}, more than the limit of {_mb(MAX_PART_BYTES)}")
        if size > RATIO_FLOOR and size > MAX_RATIO * max(info.compress_size, 1):
            raise refuse(path, f"part {name} is compressed {size / max(info.compress_size, 1):,.0f} to 1, more "
                         f"than the limit of {MAX_RATIO} to 1 (a zip bomb?)")
        if total > MAX_TOTAL_BYTES:
            raise refuse(path, f"the package unpacks to more than the limit of {_mb(MAX_TOTAL_BYTES)}")
        if SHARED_STRINGS.search(name):
            if size > MAX_SHARED_BYTES:
                raise refuse(path, f"the shared strings ({name}) unpack to {_mb(size)}, more than the limit of "
                             f"{_mb(MAX_SHARED_BYTES)}")
            with package.open(info) as source:
                _count_strings(path, name, source)


def check_loaded(path: Path, package: zipfile.ZipFile, sheets: set[str]) -> None:
    """Refuse an XML part past MAX_LOADED_BYTES that is not one of the `sheets` (streamed by the reader):
    openpyxl loads such parts (styles, properties) whole."""
    for info in package.infolist():
        name, size = info.filename, info.file_size
        if (size > MAX_LOADED_BYTES and name not in sheets and not SHARED_STRINGS.search(name)
                and name.lower().endswith((".xml", ".rels"))):
            raise refuse(path, f"part {name} unpacks to {_mb(size)}, more than the limit of "
                         f"{_mb(MAX_LOADED_BYTES)} for a part that is not a sheet")


def _count_strings(path: Path, name: str, source: IO[bytes]) -> None:
    """Count the shared strings as the part streams in; refuse past MAX_SHARED_STRINGS."""
    count, carry = 0, b""
    while chunk := source.read(_CHUNK):
        buffer = carry + chunk
        cut = _cut(buffer)
        count += len(_STRING.findall(buffer, 0, cut))
        carry = buffer[cut:]
        if count > MAX_SHARED_STRINGS:
            raise refuse(path, f"the shared strings ({name}) hold more than the limit of "
                         f"{MAX_SHARED_STRINGS:,} strings")


def _cut(buffer: bytes) -> int:
    """Where to stop scanning `buffer`: before a tag that may be cut by its end, if there is one."""
    cut = buffer.rfind(b"<", max(0, len(buffer) - _CARRY))
    return len(buffer) if cut < 0 else cut


class CellBudget:
    """Cells read and XML elements parsed over every sheet of a workbook, against MAX_CELLS and MAX_ELEMENTS."""

    def __init__(self, path: Path) -> None:
        self.path, self.cells, self.elements = path, 0, 0

    def spend(self, cells: int, sheet: str) -> None:
        """Count `cells` more, read in `sheet`; refuse when the workbook passes MAX_CELLS."""
        self.cells += cells
        if self.cells > MAX_CELLS:
            raise refuse(self.path, f"sheet '{sheet}' takes the workbook past the limit of {MAX_CELLS:,} cells")

    def spend_elements(self, elements: int, sheet: str) -> None:
        """Count `elements` more, parsed in `sheet`; refuse when the workbook passes MAX_ELEMENTS."""
        self.elements += elements
        if self.elements > MAX_ELEMENTS:
            raise refuse(self.path, f"sheet '{sheet}' takes the workbook past the limit of {MAX_ELEMENTS:,} XML "
                         "elements in its sheets")


class GuardedSource:
    """A sheet part's byte stream, read through: refuses (InputError), as soon as the bytes read show
    it, more than MAX_ROW_ELEMENTS elements in one row (or ahead of the first row, as in <cols>), more
    than MAX_TAIL_ELEMENTS after the rows (merged ranges and the like), more elements in the workbook
    than the budget allows, or a run of more than MAX_TEXT_RUN bytes without a tag. openpyxl's parser
    builds each row (and each block after the rows) whole before handing it on; these bounds keep that
    small. Counting is by plain byte counts over each piece read, the rows found by the tag name with the
    root element's namespace prefix, so the guard costs about a hundredth of the parsing."""

    def __init__(self, source: IO[bytes], budget: CellBudget, sheet: str, part: str) -> None:
        self.source, self.budget, self.sheet, self.part = source, budget, sheet, part
        self._ready, self._at = b"", 0  # the chunk read and checked, and how much of it was handed on
        self._carry = b""
        self._row_tag = b""  # b"<row" with the root's prefix, once the root is seen
        self._tail_tag = b""  # b"</sheetData"
        self._in_row = 0  # elements since the last row start
        self._tail = False  # past the rows
        self._text = 0  # bytes since the last "<"

    def read(self, size: int = -1) -> bytes:
        """The next bytes of the part (at most `size`, and never more than a chunk), checked a chunk ahead."""
        if self._at >= len(self._ready):
            self._ready, self._at = self.source.read(_CHUNK), 0
            self._check(self._ready)
        size = _CHUNK if size is None or size < 0 else size
        data = self._ready[self._at:self._at + size]
        self._at += len(data)
        return data

    def close(self) -> None:
        """Close the underlying stream."""
        self.source.close()

    def __enter__(self) -> GuardedSource:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _check(self, data: bytes) -> None:
        first = data.find(b"<")
        self._text += len(data) if first < 0 else first
        if self._text > MAX_TEXT_RUN:
            self._refuse(f"holds more than {_mb(MAX_TEXT_RUN)} without a tag")
        if first >= 0:
            self._text = len(data) - data.rfind(b"<") - 1
        buffer = self._carry + data
        cut = _cut(buffer) if data else len(buffer)
        if not self._row_tag and (root := _ROOT.search(buffer, 0, cut)):
            prefix = root.group(1) or b""
            self._row_tag, self._tail_tag = b"<" + prefix + b"row", b"</" + prefix + b"sheetData"
        elements = _elements(buffer, 0, cut)
        self.budget.spend_elements(elements, self.sheet)
        if not self._tail and self._row_tag and (end := buffer.find(self._tail_tag, 0, cut)) >= 0:
            self._rows(buffer, 0, end, _elements(buffer, 0, end))
            self._tail, self._in_row = True, _elements(buffer, end, cut)
        elif self._tail:
            self._in_row += elements
        else:
            self._rows(buffer, 0, cut, elements)
        if self._tail and self._in_row > MAX_TAIL_ELEMENTS:
            self._refuse(f"holds more than {MAX_TAIL_ELEMENTS:,} elements after its rows (merged ranges and the "
                         "like)")
        self._carry = buffer[cut:]

    def _rows(self, buffer: bytes, start: int, end: int, elements: int) -> None:
        """Count the `elements` of the rows in buffer[start:end]; look at each row only where the piece
        holds enough elements for one row to pass the bound."""
        last = buffer.rfind(self._row_tag, start, end) if self._row_tag else -1
        if last < 0:
            self._in_row += elements
        elif self._in_row + elements <= MAX_ROW_ELEMENTS:
            self._in_row = _elements(buffer, last, end)
        else:  # the piece up to its first row start goes on with the row being read
            starts = [start]
            while (found := buffer.find(self._row_tag, starts[-1] + 1, end)) >= 0:
                starts.append(found)
            for i, (lo, hi) in enumerate(itertools.pairwise([*starts, end])):
                self._in_row = (self._in_row if i == 0 else 0) + _elements(buffer, lo, hi)
                if self._in_row > MAX_ROW_ELEMENTS:
                    break
        if self._in_row > MAX_ROW_ELEMENTS:
            self._refuse(f"has more than {MAX_ROW_ELEMENTS:,} elements in one row (or ahead of its rows); the "
                         f"format's rows hold at most {MAX_COLUMNS:,} cells")

    def _refuse(self, what: str) -> None:
        raise refuse(self.budget.path, f"sheet '{self.sheet}' ({self.part}) {what}")


def _elements(buffer: bytes, start: int, end: int) -> int:
    """Start tags in buffer[start:end] (every "<" that does not close a tag)."""
    return buffer.count(b"<", start, end) - buffer.count(b"</", start, end)


def column_span(low: object, high: object) -> range:
    """Columns `low` to `high` (1-based, as a <col> element gives them), within the format's columns:
    a range claimed to run to column 2,000,000,000 is cut at the last one; numbers that are not numbers
    give no column."""
    try:
        first, last = int(low), int(high)  # type: ignore[call-overload]
    except (TypeError, ValueError):
        return range(0)
    return range(max(first, 1), min(last, MAX_COLUMNS) + 1)
