"""The evaluated workbook: tabs, charts, tables, names, formulas, safety and reproducibility."""

from __future__ import annotations

import datetime as dt
import os
import re
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from sheettool.base.errors import OutputError
from sheettool.workbook.writer import WriterOptions, write_atomically, write_evaluated_workbook
from sheettool.workbook.writer.cells import decimals, tab_name
from sheettool.workbook.writer.charts import nice_step, value_axis
from tests.conftest import sha256
from tests.writer_cases import attribute_case, cusum_ewma_case, report_for, varying_sizes_case


@pytest.fixture
def built(tmp_path: Path) -> Path:
    report = report_for(tmp_path, [varying_sizes_case(), attribute_case()])
    out = tmp_path / "built.xlsx"
    write_evaluated_workbook(report, out, WriterOptions(formulas=True, timestamp=dt.datetime(2026, 12, 1, 8)))
    return out


def _xml(path: Path, pattern: str) -> dict[str, str]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n).decode("utf-8") for n in z.namelist() if re.search(pattern, n)}


def test_tabs_in_order_and_hidden_helpers(built):
    book = openpyxl.load_workbook(built)
    assert book.sheetnames == ["Sleeve length chart", "Seal leaks chart", "Action log", "Scheme performance",
                               "Sleeve length data",
                               "Seal leaks data", "Method and audit", "limits-block", "chart-lines"]
    assert book["limits-block"].sheet_state == "hidden" and book["chart-lines"].sheet_state == "hidden"
    assert all(book[n].sheet_state == "visible" for n in book.sheetnames[:6])


def test_evaluation_tab_contents(built):
    ws = openpyxl.load_workbook(built)["Sleeve length chart"]
    text = [str(v) for row in ws.iter_rows(values_only=True) for v in row if v is not None]
    joined = "\n".join(text)
    assert "X-bar and S: subgroup means and subgroup standard deviations; subgroups of 6" in joined
    assert "varies by point: see data tab" in joined
    assert "LCL below zero by formula, shown as 0" in joined
    assert "Not a stable process" in joined
    assert "2026-11-02 06:00 to 2026-11-05 12:00" in joined  # period from the dates (40 subgroups, 2 h apart)
    assert "LSL 24.95, USL 25.05, target 25" in joined
    assert any("never replace" in t for t in text)
    # every signal listed with its rule in words
    assert "4 of the last 5 points more than 1 standard error from the center line, on the same side" in joined \
        or "a point more than 3 standard errors from the center line" in joined
    attribute = "\n".join(str(v) for row in openpyxl.load_workbook(built)["Seal leaks chart"].iter_rows(
        values_only=True) for v in row if v is not None)
    assert "Average proportion defective" in attribute


def test_tables_names_and_links(built):
    book = openpyxl.load_workbook(built)
    assert set(book["Sleeve length data"].tables) == {"data_1"}
    assert set(book["Sleeve length chart"].tables) == {"signals_1"}
    names = set(book.defined_names)
    # constant mean center line has a name; the varying limits have none
    assert any(n.endswith("mean_Center_line") for n in names)
    assert not any(n.endswith("mean_UCL") for n in names if "Sleeve" in n)
    assert any(n.endswith("proportion_Center_line") for n in names)
    links = [c.hyperlink.location for row in book["Sleeve length chart"].iter_rows() for c in row if c.hyperlink]
    assert "'Sleeve length data'!A1" in links and "'Method and audit'!A1" in links
    assert book["Sleeve length data"].freeze_panes == "B4"
    # print set-up: landscape, one page wide, the characteristic in the header, the page in the footer
    tab = book["Sleeve length chart"]
    assert tab.page_setup.orientation == "landscape" and tab.sheet_properties.pageSetUpPr.fitToPage
    assert tab.page_setup.fitToHeight == 0 and tab.page_setup.fitToWidth in (None, 1)  # width 1 is the default
    assert "Sleeve length" in tab.oddHeader.left.text and "&P" in tab.oddFooter.right.text
    # 22 columns: point, date, 8 copied, limits flag, 2 statistics x 5, signals; title rows + 40 subgroups
    assert book["Sleeve length data"].print_area == "'Sleeve length data'!$A$1:$V$43"


