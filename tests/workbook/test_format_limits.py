"""The evaluated workbook stays within the .xlsx format's limits, and says so where it splits, limits or cuts.

The format's maxima (Office Open XML as the spreadsheet applications take it, common practice): 1,048,576 rows,
16,384 columns, 32,767 characters in a cell, 255 series in a chart. The splitting logic is exercised with smaller
limits injected into format_limits, so the files stay small; the cell-text limit is tested at its real size.
"""

from __future__ import annotations

import re
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from sheettool.app.api import evaluate_file
from sheettool.workbook import style
from sheettool.workbook.writer import WriterOptions, format_limits
from sheettool.workbook.writer.book_writer import BookWriter

REFERENCE = re.compile(r"<c:f>(?:'((?:[^']|'')+)'|([^!<']+))!\$([A-Z]+)\$(\d+)(?::\$([A-Z]+)\$(\d+))?</c:f>")


def _individuals_csv(path: Path, values: np.ndarray) -> Path:
    path.write_text("Point,Diameter\n" + "".join(f"{i + 1},{v:.3f}\n" for i, v in enumerate(values)))
    return path


def _column_number(letters: str) -> int:
    n = 0
    for ch in letters:
        n = n * 26 + ord(ch) - 64
    return n


def _chart_references(path: Path) -> list[tuple[str, int, int]]:
    """(sheet, last column number, last row number) of every range a chart of the workbook refers to."""
    found = []
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if name.startswith("xl/charts/chart"):
                for m in REFERENCE.finditer(z.read(name).decode("utf-8")):
                    sheet = (m.group(1) or "").replace("''", "'") or m.group(2)
                    found.append((sheet, _column_number(m.group(5) or m.group(3)), int(m.group(6) or m.group(4))))
    return found


def _chart_titles(path: Path) -> list[str]:
    with zipfile.ZipFile(path) as z:
        return [re.findall(r"<a:t>([^<]*)</a:t>", z.read(n).decode("utf-8"))[0]
                for n in sorted(z.namelist()) if n.startswith("xl/charts/chart")]


def _audit_text(book: openpyxl.Workbook) -> str:
    return "\n".join(str(v) for row in book["Method and audit"].iter_rows(values_only=True) for v in row if v)


def test_data_continues_on_a_second_tab_and_charts_draw_their_last_points(tmp_path, monkeypatch):
    monkeypatch.setattr(format_limits, "ROWS", 1000)  # a sheet of 1,000 rows stands in for 1,048,576
    values = np.round(np.random.default_rng(19).normal(10.0, 0.1, 1500), 3)
    out = tmp_path / "out.xlsx"
    report = evaluate_file(_individuals_csv(tmp_path / "bore.csv", values), out, writer=WriterOptions(formulas=True))
    book = openpyxl.load_workbook(out)
    assert [n for n in book.sheetnames if n.startswith("bore data")] == ["bore data", "bore data 2"]
    # no tab holds a row past the limit
    assert all(book[n].max_row <= 1000 for n in book.sheetnames)
    # every reading is kept, in order, over the two tabs, with its point number (head in row 3, data below)
    rows = [r for n in ("bore data", "bore data 2") for r in book[n].iter_rows(min_row=4, values_only=True)]
    assert [r[0] for r in rows] == list(range(1, 1501))
    assert np.allclose([r[2] for r in rows], values, atol=5e-4)  # the copied Diameter column
    assert len(rows) - book["bore data 2"].max_row + 3 == 1000 - 3  # the first tab is full: 997 subgroups
    # every chart refers within the rows and to tabs that exist
    refs = _chart_references(out)
    assert refs and all(sheet in book.sheetnames and row <= 1000 for sheet, _, row in refs)
    most = 1000 - 1  # one chart-lines row a point below a header row
    titles = _chart_titles(out)
    # individuals and moving range, on the one-page summary and on the chart tab
    assert sum(f"(last {most} of 1,500 subgroups)" in t for t in titles) == 4
    said = [p.message for p in report.problems]
    assert any("continues on 'bore data 2'" in m and "every reading is kept" in m and "values, not formulas" in m
               for m in said)
    assert not [c for n in ("bore data", "bore data 2", "bore chart") for row in book[n].iter_rows() for c in row
                if c.data_type == "f"]  # no formula averages over the first tab alone
    assert sum(f"draws the last {most} of 1,500 subgroups" in m for m in said) == 2
    audit = _audit_text(book)
    assert "continues on 'bore data 2'" in audit and f"draws the last {most}" in audit


