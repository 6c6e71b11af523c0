"""Dates out of order, repeated or implausible are warned of, naming the file, the sheet and the rows.

Plausible, as sheettool takes it: from 1980-01-01 to a year after the evaluation (the clock when reading).
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import openpyxl

from sheettool.workbook.reader import read_workbook
from tests.workbooks import readings

START = dt.datetime(2026, 11, 2, 6, 0)


def _dated(path: Path, dates: list[dt.datetime]) -> Path:
    """Subgroups across of four readings, one dated row each below a header in row 1."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Bore"
    ws.append(["Date", "X1", "X2", "X3", "X4"])
    for when, sub in zip(dates, readings(len(dates), 4), strict=True):
        ws.append([when, *map(float, sub)])
    book.save(path)
    return path


def _date_problems(path: Path) -> list:
    return [p for p in read_workbook(path).problems if "dated" in p.message]


def test_clean_dates_pass_without_a_word(tmp_path, demo_copy):
    dates = [START + dt.timedelta(hours=2 * i) for i in range(25)]
    assert _date_problems(_dated(tmp_path / "clean.xlsx", dates)) == []
    assert _date_problems(demo_copy) == []  # the demo's dates are in order, one a subgroup


def test_out_of_order_repeated_and_absurd_dates_name_their_rows(tmp_path):
    dates = [START + dt.timedelta(hours=2 * i) for i in range(25)]
    dates[5], dates[6] = dates[6], dates[5]  # sheet rows 7 and 8: row 8 is dated before row 7
    dates[10] = dates[9]  # row 12 repeats row 11
    dates[15] = dt.datetime(1900, 3, 1)  # row 17: before 1980
    dates[20] = dt.datetime(9999, 1, 1)  # row 22: far in the future
    found = _date_problems(_dated(tmp_path / "messy.xlsx", dates))
    assert [(p.severity, p.file, p.sheet, p.cell) for p in found] == [
        ("warning", "messy.xlsx", "Bore", "rows 17, 22"),
        ("warning", "messy.xlsx", "Bore", "row 8"),
        ("warning", "messy.xlsx", "Bore", "row 12")]
    assert "before 1980-01-01 or more than a year in the future" in found[0].message
    assert "out of order" in found[1].message and "dated the same" in found[2].message
    # the absurd dates are left out of the order: the rows after them are not called out of order
    assert "row 18" not in " ".join(p.cell for p in found) and "row 23" not in " ".join(p.cell for p in found)


def test_a_year_ahead_is_the_edge(tmp_path):
    now = dt.datetime.now()
    near = [now + dt.timedelta(days=300, hours=i) for i in range(24)]
    assert _date_problems(_dated(tmp_path / "near.xlsx", near)) == []
    far = [*near[:-1], now + dt.timedelta(days=400)]  # row 25: more than a year after the evaluation
    assert [p.cell for p in _date_problems(_dated(tmp_path / "far.xlsx", far))] == ["row 25"]


def test_the_warning_reaches_the_workbook_and_the_json(tmp_path, run_cli):
    dates = [START + dt.timedelta(hours=2 * i) for i in range(25)]
    dates[3] = START - dt.timedelta(days=3)  # row 5 dated before row 4
    path = _dated(tmp_path / "order.xlsx", dates)
    out = tmp_path / "order-out.xlsx"
    run = run_cli("evaluate", path, "-o", out, "--json")
    assert run.code == 0
    problems = {(p["where"], p["severity"]) for p in run.json["problems"] if "out of order" in p["message"]}
    assert problems == {("order.xlsx, sheet 'Bore', row 5", "warning")}
    audit = "\n".join(str(v) for row in openpyxl.load_workbook(out)["Method and audit"].iter_rows(values_only=True)
                      for v in row if v)
    assert "order.xlsx, sheet 'Bore', row 5: 1 subgroup(s) dated before the subgroup above them" in audit
    assert "drawn by point number, not by date" in audit  # what the out-of-order dates cost the charts
    data = openpyxl.load_workbook(out)["Bore data"]
    head = [c.value for c in data[3]]
    assert head[:3] == ["Point", "Date", "X1"]  # no date column of the charts' own before the copied input
