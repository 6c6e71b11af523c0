"""Open an input file safely and hand back its sheets as plain grids of cell values.

File-level trouble becomes one InputError naming the file and what to do. An .xlsx or .xlsm is
opened with openpyxl in read-only mode, cached formula values only: macros are never run and never
copied. Its sheets are read by fast_grid where that can be, else by public_grid, which says so in a
note; both give the same grids. openpyxl parses through defusedxml (a dependency), so a package with
entity declarations (an expansion bomb) is refused before any expansion. A .csv is read with the
standard library; an old binary .xls, an encrypted file (both OLE compound files) or an .ods gets a
one-line message saying how to convert it.
"""

from __future__ import annotations

import contextlib
import csv
import gc
import io
import warnings
import zipfile
from collections.abc import Iterator
from pathlib import Path

import openpyxl

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem
from sheettool.workbook.reader.fast_grid import read_fast, why_not
from sheettool.workbook.reader.public_grid import read_public
from sheettool.workbook.reader.raw_sheet import OpenedFile, RawSheet
from sheettool.workbook.reader.sheet_xml import sheet_parts

OLE_MAGIC = b"\xd0\xcf\x11\xe0"  # compound file: binary .xls, or any encrypted (password) workbook
ZIP_MAGIC = b"PK\x03\x04"
_SAVE_AS = "save it from the spreadsheet application as .xlsx and try again"


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


def open_sheets(path: Path) -> OpenedFile:
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
        return OpenedFile([_csv_sheet(path)])
    if suffix == ".ods":
        raise InputError(f"{path}: an OpenDocument spreadsheet; {_SAVE_AS}")
    if suffix == ".xlsb":
        raise InputError(f"{path}: a binary workbook (.xlsb); {_SAVE_AS}")
    if not head.startswith(ZIP_MAGIC):
        raise InputError(f"{path}: not a readable .xlsx workbook (not a zip package); {_SAVE_AS}")
    return _xlsx_sheets(path)


def _xlsx_sheets(path: Path) -> OpenedFile:
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
                    return _read_book(path, book, package)
                finally:
                    book.close()
    except InputError:
        raise
    except PermissionError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the file's permissions") from None
    except Exception as exc:  # a damaged package fails in many ways inside zipfile and openpyxl
        raise InputError(f"{path}: not a readable .xlsx workbook ({_why(exc)}); {_SAVE_AS}") from None


def _read_book(path: Path, book: openpyxl.Workbook, package: zipfile.ZipFile) -> OpenedFile:
    """The book's worksheets read the fast way, or, where it cannot be taken, the public way with a note why."""
    worksheets = book.worksheets
    reason = why_not(book, worksheets[0] if worksheets else None)
    if not reason:
        return OpenedFile([read_fast(path, book, ws) for ws in worksheets])
    parts = sheet_parts(package)
    note = Problem("note", f"{reason}: the workbook was read through openpyxl's public interface, more slowly, "
                   "and its hidden rows and columns, merged cells and formulas without a saved value were found "
                   "by a scan of each sheet's XML", file=path.name)
    return OpenedFile([read_public(path, ws, package, parts[ws.title]) for ws in worksheets], [note])


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
