"""Generate the demo workbook of Brackwater Hydraulics (fictional), a maker of hose fittings.

Line 2 turns fitting HF-220. Each hour a setter measures the bore diameter of five consecutive
parts. After the bar-stock lot change at subgroup 22 the mean moves up by 1.5 process sigmas, so
the demo shows real signals. All data are invented; run `python -m sheettool.demo.scenario OUT`
to rebuild the bundled workbook (same seed, same numbers).
"""

from __future__ import annotations

import datetime as dt
import sys
from pathlib import Path

import numpy as np
import xlsxwriter

SEED = 20261101
BUNDLED = Path(__file__).with_name("demo-measurements.xlsx")
NOMINAL, SIGMA, SHIFT_AT, SHIFT = 12.000, 0.010, 22, 1.5
SUBGROUPS, SIZE = 30, 5
START = dt.datetime(2026, 11, 2, 6, 0)


def bore_rows() -> list[list[object]]:
    """Subgroup rows: date and time, operator, five readings (mm, 3 decimals), note."""
    rng = np.random.default_rng(SEED)
    rows: list[list[object]] = []
    for i in range(SUBGROUPS):
        mean = NOMINAL + (SHIFT * SIGMA if i + 1 >= SHIFT_AT else 0.0)
        readings = np.round(rng.normal(mean, SIGMA, SIZE), 3)
        when = START + dt.timedelta(hours=i)
        note = "bar stock lot B-4471 started" if i + 1 == SHIFT_AT else ""
        rows.append([when, ["A. Okafor", "L. Brandt"][(i // 8) % 2], *map(float, readings), note])
    return rows


def write_demo(path: Path) -> None:
    """Write the demo workbook as a technician would keep it."""
    book = xlsxwriter.Workbook(str(path))
    book.set_properties({"title": "HF-220 bore diameter, November", "author": "Brackwater Hydraulics (fictional)",
                         "created": dt.datetime(2026, 12, 1)})
    ws = book.add_worksheet("Bore diameter")
    bold = book.add_format({"bold": True})
    when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    ws.write_string(0, 0, "Brackwater Hydraulics (fictional) - HF-220 hose fitting, line 2", bold)
    header = ["Date and time", "Operator", "Part 1", "Part 2", "Part 3", "Part 4", "Part 5", "Note"]
    ws.write_row(2, 0, header, bold)
    for r, row in enumerate(bore_rows(), start=3):
        ws.write_datetime(r, 0, row[0], when)
        ws.write_string(r, 1, row[1])
        for c, value in enumerate(row[2:7], start=2):
            ws.write_number(r, c, value)
        if row[7]:
            ws.write_string(r, 7, row[7])
    ws.set_column(0, 0, 17)
    ws.set_column(1, 1, 12)
    ws.set_column(7, 7, 30)
    book.close()


if __name__ == "__main__":
    write_demo(Path(sys.argv[1]) if len(sys.argv) > 1 else BUNDLED)
