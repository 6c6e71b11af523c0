"""Cell values under hostile files: a number is finite or it is a problem naming its cell, never a reading."""

from __future__ import annotations

import math
import zipfile
from pathlib import Path

import numpy as np
import openpyxl

from sheettool.workbook.reader import read_workbook
from sheettool.workbook.reader.cell_grid import cell_grid
from sheettool.workbook.reader.cells import NUMBER, TEXT
from sheettool.workbook.reader.csv_sheet import separator
from tests.workbooks import readings, simple


def test_values_that_are_not_finite_numbers_give_no_number_to_the_grid():
    grid = cell_grid([["a", "b", "c", "d", "e", "f"], [math.inf, math.nan, "1e999", "inf", "#NUM!", "1e300"]])
    assert np.isnan(grid.numbers[1, :5]).all() and grid.numbers[1, 5] == 1e300
    assert list(grid.kinds[1]) == [NUMBER, NUMBER, NUMBER, TEXT, TEXT, NUMBER]  # typed as numbers: still a data row


def test_infinite_cells_are_named_and_not_read(run_cli, tmp_path):
    path = tmp_path / "hostile.xlsx"
    values = readings(20, 3)
    simple(path, values)
    book = openpyxl.load_workbook(path)
    ws = book.active
    ws["B4"], ws["C5"], ws["D6"], ws["B7"] = 777001, "1e999", 777002, "#NUM!"  # stored 1e999, text, stored -1E999
    book.save(path)
    _stored(path, {b"<v>777001</v>": b"<v>1e999</v>", b"<v>777002</v>": b"<v>-1E999</v>"})  # as a writer may store them
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["read"]["not_numbers"] == ["'Bore'!B4", "'Bore'!C5", "'Bore'!D6", "'Bore'!B7"]
    assert char["read"]["readings"] == 56
    assert any("'Bore'!C5" in p["message"] and "treated as missing" in p["message"] for p in result.json["problems"])
    # the center line is the mean of the 56 finite readings (independent computation)
    kept = values.copy()
    for r, c in ((2, 0), (3, 1), (4, 2), (5, 0)):  # B4, C5, D6, B7: sheet rows 4..7 are subgroups 3..6
        kept[r, c] = np.nan
    sheet = read_workbook(path).sheets[0]
    assert np.isfinite(sheet.characteristic.data.values[~np.isnan(sheet.characteristic.data.values)]).all()
    assert abs(np.nanmean(sheet.characteristic.data.values) - np.nanmean(kept)) < 1e-12


def _stored(path: Path, changes: dict[bytes, bytes]) -> None:
    """Rewrite the first sheet's XML with `changes`: numbers no spreadsheet program would let a user type."""
    with zipfile.ZipFile(path) as package:
        parts = {info.filename: package.read(info.filename) for info in package.infolist()}
    for old, new in changes.items():
        assert old in parts["xl/worksheets/sheet1.xml"]
        parts["xl/worksheets/sheet1.xml"] = parts["xl/worksheets/sheet1.xml"].replace(old, new)
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as package:
        for name, data in parts.items():
            package.writestr(name, data)


def test_a_csv_field_that_overflows_is_named(run_cli, tmp_path):
    path = tmp_path / "line.csv"
    values = readings(30, 1, seed=8)[:, 0]
    fields = [f"{v:.3f}" for v in values]
    fields[4] = "1e999"
    path.write_text("Reading\n" + "\n".join(fields) + "\n")
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["read"]["not_numbers"] == ["'line'!A6"]
    assert char["read"]["readings"] == 29


def _csv_rows(n: int = 30) -> list[float]:
    return [float(v) for v in readings(n, 1, seed=8)[:, 0]]


def test_a_semicolon_in_a_note_does_not_decide_the_separator(run_cli, tmp_path):
    values = _csv_rows()
    notes = ["ok", "probe; reset", "", "gauge 2; checked; fine"] * 8
    path = tmp_path / "notes.csv"
    path.write_text("Reading,Note\n" + "\n".join(f"{v:.3f},{n}" for v, n in zip(values, notes, strict=False)) + "\n")
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["read"]["readings"] == 30 and char["read"]["columns"]["A"].startswith("measurement")
    # the center line is the mean of the 30 readings written (independent computation)
    assert abs(char["limits"]["individual"]["center"] - sum(round(v, 3) for v in values) / 30) < 1e-9


def test_quoted_fields_with_separators_quotes_and_line_breaks(run_cli, tmp_path):
    values = _csv_rows()
    lines = [f'{v:.3f},"note {i}, with ""quotes"" and\r\na second line"' if i % 3 == 0 else f"{v:.3f},"
             for i, v in enumerate(values)]
    path = tmp_path / "quoted.csv"
    path.write_bytes(("Reading,Note\r\n" + "\r\n".join(lines) + "\r\n").encode("utf-8"))
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["read"]["readings"] == 30 and char["read"]["not_numbers"] == []


def test_decimal_commas_with_semicolons_still_read(run_cli, tmp_path):
    values = _csv_rows()
    path = tmp_path / "decimal.csv"
    path.write_text("Messwert;Bemerkung\n" + "\n".join(f"{v:.3f}".replace(".", ",") + ";" for v in values) + "\n")
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    assert result.json["characteristics"][0]["read"]["readings"] == 30


def test_csv_errors_in_words_naming_file_and_line(run_cli, tmp_path):
    cases = {"unclosed": ('Reading,Note\n1.0,ok\n2.0,"open\n3.0,x\n', "line 3: a quoted field opens here and its "
                          "closing quote never comes (the rest of the file, 2 lines, would be one field)"),
             "after": ('Reading,Note\n1.0,"12,5" mm\n2.0,x\n', "line 2: text follows the closing quote")}
    for name, (text, words) in cases.items():
        path = tmp_path / f"{name}.csv"
        path.write_text(text)
        result = run_cli("evaluate", path)
        assert result.code == 3 and result.err.startswith(f"sheettool: {path}: {words}"), result.err
        assert len(result.err.splitlines()) == 1 and "Error" not in result.err


def test_separators_found():
    # common practice: a comma CSV may carry ";" in notes; an export with decimal commas separates with ";"
    assert separator("Date,Reading,Note\n2026-01-01,12.1,ok; fine\n2026-01-02,12.2,probe; reset; again\n") == ","
    assert separator("Wert;Note\n12,1;a\n12,25;b,c\n13;x\n") == ";"
    assert separator("Subgroup size;4\nReading\n12,5\n12,75\n") == ";"  # commas only between digits: decimals
    assert separator("a\tb\n1,5\t2\n") == "\t"
    assert separator("Reading\n1\n2\n") == ","
    assert separator('a,b,"x;\ny;",c\n1,2,"q""r;",4\n5,6,7,8\n') == ","  # inside quotes: not counted
