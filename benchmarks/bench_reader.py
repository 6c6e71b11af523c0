"""Reader speed and memory on a 100,000-subgroup x 5 workbook, beside the floor of the same run.

Floor: openpyxl read-only, values-only iteration over the same cells into a numpy array, the
least any openpyxl-based reader must do. Each measurement runs in a fresh subprocess (best of
REPEAT wall times of the reading, imports excluded; peak resident memory of that process, imports
included: the reader's own imports bring numpy, scipy and the evaluation code). The reader parses with the garbage
collector paused (its grid holds no cycles), so the floor is also shown that way for a fair
comparison ("floor-gc-off"); the target is against the plain floor. python-calamine is measured too when
it can be imported (it is not a dependency). Run: PYTHONPATH=. python benchmarks/bench_reader.py
Targets: reader within 1.2x of the floor's time, and under 400 MB peak.
"""

from __future__ import annotations

import datetime as dt
import json
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np
import xlsxwriter

SUBGROUPS, SIZE, REPEAT, SEED = 100_000, 5, 5, 20261202

CHILD = r"""
import json, resource, sys, time
import numpy as np
which, path = sys.argv[1], sys.argv[2]
if which.startswith("floor"):
    import openpyxl
elif which == "calamine":
    from python_calamine import CalamineWorkbook
else:
    from sheettool.workbook.reader import read_workbook
if which == "floor-gc-off":
    import gc
    gc.disable()
started = time.perf_counter()  # imports done: the time is the reading alone
if which.startswith("floor"):
    book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    ws = book.worksheets[0]
    values = np.array([row[2:7] for row in ws.iter_rows(min_row=2, values_only=True)], dtype=float)
    book.close()
elif which == "calamine":
    rows = CalamineWorkbook.from_path(path).get_sheet_by_index(0).to_python()
    values = np.array([row[2:7] for row in rows[1:]], dtype=float)
else:
    values = read_workbook(path).sheets[0].characteristic.data.values
seconds = time.perf_counter() - started
peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
print(json.dumps({"seconds": seconds, "peak_mb": peak_mb, "shape": list(values.shape),
                  "sum": float(np.nansum(values))}))
"""


def make_workbook(path: Path) -> None:
    """Sample number, date and time, five readings per row (fixed seed)."""
    rng = np.random.default_rng(SEED)
    values = np.round(rng.normal(12.0, 0.01, (SUBGROUPS, SIZE)), 3)
    book = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    ws = book.add_worksheet("Bore")
    when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    ws.write_row(0, 0, ["Sample", "Date and time", *[f"Part {j + 1}" for j in range(SIZE)]])
    start = dt.datetime(2020, 1, 1)
    for i in range(SUBGROUPS):
        ws.write_number(i + 1, 0, i + 1)
        ws.write_datetime(i + 1, 1, start + dt.timedelta(minutes=15 * i), when)
        for j in range(SIZE):
            ws.write_number(i + 1, 2 + j, values[i, j])
    book.close()


def measure(kinds: tuple[str, ...], path: Path) -> dict[str, dict]:
    """Per kind: best time and largest peak over REPEAT fresh processes, the kinds taking turns so
    that a busy machine slows them alike."""
    runs: dict[str, list[dict]] = {which: [] for which in kinds}
    errors: dict[str, str] = {}
    for _ in range(REPEAT):
        for which in kinds:
            if which in errors:
                continue
            done = subprocess.run([sys.executable, "-c", CHILD, which, str(path)], capture_output=True, text=True,
                                  check=False)
            if done.returncode != 0:
                errors[which] = done.stderr.strip().splitlines()[-1]
            else:
                runs[which].append(json.loads(done.stdout))
    out: dict[str, dict] = {which: {"error": error} for which, error in errors.items()}
    for which, got in runs.items():
        if got:
            out[which] = {"seconds": min(r["seconds"] for r in got), "peak_mb": max(r["peak_mb"] for r in got),
                          "shape": got[0]["shape"], "sum": got[0]["sum"]}
    return out


def main() -> None:
    """Generate the workbook, measure floor, reader (and calamine if present), print the figures."""
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "bench.xlsx"
        make_workbook(path)
        print(f"workbook: {SUBGROUPS} subgroups x {SIZE} readings, {path.stat().st_size / 2**20:.1f} MB")
        results = measure(("floor", "floor-gc-off", "reader", "calamine"), path)
    floor = results["floor"]
    for which, r in results.items():
        if "error" in r:
            print(f"{which:12s} not measured: {r['error']}")
            continue
        print(f"{which:12s} {r['seconds']:7.2f} s  {r['seconds'] / floor['seconds']:5.2f}x floor  "
              f"peak {r['peak_mb']:6.0f} MB  shape {tuple(r['shape'])}  sum {r['sum']:.3f}")
    reader = results["reader"]
    if "error" not in reader:
        ratio = reader["seconds"] / floor["seconds"]
        print(f"targets: time within 1.2x of the floor: {'met' if ratio <= 1.2 else 'NOT met'} ({ratio:.2f}x); "
              f"peak under 400 MB: {'met' if reader['peak_mb'] < 400 else 'NOT met'} ({reader['peak_mb']:.0f} MB)")


if __name__ == "__main__":
    main()
