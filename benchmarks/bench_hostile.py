"""Benchmark: how fast and in how little memory an entity-expansion bomb inside a workbook is refused.

Each of three package members (a sheet, the workbook part, the styles) is replaced in turn by a billion-laughs
document that would expand to 10**9 "lol"s (3 GB); `sheettool evaluate` must refuse it at the entity declarations
with exit code 3. Prints the processor time and the peak traced memory of each refusal.
Targets: under 10 s of processor time and under 50 MB peak for each.
Run: python benchmarks/bench_hostile.py
"""

from __future__ import annotations

import contextlib
import io
import sys
import tempfile
import time
import tracemalloc
import zipfile
from pathlib import Path

import xlsxwriter

from sheettool.cli.main import main

MEMBERS = ("xl/worksheets/sheet1.xml", "xl/workbook.xml", "xl/styles.xml")
TARGET_SECONDS, TARGET_BYTES = 10.0, 50 * 2**20


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


if __name__ == "__main__":
    sys.exit(main_bench())
