"""The reader's limits (reader/limits.py): every hostile or oversized input is refused with one line naming
the limit and the part, exit 3, before anything large is allocated; declared sizes are never trusted.
The limits are the format's maxima (1,048,576 rows by 16,384 columns: the Office Open XML spreadsheet
specification, ECMA-376 Part 1, 18.3.1, recalled from memory) and the reader's own budgets; tests that
would need large files shrink a budget by monkeypatch instead and keep the files a few KB."""

from __future__ import annotations

import os
import signal
import zipfile
from pathlib import Path

import pytest

from sheettool.base.errors import InputError
from sheettool.workbook.reader import fast_grid, limits, raw_sheet, read_workbook
from sheettool.workbook.reader.opening import _why, open_sheets
from tests.fuzz.packages import (
    MAIN,
    SHEET,
    STRINGS,
    data_rows,
    good_parts,
    sheet_xml,
    strings_xml,
    write_package,
)


def refusal(path: Path) -> str:
    """The message of the InputError that reading `path` raises."""
    with pytest.raises(InputError) as caught:
        read_workbook(path)
    message = str(caught.value)
    assert "\n" not in message and message.startswith(str(path))
    return message


def with_sheet(tmp_path: Path, rows: str, before: str = "", name: str = "book.xlsx") -> Path:
    parts = good_parts()
    parts[SHEET] = sheet_xml(rows, before)
    return write_package(tmp_path / name, parts)


@pytest.fixture(params=["fast", "public"])
def way(request, monkeypatch) -> str:
    """Both ways of reading a sheet are bounded alike (public: forced as in test_reader_grids)."""
    if request.param == "public":
        monkeypatch.setattr(fast_grid, "WorkSheetParser", None)
    return request.param


def test_sound_package_reads(tmp_path):
    read = read_workbook(write_package(tmp_path / "good.xlsx", good_parts()))
    assert read.sheets[0].characteristic.data.values.shape == (25, 4)


@pytest.mark.parametrize("row", [1_048_577, 5_000_000, 50_000_000])
def test_row_past_the_format_is_refused(tmp_path, way, row):
    path = with_sheet(tmp_path, data_rows() + f'<row r="{row}"><c r="A{row}"><v>1</v></c></row>')
    message = refusal(path)
    assert f"row {row:,}" in message and "1,048,576" in message and "'Data'" in message


@pytest.mark.slow
def test_last_row_of_the_format_is_read(tmp_path):
    # A cell in row 1,048,576 is within the format: read, not refused (an empty grid of a million rows).
    path = with_sheet(tmp_path, data_rows() + '<row r="1048576"><c r="A1048576" t="s"><v>0</v></c></row>')
    assert len(open_sheets(path).sheets[0].rows) == 1_048_576


def test_column_range_is_cut_at_the_last_column(tmp_path, way):
    before = '<cols><col min="1" max="2000000000" hidden="1" width="3"/></cols>'
    sheet = open_sheets(with_sheet(tmp_path, data_rows(), before)).sheets[0]
    assert max(sheet.hidden_columns) == 16_384 and len(sheet.hidden_columns) == 16_384


def test_row_past_the_last_column_is_refused(tmp_path, way):
    path = with_sheet(tmp_path, data_rows() + '<row r="30">' + "<c><v>1</v></c>" * 17_000 + "</row>")
    message = refusal(path)
    assert "row 30" in message and "XFD" in message


def test_grid_of_too_many_cells_is_refused(tmp_path):
    # A stray cell in the last column, 2,000 rows down: a dense grid of 32.8 million cells.
    path = with_sheet(tmp_path, data_rows() + '<row r="2000"><c r="XFD2000"><v>1</v></c></row>')
    message = refusal(path)
    assert "2,000 rows by 16,384 columns" in message and "20,000,000" in message


def test_compression_ratio_is_refused_from_the_directory(tmp_path):
    parts = good_parts()
    parts[SHEET] = sheet_xml(data_rows() + " " * (8 << 20))  # 8 MB of blanks deflate about 1000 to 1
    message = refusal(write_package(tmp_path / "bomb.xlsx", parts))
    assert SHEET in message and "to 1" in message and "200" in message