def test_charts_are_native_scatter_with_stepped_limits(built):
    charts = _xml(built, r"xl/charts/chart\d+\.xml")
    assert len(charts) == 3 + 1  # two statistics, one attribute chart, the ARL chart
    assert all("<c:scatterChart>" in x for x in charts.values())
    arl = [x for x in charts.values() if "Average run length" in x]
    assert len(arl) == 1 and '<c:logBase val="10"/>' in arl[0]
    lines = openpyxl.load_workbook(built)["chart-lines"]
    heads = [c.value for c in lines[1]]
    steps = heads.index("Sleeve length data: x (steps)")
    # a staircase: two points per subgroup
    assert sum(1 for r in lines.iter_rows(min_row=2, min_col=steps + 1, max_col=steps + 1) if r[0].value is not None) \
        == 2 * 40
    mean_chart = next(x for x in charts.values() if "Subgroup mean: Sleeve length" in x)
    assert "yyyy-mm-dd" in mean_chart or "mm-dd hh:mm" in mean_chart  # dates on the x axis
    assert mean_chart.count("<c:ser>") == 4 + 2 + 1 + 2  # zones (zone rules in use), limits, center, points, signals


def test_performance_tab_uses_curve(built):
    rows = list(openpyxl.load_workbook(built)["Scheme performance"].iter_rows(values_only=True))
    top = next(i for i, r in enumerate(rows) if r[0] == "Mean shift (sigma)")

    def column(c: int) -> list[float]:
        return [r[c] for r in rows[top + 1:] if len(r) > c and r[c] is not None]

    assert column(0) == pytest.approx(list(np.arange(0, 3.01, 0.25)))
    assert column(2)[1] == pytest.approx(2.0 * column(1)[1])  # ATS = ARL x 2 hours between subgroups
    # the attribute scheme has no curve: its shifts are listed instead
    assert rows[top][4] == "Mean shift (sigma)" and column(4) == [0.0, 1.0]


def test_method_and_audit(built):
    ws = openpyxl.load_workbook(built)["Method and audit"]
    rows = {r[0]: r[1] for r in ws.iter_rows(values_only=True) if r[0]}
    assert rows["SHA-256"] and len(rows["SHA-256"]) == 64
    assert rows["Document date"].startswith("2026-12-01 08:00:00 (given with --timestamp)")
    assert rows["Sleeve length: lsl"] == "24.95 (from cell 'Sleeve'!B1)"
    assert "never replace" in rows["Caution"]
    assert "Lucas" not in rows.get("Chart kind xbar-s", "")
    assert rows["Chart kind p"].startswith("p: proportion defective")


def test_formulas_checked_and_cached(built):
    book = openpyxl.load_workbook(built)
    values = openpyxl.load_workbook(built, data_only=True)
    data, cached = book["Sleeve length data"], values["Sleeve length data"]
    heads = [c.value for c in data[3]]
    mean_col = heads.index("Subgroup mean") + 1
    first = data.cell(4, mean_col)
    assert first.data_type == "f" and first.value.startswith("=AVERAGE(")
    result, _ = varying_sizes_case()
    assert cached.cell(4, mean_col).value == pytest.approx(result.fit.statistics[0].values[0], rel=1e-12)
    sd_col = heads.index("Subgroup standard deviation") + 1
    assert data.cell(4, sd_col).value.startswith("=STDEV(")
    # center line of the means is a formula over the data tab, through the base flag
    tab = book["Sleeve length chart"]
    centers = [r[1] for r in tab.iter_rows() if r[0].value == "Subgroup mean"]
    assert centers[0].value.startswith("=AVERAGEIF(")


def test_without_formulas_only_values(tmp_path):
    report = report_for(tmp_path, [varying_sizes_case()])
    out = tmp_path / "values.xlsx"
    write_evaluated_workbook(report, out)
    assert not any("<f>" in x for x in _xml(out, r"xl/worksheets/sheet\d+\.xml").values())


