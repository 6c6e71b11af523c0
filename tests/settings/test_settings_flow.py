"""Settings from labelled cells, the settings sheet and --set reach EvaluationOptions and the fitted chart:
requirements, EWMA and CUSUM parameters, standard values, confidence and revision."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import xlsxwriter
from scipy import stats

from sheettool.core.design import REQUIREMENT_KEYS
from sheettool.core.runlength.ewma import EwmaChart, drawn_limits_arl
from sheettool.core.sigma import sigma_estimator
from sheettool.evaluation.options import options_for
from sheettool.settings import KNOWN_SETTINGS, Setting, setting_name
from sheettool.settings.convert import convert
from sheettool.workbook.reader.labels import SettingsSheet, labelled_settings
from tests.workbooks import SheetSettings


def _book(path: Path, labels: list[tuple[str, object]], header: list[str], rows: list[list[float]],
          settings: list[list[object]] | None = None, sheet: str = "Data", column: int = 3) -> Path:
    """A sheet with labelled cells (in D:E unless `column` says) above its header, optionally a settings sheet."""
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet(sheet)
    for r, (label, value) in enumerate(labels):
        ws.write(r, column, label)
        ws.write(r, column + 1, value)
    top = len(labels) + 1
    ws.write_row(top, 0, header)
    for r, row in enumerate(rows, start=top + 1):
        ws.write_row(r, 0, row)
    if settings is not None:
        ss = book.add_worksheet("settings")
        for r, row in enumerate(settings):
            ss.write_row(r, 0, row)
    book.close()
    return path


def _subgroups(m: int = 30, n: int = 5, seed: int = 11, mean: float = 10.0, sd: float = 1.0) -> list[list[float]]:
    values = np.round(np.random.default_rng(seed).normal(mean, sd, (m, n)), 3)
    return [[i + 1, *map(float, row)] for i, row in enumerate(values)]


def _individuals(m: int = 40, seed: int = 12) -> list[list[float]]:
    values = np.round(np.random.default_rng(seed).normal(50.0, 2.0, m), 2)
    return [[i + 1, float(v)] for i, v in enumerate(values)]


def _one(run_cli, path: Path, tmp_path: Path, *options: str) -> dict:
    result = run_cli("evaluate", path, "-o", tmp_path / "out.xlsx", "--json", *options)
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    return char


@pytest.mark.parametrize(("label", "name"), [
    ("Required in-control ARL", "arl_in_control"), ("In-control ARL at least", "arl_in_control"),
    ("False alarms per month at most", "false_alarms_per_month"),
    ("Allowed false alarms per month", "false_alarms_per_month"), ("Shift to detect (sigma)", "shift"),
    ("Shift that matters", "shift"), ("Shift to detect (units)", "shift_in_units"),
    ("Shift to detect (mm)", "shift_in_units"), ("Required ARL at shift", "arl_at_shift"),
    ("Detect within points", "arl_at_shift"), ("Detect within hours", "ats_hours"),
    ("ATS at most (hours)", "ats_hours"),
    ("Time to detect (h)", "ats_hours"), ("Time to detect (min)", "ats_minutes"),
])
def test_requirement_labels(label, name):
    assert setting_name(label) == name


def test_every_requirement_is_a_known_setting():
    assert set(REQUIREMENT_KEYS) <= set(KNOWN_SETTINGS)


def test_a_work_shift_above_the_header_is_no_requirement():
    rows = [["Shift", "B", "Shift: 2", "Mean: 12.003"], ["Shift to detect (sigma)", 1.5]]
    found, _ = labelled_settings("Line", rows, 2)
    assert set(found) == {"shift"} and found["shift"].origin == "'Line'!B2"


def test_text_labels_above_a_numeric_table_in_the_same_columns_leave_the_header_in_place(run_cli, tmp_path):
    path = _book(tmp_path / "ab.xlsx", [("Part number", "HA-220"), ("Chart", "ewma"), ("EWMA lambda", 0.25)],
                 ["Lot", "Force"], _individuals(), column=0)
    char = _one(run_cli, path, tmp_path)
    assert char["read"]["header_row"] == 5 and char["subgroups"] == 40
    assert char["chart"] == "ewma" and char["settings"]["lambda"]["origin"] == "'Data'!B3"


@pytest.mark.parametrize(("name", "raw", "value"), [
    ("ats_hours", "90 min", 1.5), ("ats_minutes", 30, 0.5), ("arl_in_control", "500", 500.0),
    ("false_alarms_per_month", "0,5", 0.5), ("shift_in_units", "0.015 mm", 0.015)])
def test_requirement_values_are_converted(name, raw, value):
    converted = convert(Setting(name, raw, "here"))
    assert converted.value == pytest.approx(value, rel=1e-12)


def test_the_shift_in_units_replaces_the_shift_in_sigmas_of_a_lower_layer():
    book = SettingsSheet(common={"shift": Setting("shift", 1.0, "settings sheet row 2")})
    cells = {"shift_in_units": Setting("shift_in_units", 0.02, "'Line'!B3")}
    options, used = options_for(SheetSettings(cells, "Line"), book, {})
    assert options.requirements == {"shift_in_units": 0.02} and "shift" not in used
    both = {**cells, "shift": Setting("shift", 1.0, "'Line'!B4")}
    with pytest.raises(ValueError, match=r"'Line'!B[34] and 'Line'!B[34]: give the shift to detect") as caught:
        options_for(SheetSettings(both, "Line"), book, {})
    assert "not both" in str(caught.value)


def test_requirements_flow_from_cells_settings_sheet_and_set(run_cli, tmp_path):
    path = _book(tmp_path / "req.xlsx",
                 [("Required in-control ARL", 300), ("Shift to detect (sigma)", 1), ("Detect within points", 50),
                  ("Sampling interval (h)", 2)],
                 ["Lot", "Force"], _individuals(),
                 settings=[["name", "value"], ["[Data]"], ["time to detect (h)", 100]])
    char = _one(run_cli, path, tmp_path)
    origins = {k: v["origin"] for k, v in char["settings"].items()}
    assert origins["arl_in_control"] == "'Data'!E1" and origins["ats_hours"] == "settings sheet row 3"
    items = {i["name"]: i for i in char["requirements"]["items"]}
    # individuals chart, 3-sigma limits: in-control ARL 370.4; at a 1-sigma shift 1/(Phi(-2) + Phi(-4)) = 43.9
    # (common practice; scipy.stats)
    at_one = 1.0 / (stats.norm.cdf(-2.0) + stats.norm.cdf(-4.0))
    assert items["arl_in_control"]["achieved"] == pytest.approx(370.4, rel=1e-3) and items["arl_in_control"]["met"]
    assert items["arl_at_shift"]["achieved"] == pytest.approx(at_one, rel=1e-3) and items["arl_at_shift"]["met"]
    assert items["ats_hours"]["achieved"] == pytest.approx(2 * at_one, rel=1e-3) and items["ats_hours"]["met"]
    # --set wins over the cell: 40 points is faster than the chart catches a 1-sigma shift
    char = _one(run_cli, path, tmp_path, "--set", "arl_at_shift=40")
    items = {i["name"]: i for i in char["requirements"]["items"]}
    assert char["settings"]["arl_at_shift"]["origin"] == "option --set arl_at_shift"
    assert items["arl_at_shift"]["met"] is False and char["requirements"]["met"] is False


def test_bad_requirement_in_a_cell_is_reported_with_the_cell(run_cli, tmp_path):
    path = _book(tmp_path / "bad.xlsx", [("Required in-control ARL", "lots")], ["Lot", "Force"], _individuals())
    result = run_cli("evaluate", path, "--json")
    assert result.code == 3 and "'Data'!E1: required in-control ARL" in result.err and "Traceback" not in result.err


def test_ewma_parameters_flow_from_labelled_cells_and_set(run_cli, tmp_path):
    path = _book(tmp_path / "ewma.xlsx", [("Chart", "ewma"), ("EWMA lambda", 0.25), ("EWMA L", 2.998)],
                 ["Lot", "Force"], _individuals())
    char = _one(run_cli, path, tmp_path)
    perf = {s["shift"]: s["arl"] for s in char["performance"]["shifts"]}
    # Lucas and Saccucci (1990): lambda 0.25, L 2.998 -> ARL 500 in control, 11.1 at 1 sigma (recalled from memory,
    # tests/reference/published-values.md; printed to 3 figures, so 1.5%) for asymptotic limits; evaluate gives
    # the ARL for the limits as drawn (checked by simulation in tests/core/test_numerics.py)
    assert char["chart"] == "ewma"
    chart = EwmaChart(0.25, 2.998)
    assert chart.arl(0.0) == pytest.approx(500, rel=0.015) and chart.arl(1.0) == pytest.approx(11.1, rel=0.015)
    assert char["performance"]["arl_in_control"] == pytest.approx(drawn_limits_arl(chart, 0.0), rel=1e-9)
    assert perf[1.0] == pytest.approx(drawn_limits_arl(chart, 1.0), rel=1e-9)
    # the limits themselves: center +/- L sigma sqrt(lambda/(2-lambda) (1-(1-lambda)^2i)) (Lucas and Saccucci 1990)
    stat = next(iter(char["limits"].values()))
    sigma = (stat["ucl"][-1] - stat["center"]) / (2.998 * np.sqrt(0.25 / 1.75 * (1 - 0.75 ** 80)))
    first = (stat["ucl"][0] - stat["center"]) / (2.998 * 0.25)
    assert first == pytest.approx(sigma, rel=1e-9)
    char = _one(run_cli, path, tmp_path, "--set", "lambda=0.2", "--set", "L=2.962")
    assert char["performance"]["arl_in_control"] == pytest.approx(500, rel=0.015)
    assert char["settings"]["lambda"]["origin"] == "option --set lambda"


def test_cusum_parameters_flow_from_the_settings_sheet(run_cli, tmp_path):
    path = _book(tmp_path / "cusum.xlsx", [], ["Lot", "Force"], _individuals(),
                 settings=[["chart", "cusum"], ["k", 0.5], ["[Data]"], ["h", 4]])
    char = _one(run_cli, path, tmp_path)
    perf = {s["shift"]: s["arl"] for s in char["performance"]["shifts"]}
    # two-sided CUSUM k = 0.5, h = 4: ARL 168 in control, 3.34 at 2 sigma (Hawkins 1993 tables, recalled from
    # memory, tests/reference/published-values.md; 3 figures, so 1.5%)
    assert char["chart"] == "cusum" and char["settings"]["h"]["origin"] == "settings sheet row 4"
    assert char["performance"]["arl_in_control"] == pytest.approx(168, rel=0.015)
    assert perf[2.0] == pytest.approx(3.34, rel=0.015)


def test_standard_mean_and_sigma_from_labelled_cells_set_the_xbar_limits(run_cli, tmp_path):
    path = _book(tmp_path / "std.xlsx", [("Standard mean", 10.2), ("Standard sigma", 0.8)],
                 ["Subgroup", "R1", "R2", "R3", "R4", "R5"], _subgroups())
    char = _one(run_cli, path, tmp_path)
    mean = char["limits"]["mean"]
    # X-bar limits from standard values: mu +/- 3 sigma / sqrt(n) (Montgomery 2009, sec. 6.2)
    assert mean["center"] == pytest.approx(10.2, rel=1e-12)
    assert mean["ucl"] == pytest.approx(10.2 + 3 * 0.8 / np.sqrt(5), rel=1e-12)
    assert "standard" in char["limits_source"]


def test_p0_from_the_settings_sheet_and_c0_from_set(run_cli, tmp_path):
    rng = np.random.default_rng(5)
    rows = [[i + 1, 200, int(rng.binomial(200, 0.04))] for i in range(30)]
    path = _book(tmp_path / "p.xlsx", [], ["Shift", "Inspected", "Rejects"], rows,
                 settings=[["p0", 0.05]])
    char = _one(run_cli, path, tmp_path, "--chart", "p")
    prop = char["limits"]["proportion"]
    # p chart from a standard p0: p0 +/- 3 sqrt(p0 (1 - p0) / n) (Montgomery 2009, sec. 7.2)
    assert prop["center"] == pytest.approx(0.05, rel=1e-12)
    assert prop["ucl"] == pytest.approx(0.05 + 3 * np.sqrt(0.05 * 0.95 / 200), rel=1e-12)
    rows = [[i + 1, 1, int(rng.poisson(6.0))] for i in range(30)]
    path = _book(tmp_path / "c.xlsx", [], ["Panel", "Units", "Defects"], rows)
    char = _one(run_cli, path, tmp_path, "--set", "c0=5")
    stat = next(iter(char["limits"].values()))
    # c chart from a standard c0: c0 +/- 3 sqrt(c0) (Montgomery 2009, sec. 7.3)
    assert char["chart"] == "c" and stat["center"] == pytest.approx(5.0, rel=1e-12)
    assert stat["ucl"] == pytest.approx(5 + 3 * np.sqrt(5), rel=1e-12)


def test_confidence_from_a_cell_and_revise_from_the_settings_sheet(run_cli, tmp_path):
    rows = _subgroups(m=30)
    rows[6][1:] = [v + 4.0 for v in rows[6][1:]]  # one subgroup far beyond the limits
    path = _book(tmp_path / "cr.xlsx", [("Confidence level", "90 %"), ("LSL", 6.0), ("USL", 14.0)],
                 ["Subgroup", "R1", "R2", "R3", "R4", "R5"], rows, settings=[["revise", "yes"]])
    char = _one(run_cli, path, tmp_path)
    cap = char["capability"]
    assert char["settings"]["confidence"]["value"] == 0.9 and cap["confidence"] == 0.9
    # Cp interval at 90%: Cp a sqrt(chi2_{0.05, nu} / nu) .. Cp a sqrt(chi2_{0.95, nu} / nu) (Kane 1986), nu and a
    # those of R-bar / d2 for 30 subgroups of 5 (Patnaik 1950; coverage simulated in
    # tests/evaluation/test_capability_intervals.py)
    model = sigma_estimator(30, 5, "range")
    nu = model.nu
    low, high = (cap["cp"] * model.scale * np.sqrt(stats.chi2.ppf(q, nu) / nu) for q in (0.05, 0.95))
    assert cap["ci"]["cp"] == pytest.approx([low, high], rel=1e-6)
    assert 7 in [r["subgroup"] if isinstance(r, dict) else r for r in char["removed"]]
    assert char["settings"]["revise"]["origin"] == "settings sheet row 1"
