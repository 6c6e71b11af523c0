"""The two ways of reading an .xlsx give the same grid: openpyxl's private sheet parser (fast_grid) and
its public read-only interface with a scan of the sheet XML (public_grid), forced here by monkeypatch.

The reference is the fast path, which the rest of the suite checks against the workbooks' written
contents; the fallback must match it cell for cell, with the same hidden rows and columns, merged
ranges and formulas without a saved value.
"""

import datetime as dt
import io
import re
import shutil
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from sheettool.demo.scenario import BUNDLED
from sheettool.workbook.reader import describe, fast_grid, read_workbook, sheet_xml
from sheettool.workbook.reader.opening import open_sheets
from tests.workbooks import formulas, messy_across, readings, simple


def _xlsxwriter_book(path: Path) -> None:
    """Another writer's XML: hidden column ranges, a hidden row, merges, a date column, a gap row."""
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet("Seal width")
    when = book.add_format({"num_format": "yyyy-mm-dd"})
    ws.merge_range("A1:E1", "Seal width, line 2")
    ws.write_row(2, 0, ["Lot", "Date", "W1", "W2", "W3"])
    values = readings(15, 3, seed=11, mean=4.0, sd=0.01)
    for i, sub in enumerate(values):
        row = 3 + i + (i >= 9)  # row 13 left out: a gap in the XML
        ws.write_string(row, 0, f"L{i + 1:02d}")
        ws.write_datetime(row, 1, dt.datetime(2026, 4, 1 + i), when)
        ws.write_row(row, 2, [float(v) for v in sub])
    ws.set_row(6, None, None, {"hidden": True})
    ws.set_column("D:E", None, None, {"hidden": True})
    ws.merge_range("A20:A21", "L99")
    book.add_worksheet("Empty")
    hidden = book.add_worksheet("Old")
    hidden.write_row(0, 0, ["Sample", "X"])
    for i in range(5):
        hidden.write_row(i + 1, 0, [i + 1, 1.0 + i])
    hidden.hide()
    book.close()


def _rewrite(path: Path, target: Path, change) -> None:
    """A copy of the package with each worksheet part passed through `change`."""
    with zipfile.ZipFile(path) as src, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            body = src.read(item)
            dst.writestr(item, change(body) if item.filename.startswith("xl/worksheets/sheet") else body)


def _prefixed(body: bytes) -> bytes:
    """The same sheet with its main namespace bound to the prefix x: on every element."""
    body = re.sub(rb"<(/?)(?![?!])([A-Za-z]+)\b", rb"<\1x:\2", body)
    return body.replace(b'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"',
                        b'xmlns:x="http://schemas.openxmlformats.org/spreadsheetml/2006/main"', 1)


def _wrong_size(body: bytes) -> bytes:
    """The same sheet claiming to be one cell large, as some writers leave it."""
    return re.sub(rb'<dimension ref="[^"]*"', b'<dimension ref="A1"', body)


def _workbooks(folder: Path) -> list[Path]:
    """The bundled demo, the test workbooks of tests/workbooks.py, and variations on their XML."""
    paths = {name: folder / f"{name}.xlsx" for name in
             ("demo", "messy", "cached", "uncached", "simple", "xlsxwriter", "prefixed", "wrong-size")}
    shutil.copyfile(BUNDLED, paths["demo"])
    messy_across(paths["messy"], readings(12, 5))
    formulas(paths["cached"], readings(10, 3), cached=True)
    formulas(paths["uncached"], readings(10, 3), cached=False)
    simple(paths["simple"], readings(8, 4), extra={"settings": [["lsl", 24.9]], "Notes": [["seen"], [None, 2.5]]})
    _xlsxwriter_book(paths["xlsxwriter"])
    _rewrite(paths["messy"], paths["prefixed"], _prefixed)
    _rewrite(paths["uncached"], paths["wrong-size"], _wrong_size)
    return list(paths.values())


@pytest.fixture(scope="module")
def workbooks(tmp_path_factory) -> list[Path]:
    return _workbooks(tmp_path_factory.mktemp("grids"))


def _forced(monkeypatch, how: str) -> None:
    if how == "version":
        monkeypatch.setattr(openpyxl, "__version__", "3.2.0")
    else:
        monkeypatch.setattr(fast_grid, "WorkSheetParser", None)


@pytest.mark.parametrize("how", ["version", "private names"])
def test_fallback_gives_the_same_grid(workbooks, monkeypatch, how):
    fast = {path.name: open_sheets(path) for path in workbooks}
    assert all(not opened.problems for opened in fast.values())
    _forced(monkeypatch, how)
    for path in workbooks:
        public = open_sheets(path)
        assert public.sheets == fast[path.name].sheets, path.name
        (note,) = public.problems
        assert note.severity == "note" and note.file == path.name and "public interface" in note.message
        assert ("3.2.0 is not a version" if how == "version" else "lacks internal parts") in note.message


