"""Open an input file safely and hand back its sheets as plain grids of cell values.

File-level trouble becomes one InputError naming the file and what to do, in words. Only a regular
file is read, opened without waiting (a named pipe would block) and through one handle checked once.
The package's directory is held to the limits of limits.py before openpyxl opens it. An .xlsx or .xlsm is
opened with openpyxl in read-only mode, cached formula values only: macros are never run and never
copied. Its sheets are read by fast_grid where that can be, else by public_grid, which says so in a
note; both give the same grids. openpyxl parses through defusedxml (a dependency), so a package with
entity declarations (an expansion bomb) is refused before any expansion. A .csv is read with the
standard library; an old binary .xls, an encrypted file (both OLE compound files) or an .ods gets a
one-line message saying how to convert it.
"""

from __future__ import annotations

import contextlib
import gc
import os
import re
import stat
import warnings
import zipfile
import zlib
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import BinaryIO

import openpyxl

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem
from sheettool.workbook.reader.csv_sheet import csv_sheet
from sheettool.workbook.reader.fast_grid import read_fast, why_not
from sheettool.workbook.reader.limits import CellBudget, check_loaded, check_package
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
    with _regular_file(path) as handle:
        head = handle.read(8)
        suffix = path.suffix.lower()
        if head.startswith(OLE_MAGIC):
            raise InputError(f"{path}: encrypted or old .xls; save as .xlsx without a password and try again")
        if suffix == ".csv":
            return OpenedFile([csv_sheet(path)])
        if suffix == ".ods":
            raise InputError(f"{path}: an OpenDocument spreadsheet; {_SAVE_AS}")
        if suffix == ".xlsb":
            raise InputError(f"{path}: a binary workbook (.xlsb); {_SAVE_AS}")
        if not head.startswith(ZIP_MAGIC):
            raise InputError(f"{path}: not a readable .xlsx workbook (not a zip package); {_SAVE_AS}")
        return _xlsx_sheets(path, handle)


@contextlib.contextmanager
def _regular_file(path: Path) -> Iterator[BinaryIO]:
    """The file opened for reading, if it is a regular file: opening does not wait (a named pipe with no
    writer would block a plain open), and the opened file itself is checked, so it cannot be swapped
    between the check and the reading; everything after reads through this one handle."""
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_CLOEXEC", 0))
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror or exc}); check the file's permissions "
                         "or copy it to a folder you can read") from None
    with os.fdopen(fd, "rb") as handle:
        mode = os.fstat(fd).st_mode
        if not stat.S_ISREG(mode):
            kind = ("a named pipe" if stat.S_ISFIFO(mode) else "a socket" if stat.S_ISSOCK(mode)
                    else "a folder" if stat.S_ISDIR(mode) else "a device")
            raise InputError(f"{path}: {kind}, not a file; only regular files are read: give a workbook file")
        os.set_blocking(fd, True)
        yield handle


def _xlsx_sheets(path: Path, handle: BinaryIO) -> OpenedFile:
    try:
        with zipfile.ZipFile(handle) as package:
            check_package(path, package)
            names = set(package.namelist())
            if "mimetype" in names and b"opendocument" in _start(package, "mimetype"):
                raise InputError(f"{path}: an OpenDocument spreadsheet; {_SAVE_AS}")
            if "EncryptedPackage" in names:
                raise InputError(f"{path}: encrypted; save as .xlsx without a password and try again")
            check_loaded(path, package, _sheet_names(path, package))
            with warnings.catch_warnings():  # openpyxl warns of parts it skips (extensions, validations): not ours
                warnings.simplefilter("ignore")
                book = openpyxl.load_workbook(handle, read_only=True, data_only=True, keep_vba=False,
                                              keep_links=False)
                try:
                    return _read_book(path, book, package)
                finally:
                    book.close()
    except InputError:
        raise
    except PermissionError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the file's permissions") from None
    except MemoryError:
        raise InputError(f"{path}: ran out of memory while reading; split the workbook into smaller ones, or "
                         "read it on a machine with more memory") from None
    except Exception as exc:  # a damaged package fails in many ways inside zipfile and openpyxl
        raise InputError(f"{path}: not a readable .xlsx workbook ({_why(exc)}); {_SAVE_AS}") from None


