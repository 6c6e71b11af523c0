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
    assert book.sheetnames == ["Sleeve length summary", "Sleeve length chart", "Seal leaks summary", "Seal leaks chart",
                               "Action log", "Scheme performance", "Sleeve length data", "Seal leaks data",
                               "Method and audit", "limits-block", "chart-lines"]
    assert book["limits-block"].sheet_state == "hidden" and book["chart-lines"].sheet_state == "hidden"
    assert all(book[n].sheet_state == "visible" for n in book.sheetnames[:8])


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


def _series(chart: str) -> list[tuple[str, str, str]]:
    """(name, categories reference, values reference) of every series of a chart's XML, in drawing order."""
    out = []
    for ser in re.findall(r"<c:ser>(.*?)</c:ser>", chart, re.S):
        name = re.search(r"<c:tx>.*?<c:v>([^<]*)</c:v>", ser, re.S)
        refs = re.findall(r"<c:f>([^<]*)</c:f>", ser)
        out.append((name.group(1) if name else "", refs[-2] if len(refs) >= 2 else "", refs[-1] if refs else ""))
    return out


def test_control_charts_read_at_a_glance(built):
    charts = _xml(built, r"xl/charts/chart\d+\.xml")
    assert len(charts) == 2 * 3 + 1 + 1  # on the summary and the chart tab: 2 + 1 statistics; histogram; ARL
    control = [x for x in charts.values() if "<c:lineChart>" in x]
    assert len(control) == 6
    arl = [x for x in charts.values() if "Average run length" in x]
    assert len(arl) == 1 and '<c:logBase val="10"/>' in arl[0] and "<c:scatterChart>" in arl[0]
    for chart in control:
        series = _series(chart)
        names = [n for n, _, _ in series]
        # points in sequence on a category (text) axis, signals drawn last, in a shape of their own
        assert "<c:catAx>" in chart and "<c:dateAx>" not in chart
        if "signal" in names:
            assert names[-1] == "signal" and '<c:symbol val="triangle"/>' in chart
    mean_chart = next(x for x in control if "Subgroup mean: Sleeve length" in x)
    names = [n for n, _, _ in _series(mean_chart)]
    assert names.count("zone lines (1 and 2 standard errors)") == 4 and names.count("UCL and LCL") == 2
    assert "LSL" not in names  # no specification lines on a chart of means (common practice)
    # limits that vary with the subgroup size are a level bar at each point: no line joins them, no spike
    limits = [ser for ser in re.findall(r"<c:ser>(.*?)</c:ser>", mean_chart, re.S) if "UCL and LCL" in ser]
    assert all("<a:noFill/>" in ser.split("<c:marker>")[0] and '<c:symbol val="dash"/>' in ser for ser in limits)
    # the axis labels are ISO dates at every few points, blank between
    book = openpyxl.load_workbook(built)
    _, categories, _ = _series(mean_chart)[0]
    tab, cells_ = categories.split("!")
    labels = [c.value for row in book[tab.strip("'")][cells_.replace("$", "")] for c in row]
    assert len(labels) == 40 and labels[0] == "2026-11-02 06:00" and None in labels
    assert all(re.fullmatch(r"\d{4}-\d\d-\d\d \d\d:\d\d", v) for v in labels if v)


def test_performance_tab_uses_curve(built):
    rows = list(openpyxl.load_workbook(built)["Scheme performance"].iter_rows(values_only=True))
    top = next(i for i, r in enumerate(rows) if r[0] == "Mean shift (process standard deviations)")

    def column(c: int) -> list[float]:
        return [r[c] for r in rows[top + 1:] if len(r) > c and r[c] is not None]

    assert column(0) == pytest.approx(list(np.arange(0, 3.01, 0.25)))
    assert column(2)[1] == pytest.approx(2.0 * column(1)[1])  # ATS = ARL x 2 hours between subgroups
    # the attribute scheme has no curve: its shifts are listed instead
    assert rows[top][4] == "Mean shift (process standard deviations)" and column(4) == [0.0, 1.0]


def test_method_and_audit(built):
    ws = openpyxl.load_workbook(built)["Method and audit"]
    rows = {r[0]: r[1] for r in ws.iter_rows(values_only=True) if r[0]}
    assert rows["SHA-256"] and len(rows["SHA-256"]) == 64
    assert rows["Document date"].startswith("2026-12-01 08:00:00 (given with --timestamp)")
    # settings in words, each with its origin; the rules preset spelled out once
    said = [r[1] for r in ws.iter_rows(values_only=True) if r[0] == "Sleeve length"]
    assert "Lower specification limit: 24.95 (cell 'Sleeve'!B1)" in said
    assert sum(text.startswith("Pattern rules") for text in said) == 1
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


