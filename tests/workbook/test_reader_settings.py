"""Setting labels and values: matching, conversion, priority and messages that name the source."""

import pytest

from sheettool.evaluation.options import options_for
from sheettool.settings import Setting, setting_name
from sheettool.settings.convert import convert
from sheettool.workbook.reader.labels import SettingsSheet, read_settings_sheet
from tests.workbooks import SheetSettings


@pytest.mark.parametrize(("label", "name"), [
    ("LSL", "lsl"), ("L.S.L.", "lsl"), ("Lower spec limit", "lsl"), ("USL (mm)", "usl"), ("Nominal", "target"),
    ("Sample size", "subgroup_size"), ("Subgroup size", "subgroup_size"), ("Sampling interval (h)", "interval_hours"),
    ("Interval", "interval_hours"), ("Part no.", "part"), ("Hours per month", "hours_per_month"),
    ("Limits from", "base_period"), ("Base period", "base_period"), ("Bore diameter", None), ("Operator", None),
])
def test_label_matching_ignores_case_and_punctuation(label, name):
    assert setting_name(label) == name


@pytest.mark.parametrize(("name", "raw", "value"), [
    ("usl", "12,05", 12.05), ("usl", "12.05 mm", 12.05), ("interval_hours", "30 min", 0.5),
    ("interval_minutes", 90, 1.5), ("interval_hours", 2, 2.0), ("confidence", "95 %", 0.95),
    ("revise", "Yes", True), ("new_limits", " no ", False), ("chart", "X-bar R", "xbar-r"), ("subgroup_size", 5.0, 5),
    ("part", 4471.0, "4471"),
])
def test_values_are_converted(name, raw, value):
    assert convert(Setting(name, raw, "here")).value == value


@pytest.mark.parametrize(("name", "raw", "words"), [
    ("usl", "twelve", "upper specification limit must be a number"), ("chart", "pie", "unknown chart 'pie'"),
    ("subgroup_size", 2.5, "whole number"), ("interval_hours", "2 days", "hours (h) or minutes (min)"),
    ("rules", "9/3>2", "rules '9/3>2'"), ("revise", "maybe", "yes or no"), ("new_limits", "later", "yes or no"),
    ("arl_in_control", "many", "must be a number"), ("arl_in_control", 0.5, "in-control ARL"),
    ("shift", -1, "the shift must be"), ("ats_hours", "2 days", "hours (h) or minutes (min)"),
    ("arl_at_shift", 0.5, "ARL at the shift"),
])
def test_bad_values_name_their_origin(name, raw, words):
    with pytest.raises(ValueError, match=r"^'Bore'!B4: ") as caught:
        convert(Setting(name, raw, "'Bore'!B4"))
    assert words in str(caught.value)


def test_priority_settings_sheet_then_section_then_cells_then_options():
    rows = [["name", "value"], ["USL", 12.1], ["LSL", 11.9], ["Nominal", 12.0], ["sheet: bore"], ["USL", 12.08],
            ["LSL", 11.92]]
    book, problems = read_settings_sheet(rows, "settings sheet")
    assert not problems
    cells = {"lsl": Setting("lsl", 11.95, "'Bore'!B3")}
    cli = {"target": Setting("target", "12.001", "option --target")}
    options, used = options_for(SheetSettings(cells), book, cli)
    assert (options.usl, used["usl"].origin) == (12.08, "settings sheet row 6")
    assert (options.lsl, used["lsl"].origin) == (11.95, "'Bore'!B3")
    assert (options.target, used["target"].origin) == (12.001, "option --target")
    assert used["rules"] == Setting("rules", "beyond-limits", "default")


def test_lsl_above_usl_names_both_cells():
    cells = {"lsl": Setting("lsl", 12.1, "'Bore'!B3"), "usl": Setting("usl", 12.0, "'Bore'!B4")}
    with pytest.raises(ValueError, match="'Bore'!B3 and 'Bore'!B4"):
        options_for(SheetSettings(cells), SettingsSheet(), {})


def test_inline_label_with_an_invalid_value_is_no_setting():
    from sheettool.workbook.reader.labels import labelled_settings

    rows = [["Target: monthly review"], ["USL = 12,05"], ["LSL", "11.95"]]
    found, _ = labelled_settings("Bore", rows, 3)
    assert "target" not in found
    assert (found["usl"].value, found["usl"].origin) == ("12,05", "'Bore'!A2")
    assert found["lsl"].origin == "'Bore'!B3"


def test_observed_statistics_above_the_header_are_no_settings():
    from sheettool.workbook.reader.labels import labelled_settings

    rows = [["Mean", 12.003, "Sigma", 0.01], ["Standard mean", 12.0], ["Min", 11.97, "Max", 12.04]]
    found, _ = labelled_settings("Bore", rows, 3)
    assert set(found) == {"mean"} and found["mean"].origin == "'Bore'!B2"


def test_the_earlier_label_of_the_base_period_still_reads_with_a_note():
    from sheettool.workbook.reader.labels import labelled_settings

    rows = [["Limits from", "first 20"], ["Rules: zones"]]
    found, notes = labelled_settings("Bore", rows, 2)
    assert (found["base_period"].value, found["base_period"].origin) == ("first 20", "'Bore'!B1")
    assert [(n.severity, n.cell) for n in notes] == [("note", "A1")]
    assert "write 'Base period' instead" in notes[0].message
    sheet, problems = read_settings_sheet([["Limits from", "first 25"], ["Base period", "all"]], "settings")
    assert sheet.common["base_period"].value == "all"
    assert [(p.severity, p.cell) for p in problems] == [("note", "row 1")]


@pytest.mark.parametrize(("earlier", "now"), [("detect_hours", "ats_hours"), ("detect_arl", "arl_at_shift"),
                                              ("shift_units", "shift_in_units"), ("limits_from", "base_period")])
def test_earlier_setting_names_still_read(earlier, now):
    from sheettool.settings import earlier_label_note

    assert setting_name(earlier) == now and "earlier name" in earlier_label_note(earlier)