def test_the_grids_compared_hold_what_the_workbooks_were_written_with(workbooks):
    # Guards the comparison above from comparing empty grids: facts written by the test workbooks.
    opened = {path.stem: open_sheets(path).sheets for path in workbooks}
    messy, prefixed = opened["messy"][0], opened["prefixed"][0]
    assert messy.hidden_rows == {15} and messy.hidden_columns == {7}
    assert sorted(messy.merged) == [(1, 1, 1, 8), (7, 3, 7, 7)]
    assert prefixed == messy  # openpyxl's own parser reads the prefixed XML alike
    assert opened["uncached"][0].uncached == ["B3", "C5"] == opened["wrong-size"][0].uncached
    assert opened["wrong-size"][0].rows == opened["uncached"][0].rows
    seal, empty, old = opened["xlsxwriter"]
    assert seal.hidden_rows == {7} and seal.hidden_columns == {4, 5} and (20, 1, 21, 1) in seal.merged
    assert seal.rows[12] == [] and len(seal.rows) == 20 and seal.rows[-1] == ["L99"]
    assert empty.rows == [] and old.hidden and not seal.hidden


def test_fallback_reads_the_same_characteristics(workbooks, monkeypatch):
    fast = [read_workbook(path) for path in workbooks]
    _forced(monkeypatch, "version")
    for before, path in zip(fast, workbooks, strict=True):
        after = read_workbook(path)
        assert after.problems[1:] == before.problems and "public interface" in after.problems[0].message
        for a, b in zip(before.sheets, after.sheets, strict=True):
            assert describe(a) == describe(b) and a.rows == b.rows and a.problems == b.problems
            np.testing.assert_array_equal(a.characteristic.excluded, b.characteristic.excluded)
            assert a.characteristic.labels == b.characteristic.labels


def test_scan_pieces_never_split_a_formula_cell(monkeypatch):
    # Independent computation: the same pattern over the whole text at once, against pieces of 64 bytes.
    rng = np.random.default_rng(5)
    cells = []
    for r in range(1, 400):
        for c in "ABC":
            formula, typed, space = rng.random() < 0.3, rng.random() < 0.5, " " * int(rng.integers(0, 3))
            cells.append(f'<c r="{c}{r}"' + (' t="n"' if typed else "") + ">" + space
                         + (f"<f>{r}*2</f>" if formula else "") + f"<v>{r}</v></c>")
    xml = ("<worksheet><sheetData>" + "".join(cells) + "</sheetData></worksheet>").encode()
    expected = {m.group(1).decode() for m in sheet_xml.FORMULA_CELL.finditer(xml)}
    assert 300 < len(expected) < 450
    monkeypatch.setattr(sheet_xml, "_PIECE", 64)
    assert sheet_xml.formula_cells(io.BytesIO(xml)) == expected
    assert b"".join(sheet_xml.pieces(io.BytesIO(xml))) == xml
    assert sheet_xml.scan_marks(io.BytesIO(xml)).formulas == expected


def test_scan_reads_row_numbers_it_must_count():
    # Rows without an r attribute follow the row before, as the format allows and openpyxl's parser counts.
    xml = (b'<worksheet><sheetData><row r="2"/><row hidden="1"/><row r="7" hidden="true"/><row/>'
           b"<row hidden='1'/></sheetData><cols><col min='2' max='4' hidden='1'/></cols>"
           b'<mergeCells><mergeCell ref="$A$1:$B$2"/><mergeCell ref="C3"/></mergeCells></worksheet>')
    marks = sheet_xml.scan_marks(io.BytesIO(xml))
    assert marks.hidden_rows == {3, 7, 9} and marks.hidden_columns == {2, 3, 4}
    assert marks.merged == [(1, 1, 2, 2), (3, 3, 3, 3)]


def test_entity_bomb_is_refused_by_the_fallback_too(run_cli, tmp_path, monkeypatch):
    from tests.workbook.test_reader_bad_input import BOMB
    good = tmp_path / "good.xlsx"
    simple(good, readings(20, 4))
    path = tmp_path / "bomb.xlsx"
    _rewrite(good, path, lambda _body: BOMB)
    _forced(monkeypatch, "version")
    result = run_cli("evaluate", path)
    assert result.code == 3 and "entity declarations, refused as unsafe" in result.err, result.err
