"""Attribute charts (p, np, c, u) against their textbook formulas on small hand-worked cases."""

import numpy as np
import pytest

from sheettool.core.data import Characteristic, Counts
from sheettool.evaluation.evaluate import chart_choice, fit_characteristic
from sheettool.evaluation.options import EvaluationOptions


def _fit(counts, inspected, kind="defectives", chart=None):
    ch = Characteristic("c", Counts(np.array(counts, float), np.array(inspected, float), kind))
    return fit_characteristic(ch, "s", EvaluationOptions(chart=chart))


def test_p_chart_hand_worked():
    # p-bar = 60 / 600 = 0.1, n = 100: limits 0.1 +/- 3 sqrt(0.1 * 0.9 / 100) = 0.01 and 0.19
    # (Montgomery 2009, eq. 7.8; hand-worked)
    result = _fit([8, 12, 10, 10, 9, 11], [100] * 6, chart="p")
    (stat,) = result.fit.statistics
    assert stat.name == "proportion"
    assert stat.center[0] == pytest.approx(0.1, abs=1e-12)
    assert stat.lcl[0] == pytest.approx(0.01, abs=1e-12)
    assert stat.ucl[0] == pytest.approx(0.19, abs=1e-12)
    assert not stat.lcl_floored
    assert result.fit.parameters == pytest.approx({"n": 100.0, "p0": 0.1})


def test_np_chart_hand_worked():
    # n p-bar = 10, limits 10 +/- 3 sqrt(100 * 0.1 * 0.9) = 1 and 19 (Montgomery 2009, eq. 7.13)
    result = _fit([8, 12, 10, 10, 9, 11], [100] * 6)
    (stat,) = result.fit.statistics
    assert result.fit.chart == "np" and stat.name == "defectives"
    assert (stat.center[0], stat.lcl[0], stat.ucl[0]) == pytest.approx((10.0, 1.0, 19.0), abs=1e-12)


def test_p_chart_varying_sizes_limits_per_point_and_floor():
    counts, sizes = [3, 5, 2, 6], [40, 60, 20, 80]
    result = _fit(counts, sizes)
    (stat,) = result.fit.statistics
    p = 16 / 200  # pooled proportion, total defectives / total inspected (Montgomery 2009, sec. 7.2.2)
    n = np.array(sizes, float)
    half = 3 * np.sqrt(p * (1 - p) / n)
    assert result.fit.chart == "p"
    assert stat.ucl == pytest.approx(p + half, rel=1e-12)
    assert stat.lcl == pytest.approx(np.maximum(p - half, 0.0), abs=1e-15)
    assert stat.lcl_floored and stat.varies
    assert any("below zero" in note for note in result.fit.notes)


def test_c_chart_hand_worked_with_floored_lower_limit():
    # c-bar = 4: limits 4 +/- 3 * 2 -> LCL -2 shown as 0, UCL 10 (Montgomery 2009, eq. 7.17)
    result = _fit([3, 5, 4, 2, 6, 4], [1] * 6, kind="defects")
    (stat,) = result.fit.statistics
    assert result.fit.chart == "c" and stat.name == "defects"
    assert (stat.center[0], stat.lcl[0], stat.ucl[0]) == (4.0, 0.0, 10.0)
    assert stat.lcl_floored
    assert any("shown as zero" in p.message for p in result.problems)
    assert result.fit.parameters["c0"] == 4.0


def test_u_chart_varying_units():
    counts, units = [12, 6, 20, 9], [4, 2, 5, 3]
    result = _fit(counts, units, kind="defects")
    (stat,) = result.fit.statistics
    u = 47 / 14  # total defects / total units (Montgomery 2009, eq. 7.19)
    n = np.array(units, float)
    assert result.fit.chart == "u" and stat.name == "defects_per_unit"
    assert stat.values == pytest.approx(np.array(counts) / n)
    assert stat.ucl == pytest.approx(u + 3 * np.sqrt(u / n), rel=1e-12)
    assert stat.lcl == pytest.approx(np.maximum(u - 3 * np.sqrt(u / n), 0), abs=1e-15)
    assert result.fit.parameters == pytest.approx({"n": 3.5, "u0": u})


def test_chart_choice_for_counts():
    # constant units inspected: plot the count (np, c); varying: the proportion or rate (p, u)
    same, varying = [50] * 4, [40, 50, 60, 50]
    for kind, constant, vary in (("defectives", "np", "p"), ("defects", "c", "u")):
        assert chart_choice(Characteristic("c", Counts([1, 2, 3, 1], same, kind)))[0] == constant
        assert chart_choice(Characteristic("c", Counts([1, 2, 3, 1], varying, kind)))[0] == vary


@pytest.mark.parametrize(("counts", "inspected", "kind", "words"), [
    ([3, -1, 2], [50, 50, 50], "defectives", "subgroup 2: the count -1 is negative"),
    ([3, 51, 2], [50, 50, 50], "defectives", "subgroup 2: 51 defectives out of 50 inspected"),
    ([3, 1, 2], [50, 0, 50], "defects", "subgroup 2: 0 units inspected"),
])
def test_bad_counts_are_named(counts, inspected, kind, words):
    with pytest.raises(ValueError, match=words):
        _fit(counts, inspected, kind)


def test_chart_must_fit_the_counts():
    with pytest.raises(ValueError, match="choose a p or np chart"):
        _fit([1, 2, 3], [10, 10, 10], "defectives", chart="u")


def test_attribute_rate_is_reported():
    result = _fit([8, 12, 10, 10, 9, 11], [100] * 6)
    rate = result.capability
    assert rate.kind == "proportion" and rate.estimate == pytest.approx(0.1)
    assert rate.ci.low < 0.1 < rate.ci.high


def test_zero_defectives_in_the_base_period_draw_a_chart_with_a_note(run_cli, tmp_path):
    import openpyxl

    path = tmp_path / "seal.xlsx"
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Seal"
    ws.append(["Lot", "Inspected", "Defectives"])
    for i in range(25):
        ws.append([i + 1, 50, 0])
    book.save(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0 and result.err.count("Warning") == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["limits"]["defectives"] == {"center": 0.0, "lcl": 0.0, "ucl": 0.0}
    notes = [p["message"] for p in result.json["problems"]]
    assert any(n.startswith("no defectives in the base period, so the center line and UCL are 0") for n in notes)
    # with UCL 0 the first defective signals: geometric run length, ARL = 1 / (1 - (1 - p)^n) (common practice),
    # in control at the floor rate 1e-9 per unit, and 1 standard error up at p = 0 + sqrt(n 1e-9) / n
    performance = char["performance"]
    assert performance["arl_in_control"] == pytest.approx(1 / (1 - (1 - 1e-9) ** 50), rel=1e-6)
    one = next(s for s in performance["shifts"] if s["shift"] == 1.0)
    p1 = (50 * 1e-9) ** 0.5 / 50
    assert one["rate"] == pytest.approx(p1, rel=1e-9) and one["arl"] == pytest.approx(1 / (1 - (1 - p1) ** 50),
                                                                                      rel=1e-6)


def test_fractional_counts_are_named():
    counts = Characteristic("c", Counts([3, 2.5, 2, 6], [40, 60, 20.5, 80]), labels=["a", "b", "c", "d"])
    fit = fit_characteristic(counts, "s")
    (note,) = [n for n in fit.fit.notes if "not whole numbers" in n]
    assert note.startswith("2 count(s) of defectives or units inspected are not whole numbers: subgroup 2 (b: 2.5 "
                           "of 60), subgroup 3 (c: 2 of 20.5)")
