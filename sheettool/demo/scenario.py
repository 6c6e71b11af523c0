"""Generate the demo workbook of Brackwater Hydraulics (fictional), a maker of hose fittings.

Line 2 turns fitting HF-220. Each hour a setter measures the bore diameter of five consecutive
parts. After the bar-stock lot change at subgroup 22 the mean moves up by 1.5 process sigmas, so
the demo shows real signals. At subgroup 9 the gauge was dropped: one reading is 0.060 mm off and
the setter noted "gauge dropped - exclude", so the point is plotted but kept out of the limits.
Labelled cells above the header carry the part number, unit, specification, sampling interval
and production hours, as the reader takes them. All data are invented; run `python -m sheettool.demo.scenario OUT`
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
LSL, USL, INTERVAL_H, HOURS_PER_MONTH = 11.950, 12.050, 1, 400
DROPPED_AT, DROP_ERROR = 9, 0.060
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
        if i + 1 == DROPPED_AT:
            readings[2] = round(readings[2] + DROP_ERROR, 3)
            note = "gauge dropped - exclude"
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
    ws.merge_range(0, 0, 0, 7, "Brackwater Hydraulics (fictional) - HF-220 hose fitting, line 2", bold)
    labelled = [("Part number", "HF-220"), ("Characteristic", "bore diameter"), ("Unit", "mm"),
                ("LSL", LSL), ("USL", USL), ("Nominal", NOMINAL), ("Sampling interval (h)", INTERVAL_H),
                ("Hours per month", HOURS_PER_MONTH)]
    for r, (label, value) in enumerate(labelled, start=1):
        ws.write_string(r, 0, label, bold)
        ws.write(r, 1, value)
    top = len(labelled) + 2
    header = ["Date and time", "Operator", "Part 1", "Part 2", "Part 3", "Part 4", "Part 5", "Note"]
    ws.write_row(top, 0, header, bold)
    ws.write_row(top + 1, 2, ["mm"] * SIZE)
    for r, row in enumerate(bore_rows(), start=top + 2):
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
