"""Benchmark: evaluate a 100,000-subgroup x 5 workbook end to end, against the floor of the same I/O.

The floor reads the same cells (openpyxl read-only, values only) and writes the same output cells
and charts with xlsxwriter, with no computation. Each phase runs in its own child process so its
peak memory (maximum resident set size) is its own; each phase runs twice, alternating, and the
best time counts. Target: evaluation within 1.5x of the floor,
peak memory under 1 GB.

    PYTHONPATH=. python benchmarks/bench_evaluate.py [SUBGROUPS]
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xlsxwriter

SIZE = 5


def make_input(path: Path, subgroups: int) -> None:
    """A plain measurement sheet: subgroup number and five readings at three decimals (fixed seed)."""
    rng = np.random.default_rng(20261202)
    values = np.round(rng.normal(12.0, 0.01, (subgroups, SIZE)), 3).tolist()
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = book.add_worksheet("Bore diameter")
    ws.write_row(0, 0, ["Subgroup", *[f"Part {j + 1}" for j in range(SIZE)]])
    for i, row in enumerate(values, start=1):
        ws.write_number(i, 0, i)
        for j, v in enumerate(row, start=1):
            ws.write_number(i, j, v)
    book.close()


def evaluate(source: Path, out: Path) -> None:
    """The real thing: read, evaluate, write (values, no formulas)."""
    from sheettool.app.api import evaluate_file

    evaluate_file(source, out)


def floor(source: Path, out: Path) -> None:
    """Read the same cells and write the same number of output cells and the same charts, computing nothing."""
    import openpyxl

    book_in = openpyxl.load_workbook(source, read_only=True, data_only=True)
    rows = [tuple(r) for r in book_in.worksheets[0].iter_rows(values_only=True)]
    book_in.close()
    data = rows[1:]
    m = len(data)
    book = xlsxwriter.Workbook(str(out))
    reading, statistic, limit = (book.add_format({"num_format": f}) for f in ("0.000", "0.0000", "0.00000"))
    evaluation = book.add_worksheet("Bore diameter chart")
    tab = book.add_worksheet("Bore diameter data")
    lines = book.add_worksheet("chart-lines")
    for r, row in enumerate(data, start=3):
        tab.write_number(r, 0, r - 2)
        tab.write_number(r, 1, row[0])
        for c in range(1, 6):
            tab.write_number(r, c + 1, row[c], reading)
        tab.write_number(r, 7, 1)
        for c in (8, 13):  # two statistics: value, center, LCL, UCL (the signal column is nearly empty)
            tab.write_number(r, c, row[1], statistic)
            for k in (1, 2, 3):
                tab.write_number(r, c + k, row[1], limit)
    tab.add_table(2, 0, m + 2, 18, {"columns": [{"header": f"h{c}"} for c in range(19)]})
    for c in range(8):
        lines.write_number(1, c, 0.5)
        lines.write_number(2, c, m + 0.5)
    for k in range(2):
        chart = book.add_chart({"type": "scatter", "subtype": "straight"})
        for line in "BCDE":  # UCL, LCL, center line (two points each) and a short list of signals
            chart.add_series({"categories": "='chart-lines'!$A$2:$A$3",
                              "values": f"='chart-lines'!${line}$2:${line}$3"})
        col = "I" if k == 0 else "N"
        chart.add_series({"categories": f"='Bore diameter data'!$A$4:$A${m + 3}",
                          "values": f"='Bore diameter data'!${col}$4:${col}${m + 3}"})
        evaluation.insert_chart(20 * k, 0, chart)
    book.close()


def _child(phase: str, source: Path, out: Path) -> tuple[float, float]:
    """Run one phase in a child process; return (seconds, peak resident MiB)."""
    start = time.perf_counter()
    proc = subprocess.Popen([sys.executable, __file__, "--phase", phase, str(source), str(out)])
    _, status, usage = os.wait4(proc.pid, 0)
    seconds = time.perf_counter() - start
    if status != 0:
        raise SystemExit(f"{phase} failed with status {status}")
    return seconds, usage.ru_maxrss / 1024.0  # ru_maxrss is in KiB on Linux


def main() -> None:
    """Build the input, time both phases, print the figures and the ratio."""
    if len(sys.argv) > 1 and sys.argv[1] == "--phase":
        {"evaluate": evaluate, "floor": floor}[sys.argv[2]](Path(sys.argv[3]), Path(sys.argv[4]))
        return
    subgroups = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    with tempfile.TemporaryDirectory() as folder:
        source = Path(folder) / "big.xlsx"
        make_input(source, subgroups)
        print(f"input: {subgroups:,} subgroups x {SIZE} readings, {source.stat().st_size / 2**20:.1f} MiB")
        # alternate the phases and keep each one's best time: the machine may be busy with other work
        runs = {"floor": [], "evaluate": []}
        for _ in range(2):
            for phase in runs:
                runs[phase].append(_child(phase, source, Path(folder) / f"{phase}.xlsx"))
        floor_s, floor_mb = min(runs["floor"])
        eval_s, eval_mb = min(runs["evaluate"])
        print(f"floor (read cells + write same cells and charts): {floor_s:7.2f} s, peak {floor_mb:7.1f} MiB")
        print(f"sheettool evaluate, end to end:                   {eval_s:7.2f} s, peak {eval_mb:7.1f} MiB")
        print(f"ratio evaluate / floor: {eval_s / floor_s:.2f} (target <= 1.5); "
              f"peak memory {'under' if eval_mb < 1024 else 'OVER'} 1 GB")


if __name__ == "__main__":
    main()
