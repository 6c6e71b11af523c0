"""Open an input file safely and hand back its sheets as plain grids of cell values.

File-level trouble becomes one InputError naming the file and what to do. An .xlsx or .xlsm is
read with openpyxl's streaming sheet parser (the one its read-only mode uses), cached formula
values only: macros are never run and never copied. openpyxl parses through defusedxml (a
dependency), so a package with entity declarations (an expansion bomb) is refused before any
expansion. A .csv is read with the standard library; an old binary .xls, an encrypted file
(both OLE compound files) or an .ods gets a one-line message saying how to convert it.
"""

from __future__ import annotations

import contextlib
import csv
import gc
import io
import re
import warnings
import zipfile
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import openpyxl
from openpyxl.utils import get_column_letter
from openpyxl.utils.cell import coordinate_to_tuple
from openpyxl.worksheet._reader import WorkSheetParser

from sheettool.base.errors import InputError

OLE_MAGIC = b"\xd0\xcf\x11\xe0"  # compound file: binary .xls, or any encrypted (password) workbook
ZIP_MAGIC = b"PK\x03\x04"
_FORMULA_CELL = re.compile(rb'<c\b[^>]*?\br="([A-Z]{1,3}[0-9]+)"[^>]*>\s*<f\b')
MAX_CELLS = 20_000_000  # larger sheets are refused before memory runs short (about 1 GB read)
_SAVE_AS = "save it from the spreadsheet application as .xlsx and try again"


@dataclass
class RawSheet:
    """One sheet as a grid: rows[i] holds the values of sheet row i + 1 (short rows are not padded)."""

    title: str
    rows: list[list[object]]
    hidden_rows: set[int] = field(default_factory=set)  # 1-based row numbers
    hidden_columns: set[int] = field(default_factory=set)  # 1-based column numbers
    merged: list[tuple[int, int, int, int]] = field(default_factory=list)  # min_row, min_col, max_row, max_col
    uncached: list[str] = field(default_factory=list)  # cells with a formula and no cached value
    hidden: bool = False  # the sheet itself is hidden


@contextlib.contextmanager
def paused_collection() -> Iterator[None]:
    """Pause the cyclic garbage collector: a sheet's grid is many small lists kept alive and holds
    no cycles, so collecting while it grows only costs time (up to 45 % of the reading)."""
    collecting = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if collecting:
            gc.enable()


def open_sheets(path: Path) -> list[RawSheet]:
    """Every sheet of the file at `path` as a RawSheet; InputError for anything that stops reading."""
    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: file not found; check the name and folder")
    if path.is_dir():
        raise InputError(f"{path}: is a folder, not a workbook")
    try:
        with open(path, "rb") as handle:
            head = handle.read(8)
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror or exc}); check the file's permissions "
                         "or copy it to a folder you can read") from None
    suffix = path.suffix.lower()
    if head.startswith(OLE_MAGIC):
        raise InputError(f"{path}: encrypted or old .xls; save as .xlsx without a password and try again")
    if suffix == ".csv":
        return [_csv_sheet(path)]
    if suffix == ".ods":
        raise InputError(f"{path}: an OpenDocument spreadsheet; {_SAVE_AS}")
    if suffix == ".xlsb":
        raise InputError(f"{path}: a binary workbook (.xlsb); {_SAVE_AS}")
    if not head.startswith(ZIP_MAGIC):
        raise InputError(f"{path}: not a readable .xlsx workbook (not a zip package); {_SAVE_AS}")
    return _xlsx_sheets(path)


def _xlsx_sheets(path: Path) -> list[RawSheet]:
    try:
        with zipfile.ZipFile(path) as package:
            names = set(package.namelist())
            if "mimetype" in names and b"opendocument" in package.read("mimetype"):
                raise InputError(f"{path}: an OpenDocument spreadsheet; {_SAVE_AS}")
            if "EncryptedPackage" in names:
                raise InputError(f"{path}: encrypted; save as .xlsx without a password and try again")
        with warnings.catch_warnings():  # openpyxl warns of parts it skips (extensions, validations): not ours
            warnings.simplefilter("ignore")
            book = openpyxl.load_workbook(path, read_only=True, data_only=True, keep_vba=False, keep_links=False)
            try:
                return [_parse_sheet(path, book, ws) for ws in book.worksheets]
            finally:
                book.close()
    except InputError:
        raise
    except PermissionError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the file's permissions") from None
    except Exception as exc:  # a damaged package fails in many ways inside zipfile and openpyxl
        raise InputError(f"{path}: not a readable .xlsx workbook ({_why(exc)}); {_SAVE_AS}") from None


