"""Benchmark: how fast and in how little memory an entity-expansion bomb inside a workbook is refused.

Each of three package members (a sheet, the workbook part, the styles) is replaced in turn by a billion-laughs
document that would expand to 10**9 "lol"s (3 GB); `sheettool evaluate` must refuse it at the entity declarations
with exit code 3. Prints the processor time and the peak traced memory of each refusal.
Targets: under 10 s of processor time and under 50 MB peak for each.

Then the resource bombs of issue 18 at full size (generated here, a few MB on disk): a cell at row 5,000,000 and
at row 50,000,000, a `<col max="2000000000">` claim, 4 GB of whitespace in a sheet, one row of 40 million cells,
60 million shared strings, 1.1 million distinct shared strings. Each is evaluated in a child process capped at
1 GB of address space (RLIMIT_AS); prints the exit code, wall seconds, peak resident memory and the message.
Targets: each refused (exit 3; the column claim evaluated, exit 0) within 30 s and 1 GB.
Run: PYTHONPATH=. python benchmarks/bench_hostile.py
"""

from __future__ import annotations

import contextlib
import io
import json
import resource
import subprocess
import sys
import tempfile
import time
import tracemalloc
import zipfile
from pathlib import Path

import xlsxwriter

from sheettool.cli.main import main
from tests.fuzz.packages import SHEET, STRINGS, count_parts, count_rows, repeated, sheet_xml, strings_xml, write_package

MEMBERS = ("xl/worksheets/sheet1.xml", "xl/workbook.xml", "xl/styles.xml")
TARGET_SECONDS, TARGET_BYTES = 10.0, 50 * 2**20
CAP, BOMB_SECONDS = 1 << 30, 30.0
END = b"</sheetData></worksheet>"
CHILD = r"""
import contextlib, io, json, resource, sys, time
started = time.perf_counter()
from sheettool.cli.main import main
err = io.StringIO()
with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
    code = main(["evaluate", sys.argv[1], "-o", sys.argv[1] + "-out.xlsx", "--quiet"])
print(json.dumps([code, time.perf_counter() - started, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
                  err.getvalue().strip()]))
"""


def bomb(levels: int = 9) -> bytes:
    """A billion-laughs XML document: each entity ten of the one before, the last one used in a cell."""
    entities = ['<!ENTITY lol "lol">'] + [
        f'<!ENTITY lol{i} "{(f"&lol{i - 1};" if i > 1 else "&lol;") * 10}">' for i in range(1, levels + 1)]
    return ('<?xml version="1.0"?>\n<!DOCTYPE lolz [\n' + "\n".join(entities) + "\n]>\n"
            '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
            f'<row r="1"><c r="A1" t="inlineStr"><is><t>&lol{levels};</t></is></c></row></sheetData></worksheet>'
            ).encode()


def good_workbook(path: Path) -> None:
    """A small sound workbook of 20 subgroups of 4 to plant the bomb in."""
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet("Data")
    ws.write_row(0, 0, ["Subgroup", "R1", "R2", "R3", "R4"])
    for r in range(20):
        ws.write_row(r + 1, 0, [r + 1, *(10.0 + 0.1 * ((r * 7 + k * 3) % 5) for k in range(4))])
    book.close()


def refusal(path: Path) -> tuple[int, float, int, str]:
    """Exit code, processor seconds, peak traced bytes and the message of one `sheettool evaluate`."""
    err = io.StringIO()
    tracemalloc.start()
    started = time.process_time()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(["evaluate", str(path)])
    used = time.process_time() - started
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return code, used, peak, err.getvalue().strip()


def main_bench() -> int:
    """Plant the bomb in each member, time the refusal, print the figures; 1 when a target is missed."""
    missed = False
    with tempfile.TemporaryDirectory() as tmp:
        good = Path(tmp) / "good.xlsx"
        good_workbook(good)
        for member in MEMBERS:
            path = Path(tmp) / "bomb.xlsx"
            with zipfile.ZipFile(good) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
                for item in src.infolist():
                    dst.writestr(item, bomb() if item.filename == member else src.read(item))
            code, used, peak, message = refusal(path)
            ok = code == 3 and used < TARGET_SECONDS and peak < TARGET_BYTES
            missed |= not ok
            print(f"{member:26s} exit {code}  {used:6.3f} s processor  {peak / 2**20:6.1f} MB peak  "
                  f"{'ok' if ok else 'MISSED'}  ({message})")
    print(f"targets: exit 3, under {TARGET_SECONDS:g} s and {TARGET_BYTES / 2**20:g} MB for each")
    return 1 if missed else 0


def resource_bombs(folder: Path) -> dict[str, dict]:
    """The issue's bombs as package parts (streamed when large), by name."""
    head = sheet_xml(count_rows())[: -len(END)]
    strings = strings_xml(["Lot", "Defectives", "Inspected"])[:-6]
    return {
        "row 5,000,000": {SHEET: sheet_xml(count_rows() + '<row r="5000000"><c r="A5000000"><v>1</v></c></row>')},
        "row 50,000,000": {SHEET: sheet_xml(count_rows() + '<row r="50000000"><c r="A50000000"><v>1</v></c></row>')},
        "col max 2e9": {SHEET: sheet_xml(count_rows(), '<cols><col min="1" max="2000000000" hidden="1"/></cols>')},
        "4 GB whitespace": {SHEET: repeated(head, b" " * 4096, (4 << 30) // 4096, END)},
        "row of 40M cells": {SHEET: repeated(head + b'<row r="30">', b"<c><v>1</v></c>", 40_000_000, b"</row>" + END)},
        "60M shared strings": {STRINGS: repeated(strings, b"<si><t/></si>", 60_000_000, b"</sst>")},
        "1.1M distinct strings": {STRINGS: strings + b"".join(b"<si><t>lot %d</t></si>" % i for i in range(1_100_000))
                                  + b"</sst>"},
    }


def _cap() -> None:
    resource.setrlimit(resource.RLIMIT_AS, (CAP, CAP))


def bombs_bench() -> int:
    """Evaluate each resource bomb under the memory cap; 1 when a target is missed."""
    missed = False
    with tempfile.TemporaryDirectory() as tmp:
        for i, (name, parts) in enumerate(resource_bombs(Path(tmp)).items()):
            path = write_package(Path(tmp) / f"bomb{i}.xlsx", {**count_parts(), **parts})
            child = subprocess.run([sys.executable, "-c", CHILD, str(path)], capture_output=True, text=True,
                                   preexec_fn=_cap, check=False, timeout=600)
            try:
                code, seconds, peak_mb, message = json.loads(child.stdout)
            except ValueError:
                code, seconds, peak_mb, message = child.returncode, 0.0, 0.0, child.stderr.strip()[-200:]
            ok = code == (0 if name.startswith("col") else 3) and seconds < BOMB_SECONDS and peak_mb < CAP / 2**20
            missed |= not ok
            print(f"{name:22s} {path.stat().st_size / 2**20:6.2f} MB on disk  exit {code}  {seconds:6.2f} s  "
                  f"{peak_mb:6.0f} MB peak  {'ok' if ok else 'MISSED'}  ({message[:160]})")
    print(f"targets: refused (the column claim evaluated) within {BOMB_SECONDS:g} s and {CAP >> 20} MB each")
    return 1 if missed else 0


if __name__ == "__main__":
    sys.exit(main_bench() | bombs_bench())