def test_part_size_is_refused_from_the_directory(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_PART_BYTES", 4_000)
    message = refusal(with_sheet(tmp_path, data_rows(60)))
    assert SHEET in message and "4,000 bytes" in message


def test_total_size_is_refused(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_TOTAL_BYTES", 5_000)
    assert "unpacks to more than the limit of 5,000 bytes" in refusal(with_sheet(tmp_path, data_rows(60)))


@pytest.mark.parametrize("prefix", ["", "x:"])
def test_shared_strings_are_counted_before_loading(tmp_path, monkeypatch, prefix):
    monkeypatch.setattr(limits, "MAX_SHARED_STRINGS", 1_000)
    monkeypatch.setattr(limits, "_CHUNK", 64)  # tags cut between pieces are still counted once
    parts = good_parts()
    items = "".join(f"<{prefix}si><{prefix}t>lot {i}</{prefix}t></{prefix}si>" for i in range(1_001))
    xmlns = f'xmlns:x="{MAIN}"' if prefix else f'xmlns="{MAIN}"'
    parts[STRINGS] = f"<{prefix}sst {xmlns}>{items}</{prefix}sst>".encode()
    message = refusal(write_package(tmp_path / "strings.xlsx", parts))
    assert STRINGS in message and "1,000 strings" in message


def test_shared_strings_at_the_limit_pass(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_SHARED_STRINGS", 1_000)
    parts = good_parts()
    parts[STRINGS] = strings_xml(["Subgroup", "R1", "R2", "R3", "R4", *(f"lot {i}" for i in range(995))])
    assert read_workbook(write_package(tmp_path / "strings.xlsx", parts)).sheets


def test_long_run_without_a_tag_is_refused(tmp_path, way, monkeypatch):
    monkeypatch.setattr(limits, "MAX_TEXT_RUN", 100_000)
    monkeypatch.setattr(limits, "_CHUNK", 16_384)  # runs are counted across pieces (a piece is under the limit)
    message = refusal(with_sheet(tmp_path, data_rows() + " " * 300_000))  # under the 1 MB ratio floor
    assert "without a tag" in message and SHEET in message


def test_row_of_too_many_elements_is_refused(tmp_path, way, monkeypatch):
    monkeypatch.setattr(limits, "MAX_ROW_ELEMENTS", 1_000)
    monkeypatch.setattr(limits, "_CHUNK", 4_096)
    message = refusal(with_sheet(tmp_path, data_rows() + '<row r="30">' + "<c><v>1</v></c>" * 600 + "</row>"))
    assert "elements in one row" in message


def test_rows_of_many_elements_in_one_piece_pass(tmp_path, monkeypatch):
    # Many short rows in one piece hold more elements than one row may: each row is counted on its own.
    monkeypatch.setattr(limits, "MAX_ROW_ELEMENTS", 40)
    assert read_workbook(with_sheet(tmp_path, data_rows(200))).sheets


def test_elements_after_the_rows_are_bounded(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_TAIL_ELEMENTS", 100)
    merges = "".join(f'<mergeCell ref="H{r}:H{r + 1}"/>' for r in range(2, 300, 2))
    path = write_package(tmp_path / "merges.xlsx", {**good_parts(), SHEET: sheet_xml(data_rows())[:-12]
                                                    + f"<mergeCells>{merges}</mergeCells></worksheet>".encode()})
    assert "after its rows" in refusal(path)


def test_workbook_cell_budget(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_CELLS", 100)  # the sheet holds 5 + 25 x 5 = 130 cells
    assert "past the limit of 100 cells" in refusal(with_sheet(tmp_path, data_rows()))


def test_workbook_element_budget(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_ELEMENTS", 100)
    assert "100 XML elements" in refusal(with_sheet(tmp_path, data_rows()))


def test_part_loaded_whole_is_bounded_but_a_sheet_is_not(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "MAX_LOADED_BYTES", 3_000)
    parts = good_parts(60)  # its sheet is larger than 3,000 bytes and streamed: read
    assert read_workbook(write_package(tmp_path / "sheet.xlsx", parts)).sheets
    parts["xl/styles.xml"] = b'<styleSheet xmlns="' + MAIN.encode() + b'">' + b" " * 4_000 + b"</styleSheet>"
    message = refusal(write_package(tmp_path / "styles.xlsx", parts))
    assert "xl/styles.xml" in message and "not a sheet" in message


def test_grid_limit_counts_rows_before_padding(monkeypatch, tmp_path):
    monkeypatch.setattr(raw_sheet, "MAX_GRID", 1_000)
    collector = raw_sheet.RowCollector(tmp_path / "x.xlsx", "S", limits.CellBudget(tmp_path / "x.xlsx"))
    collector.add(1, [1.0, 2.0])
    with pytest.raises(InputError, match="501 rows by 2 columns"):
        collector.add(501, [1.0])  # refused before 499 empty rows are made
    assert len(collector.rows) == 1


def _alarm(*_: object) -> None:
    raise TimeoutError("opening waited")


@pytest.mark.parametrize("kind", ["fifo", "device"])
def test_only_regular_files_are_opened_without_waiting(tmp_path, kind):
    if kind == "fifo":
        path = tmp_path / "pipe.xlsx"
        os.mkfifo(path)  # no writer: a plain open would wait for ever
    else:
        path = Path("/dev/null")
    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.alarm(10)
    try:
        with pytest.raises(InputError, match=r"named pipe|device") as caught:
            open_sheets(path)
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)
    assert "only regular files are read" in str(caught.value)


def test_fifo_on_the_command_line_exits_3_at_once(tmp_path, run_cli):
    os.mkfifo(tmp_path / "pipe.xlsx")
    result = run_cli("evaluate", tmp_path / "pipe.xlsx", "-o", tmp_path / "out.xlsx")
    assert result.code == 3 and "named pipe" in result.err and not (tmp_path / "out.xlsx").exists()


def test_missing_part_is_named_in_words(tmp_path):
    parts = good_parts()
    del parts["xl/workbook.xml"]
    message = refusal(write_package(tmp_path / "broken.xlsx", parts))
    assert "Error)" not in message and "missing" in message


@pytest.mark.parametrize("exc", [KeyError("There is no item named 'xl/styles.xml' in the archive"),
                                 ValueError("Unable to read workbook"), TypeError("expected str"),
                                 IndexError("list index out of range"), AttributeError("no attribute"),
                                 zipfile.BadZipFile("Bad CRC-32"), RecursionError("too deep")])
def test_reasons_are_words_not_exception_names(exc):
    wrapped = ValueError("Unable to read workbook")
    wrapped.__cause__ = exc
    reason = _why(wrapped)
    assert type(exc).__name__ not in reason and "Error" not in reason and reason


@pytest.mark.parametrize("cell", ['<c r="B5"><v>NaN</v></c>', '<c r="B5" t="s"><v>99</v></c>'])
def test_unreadable_cell_is_named_by_its_sheet(tmp_path, way, cell):
    rows = data_rows().replace('<c r="B5">', cell + '<c r="Z5">', 1)  # a number cell "NaN"; a missing shared text
    message = refusal(with_sheet(tmp_path, rows))
    assert "sheet 'Data' holds a cell that cannot be read" in message and "Error" not in message
