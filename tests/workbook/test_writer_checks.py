"""The evaluation tab's "How far to trust these limits" block and the method lines of its checks."""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from pathlib import Path

import numpy as np
import openpyxl
import pytest
from scipy import stats

from sheettool.core.data_shape import data_shape_report
from sheettool.core.design import Requirements, check_requirements
from sheettool.core.estimated_limits import estimated_limits_report
from sheettool.workbook.writer import WriterOptions, write_evaluated_workbook
from sheettool.workbook.writer.trust_block import TITLE
from tests.writer_cases import attribute_case, report_for, varying_sizes_case, with_checks

TOL = 1e-12  # the cells hold the result's floats as written


def _ar1(n: int, phi: float, seed: int) -> np.ndarray:
    """An AR(1) series with unit marginal variance, so that the lag-1 autocorrelation is clearly beyond 2/sqrt(N)."""
    rng = np.random.default_rng(seed)
    x = np.empty(n)
    x[0] = rng.standard_normal()
    for t in range(1, n):
        x[t] = phi * x[t - 1] + math.sqrt(1 - phi * phi) * rng.standard_normal()
    return 10.0 + 0.1 * x


@pytest.fixture(scope="module")
def checked(tmp_path_factory: pytest.TempPathFactory):
    tmp = tmp_path_factory.mktemp("checks")
    result, read = varying_sizes_case()
    req = Requirements(arl_in_control=500.0, false_alarms_per_month=1.0, arl_at_shift=5.0)
    reachable = estimated_limits_report(20, 5, "range", target=200.0)  # a target 3-sigma can reach
    result = with_checks(result, estimated_limits=reachable,
                         data_shape=data_shape_report(_ar1(200, 0.7, seed=21), 1),
                         requirements_check=check_requirements(req, 370.4, 8.0, None, 1.0))
    plain, plain_read = attribute_case()
    report = report_for(tmp, [(result, read), (plain, plain_read)])
    out = tmp / "checked.xlsx"
    write_evaluated_workbook(report, out, WriterOptions(timestamp=dt.datetime(2026, 12, 1, 8)))
    return result, out


def _rows(path: Path, tab: str) -> list[tuple]:
    return list(openpyxl.load_workbook(path)[tab].iter_rows(values_only=True))


def _row(rows: list[tuple], label: str, after: int = 0) -> tuple:
    return next(r for r in rows[after:] if r[0] == label)


def test_block_leads_with_the_sentence(checked):
    result, out = checked
    rows = _rows(out, "Sleeve length chart")
    at = next(i for i, r in enumerate(rows) if r[0] == TITLE)
    assert rows[at + 1][0] == result.estimated_limits.sentence  # the first thing under the title
    assert rows.index(next(r for r in rows if r[0] == "Capability")) < at  # capability on the first page, then this


def test_estimated_limit_numbers_equal_the_result(checked):
    result, out = checked
    rows = _rows(out, "Sleeve length chart")
    rep = result.estimated_limits
    assert _row(rows, "Average over base periods")[1] == pytest.approx(rep.distribution.mean, abs=TOL)
    assert _row(rows, "10th percentile")[1] == pytest.approx(rep.distribution.p10, abs=TOL)
    assert _row(rows, "50th percentile")[1] == pytest.approx(rep.distribution.p50, abs=TOL)
    assert _row(rows, "Factor for 90% assurance")[1] == pytest.approx(rep.adjusted.factor, abs=TOL)
    assert rep.needed.subgroups is not None and _row(rows, "Subgroups needed, 3-sigma")[1] == rep.needed.subgroups
    # the known-parameter figure named beside the average: 1 / (2 * P(Z > 3)) = 370.4 (scipy.stats; common practice)
    assert f"{1 / (2 * stats.norm.sf(3)):,.1f}" in _row(rows, "Average over base periods")[4]
    # limits estimated from few subgroups give a median in-control ARL below the known-parameter 370.4 (Jensen et al.
    # 2006) and need a factor above 3 for that assurance (Goedhart, Schoonhoven and Does 2017); common practice
    assert rep.distribution.p50 < 370.4 and rep.adjusted.factor > 3


def test_shape_and_dependence_rows(checked):
    result, out = checked
    rows = _rows(out, "Sleeve length chart")
    shape, dep = result.data_shape.shape, result.data_shape.dependence
    assert dep.significant  # AR(1) with phi 0.7 over 200 points: r1 near 0.7, far beyond 2/sqrt(200) = 0.141
    assert dep.bound == pytest.approx(2 / math.sqrt(200), abs=TOL)  # Box and Jenkins (1976)
    assert _row(rows, "Shape of the readings")[1] == shape.family
    arl = _row(rows, "In-control ARL, this shape")
    assert arl[1] == (pytest.approx(shape.arl_shape, abs=TOL) if math.isfinite(shape.arl_shape) else "unbounded")
    assert arl[2] == pytest.approx(shape.arl_normal, abs=TOL)
    r1 = _row(rows, "Lag-1 autocorrelation")
    # the normal model's column holds its own r1, 0 for independent points; the bound is said in the note
    assert r1[1] == pytest.approx(dep.r1, abs=TOL) and r1[2] == 0 and f"= {dep.bound:.2f}" in r1[4]
    ar1 = _row(rows, "In-control ARL, AR(1)")
    assert ar1[1] == pytest.approx(dep.arl_ar1, abs=TOL) and ar1[2] == pytest.approx(dep.arl_independent, abs=TOL)
    warnings = [r[0] for r in rows if isinstance(r[0], str) and r[0].startswith("Warning: ")]
    assert warnings == [f"Warning: {w}" for w in result.data_shape.warnings] and warnings


