"""The reader on workbooks as people keep them: layouts, cell contents and what is reported.

The expected values are the ones each test wrote into its generated workbook (fixed seeds).
"""

import datetime as dt
import zipfile

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from sheettool.workbook.reader import read_workbook
from tests.conftest import sha256
from tests.workbooks import formulas, messy_across, readings, simple


def test_messy_subgroups_across(tmp_path):
    values = readings(12, 5)
    path = tmp_path / "messy.xlsx"
    facts = messy_across(path, values)
    before = sha256(path)
    (sheet,) = read_workbook(path).sheets
    assert sha256(path) == before
    assert sheet.layout == "subgroups across"
    assert sheet.header_row == facts["header_row"] and sheet.units_row == facts["header_row"] + 1
    assert sheet.first_row == facts["rows"][0] and sheet.last_row == facts["rows"][-1]
    # Numbers typed as text (decimal comma, padded decimal point) read as the numbers written.
    np.testing.assert_allclose(sheet.characteristic.data.values, values, rtol=0, atol=1e-12)
    assert sheet.blank_rows == 1 and sheet.blanks == 0 and not sheet.not_numbers
    assert sheet.characteristic.unit == "mm"
    # The merged header names each column it spans.
    assert sheet.header[2:7] == [f"Readings {j}" for j in range(1, 6)]
    assert list(sheet.columns)[:8] == list("ABCDEFGH")
    assert sheet.columns["H"].startswith("note") and sheet.columns["A"].startswith("date")
    excluded = np.flatnonzero(sheet.characteristic.excluded)
    assert excluded.tolist() == [6] and "exclude" in sheet.characteristic.notes[6]
    assert sheet.characteristic.notes[7] == "new insert" and not sheet.characteristic.excluded[7]
    assert sheet.hidden_rows == [facts["hidden_row"]] and sheet.hidden_columns == ["G"]
    assert sheet.characteristic.dates[1] == dt.datetime(2026, 3, 2, 9, 0)
    # Labelled cells above the header: right, below, and "label: value" in one cell.
    s = sheet.settings
    assert (s["lsl"].value, s["lsl"].origin) == (24.95, "'Shaft Ø'!B3")
    assert (s["usl"].value, s["usl"].origin) == (25.05, "'Shaft Ø'!E3")
    assert s["target"].origin == "'Shaft Ø'!A5" and s["part"].value == "SH-17"
    assert (s["interval_minutes"].value, s["interval_minutes"].origin) == ("30", "'Shaft Ø'!D4")


def test_readings_down_with_varying_sizes(tmp_path):
    path = tmp_path / "down.xlsx"
    sizes = [4, 4, 3, 4, 5, 4, 2, 4]
    rng = np.random.default_rng(7)
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Lot", "Length (mm)", "Comment"])
    expected = []
    for lot, n in enumerate(sizes, start=101):
        group = np.round(rng.normal(80.0, 0.05, n), 3)
        expected.append(group)
        for v in group:
            ws.append([f"L{lot}", float(v), None])
    book.save(path)
    (sheet,) = read_workbook(path).sheets
    assert sheet.layout == "readings down"
    data = sheet.characteristic.data
    assert data.sizes.tolist() == sizes and data.values.shape == (8, 5)
    for got, want in zip(data.values, expected, strict=True):
        np.testing.assert_allclose(got[:len(want)], want, atol=1e-12)
    assert sheet.characteristic.labels[0] == "L101" and sheet.characteristic.unit == "mm"
    assert sheet.short_subgroups == 7 and sheet.readings == sum(sizes)
    assert len(sheet.rows) == len(sizes) and sheet.header[0] == "Lot"


def test_readings_down_by_subgroup_size_setting(tmp_path):
    path = tmp_path / "column.csv"
    values = readings(6, 4).ravel()
    path.write_text("Subgroup size;4\nReading\n" + "\n".join(f"{v:.3f}".replace(".", ",") for v in values) + "\n")
    (sheet,) = read_workbook(path).sheets
    assert sheet.layout == "readings down" and sheet.characteristic.data.values.shape == (6, 4)
    np.testing.assert_allclose(sheet.characteristic.data.values.ravel(), values, atol=1e-12)
    assert sheet.settings["subgroup_size"].origin == "'column'!B1"


def test_individuals(tmp_path):
    path = tmp_path / "ind.xlsx"
    values = readings(25, 1).ravel()
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Batch", "Viscosity"])
    for i, v in enumerate(values):
        ws.append([f"B{i + 1:03d}", float(v)])
    book.save(path)
    (sheet,) = read_workbook(path).sheets
    assert sheet.layout == "individuals" and sheet.characteristic.data.values.shape == (25, 1)
    assert sheet.characteristic.labels[:2] == ["B001", "B002"]


@pytest.mark.parametrize(("count_head", "inspected_head", "kind"),
                         [("Failed", "Units tested", "defectives"), ("Defects", "Units", "defects")])
