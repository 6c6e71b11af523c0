"""Benchmark: sheettool evaluate against the floor of the same I/O, by size, with start-up, demo and design times.

The floor is the project's own least-work program for the same job: read the same cells with the fastest reader
available (python-calamine when installed, `pip install -e '.[bench]'`; else openpyxl read-only, values only) and
write the same output cells and charts with xlsxwriter in constant-memory mode (which refuses tables, so the floor
writes an autofilter instead), computing nothing. Inputs: 1k, 10k and 100k subgroups of 5 (300k with --large).
Every measurement is its own child process; its CPU time (user + system) and peak resident memory come from the
child's resource usage (os.wait4). Tool and floor run twice, alternating, and each one's best CPU time counts; the
ratio tool / floor is of CPU time, which a busy machine disturbs less than wall time (both are shown).
`evaluate --formulas` (live statistics and limits) is timed at the largest size too, against the same floor.
Also: start-up (`sheettool --version`), the demo workbook's wall time, and a scheme design's time. Children run
with Python's compiled bytecode written and reused (PYTHONDONTWRITEBYTECODE removed, one warm-up run), as an
installed sheettool runs; the load average is printed before and after, since other work on the machine slows
every figure.

    PYTHONPATH=. python benchmarks/bench_evaluate.py [--large] [SUBGROUPS ...]
"""

from __future__ import annotations

import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xlsxwriter

SIZE = 5
SIZES = (1_000, 10_000, 100_000)
LARGE = 300_000
DEMO = Path(__file__).resolve().parents[1] / "sheettool" / "demo" / "demo-measurements.xlsx"
DESIGN = ["design", "--arl-in-control", "370.4", "--shift", "0.5", "--ats-hours", "4", "--intervals", "0.5,1"]


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


def evaluate(source: Path, out: Path, formulas: bool = False) -> None:
    """The real thing: read, evaluate, write (values, or live formulas)."""
    from sheettool.app.api import evaluate_file
    from sheettool.workbook.writer import WriterOptions

    evaluate_file(source, out, writer=WriterOptions(formulas=formulas))


def evaluate_formulas(source: Path, out: Path) -> None:
    """`evaluate --formulas`: statistics and limits written as live formulas."""
    evaluate(source, out, formulas=True)


def reader_name() -> str:
    """The floor's reader: python-calamine when it can be imported, else openpyxl read-only."""
    try:
        import python_calamine  # noqa: F401
    except ImportError:
        return "openpyxl read-only"
    return "python-calamine"


def read_rows(source: Path) -> list[list[object]]:
    """The first sheet's cell values, row by row, with the floor's reader."""
    if reader_name() == "python-calamine":
        from python_calamine import CalamineWorkbook

        return CalamineWorkbook.from_path(str(source)).get_sheet_by_index(0).to_python()
    import openpyxl

    book = openpyxl.load_workbook(source, read_only=True, data_only=True)
    rows = [list(r) for r in book.worksheets[0].iter_rows(values_only=True)]
    book.close()
    return rows


def floor(source: Path, out: Path) -> None:
    """Read the same cells and write the same number of output cells and the same charts, computing nothing."""
    data = read_rows(source)[1:]
    m = len(data)
    book = xlsxwriter.Workbook(str(out), {"constant_memory": True})
    reading, statistic, limit = (book.add_format({"num_format": f}) for f in ("0.000", "0.0000", "0.00000"))
    evaluation = book.add_worksheet("Bore diameter chart")
    tab = book.add_worksheet("Bore diameter data")
    lines = book.add_worksheet("chart-lines")
    tab.write_row(2, 0, [f"h{c}" for c in range(19)])
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
    tab.autofilter(2, 0, m + 2, 18)
    for r in (1, 2):
        lines.write_row(r, 0, [0.5 if r == 1 else m + 0.5] * 8)
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


def child(argv: list[str]) -> tuple[float, float, float]:
    """Run one child process; return (wall seconds, CPU seconds, peak resident MiB) from its resource usage."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    start = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - start
    if status != 0:
        raise SystemExit(f"{' '.join(argv)} failed with status {status}")
    return wall, usage.ru_utime + usage.ru_stime, usage.ru_maxrss / 1024.0  # ru_maxrss is in KiB on Linux


def phase(name: str, source: Path, out: Path) -> tuple[float, float, float]:
    """One phase of this script (evaluate or floor) in its own process."""
    return child([sys.executable, __file__, "--phase", name, str(source), str(out)])


def sheettool(*argv: str) -> tuple[float, float, float]:
    """The command line in its own process, best of two (start-up included)."""
    return min(child([sys.executable, "-m", "sheettool", *argv]) for _ in range(2))


def by_size(folder: Path, subgroups: int, tool: str = "evaluate") -> str:
    """One row of the size table: tool and floor CPU and wall time, peak memory and the ratio."""
    source = folder / f"in-{subgroups}.xlsx"
    if not source.exists():
        make_input(source, subgroups)
    runs: dict[str, list[tuple[float, float, float]]] = {tool: [], "floor": []}
    for _ in range(2):
        for name, times in runs.items():
            times.append(phase(name, source, folder / f"{name}.xlsx"))
    best, base = (min(times, key=lambda run: run[1]) for times in runs.values())
    label = f"{subgroups:,}" + (", --formulas" if tool == "evaluate_formulas" else "")
    return (f"| {label} | {best[1]:.2f} s ({best[0]:.2f} s wall), {best[2]:.0f} MiB "
            f"| {base[1]:.2f} s ({base[0]:.2f} s wall), {base[2]:.0f} MiB | {best[1] / base[1]:.1f} |")


def main() -> None:
    """Print the machine, then the size table and the start-up, demo and design figures."""
    if len(sys.argv) > 1 and sys.argv[1] == "--phase":
        {"evaluate": evaluate, "evaluate_formulas": evaluate_formulas, "floor": floor}[sys.argv[2]](
            Path(sys.argv[3]), Path(sys.argv[4]))
        return
    args = sys.argv[1:]
    sizes = [int(a) for a in args if a.isdigit()] or [*SIZES, *([LARGE] if "--large" in args else [])]
    print(f"machine: {platform.processor() or platform.machine()}, {os.cpu_count()} cores, "
          f"Python {platform.python_version()}, load average {os.getloadavg()[0]:.1f}; floor reader: {reader_name()}")
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        print("| subgroups of 5 | sheettool evaluate, CPU | floor, CPU | ratio |\n|---|---|---|---|")
        for subgroups in sizes:
            print(by_size(folder, subgroups), flush=True)
        print(by_size(folder, max(sizes), "evaluate_formulas"), flush=True)
        sheettool("--version")  # the warm-up: compiled bytecode written
        wall, cpu, peak = sheettool("--version")
        print(f"start-up, sheettool --version: {wall:.2f} s wall, {cpu:.2f} s CPU")
        wall, cpu, peak = sheettool("evaluate", str(DEMO), "-o", str(folder / "demo.xlsx"), "--quiet")
        print(f"demo workbook (3 sheets), sheettool evaluate: {wall:.2f} s wall, {cpu:.2f} s CPU, {peak:.0f} MiB")
        wall, cpu, peak = sheettool(*DESIGN)
        print(f"sheettool {' '.join(DESIGN)}: {wall:.2f} s wall, {cpu:.2f} s CPU, {peak:.0f} MiB")
    print(f"load average at the end: {os.getloadavg()[0]:.1f}")


if __name__ == "__main__":
    main()