def test_requirement_rows_in_words(checked):
    result, out = checked
    rows = _rows(out, "Sleeve length chart")
    items = {i.name: i for i in result.requirements_check.items}
    arl = _row(rows, "In-control ARL")
    assert arl[1:4] == (500.0, pytest.approx(370.4, abs=TOL), "NO") and arl[4] == items["arl_in_control"].words
    # no interval and no production hours: the false-alarm rate is unknown, shown as a dash and not judged
    assert _row(rows, "False alarms per month")[1:4] == (1.0, "—", "cannot judge")
    assert _row(rows, "ARL at the shift")[1:4] == (5.0, 8.0, "NO")
    assert "not every requirement is met" in _row(rows, "Requirements")[1]


def test_infinite_and_missing_values_are_words(tmp_path):
    result, read = varying_sizes_case()
    rep = estimated_limits_report(20, 5, "range")
    rep = dataclasses.replace(rep, distribution=dataclasses.replace(rep.distribution, mean=math.inf),
                              needed=dataclasses.replace(rep.needed, subgroups=None, reachable=True))
    result = with_checks(result, estimated_limits=rep)
    report = report_for(tmp_path, [(result, read)])
    out = tmp_path / "words.xlsx"
    write_evaluated_workbook(report, out, WriterOptions(timestamp=dt.datetime(2026, 12, 1, 8)))
    rows = _rows(out, "Sleeve length chart")
    assert _row(rows, "Average over base periods")[1] == "unbounded"
    assert _row(rows, "Subgroups needed, 3-sigma")[1] == "more than 10,000"
    assert not any(isinstance(v, str) and v.startswith("#") for r in rows for v in r)  # no error values


def test_unreachable_target_in_words(tmp_path):
    result, read = varying_sizes_case()
    # 3-sigma limits with known mean and sigma give 370.398 (scipy.stats; common practice): a target of 400 can never
    # be reached by more subgroups, only by a wider factor
    rep = estimated_limits_report(20, 5, "range", target=400.0)
    result = with_checks(result, estimated_limits=rep)
    assert not rep.needed.reachable and rep.needed.subgroups is None
    report = report_for(tmp_path, [(result, read)])
    out = tmp_path / "unreachable.xlsx"
    write_evaluated_workbook(report, out, WriterOptions(timestamp=dt.datetime(2026, 12, 1, 8)))
    row = _row(_rows(out, "Sleeve length chart"), "Subgroups needed, 3-sigma")
    assert row[1] == "none is enough" and "even with known mean and sigma" in row[4]


def test_no_block_without_checks(checked):
    _, out = checked
    assert not any(r[0] == TITLE for r in _rows(out, "Seal leaks chart"))


def test_method_lines_name_the_published_methods(checked):
    result, out = checked
    text = {r[0]: r[1] for r in _rows(out, "Method and audit") if r[0]}
    assert text["Sleeve length: estimated limits"] == result.estimated_limits.method
    assert text["Sleeve length: data shape"] == result.data_shape.method
    joined = text["Sleeve length: estimated limits"] + text["Sleeve length: data shape"]
    for source in ("Goedhart, Schoonhoven and Does (2017)", "Jensen et al. 2006", "Patnaik 1950", "Johnson SU",
                   "BIC", "Box and Jenkins 1976", "AR(1)"):
        assert source in joined
    assert "requirement" in text["Sleeve length: requirements"]


def _lines_shown(ws, row: int) -> float:
    """Lines of 11-point text a row's height holds (15 points a line; default height one line)."""
    height = ws.row_dimensions[row + 1].height
    return (height or 15.0) / 15.0


def test_long_text_gets_rows_tall_enough(checked, tmp_path):
    result, out = checked
    # the width a text cell can show, in characters of the column-width unit (common practice: one unit is one
    # digit of the default font); a row must hold at least len / width lines for nothing to be cut
    book = openpyxl.load_workbook(out)
    ws = book["Sleeve length chart"]
    width = sum(ws.column_dimensions[c].width for c in "ABCDE")
    rows = list(ws.iter_rows(values_only=True))
    first = next(i for i, r in enumerate(rows) if r[0] == TITLE)
    last = next(i for i, r in enumerate(rows) if r[0] == "Capability")
    for i, row in enumerate(rows[first:last], start=first):
        if isinstance(row[0], str) and (row[0] == result.estimated_limits.sentence or row[0].startswith("Warning: ")):
            assert _lines_shown(ws, i) >= math.ceil(len(row[0]) / width)
        if isinstance(row[4], str):
            assert _lines_shown(ws, i) >= math.ceil(len(row[4]) / ws.column_dimensions["E"].width)
    case, read = varying_sizes_case()
    case = dataclasses.replace(case, assessment=dataclasses.replace(case.assessment, performance=dataclasses.replace(
        case.performance, method="Markov chain of the rule windows, " * 12)))
    report = report_for(tmp_path, [(case, read)])
    long = tmp_path / "long.xlsx"
    write_evaluated_workbook(report, long, WriterOptions(timestamp=dt.datetime(2026, 12, 1, 8)))
    perf = openpyxl.load_workbook(long)["Scheme performance"]
    at = next(i for i, r in enumerate(perf.iter_rows(values_only=True)) if r[0] == case.performance.method)
    width = sum(perf.column_dimensions[c].width for c in "ABC")
    assert _lines_shown(perf, at) >= math.ceil(len(case.performance.method) / width)