def test_reproducible_bytes(tmp_path):
    report = report_for(tmp_path, [varying_sizes_case(), attribute_case()])
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    when = dt.datetime(2026, 11, 30, 17, 5, tzinfo=dt.UTC).timestamp()
    os.utime(report.input, (when, when))
    write_evaluated_workbook(report, a, WriterOptions(formulas=True))
    write_evaluated_workbook(report, b, WriterOptions(formulas=True))  # a re-run: same input, same time
    c = tmp_path / "c.xlsx"
    os.utime(report.input, (when + 3600, when + 3600))
    write_evaluated_workbook(report, c, WriterOptions(formulas=True))
    with zipfile.ZipFile(b) as zb, zipfile.ZipFile(c) as zc:
        differ = [n for n in zb.namelist() if zb.read(n) != zc.read(n)]
    # only the document date follows the input's time: in the properties and in the audit notes
    assert set(differ) == {"docProps/core.xml", "xl/sharedStrings.xml"}
    assert a.read_bytes() == b.read_bytes()
    assert "<f>" in "".join(_xml(a, r"xl/worksheets/sheet\d+\.xml").values())
    d, e = tmp_path / "d.xlsx", tmp_path / "e.xlsx"
    for path in (d, e):
        write_evaluated_workbook(report, path, WriterOptions(timestamp=dt.datetime(2026, 12, 1)))
    assert d.read_bytes() == e.read_bytes()


def test_output_is_never_macro_enabled(tmp_path):
    report = report_for(tmp_path, [varying_sizes_case()])
    with pytest.raises(OutputError, match=r"\.xlsx"):
        write_evaluated_workbook(report, tmp_path / "out.xlsm")
    write_evaluated_workbook(report, tmp_path / "out.xlsx")
    with zipfile.ZipFile(tmp_path / "out.xlsx") as z:
        names = z.namelist()
        types = z.read("[Content_Types].xml").decode()
    assert not any("vba" in n.lower() or "externalLink" in n for n in names)
    assert "macroEnabled" not in types and "externalLink" not in types


def test_atomic_write_keeps_old_file_on_failure(tmp_path):
    target = tmp_path / "keep.xlsx"
    target.write_bytes(b"earlier output")

    def failing(tmp: str) -> None:
        Path(tmp).write_bytes(b"half")
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputError, match="No space left"):
        write_atomically(target, failing)
    assert target.read_bytes() == b"earlier output"
    assert [p.name for p in tmp_path.iterdir()] == ["keep.xlsx"]


def test_never_over_the_input(tmp_path):
    report = report_for(tmp_path, [varying_sizes_case()])
    before = sha256(report.input)
    with pytest.raises(OutputError, match="over the input"):
        write_evaluated_workbook(report, report.input.with_suffix(".xlsx"))
    assert sha256(report.input) == before


HOSTILE = ["=HYPERLINK(\"http://example.invalid\",\"x\")", "+1+1", "-2-3", "@SUM(A1)", "=1+1"]


def test_input_text_never_becomes_a_formula(run_cli, tmp_path):
    path = tmp_path / "hostile.xlsm"  # a macro-enabled name: the output is still a plain .xlsx
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet("=Gauge")  # a sheet name may begin with = too
    for c, head in enumerate(["Sample", "@op", "=A1", "+x", "-y"]):
        ws.write_string(0, c, head)
    rng = np.random.default_rng(3)
    for r in range(1, 21):
        ws.write_string(r, 0, HOSTILE[r % len(HOSTILE)])
        for c in range(1, 5):
            ws.write_number(r, c, round(float(rng.normal(5, 0.1)), 2))
        ws.write_string(r, 5, HOSTILE[(r + 1) % len(HOSTILE)])
    book.close()
    before = sha256(path)
    result = run_cli("evaluate", path, "--formulas")
    assert result.code == 0, result.err
    assert sha256(path) == before
    out = tmp_path / "hostile-evaluated.xlsx"
    sheets = _xml(out, r"xl/worksheets/sheet\d+\.xml")
    formulas = re.findall(r"<f>(.*?)</f>", "".join(sheets.values()))
    assert formulas  # --formulas wrote some
    assert not any("HYPERLINK" in f or "SUM(A1)" in f or f in ("1+1", "A1") for f in formulas)
    data = openpyxl.load_workbook(out)["=Gauge data"]
    texts = [c for row in data.iter_rows(min_row=4) for c in row if isinstance(c.value, str)]
    assert {c.value for c in texts} >= set(HOSTILE)
    assert all(c.data_type == "s" for c in texts if c.value in HOSTILE)
    heads = [c.value for c in data[3]]
    assert "=A1" in heads and "@op" in heads


