"""What the drop-folder watcher sees and keeps: the files in the folder, and in the output folder
its state database, its log and its notes.

A file is a candidate by its name (workbooks and .csv, never lock files, temporary saves, hidden
files or sheettool's outputs) and only when it is a regular file; a workbook is read only once it
is a complete zip package, and one carrying sheettool's limits block is an output, not an input.

The state (SQLite, standard library) remembers, per input path relative to the watched folder, the
version last handled (size, modification time, SHA-256) and what became of it, and keeps every
evaluation in order: the history the carried limits are looked up in. Paths inside are relative
(with "/"), so the folders can be moved or mounted elsewhere together.
"""

from __future__ import annotations

import csv
import hashlib
import json
import os
import sqlite3
import stat
import zipfile
from dataclasses import dataclass
from pathlib import Path
from typing import IO

import openpyxl
from defusedxml import ElementTree

from sheettool.base.errors import OutputError
from sheettool.workbook.limits_block import LIMITS_SHEET, MARKER

STATE_NAME = "watch-state.sqlite"
LOG_NAME = "watch-log.csv"
LOG_HEADER = ("time", "file", "sha256", "result", "points signalled", "problems", "first problems", "limits",
              "written")
TEMP_PREFIX = ".~watch-"  # the watcher's own temporary files, removed when it starts

EVALUATED, NOT_EVALUATED, SKIPPED = "evaluated", "not evaluated", "skipped"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS files (
    path TEXT PRIMARY KEY,   -- input, relative to the watched folder
    size INTEGER NOT NULL,
    mtime_ns INTEGER NOT NULL,
    sha256 TEXT NOT NULL,
    status TEXT NOT NULL,    -- evaluated, not evaluated, skipped (a sheettool output)
    target TEXT NOT NULL     -- its output or note, relative to the output folder ('' when skipped)
);
CREATE TABLE IF NOT EXISTS evaluations (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    path TEXT NOT NULL,
    sha256 TEXT NOT NULL,
    evaluated_at TEXT NOT NULL,
    status TEXT NOT NULL,
    exit_code INTEGER NOT NULL,
    target TEXT NOT NULL,
    sheets TEXT NOT NULL     -- JSON list of the sheet names its limits block holds
);
"""


@dataclass(frozen=True)
class Known:
    """The version of an input last handled, and what became of it."""

    size: int
    mtime_ns: int
    sha256: str
    status: str
    target: str


class WatchState:
    """The state database of one output folder, held by one watcher at a time."""

    def __init__(self, folder: Path) -> None:
        self.path = Path(folder) / STATE_NAME
        try:
            self.db = sqlite3.connect(self.path, timeout=0.5, isolation_level=None)
            # Exclusive locking: a second watcher on the same output folder is refused instead of
            # evaluating the same files twice. The default rollback journal also works on network shares.
            self.db.execute("PRAGMA locking_mode=EXCLUSIVE")
            self.db.executescript("BEGIN EXCLUSIVE;" + _SCHEMA + "COMMIT;")
        except sqlite3.OperationalError as exc:
            if "locked" in str(exc):
                raise OutputError(f"{self.path}: another watcher is using this output folder; stop it first, "
                                  "or give another output folder with -o") from None
            raise OutputError(f"{self.path}: cannot keep the watcher's state here ({exc})") from None
        except sqlite3.DatabaseError as exc:
            raise OutputError(f"{self.path}: the watcher's state file is damaged ({exc}); move it away and "
                              "every file is evaluated again") from None

    def close(self) -> None:
        """Release the database (and its lock)."""
        self.db.close()

    def known(self, path: str) -> Known | None:
        """The version of `path` last handled, or None for a new input."""
        row = self.db.execute("SELECT size, mtime_ns, sha256, status, target FROM files WHERE path = ?",
                              (path,)).fetchone()
        return Known(*row) if row else None

    def remember(self, path: str, size: int, mtime_ns: int, sha256: str, status: str, target: str) -> None:
        """Record the version of `path` just handled (nothing in the history: nothing was evaluated)."""
        self.db.execute("INSERT OR REPLACE INTO files VALUES (?, ?, ?, ?, ?, ?)",
                        (path, size, mtime_ns, sha256, status, target))

    def record(self, path: str, size: int, mtime_ns: int, sha256: str, when: str, status: str, code: int,
               target: str, sheets: list[str]) -> None:
        """One evaluation: the input's current version and the history, in one transaction."""
        with self.db:
            self.db.execute("BEGIN")
            self.remember(path, size, mtime_ns, sha256, status, target)
            self.db.execute("INSERT INTO evaluations (path, sha256, evaluated_at, status, exit_code, target, sheets) "
                            "VALUES (?, ?, ?, ?, ?, ?, ?)", (path, sha256, when, status, code, target,
                                                             json.dumps(sheets)))

    def earlier_outputs(self) -> list[tuple[str, frozenset[str]]]:
        """Each input's latest evaluated output with its sheet names, newest evaluation first."""
        rows = self.db.execute(
            "SELECT e.target, e.sheets FROM evaluations e WHERE e.status = ? AND e.id = "
            "(SELECT MAX(id) FROM evaluations WHERE path = e.path AND status = ?) ORDER BY e.id DESC",
            (EVALUATED, EVALUATED)).fetchall()
        return [(target, frozenset(json.loads(sheets))) for target, sheets in rows]

    def output_owners(self, target: str, path: str) -> list[str]:
        """Other inputs whose evaluated output has this name (compared without case, as on Windows)."""
        rows = self.db.execute("SELECT path FROM files WHERE lower(target) = lower(?) AND path != ? AND status = ?",
                               (target, path, EVALUATED)).fetchall()
        return [row[0] for row in rows]


