"""Benchmark: 200 workbooks of 125 subgroups x 5 into one review pack, with 1 and with 2 processes.

Targets: under 60 s with 2 processes on a 2-core machine, and at least 1.6x faster than with 1.
Run: python benchmarks/bench_pack.py [WORKBOOKS]
"""

from __future__ import annotations

import datetime as dt
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xlsxwriter

from sheettool.app.batch import Progress
from sheettool.app.pack import build_pack, write_pack

SUBGROUPS, SIZE = 125, 5


def make_inputs(folder: Path, count: int) -> None:
    """count invented workbooks (fixed seeds), one characteristic each, some with a mean shift."""
    for i in range(count):
        rng = np.random.default_rng(1000 + i)
        book = xlsxwriter.Workbook(str(folder / f"line{i // 20:02d}-char{i:03d}.xlsx"))
        ws = book.add_worksheet(f"Char {i:03d}")
        ws.write_row(0, 0, ["Date and time", *[f"Reading {k + 1}" for k in range(SIZE)]])
        when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
        start = dt.datetime(2026, 10, 20)
        for r in range(SUBGROUPS):
            shift = 1.0 if (i % 3 == 0 and r > 100) else 0.0
            ws.write_datetime(r + 1, 0, start + dt.timedelta(hours=6 * r), when)
            ws.write_row(r + 1, 1, np.round(rng.normal(50.0 + shift, 1.0, SIZE), 3).tolist())
        book.close()


def timed_pack(folder: Path, out: Path, jobs: int) -> float:
    start = time.perf_counter()
    pack = build_pack([folder], {}, jobs=jobs, progress=Progress(0, quiet=True), skip=(out,))
    write_pack(pack, out)
    return time.perf_counter() - start


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 200
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp) / "inputs"
        folder.mkdir()
        t0 = time.perf_counter()
        make_inputs(folder, count)
        print(f"generated {count} workbooks of {SUBGROUPS} x {SIZE} in {time.perf_counter() - t0:.1f} s")
        one = timed_pack(folder, Path(tmp) / "pack1.xlsx", 1)
        two = timed_pack(folder, Path(tmp) / "pack2.xlsx", 2)
        size = (Path(tmp) / "pack2.xlsx").stat().st_size / 1e6
    print(f"pack with 1 process:  {one:6.1f} s")
    print(f"pack with 2 processes: {two:6.1f} s   (target < 60 s)   pack size {size:.1f} MB")
    print(f"speed-up: {one / two:.2f}x   (target >= 1.6x)")


if __name__ == "__main__":
    main()