def _start(package: zipfile.ZipFile, name: str) -> bytes:
    """The first bytes of a part (enough to tell what it is)."""
    with package.open(name) as part:
        return part.read(200)


def _sheet_names(path: Path, package: zipfile.ZipFile) -> set[str]:
    """The worksheet parts, by the relationships, or by their folder where those cannot be followed
    (openpyxl then says what is wrong)."""
    try:
        return set(sheet_parts(path, package).values())
    except InputError:
        raise
    except Exception:
        return {name for name in package.namelist() if "/worksheets/" in f"/{name}"}


def _read_book(path: Path, book: openpyxl.Workbook, package: zipfile.ZipFile) -> OpenedFile:
    """The book's worksheets read the fast way, or, where it cannot be taken, the public way with a note why;
    all of them spend one budget of cells."""
    worksheets = book.worksheets
    budget = CellBudget(path)
    reason = why_not(book, worksheets[0] if worksheets else None)
    if not reason:
        return OpenedFile([_sheet(path, ws, lambda ws: read_fast(path, book, ws, budget)) for ws in worksheets])
    parts = sheet_parts(path, package)
    note = Problem("note", f"{reason}: the workbook was read through openpyxl's public interface, more slowly, "
                   "and its hidden rows and columns, merged cells and formulas without a saved value were found "
                   "by a scan of each sheet's XML", file=path.name)
    return OpenedFile([_sheet(path, ws, lambda ws: read_public(path, ws, package, parts[ws.title], budget))
                       for ws in worksheets], [note])


def _sheet(path: Path, ws: object, read: Callable[[object], RawSheet]) -> RawSheet:
    """One sheet read by `read`; a cell openpyxl cannot read is refused naming the sheet, in words."""
    try:
        return read(ws)
    except (ValueError, TypeError, IndexError, KeyError, OverflowError):
        raise InputError(f"{path}: sheet '{ws.title}' holds a cell that cannot be read (a number cell that is "  # type: ignore[attr-defined]
                         f"not a number, or a shared text that does not exist); {_SAVE_AS}") from None


def _why(exc: BaseException) -> str:
    """The reason in words, looking through openpyxl's wrapping ValueError to the first cause; never an
    exception's bare name."""
    chain: list[BaseException] = []
    while exc is not None and len(chain) < 10:
        chain.append(exc)
        exc = exc.__cause__ or exc.__context__  # type: ignore[assignment]
    names = {type(e).__name__ for e in chain}
    if {"EntitiesForbidden", "DTDForbidden", "ExternalReferenceForbidden"} & names:
        return "it holds XML entity declarations, refused as unsafe"
    if any(isinstance(e, zipfile.BadZipFile | EOFError | zlib.error) for e in chain):
        return "damaged or truncated package"
    if missing := next((m.group(1) for e in chain if isinstance(e, KeyError)
                        and (m := re.search(r"named '([^']*)'", str(e)))), None):
        return f"the part {missing} is missing from the package"
    if "ParseError" in names:
        return "damaged XML inside the package"
    for kind, words in _REASONS:
        if any(isinstance(e, kind) for e in chain):
            return words
    return "damaged or unexpected content inside the package"


_REASONS: tuple[tuple[type[BaseException], str], ...] = (
    (NotImplementedError, "a part is compressed with a method zip readers do not support"),
    (RecursionError, "XML nested too deeply"),
    (RuntimeError, "a part is encrypted or cannot be unpacked"),
    (UnicodeError, "text that is not valid in its encoding"),
    (OverflowError, "a number too large to read"),
    (KeyError, "a part or a reference it needs is missing"),
)