def append_log(folder: Path, rows: list[list[str]]) -> None:
    """Append rows to the watch log (a CSV with a header, UTF-8 with a byte-order mark so that
    spreadsheet programs read its accents); OSError when it cannot be written (e.g. open and locked)."""
    path = Path(folder) / LOG_NAME
    new = not path.exists() or path.stat().st_size == 0
    with open(path, "a", encoding="utf-8-sig" if new else "utf-8", newline="") as handle:
        writer = csv.writer(handle)
        if new:
            writer.writerow(LOG_HEADER)
        writer.writerows(rows)


def write_text_atomically(path: Path, text: str) -> None:
    """A small text file written to a temporary name beside it, then renamed into place."""
    tmp = path.with_name(f"{TEMP_PREFIX}{path.name}")
    try:
        tmp.write_text(text, encoding="utf-8")
        os.replace(tmp, path)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write the note ({exc.strerror or exc})") from None
    finally:
        if tmp.exists():
            tmp.unlink()


def remove_temporaries(folder: Path) -> None:
    """Temporary files a stopped watcher left behind in the output folder."""
    for leftover in Path(folder).rglob(f"{TEMP_PREFIX}*"):
        try:
            if leftover.is_file():
                leftover.unlink(missing_ok=True)
        except OSError:
            pass  # in use or not ours to remove: harmless, it is hidden


WATCHED_SUFFIXES = (".xlsx", ".xlsm", ".csv")
PACKAGE_SUFFIXES = (".xlsx", ".xlsm")
_HIDDEN_ATTRIBUTE = stat.FILE_ATTRIBUTE_HIDDEN if os.name == "nt" else 0  # Windows marks hidden files


def watched_name(name: str) -> bool:
    """A name the watcher evaluates: a workbook or .csv that is not a lock file (~$name, .~lock.name#),
    a temporary save (~name, .~name, name.tmp), hidden, or one of sheettool's outputs (*-evaluated)."""
    lower = name.lower()
    return lower.endswith(WATCHED_SUFFIXES) and not lower.startswith(("~", ".")) and not Path(
        lower).stem.endswith("-evaluated")