def test_decimals_from_readings():
    # the readings' own resolution (common practice: report to the gauge's resolution)
    assert decimals(np.array([12.001, 11.99, 12.0])) == 3
    assert decimals(np.array([5.0, 7.0])) == 0
    assert decimals(np.array([np.nan, 0.25])) == 2


def test_value_axis_scaled_from_data_not_zero():
    axis = value_axis([np.array([11.99, 12.01]), np.array([11.98]), np.array([12.02])])
    assert 11.9 < axis["min"] <= 11.98 and 12.02 <= axis["max"] < 12.1
    assert value_axis([np.array([0.0, 0.05])])["min"] == 0.0  # a range never gets a negative axis
    assert nice_step(30, 12) == 2.5 and nice_step(0.04, 6) == 0.01


def test_tab_names_unique_and_valid():
    used: set[str] = set()
    a = tab_name("Bore: [diameter]/left side of the fitting", "chart", used)
    b = tab_name("Bore: [diameter]/left side of the fitting", "chart", used)
    assert len(a) <= 31 and len(b) <= 31 and a != b and not set("[]:*?/\\") & set(a)


def test_demo_with_timestamp_option(run_cli, demo_copy, tmp_path):
    out = tmp_path / "stamped.xlsx"
    assert run_cli("evaluate", demo_copy, "-o", out, "--timestamp", "2026-12-01T08:00").code == 0
    core = _xml(out, r"docProps/core.xml")["docProps/core.xml"]
    assert "2026-12-01T08:00:00Z" in core and "sheettool" in core
    bad = run_cli("evaluate", demo_copy, "--timestamp", "yesterday")
    assert bad.code == 2 and "--timestamp" in bad.err


def test_long_charts_stay_readable(tmp_path):
    # hundreds of points: small markers, none above a thousand, and whole-number subgroup labels
    from sheettool.workbook import style
    from sheettool.workbook.writer.charts import subgroup_axis
    from sheettool.workbook.writer.data_tab import plan_data_tab

    assert style.series_look("values", 30)["marker"]["size"] > style.series_look("values", 400)["marker"]["size"]
    assert style.series_look("values", 5000)["marker"] == {"type": "none"}
    assert style.series_look("signal", 5000)["marker"]["size"] >= 7  # signals stay visible
    result, read = varying_sizes_case(m=40)
    axis = subgroup_axis(plan_data_tab(result, read, "t", "e"))
    assert axis["num_format"] == "mm-dd hh:mm" and axis["major_unit"] <= 1.0


def test_three_statistics_with_missing_and_varying_limits(tmp_path):
    report = report_for(tmp_path, [cusum_ewma_case()])
    out = tmp_path / "three.xlsx"
    write_evaluated_workbook(report, out, WriterOptions(formulas=True))
    book = openpyxl.load_workbook(out)
    rows = {r[0]: r[1:5] for r in book["Torque chart"].iter_rows(values_only=True) if r[0]}
    assert rows["EWMA"][1] == "varies" and rows["EWMA"][0] == pytest.approx(50.0)
    assert rows["CUSUM above target"][1] == "none" and rows["CUSUM above target"][2] == pytest.approx(2.5)
    assert len(_xml(out, r"xl/charts/chart\d+\.xml")) == 3 + 1
    assert "EWMA" in " ".join(str(r[1]) for r in book["Method and audit"].iter_rows(values_only=True) if r[1])


def test_chart_names_from_the_input_stay_literal(tmp_path):
    # xlsxwriter reads a series name like =Sheet1!$A$1 as a cell reference; input names must not be
    from sheettool.workbook.writer.charts import chart_text

    path = tmp_path / "names.xlsx"
    book = xlsxwriter.Workbook(str(path))
    book.add_worksheet("Sheet1")
    chart = book.add_chart({"type": "scatter"})
    chart.add_series({"name": chart_text("=Sheet1!$A$1"), "categories": "=Sheet1!$A$2:$A$3",
                      "values": "=Sheet1!$B$2:$B$3"})
    book.worksheets()[0].insert_chart(0, 3, chart)
    book.close()
    xml = _xml(path, r"xl/charts/chart1\.xml")["xl/charts/chart1.xml"]
    assert "<c:v>=Sheet1! $A$1</c:v>" in xml and "<c:f>" not in xml.split("<c:xVal>")[0]
    assert chart_text("Bore") == "Bore" and chart_text("=Bore") == "=Bore"