def test_attribute_counts(tmp_path, count_head, inspected_head, kind):
    path = tmp_path / "attr.xlsx"
    rng = np.random.default_rng(11)
    inspected = rng.integers(180, 220, 20)
    counts = rng.binomial(inspected, 0.03)
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Shift", inspected_head, count_head])
    for i in range(20):
        ws.append([f"S{i + 1}", int(inspected[i]), int(counts[i])])
    book.save(path)
    (sheet,) = read_workbook(path).sheets
    assert sheet.layout == "attribute counts"
    data = sheet.characteristic.data
    assert data.kind == kind
    assert data.counts.tolist() == counts.tolist() and data.inspected.tolist() == inspected.tolist()


def test_formulas_with_cached_values(tmp_path):
    path = tmp_path / "cached.xlsx"
    values = readings(10, 3)
    formulas(path, values, cached=True)
    (sheet,) = read_workbook(path).sheets
    np.testing.assert_allclose(sheet.characteristic.data.values, values, atol=1e-12)
    assert sheet.formulas_without_value == []


def test_formulas_without_cached_values_are_named(tmp_path):
    path = tmp_path / "uncached.xlsx"
    formulas(path, readings(10, 3), cached=False)
    read = read_workbook(path)
    (sheet,) = read.sheets
    assert sheet.formulas_without_value == ["'Torque'!B3", "'Torque'!C5"]
    assert any("no saved value" in p.message and "'Torque'!B3" in p.message for p in read.problems)
    assert np.isnan(sheet.characteristic.data.values[1, 0]) and sheet.blanks == 2


def test_date_texts_and_time_column(tmp_path):
    path = tmp_path / "dates.xlsx"
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Date", "Time", "A", "B"])
    ws.append(["2026-04-01", "06:30", 1.0, 1.2])
    ws.append(["02.04.2026", dt.time(7, 15), 1.1, 1.3])
    ws.append([dt.datetime(2026, 4, 3), "08:00", 1.0, 1.1])
    book.save(path)
    (sheet,) = read_workbook(path).sheets
    assert sheet.characteristic.dates == [dt.datetime(2026, 4, 1, 6, 30), dt.datetime(2026, 4, 2, 7, 15),
                                          dt.datetime(2026, 4, 3, 8, 0)]


def test_settings_sheet_sections_and_priority(tmp_path, run_cli):
    path = tmp_path / "with settings.xlsx"
    simple(path, readings(20, 4), extra={"Settings": [["name", "value"], ["USL", 25.06], ["lower spec", 24.9],
                                                       ["[Bore]"], ["Nominal", 25.0], ["colour", "blue"]]})
    result = run_cli("evaluate", path, "--json", "--lsl", "24.94")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    s = char["settings"]
    assert s["usl"] == {"value": 25.06, "origin": "settings sheet row 2"}
    assert s["target"] == {"value": 25.0, "origin": "settings sheet row 5"}
    assert s["lsl"] == {"value": 24.94, "origin": "option --lsl"}
    assert s["rules"] == {"value": "beyond-limits", "origin": "default"}
    assert any("colour" in p["message"] and "row 6" in p["where"] for p in result.json["problems"])