@dataclass(frozen=True)
class Seen:
    """A candidate input as listed: where it is, its size and modification time."""

    path: Path
    size: int
    mtime_ns: int


def scan(root: Path, skip: Path) -> dict[str, Seen]:
    """Candidate inputs below `root` by path relative to it (with "/"): regular files only, outside
    the folder `skip` (the output folder) and outside hidden folders; symbolic links to folders are
    not followed."""
    skip_real = os.path.realpath(skip)
    found: dict[str, Seen] = {}
    stack = [(str(root), "")]
    while stack:
        folder, prefix = stack.pop()
        try:
            with os.scandir(folder) as listing:
                entries = list(listing)
        except OSError:
            continue  # gone or unreadable for now: listed again next time
        for entry in entries:
            try:
                if entry.name.startswith(".") or (
                        _HIDDEN_ATTRIBUTE and entry.stat(follow_symlinks=False).st_file_attributes & _HIDDEN_ATTRIBUTE):
                    continue
                if entry.is_dir(follow_symlinks=False):
                    if os.path.realpath(entry.path) != skip_real:
                        stack.append((entry.path, f"{prefix}{entry.name}/"))
                    continue
                if not watched_name(entry.name):
                    continue
                info = os.stat(entry.path)
            except OSError:
                continue
            if stat.S_ISREG(info.st_mode):  # never a FIFO, socket or device
                found[prefix + entry.name] = Seen(Path(entry.path), info.st_size, info.st_mtime_ns)
    return found


@dataclass(frozen=True)
class Content:
    """A settled file looked into: its hash, the size and time it had, its sheet names, whether it is ours."""

    sha256: str
    size: int
    mtime_ns: int
    sheets: frozenset[str]
    own_output: bool


def examine(path: Path, accept_incomplete: bool) -> Content | None:
    """Hash a file and name its sheets; None for a workbook that is not yet a complete zip package
    (unless accept_incomplete: then the evaluation says what is wrong with it). OSError when it is
    gone or not a regular file."""
    handle, info = _open_regular(path)
    with handle:
        sheets = frozenset({path.stem})  # a .csv is one sheet named after the file
        if path.suffix.lower() in PACKAGE_SUFFIXES:
            complete, sheets = _package_sheets(handle)
            if not complete and not accept_incomplete:
                return None
        handle.seek(0)
        digest = hashlib.sha256()
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    own = LIMITS_SHEET in sheets and _carries_marker(path)
    return Content(digest.hexdigest(), info.st_size, info.st_mtime_ns, sheets, own)


def _open_regular(path: Path) -> tuple[IO[bytes], os.stat_result]:
    """Open for reading without blocking, and only a regular file (it may have been swapped since listed)."""
    fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0))
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise OSError(f"{path}: not a regular file")
        return os.fdopen(fd, "rb"), info
    except BaseException:
        os.close(fd)
        raise


def _package_sheets(handle: IO[bytes]) -> tuple[bool, frozenset[str]]:
    """(complete, sheet names): complete when the zip's central directory reads, which is written last."""
    try:
        if not zipfile.is_zipfile(handle):
            return False, frozenset()
        with zipfile.ZipFile(handle) as package:
            package.infolist()
            try:
                root = ElementTree.fromstring(package.read("xl/workbook.xml"))
            except Exception:  # a damaged inside: the evaluation reports it in the command line's words
                return True, frozenset()
    except (zipfile.BadZipFile, OSError, ValueError):
        return False, frozenset()
    return True, frozenset(el.get("name", "") for el in root.iter() if str(el.tag).rsplit("}", 1)[-1] == "sheet")


def _carries_marker(path: Path) -> bool:
    """Whether the workbook's limits-block sheet starts with sheettool's marker: an output, not an input."""
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
        try:
            first = next(book[LIMITS_SHEET].iter_rows(max_row=1, max_col=1, values_only=True), (None,))
        finally:
            book.close()
    except Exception:  # unreadable: not ours; the evaluation says what is wrong
        return False
    return bool(first) and first[0] == MARKER