def test_reproducible_bytes_and_the_evaluation_date(tmp_path):
    from sheettool.workbook.writer.notes_tab import stamp_for

    report = report_for(tmp_path, [varying_sizes_case(), attribute_case()])
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    for path in (a, b):  # a re-run with the same --timestamp gives the same bytes
        write_evaluated_workbook(report, path, WriterOptions(formulas=True, timestamp=dt.datetime(2026, 12, 1)))
    assert a.read_bytes() == b.read_bytes()
    assert "<f>" in "".join(_xml(a, r"xl/worksheets/sheet\d+\.xml").values())
    # without --timestamp the document date is the evaluation time, never the input's modification time
    os.utime(report.input, (0, 0))
    c = tmp_path / "c.xlsx"
    before = dt.datetime.now(dt.UTC).replace(tzinfo=None, microsecond=0)
    write_evaluated_workbook(report, c)
    core = _xml(c, r"docProps/core.xml")["docProps/core.xml"]
    when = dt.datetime.strptime(re.search(r"<dcterms:created[^>]*>([^<]+)Z<", core).group(1), "%Y-%m-%dT%H:%M:%S")
    assert before <= when <= before + dt.timedelta(minutes=5)
    assert f"evaluated {when:%Y-%m-%d}" in openpyxl.load_workbook(c)["Sleeve length chart"].oddFooter.left.text
    stamp = stamp_for(None, dt.datetime(2026, 12, 1, 8, 30, 15, 999, tzinfo=dt.UTC))
    assert stamp.when == dt.datetime(2026, 12, 1, 8, 30, 15) and stamp.origin == "the evaluation time, UTC"


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


def test_long_charts_stay_readable():
    # hundreds of points: small markers, none above a thousand; signals larger than the points
    from sheettool.workbook import style

    assert style.series_look("values", 30)["marker"]["size"] > style.series_look("values", 400)["marker"]["size"]
    assert style.series_look("values", 5000)["marker"] == {"type": "none"}
    assert style.series_look("signal", 5000)["marker"]["size"] >= 7  # signals stay visible
    assert style.series_look("signal", 30)["marker"]["size"] > style.series_look("values", 30)["marker"]["size"]


def test_three_statistics_with_missing_and_varying_limits(tmp_path):
    report = report_for(tmp_path, [cusum_ewma_case()])
    out = tmp_path / "three.xlsx"
    write_evaluated_workbook(report, out, WriterOptions(formulas=True))
    book = openpyxl.load_workbook(out)
    rows = {r[0]: r[1:5] for r in book["Torque chart"].iter_rows(values_only=True) if r[0]}
    assert rows["EWMA"][1] == "varies" and rows["EWMA"][0] == pytest.approx(50.0)
    assert rows["CUSUM above target"][1] == "none" and rows["CUSUM above target"][2] == pytest.approx(2.5)
    assert len(_xml(out, r"xl/charts/chart\d+\.xml")) == 3 + 2 + 1 + 1  # chart tab, summary (two), histogram, ARL
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


def _cells_of(book: openpyxl.Workbook, ref: str) -> list:
    tab, where = ref.split("!")
    return [c.value for row in book[tab.strip("'")][where.replace("$", "")] for c in row]


def test_histogram_with_spec_lines_and_fitted_curve(built):
    book = openpyxl.load_workbook(built)
    hist = next(x for x in _xml(built, r"xl/charts/chart\d+\.xml").values() if "Readings of Sleeve length" in x)
    series = {name: (xs, ys) for name, xs, ys in _series(hist)}
    assert list(series)[:2] == ["readings per bin", "fitted normal (mean, overall sigma)"]
    # LSL, USL and target are vertical lines at the specification of the case (24.95, 25.05, target 25.0)
    for name, value in (("LSL", 24.95), ("USL", 25.05), ("target", 25.0)):
        xs, ys = series[name]
        assert _cells_of(book, xs) == [value, value] and _cells_of(book, ys)[0] == 0
    # the bars hold every reading once: each bar is four outline points, its height the count in the bin
    heights = _cells_of(book, series["readings per bin"][1])[1::4]
    readings = int(np.isfinite(varying_sizes_case()[0].characteristic.data.values).sum())
    assert sum(heights) == readings
    # the curve is the normal density times readings x bin width: its area equals the readings (a check by sums)
    xs, ys = (np.array(_cells_of(book, ref), dtype=float) for ref in series["fitted normal (mean, overall sigma)"])
    edges = _cells_of(book, series["readings per bin"][0])
    width = edges[2] - edges[0]
    assert np.trapezoid(ys, xs) / width == pytest.approx(readings, rel=0.01)
    # the summary tab is one landscape page and names the characteristic, source and period in its header
    page = book["Sleeve length summary"]
    assert page.sheet_properties.pageSetUpPr.fitToPage and page.page_setup.fitToHeight in (None, 1)  # 1: default
    assert page.page_setup.orientation == "landscape"
    assert "Sleeve length" in page.oddHeader.left.text and "sheet" in page.oddHeader.right.text


def test_protect_locks_every_sheet_and_the_audit_names_the_input(run_cli, tmp_path):
    source = tmp_path / "bore.csv"
    source.write_text("Point,Diameter\n" + "".join(f"{i + 1},{10 + 0.01 * ((i * 7) % 5):.2f}\n" for i in range(25)))
    out = tmp_path / "locked.xlsx"
    assert run_cli("evaluate", source, "-o", out, "--protect", "s3cret").code == 0
    book = openpyxl.load_workbook(out)
    assert all(ws.protection.sheet and ws.protection.password for ws in book.worksheets)
    audit = "\n".join(str(v) for row in book["Method and audit"].iter_rows(values_only=True) for v in row if v)
    assert sha256(source) in audit and "locked against editing" in audit
    bare = tmp_path / "bare.xlsx"
    assert run_cli("evaluate", source, "-o", bare, "--protect").code == 0  # locked without a password
    ws = openpyxl.load_workbook(bare)["Method and audit"]
    assert ws.protection.sheet and not ws.protection.password