def test_bad_setting_in_a_cell_names_the_cell(tmp_path, run_cli):
    path = tmp_path / "bad setting.xlsx"
    book = openpyxl.Workbook()
    good = book.active
    good.title = "Good"
    bad = book.create_sheet("Bad")
    for ws, usl in ((good, 25.1), (bad, "twenty-five")):
        ws.append(["USL", usl])
        ws.append(["Chart", "xbar-r"])
        ws.append([])
        ws.append(["No.", "X1", "X2"])
        for i, (a, b) in enumerate(readings(20, 2), start=1):
            ws.append([i, float(a), float(b)])
    book.save(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    assert [c["sheet"] for c in result.json["characteristics"]] == ["Good"]
    assert any("'Bad'!B1" in p["message"] and "must be a number" in p["message"] for p in result.json["problems"])


def test_unknown_chart_option_is_a_usage_error(run_cli, demo_copy):
    result = run_cli("evaluate", demo_copy, "--chart", "pie")
    assert result.code == 2 and "unknown chart 'pie'" in result.err and "Traceback" not in result.err


def test_verbose_line_and_read_block(run_cli, demo_copy, tmp_path):
    result = run_cli("evaluate", demo_copy, "-o", tmp_path / "o.xlsx", "--json", "--verbose")
    assert result.code == 0
    line = result.err.splitlines()[0]
    assert "sheet 'Bore diameter': subgroups across" in line and "30 subgroups" in line and "150 readings" in line
    char = next(c for c in result.json["characteristics"] if c["sheet"] == "Bore diameter")
    read = char["read"]
    assert read["layout"] == "subgroups across" and read["subgroups"] == 30 and read["readings"] == 150
    assert read["columns"]["C"] == "measurement (Part 1)"
    assert [e["note"] for e in read["excluded"]] == ["gauge dropped - exclude"]
    s = char["settings"]
    # The demo's labelled cells: LSL 11.950, USL 12.050, nominal 12.000, 1 h, 400 h per month.
    assert (s["lsl"]["value"], s["usl"]["value"], s["target"]["value"]) == (11.95, 12.05, 12.0)
    assert s["interval_hours"]["value"] == 1.0 and s["hours_per_month"]["value"] == 400.0
    assert s["usl"]["origin"].startswith("'Bore diameter'!B")


def test_xlsm_read_and_macros_never_copied(tmp_path, run_cli):
    path = tmp_path / "macro book.xlsm"
    vba = tmp_path / "vbaProject.bin"
    vba.write_bytes(b"not really a macro project, never executed")
    book = xlsxwriter.Workbook(str(path))
    book.add_vba_project(str(vba))
    ws = book.add_worksheet("Gap")
    ws.write_row(0, 0, ["Sample", "G1", "G2", "G3"])
    for i, row in enumerate(readings(20, 3), start=1):
        ws.write_row(i, 0, [i, *map(float, row)])
    book.close()
    before = sha256(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    out = tmp_path / "macro book-evaluated.xlsx"
    with zipfile.ZipFile(out) as z:
        assert not any("vba" in n.lower() for n in z.namelist())
    assert sha256(path) == before


def test_csv_with_semicolons_and_decimal_commas(tmp_path, run_cli):
    path = tmp_path / "export.csv"
    values = readings(20, 3)
    lines = ["Sample;M1;M2;M3"] + [";".join([str(i + 1), *(f"{v:.3f}".replace(".", ",") for v in row)])
                                    for i, row in enumerate(values)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    (sheet,) = read_workbook(path).sheets
    np.testing.assert_allclose(sheet.characteristic.data.values, values, atol=1e-12)
    assert run_cli("evaluate", path).code == 0


def test_impossible_counts_are_kept_out_of_the_limits(tmp_path):
    path = tmp_path / "leaks.xlsx"
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Shift", "Units tested", "Leak failures"])
    for i in range(20):
        ws.append([f"S{i + 1}", 50, 60 if i == 4 else i % 3])  # more failures than units: a typing slip
    book.save(path)
    read = read_workbook(path)
    (sheet,) = read.sheets
    assert np.flatnonzero(sheet.characteristic.excluded).tolist() == [4]
    assert any("rows 6" in p.message for p in read.problems)


def test_readings_down_by_numeric_sample_key_through_the_command(tmp_path, run_cli):
    path = tmp_path / "down.xlsx"
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Sample", "Force (N)"])
    values = readings(20, 3, mean=410.0, sd=2.0)
    for i, group in enumerate(values, start=1):
        for v in group[: 2 if i == 7 else 3]:  # sample 7 lost a reading
            ws.append([i, float(v)])
    book.save(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["read"]["layout"] == "readings down" and char["read"]["readings"] == 59
    assert char["read"]["short_subgroups"] == 1 and char["subgroups"] == 20
    data_tab = next(w for w in openpyxl.load_workbook(result.json["output"]).worksheets if w.title.endswith("data"))
    rows = list(data_tab.iter_rows(values_only=True))
    first = rows[next(i for i, r in enumerate(rows) if r[0] == "Point") + 1]
    assert first[0] == 1 and first[1] == "1"  # point number, then the subgroup key


def test_column_headings_typed_as_numbers(tmp_path):
    path = tmp_path / "numbered.xlsx"
    values = readings(20, 5)
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Date", 1, 2, 3, 4, 5])
    for i, row in enumerate(values):
        ws.append([dt.datetime(2026, 5, 1) + dt.timedelta(hours=i), *map(float, row)])
    book.save(path)
    (sheet,) = read_workbook(path).sheets
    assert sheet.header_row == 1 and sheet.header == ["Date", "1", "2", "3", "4", "5"]
    np.testing.assert_allclose(sheet.characteristic.data.values, values, atol=1e-12)


def test_readings_down_keyed_by_merged_lot_cells(tmp_path):
    path = tmp_path / "merged lots.xlsx"
    values = readings(20, 4, mean=3.2, sd=0.05)
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Lot", "Hardness (HRC)"])
    for g, group in enumerate(values):
        top = ws.max_row + 1
        for v in group:
            ws.append([f"K{g + 1}" if ws.max_row + 1 == top else None, float(v)])
        ws.merge_cells(start_row=top, start_column=1, end_row=top + 3, end_column=1)  # lot written once
    book.save(path)
    (sheet,) = read_workbook(path).sheets
    assert sheet.layout == "readings down" and sheet.characteristic.data.values.shape == (20, 4)
    np.testing.assert_allclose(sheet.characteristic.data.values, values, atol=1e-12)
    assert sheet.characteristic.labels[:2] == ["K1", "K2"]