def _why(exc: BaseException) -> str:
    """The reason in words, looking through openpyxl's wrapping ValueError to the first cause."""
    chain: list[BaseException] = []
    while exc is not None and len(chain) < 10:
        chain.append(exc)
        exc = exc.__cause__ or exc.__context__  # type: ignore[assignment]
    names = [type(e).__name__ for e in chain]
    if {"EntitiesForbidden", "DTDForbidden", "ExternalReferenceForbidden"} & set(names):
        return "it holds XML entity declarations, refused as unsafe"
    if any(isinstance(e, zipfile.BadZipFile | EOFError) or type(e).__name__ == "error" for e in chain):
        return "damaged or truncated package"
    if "ParseError" in names:
        return "damaged XML inside the package"
    return names[-1]


def _parse_sheet(path: Path, book: object, ws: object) -> RawSheet:
    """Stream one sheet's XML into a grid (private openpyxl parts: its read-only mode does the same)."""
    with ws._get_source() as source:  # type: ignore[attr-defined]
        parser = WorkSheetParser(source, ws._shared_strings, data_only=True, epoch=book.epoch,  # type: ignore[attr-defined]
                                 date_formats=book._date_formats,  # type: ignore[attr-defined]
                                 timedelta_formats=book._timedelta_formats)  # type: ignore[attr-defined]
        rows: list[list[object]] = []
        cells_read = 0
        empty: set[str] = set()  # cells present in the XML without a value: formulas without cache among them
        for index, cells in parser.parse():
            while len(rows) < index - 1:
                rows.append([])
            if cells and cells[-1]["column"] == len(cells):
                row = [cell["value"] for cell in cells]
            else:
                row = []
                for cell in cells:
                    col = cell["column"]
                    if col > len(row) + 1:
                        row.extend([None] * (col - 1 - len(row)))
                    if col == len(row) + 1:
                        row.append(cell["value"])
            if None in row:
                empty.update(f"{get_column_letter(c + 1)}{index}" for c, v in enumerate(row) if v is None)
            rows.append(row)
            cells_read += len(row)
            if cells_read > MAX_CELLS:
                raise InputError(f"{path}: sheet '{ws.title}' holds more than {MAX_CELLS:,} cells; "  # type: ignore[attr-defined]
                                 "split it into smaller workbooks")
    uncached = _formulas_without_value(ws, empty) if empty else []
    hidden_rows = {int(r) for r, attrs in parser.row_dimensions.items() if attrs.get("hidden") in ("1", "true")}
    hidden_columns = {c for attrs in parser.column_dimensions.values() if attrs.get("hidden") in ("1", "true")
                      for c in range(int(attrs["min"]), int(attrs.get("max", attrs["min"])) + 1)}
    merged = []
    if parser.merged_cells is not None:
        for item in parser.merged_cells.mergeCell:
            lo, hi = ([*item.ref.split(":"), item.ref])[:2]
            (r1, c1), (r2, c2) = _rc(lo), _rc(hi)
            merged.append((r1, c1, r2, c2))
    return RawSheet(title=ws.title, rows=rows, hidden_rows=hidden_rows, hidden_columns=hidden_columns,  # type: ignore[attr-defined]
                    merged=merged, uncached=uncached,
                    hidden=getattr(ws, "sheet_state", "visible") != "visible")


def _formulas_without_value(ws: object, empty: set[str]) -> list[str]:
    """Cells among `empty` that hold a formula: one streaming pass over the sheet's XML."""
    found: set[str] = set()
    tail = b""
    with ws._get_source() as source:  # type: ignore[attr-defined]
        while chunk := source.read(1 << 22):
            buffer = tail + chunk
            if b"<f" in buffer:  # most sheets hold no formula: a plain search, no pattern
                found.update(m.group(1).decode() for m in _FORMULA_CELL.finditer(buffer))
            tail = buffer[-512:]
    return sorted(found & empty, key=lambda ref: coordinate_to_tuple(ref))


def _rc(ref: str) -> tuple[int, int]:
    return coordinate_to_tuple(ref.replace("$", ""))


def _csv_sheet(path: Path) -> RawSheet:
    """A .csv as one sheet named after the file (UTF-8, or Windows-1252 where it is not UTF-8)."""
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("cp1252", errors="replace")
    # Separator: tab if the text has tabs, else ";" if it has any (exports with decimal commas use
    # it), else ",".
    delimiter = "\t" if "\t" in text else ";" if ";" in text else ","
    rows = [[cell if cell.strip() else None for cell in row] for row in csv.reader(io.StringIO(text),
                                                                                    delimiter=delimiter)]
    return RawSheet(title=path.stem, rows=rows)