def test_many_characteristics_split_the_performance_chart_and_wrap_columns(tmp_path, monkeypatch):
    monkeypatch.setattr(format_limits, "CHART_SERIES", 2)  # stands in for 255
    monkeypatch.setattr(format_limits, "COLUMNS", 16)  # stands in for 16,384: four blocks of the performance tab
    path = tmp_path / "many.xlsx"
    rng = np.random.default_rng(7)
    writing = openpyxl.Workbook()
    writing.remove(writing.active)
    for k in range(5):
        ws = writing.create_sheet(f"Dim {k + 1}")
        ws.append(["Point", "Value"])
        for i, v in enumerate(np.round(rng.normal(5.0, 0.01, 25), 3)):
            ws.append([i + 1, float(v)])
    writing.save(path)
    out = tmp_path / "many-out.xlsx"
    report = evaluate_file(path, out)
    book = openpyxl.load_workbook(out)
    assert all(book[n].max_column <= 16 for n in book.sheetnames)
    refs = _chart_references(out)
    assert refs and all(sheet in book.sheetnames and col <= 16 for sheet, col, _ in refs)
    assert "chart-lines 2" in book.sheetnames  # ten control charts' lines pass 16 columns
    titles = [t for t in _chart_titles(out) if t.startswith("Average run length")]
    assert [t.rsplit("(", 1)[1] for t in titles] == ["characteristics 1 to 2 of 5)", "characteristics 3 to 4 of 5)",
                                                     "characteristics 5 to 5 of 5)"]
    with zipfile.ZipFile(out) as z:
        series = [len(re.findall(r"<c:ser>", x)) for x in (z.read(n).decode() for n in z.namelist()
                                                            if n.startswith("xl/charts/chart")) if "Average run" in x]
    assert series == [2, 2, 1]
    perf = book["Scheme performance"]
    links = [c.value for row in perf.iter_rows() for c in row if c.hyperlink is not None]
    assert links == [f"Dim {k + 1}" for k in range(5)]  # four blocks side by side, then a band below
    assert [c.row for row in perf.iter_rows() for c in row if c.hyperlink is not None][3:] == [
        next(c.row for c in perf["A"] if c.value == "Dim 1"), next(c.row for c in perf["A"] if c.value == "Dim 5")]
    assert "split into 3 charts" in " ".join(p.message for p in report.problems)


def test_long_note_is_cut_with_a_visible_mark_and_a_warning(tmp_path):
    note = "x" * 40_000  # past the real 32,767 characters of a cell
    path = tmp_path / "notes.csv"
    lines = [f"{i + 1},{10 + 0.01 * (i % 7):.3f},{note if i == 4 else ''}" for i in range(25)]
    path.write_text("Point,Diameter,Note\n" + "\n".join(lines) + "\n")
    out = tmp_path / "notes-out.xlsx"
    report = evaluate_file(path, out)
    data = openpyxl.load_workbook(out)["notes data"]
    cut = [c for row in data.iter_rows() for c in row if isinstance(c.value, str) and c.value.startswith("xxx")]
    assert len(cut) == 1 and cut[0].row == 4 + 4  # the fifth subgroup, below the head in row 3
    assert len(cut[0].value) == 32_767 and cut[0].value.endswith(format_limits.CUT_MARK)
    warned = [p for p in report.problems if "40,000 characters" in p.message]
    assert len(warned) == 1 and warned[0].sheet == "notes data" and warned[0].cell == cut[0].coordinate
    assert warned[0].file == "notes-out.xlsx" and "40,000 characters" in _audit_text(openpyxl.load_workbook(out))


