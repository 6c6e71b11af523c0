"""Reading fixes met in the monthly routine: a one-cell units row, a counter column, notes that read like a reason
to exclude, labels that name no setting and the Characteristic cell. Expected values are what each test wrote."""

import datetime as dt
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from sheettool.workbook.reader import read_workbook

VALUES = [round(10.0 + 0.01 * ((i * 7) % 11 - 5), 3) for i in range(30)]


def _book(path, rows):
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "Data"
    for row in rows:
        sheet.append(row)
    book.save(path)
    return path


@pytest.mark.parametrize("unit", ["ppm", "rpm", "kgf", "dB"])
def test_a_one_cell_units_row_under_a_table_is_no_header(tmp_path, unit):
    rows = [["Date", "Operator", "Torque", "Note"], [None, None, unit, None]]
    rows += [[dt.datetime(2026, 3, 1) + dt.timedelta(hours=i), "AB", v, None] for i, v in enumerate(VALUES)]
    (sheet,) = read_workbook(_book(tmp_path / "u.xlsx", rows)).sheets
    assert (sheet.header_row, sheet.units_row, sheet.characteristic.unit) == (1, 2, unit)
    assert sheet.subgroups == 30


@pytest.mark.parametrize("header", ["Reading", "Bottle", "Value no"])
def test_a_column_counting_samples_is_a_key_and_the_sheet_individuals(tmp_path, header):
    rows = [[header, "Fill volume"]] + [[i + 101, v] for i, v in enumerate(VALUES)]
    (sheet,) = read_workbook(_book(tmp_path / "c.xlsx", rows)).sheets
    assert sheet.layout == "individuals" and sheet.characteristic.data.values.shape == (30, 1)
    assert sheet.characteristic.labels[:2] == ["101", "102"]
    np.testing.assert_allclose(sheet.characteristic.data.values[:, 0], VALUES)


def test_notes_labels_and_the_characteristic_cell(tmp_path):
    rows = [["Part", "HF-220", "Gauge", "G-114"], ["Characteristic", "bore diameter"], [],
            ["Date", "Value", "Note"]]
    rows += [[dt.datetime(2026, 3, 1) + dt.timedelta(hours=i), v,
              {5: "gauge dropped", 8: "gauge dropped - exclude"}.get(i)] for i, v in enumerate(VALUES)]
    read = read_workbook(_book(tmp_path / "n.xlsx", rows))
    (sheet,) = read.sheets
    assert sheet.settings["characteristic"].value == "bore diameter" and sheet.settings["part"].value == "HF-220"
    messages = [p.message for p in sheet.problems]
    hint = next(m for m in messages if "reads like a reason" in m)
    assert "'gauge dropped'" in hint and "1 subgroup(s)" in hint  # the one with the exclusion word is kept out
    assert sheet.characteristic.excluded.tolist().count(True) == 1
    assert any("label 'Gauge'" in m and "G-114" in m for m in messages)
    assert not any("label 'Part'" in m or "HF-220" in m.split("value")[0] for m in messages if "label" in m)


def test_a_template_with_only_its_worked_example_says_so(run_cli, tmp_path):
    template = tmp_path / "individuals.xlsx"
    shutil.copyfile(Path(__file__).parents[2] / "templates" / "individuals.xlsx", template)
    result = run_cli("evaluate", template, "--json")
    assert result.code == 3 and "only the template's worked example (row 15) holds data" in result.err
