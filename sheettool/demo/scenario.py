"""Generate the demo workbook of Brackwater Hydraulics (fictional), a maker of hose fittings.

Three sheets, one characteristic each, all data invented with fixed seeds:

- "Bore diameter": line 2 turns fitting HF-220. Each hour a setter measures the bore diameter of
  five consecutive parts. After the bar-stock lot change at subgroup 22 the mean moves up by 1.5
  process sigmas, so the demo shows real signals. At subgroup 9 the gauge was dropped: one reading
  is 0.060 mm off and the setter noted "gauge dropped - exclude", so the point is plotted but kept
  out of the limits. Labelled cells above the header carry the part number, unit, specification,
  sampling interval and production hours, and beside them the requirements on the scheme.
- "Leak test": every shift (8 h) the finished HF-220 fittings are pressure tested; the number
  tested varies with the shift's output (a p chart results). From shift 28 a worn seal-press die
  lifts the leak rate from 1.5% to 5%; the limits come from the first 24 shifts.
- "Crimp force": one hose assembly per lot (every 4 h) is pulled to measure the crimp force
  (kN, one reading: an individuals chart) against its specification. After a die regrind at
  lot 27 the force drops by 2.5 sigma; the limits come from the first 25 lots.

Run `python -m sheettool.demo.scenario OUT` to rebuild the bundled workbook (same seeds, same numbers).
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
# What the bore's monitoring scheme must achieve (labelled cells beside the specification).
BORE_REQUIREMENTS = [("False alarms per month at most", 3), ("Shift to detect (mm)", 0.015),
                     ("ATS at most (hours)", 2)]

LEAK_SEED, LEAK_SHIFTS, LEAK_RISE_AT, LEAK_RATE, LEAK_RISEN = 20261102, 42, 28, 0.015, 0.05
LEAK_TESTED, LEAK_BASE = (160, 240), 24
SHIFT_NAMES = ("early", "late", "night")

CRIMP_SEED, CRIMP_LOTS, CRIMP_DROP_AT = 20261103, 40, 27
CRIMP_NOMINAL, CRIMP_SIGMA, CRIMP_DROP, CRIMP_LSL, CRIMP_USL, CRIMP_INTERVAL_H, CRIMP_BASE = \
    43.0, 0.5, 2.5, 40.0, 46.0, 4, 25


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
        rows.append([when, ["Operator A", "Operator B"][(i // 8) % 2], *map(float, readings), note])
    return rows


def leak_rows() -> list[list[object]]:
    """Shift rows: shift start, shift name, fittings tested, fittings that failed the leak test, note."""
    rng = np.random.default_rng(LEAK_SEED)
    rows: list[list[object]] = []
    for i in range(LEAK_SHIFTS):
        tested = int(rng.integers(LEAK_TESTED[0], LEAK_TESTED[1] + 1))
        rate = LEAK_RISEN if i + 1 >= LEAK_RISE_AT else LEAK_RATE
        note = "seal press: die change overdue" if i + 1 == LEAK_RISE_AT else ""
        rows.append([START + dt.timedelta(hours=8 * i), SHIFT_NAMES[i % 3], tested,
                     int(rng.binomial(tested, rate)), note])
    return rows


def crimp_rows() -> list[list[object]]:
    """Lot rows: lot number, date and time, crimp force (kN, 2 decimals), note."""
    rng = np.random.default_rng(CRIMP_SEED)
    rows: list[list[object]] = []
    for i in range(CRIMP_LOTS):
        mean = CRIMP_NOMINAL - (CRIMP_DROP * CRIMP_SIGMA if i + 1 >= CRIMP_DROP_AT else 0.0)
        note = "crimp die reground" if i + 1 == CRIMP_DROP_AT else ""
        rows.append([f"L{2611 + i}", START + dt.timedelta(hours=CRIMP_INTERVAL_H * i),
                     float(np.round(rng.normal(mean, CRIMP_SIGMA), 2)), note])
    return rows


def _labels(ws: xlsxwriter.worksheet.Worksheet, bold: xlsxwriter.format.Format, column: int,
            labelled: list[tuple[str, object]]) -> None:
    for r, (label, value) in enumerate(labelled, start=1):
        ws.write_string(r, column, label, bold)
        ws.write(r, column + 1, value)


def write_demo(path: Path) -> None:
    """Write the demo workbook as a technician would keep it."""
    book = xlsxwriter.Workbook(str(path))
    book.set_properties({"title": "HF-220 bore diameter, November", "author": "Brackwater Hydraulics (fictional)",
                         "created": dt.datetime(2026, 12, 1)})
    bold = book.add_format({"bold": True})
    when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    _bore_sheet(book.add_worksheet("Bore diameter"), bold, when)
    _leak_sheet(book.add_worksheet("Leak test"), bold, when)
    _crimp_sheet(book.add_worksheet("Crimp force"), bold, when)
    book.close()


def _bore_sheet(ws: xlsxwriter.worksheet.Worksheet, bold: xlsxwriter.format.Format,
                when: xlsxwriter.format.Format) -> None:
    ws.merge_range(0, 0, 0, 7, "Brackwater Hydraulics (fictional) - HF-220 hose fitting, line 2", bold)
    labelled = [("Part number", "HF-220"), ("Characteristic", "Bore diameter"), ("Unit", "mm"),
                ("LSL", LSL), ("USL", USL), ("Nominal", NOMINAL), ("Sampling interval (h)", INTERVAL_H),
                ("Hours per month", HOURS_PER_MONTH)]
    _labels(ws, bold, 0, labelled)
    _labels(ws, bold, 3, BORE_REQUIREMENTS)
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
    ws.set_column(3, 3, 28)
    ws.set_column(7, 7, 30)


def _leak_sheet(ws: xlsxwriter.worksheet.Worksheet, bold: xlsxwriter.format.Format,
                when: xlsxwriter.format.Format) -> None:
    ws.merge_range(0, 0, 0, 4, "Brackwater Hydraulics (fictional) - HF-220 leak test at 250 bar", bold)
    labelled = [("Part number", "HF-220"), ("Characteristic", "Leak at 250 bar"),
                ("Sampling interval (h)", 8), ("Hours per month", HOURS_PER_MONTH),
                ("Base period", f"first {LEAK_BASE}")]
    _labels(ws, bold, 0, labelled)
    top = len(labelled) + 2
    ws.write_row(top, 0, ["Shift start", "Shift", "Fittings tested", "Failed leak test", "Note"], bold)
    for r, row in enumerate(leak_rows(), start=top + 1):
        ws.write_datetime(r, 0, row[0], when)
        ws.write_string(r, 1, row[1])
        ws.write_number(r, 2, row[2])
        ws.write_number(r, 3, row[3])
        if row[4]:
            ws.write_string(r, 4, row[4])
    ws.set_column(0, 0, 21)
    ws.set_column(2, 3, 16)
    ws.set_column(4, 4, 30)


def _crimp_sheet(ws: xlsxwriter.worksheet.Worksheet, bold: xlsxwriter.format.Format,
                 when: xlsxwriter.format.Format) -> None:
    ws.merge_range(0, 0, 0, 3, "Brackwater Hydraulics (fictional) - HA-220 hose assembly, crimp cell 1", bold)
    labelled = [("Part number", "HA-220"), ("Characteristic", "Crimp force"), ("Unit", "kN"),
                ("LSL", CRIMP_LSL), ("USL", CRIMP_USL), ("Nominal", CRIMP_NOMINAL),
                ("Sampling interval (h)", CRIMP_INTERVAL_H), ("Hours per month", HOURS_PER_MONTH),
                ("Base period", f"first {CRIMP_BASE}")]
    _labels(ws, bold, 0, labelled)
    top = len(labelled) + 2
    ws.write_row(top, 0, ["Lot", "Date and time", "Crimp force", "Note"], bold)
    for r, row in enumerate(crimp_rows(), start=top + 1):
        ws.write_string(r, 0, row[0])
        ws.write_datetime(r, 1, row[1], when)
        ws.write_number(r, 2, row[2])
        if row[3]:
            ws.write_string(r, 3, row[3])
    ws.set_column(0, 0, 21)
    ws.set_column(1, 1, 17)
    ws.set_column(3, 3, 30)


if __name__ == "__main__":
    write_demo(Path(sys.argv[1]) if len(sys.argv) > 1 else BUNDLED)