def test_a_library_warning_becomes_a_note_not_a_terminal_line(tmp_path, monkeypatch, capfd):
    looks = style.series_look

    def odd_marker(kind: str, m: int, varies: bool = False) -> dict:
        look = looks(kind, m, varies)
        return {**look, "marker": {"type": "pentagram"}} if kind == "signal" else look  # xlsxwriter warns of it

    monkeypatch.setattr(style, "series_look", odd_marker)
    values = np.round(np.random.default_rng(3).normal(10.0, 0.1, 30), 3)
    values[12] = 11.0  # a point far beyond the limits: the chart gets a signal series
    out = tmp_path / "warned.xlsx"
    report = evaluate_file(_individuals_csv(tmp_path / "warned.csv", values), out)
    assert capfd.readouterr().err == ""
    notes = [p for p in report.problems if "a library warned" in p.message]
    assert len(notes) == 1 and "pentagram" in notes[0].message and notes[0].severity == "note"
    assert "pentagram" in _audit_text(openpyxl.load_workbook(out))


def test_no_row_is_taller_than_the_format_allows(tmp_path):
    out = BookWriter(str(tmp_path / "tall.xlsx"))
    tab = out.add_tab("tall")
    tab.fit("word " * 20_000, 20)  # a thousand wrapped lines
    out.close()
    height = openpyxl.load_workbook(tmp_path / "tall.xlsx")["tall"].row_dimensions[1].height
    assert 408 <= height <= 409  # the format's tallest row is 409 points (common practice), whole pixels


@pytest.mark.parametrize(("count", "room", "expected"), [
    (0, 5, [(0, 0)]), (5, 5, [(0, 5)]), (6, 5, [(0, 5), (5, 6)]), (11, 5, [(0, 5), (5, 10), (10, 11)])])
def test_spans_cover_every_item_once(count, room, expected):
    assert format_limits.spans(count, room) == expected


def test_cut_text_never_halves_a_character(monkeypatch):
    monkeypatch.setattr(format_limits, "CELL_TEXT", len(format_limits.CUT_MARK) + 5)
    cut = format_limits.cut_text("ab\U0001d11ecdefgh")  # a musical symbol counts two UTF-16 units
    assert cut == "ab\U0001d11ec" + format_limits.CUT_MARK
    assert format_limits.utf16_len(cut) <= format_limits.CELL_TEXT


@pytest.mark.slow
def test_real_limits_on_a_600k_subgroup_p_chart_and_a_million_individuals(tmp_path):
    # the cases at the real limits, without writing the million-row file: the plan and the chart's lines
    from sheettool.workbook.writer.charts import control_chart
    from sheettool.workbook.writer.data_tab import data_tab_count, plan_data_tab, rows_per_tab
    from tests.writer_cases import attribute_case

    assert format_limits.ROWS == 1_048_576 and format_limits.CHART_SERIES == 255  # the format's own (common practice)
    assert data_tab_count(1_048_575) == 2  # 1,048,573 subgroups below a tab's three head rows, 2 on the next
    assert format_limits.spans(1_048_575, rows_per_tab()) == [(0, 1_048_573), (1_048_573, 1_048_575)]
    result, read = attribute_case(m=600_000)  # lot sizes vary: limits vary per point
    out = BookWriter(str(tmp_path / "unwritten.xlsx"))
    layout = plan_data_tab(result, read, "Seal leaks data", "Seal leaks chart")
    chart = control_chart(out, layout, next(iter(layout.stats.values())), False, "p: Seal leaks", "", [])
    assert max(len(values) for _, values in out.lines.columns) <= 1_048_576 - 1  # below the header row
    last_rows = [int(ref.rsplit("$", 1)[1]) for s in chart.series for ref in (s["values"], s["categories"])]
    assert max(last_rows) <= 1_048_576
    # one chart-lines row a point: all 600,000 are drawn, straight from the data tab's p column
    assert chart.series[-1]["values"] == "'Seal leaks data'!$F$4:$F$600003"
    assert not any("draws the last" in p.message for p in out.found())
