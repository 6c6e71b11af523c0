"""Test workbooks as technicians keep them, generated with fixed seeds (nothing is shipped)."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import openpyxl
import xlsxwriter

SEED = 4242


def readings(m: int, n: int, seed: int = SEED, mean: float = 25.0, sd: float = 0.02) -> np.ndarray:
    """m subgroups of n readings, rounded to the gauge's 0.001."""
    return np.round(np.random.default_rng(seed).normal(mean, sd, (m, n)), 3)


def messy_across(path: Path, values: np.ndarray) -> dict[str, object]:
    """Subgroups across with everything people do: title and labelled settings above the header,
    merged title and header cells, a units row, blank rows, notes (one says exclude), numbers
    typed as text with a decimal comma or point, a hidden row and a hidden column.

    Returns facts of what was written, for the tests to check against.
    """
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Shaft Ø"
    ws["A1"] = "Shaft diameter check, cell 4"
    ws.merge_cells("A1:H1")
    ws["A2"], ws["B2"] = "Part no.", "SH-17"
    ws["A3"], ws["B3"] = "L.S.L.", 24.95
    ws["D3"], ws["E3"] = "Upper spec:", "25,05"  # label with punctuation, value as text, decimal comma
    ws["A4"] = "Nominal"
    ws["A5"] = 25.0  # value below the label
    ws["D4"] = "Sampling interval (min): 30"  # label and value in one cell
    header_row = 7
    ws.cell(header_row, 1, "Date")
    ws.cell(header_row, 2, "Inspector")
    ws.cell(header_row, 3, "Readings")
    ws.merge_cells(start_row=header_row, start_column=3, end_row=header_row, end_column=7)  # merged header
    ws.cell(header_row, 8, "Remarks")
    for c in range(3, 8):
        ws.cell(header_row + 1, c, "mm")
    row = header_row + 2
    rows_of: list[int] = []
    start = dt.datetime(2026, 3, 2, 7, 0)
    for i, sub in enumerate(values):
        if i == 4:
            row += 1  # a blank row in the data
        ws.cell(row, 1, start + dt.timedelta(hours=2 * i))
        ws.cell(row, 2, ["K. Ito", "R. Diaz"][i % 2])
        for j, v in enumerate(sub):
            cell = ws.cell(row, 3 + j, float(v))
            if i == 2 and j == 1:
                cell.value = f"{v:.3f}".replace(".", ",")  # decimal comma, typed as text
            if i == 3 and j == 0:
                cell.value = f" {v:.3f} "  # decimal point, typed as text with spaces
        if i == 6:
            ws.cell(row, 8, "probe slipped, exclude")
        if i == 7:
            ws.cell(row, 8, "new insert")
        rows_of.append(row)
        row += 1
    ws.row_dimensions[rows_of[5]].hidden = True
    ws.column_dimensions["G"].hidden = True
    book.save(path)
    return {"rows": rows_of, "header_row": header_row, "hidden_row": rows_of[5]}


def formulas(path: Path, values: np.ndarray, cached: bool) -> None:
    """Readings written as formulas (=value), with the cached result stored or not."""
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet("Torque")
    ws.write_row(0, 0, ["Sample", "T1", "T2", "T3"])
    for i, sub in enumerate(values):
        ws.write_number(i + 1, 0, i + 1)
        for j, v in enumerate(sub):
            if cached:
                ws.write_formula(i + 1, j + 1, f"={v}", None, float(v))
            else:
                ws.write_number(i + 1, j + 1, float(v))
    book.close()
    if not cached:  # openpyxl writes formulas without any cached value, as non-calculating programs do
        wb = openpyxl.load_workbook(path)
        wb.active["B3"] = f"={values[1, 0]}"
        wb.active["C5"] = f"={values[3, 1]}"
        wb.save(path)


def simple(path: Path, values: np.ndarray, title: str = "Bore", extra: dict[str, list] | None = None) -> None:
    """A plain sheet of subgroups across, plus optional extra sheets (name -> rows)."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = title
    ws.append(["Subgroup", *[f"X{j + 1}" for j in range(values.shape[1])]])
    for i, sub in enumerate(values):
        ws.append([i + 1, *map(float, sub)])
    for name, rows in (extra or {}).items():
        other = book.create_sheet(name)
        for r in rows:
            other.append(r)
    book.save(path)


class SheetSettings:
    """Stands in for a SheetRead where only the sheet's own labelled settings matter (options_for)."""

    def __init__(self, settings, sheet: str = "Bore") -> None:
        self.settings = settings
        self.sheet = sheet
