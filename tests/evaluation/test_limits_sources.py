"""Where limits come from: base period, standard values, carried limits (round trip), revision."""

import datetime as dt

import numpy as np
import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sheettool.app.api import evaluate_file
from sheettool.base.errors import InputError
from sheettool.core.data import Characteristic, Counts, Measurements
from sheettool.core.parameters import EwmaParameters
from sheettool.demo.scenario import write_demo
from sheettool.evaluation.evaluate import fit_characteristic
from sheettool.evaluation.options import EvaluationOptions
from sheettool.settings import Setting
from sheettool.settings.convert import convert
from sheettool.workbook.limits_block import LIMITS_SHEET, read_limits_block
from tests.conftest import sha256


def _char(values, **kw):
    return Characteristic("bore", Measurements(np.asarray(values, float)), **kw)


def _limits(result):
    return {s.name: (s.center.copy(), s.lcl.copy(), s.ucl.copy()) for s in result.fit.statistics}


def test_first_n_sets_the_limits_and_later_points_use_them():
    rng = np.random.default_rng(2)
    values = rng.normal(0, 1, (30, 5))
    values[25:] += 5.0
    result = fit_characteristic(_char(values), "s", EvaluationOptions(base_period="first 25"))
    alone = fit_characteristic(_char(values[:25]), "s")
    mean = result.fit.statistics[0]
    # Phase I limits from subgroups 1-25 applied unchanged to 26-30 (common practice; Montgomery 2009, sec. 5.4)
    assert mean.ucl == pytest.approx(np.full(30, alone.fit.statistics[0].ucl[0]), rel=1e-12)
    assert result.fit.base.tolist() == [True] * 25 + [False] * 5
    assert result.fit.limits_source == "base period: the first 25 subgroups (points 1-25)"
    assert {s.point for s in result.signals} >= set(range(26, 31))


def test_date_range_and_excluded_subgroups():
    values = np.random.default_rng(3).normal(0, 1, (20, 4))
    dates = [dt.datetime(2026, 11, 1, 6) + dt.timedelta(days=i) for i in range(20)]
    excluded = np.zeros(20, bool)
    excluded[3] = True
    ch = _char(values, dates=dates, excluded=excluded)
    result = fit_characteristic(ch, "s", EvaluationOptions(base_period="2026-11-01..2026-11-10"))
    assert np.flatnonzero(result.fit.base).tolist() == [0, 1, 2, 4, 5, 6, 7, 8, 9]
    assert "dated 2026-11-01 to 2026-11-10, less 1 excluded" in result.fit.limits_source
    assert result.fit.process_mean == pytest.approx(values[result.fit.base].mean(), rel=1e-12)
    days = _char(values, dates=[d.date() for d in dates])  # plain dates work as well
    same = fit_characteristic(days, "s", EvaluationOptions(base_period="2026-11-01..2026-11-10"))
    assert same.fit.base[:10].all() and not same.fit.base[10:].any()


@pytest.mark.parametrize(("spec", "words"), [
    ("first 40", "names 40 subgroups but there are 30"),
    ("last week", "is not understood"),
    ("2026-11-01..2026-11-15", "the subgroups have no dates"),
])
def test_bad_base_periods(spec, words):
    with pytest.raises(ValueError, match=words):
        fit_characteristic(_char(np.ones((30, 3)) + np.arange(3)), "s", EvaluationOptions(base_period=spec))


def test_standard_values_for_variables_and_counts():
    values = np.random.default_rng(4).normal(0, 1, (10, 4))
    result = fit_characteristic(_char(values), "s", EvaluationOptions(standard={"mean": 100.0, "sigma": 2.0}))
    mean = result.fit.statistics[0]
    # mu +/- 3 sigma / sqrt(n) with given standards (Montgomery 2009, sec. 6.2.1, "standard given")
    assert (mean.center[0], mean.lcl[0], mean.ucl[0]) == pytest.approx((100.0, 97.0, 103.0))
    assert not result.fit.base.any() and result.fit.limits_source == "standard values: mean = 100, sigma = 2"
    counts = Characteristic("c", Counts([3, 4, 2], [100, 100, 100]))
    p = fit_characteristic(counts, "s", EvaluationOptions(chart="p", standard={"p0": 0.05}))
    assert p.fit.statistics[0].ucl[0] == pytest.approx(0.05 + 3 * np.sqrt(0.05 * 0.95 / 100))


def test_revision_drops_signalling_base_points_until_stable():
    rng = np.random.default_rng(5)
    values = rng.normal(0, 1, (25, 5))
    values[4] += 6.0
    values[17] -= 6.0
    result = fit_characteristic(_char(values), "s", EvaluationOptions(revise=True))
    assert {5, 18} <= set(result.fit.removed)
    kept = np.ones(25, bool)
    kept[[r - 1 for r in result.fit.removed]] = False
    assert result.fit.base.tolist() == kept.tolist()
    again = fit_characteristic(_char(values[kept]), "s")
    assert result.fit.process_mean == pytest.approx(again.fit.process_mean, rel=1e-12)
    assert any("revision removed point(s) 5" in n for n in result.fit.notes)


def _next_month(path, seed):
    """A workbook like the demo with new readings (same sheet name and layout)."""
    book = openpyxl.load_workbook(path)
    ws = book.active
    rng = np.random.default_rng(seed)
    first = next(r for r in range(1, ws.max_row + 1) if isinstance(ws.cell(r, 3).value, float))
    for row in ws.iter_rows(min_row=first, min_col=3, max_col=7):
        for cell in row:
            cell.value = float(np.round(rng.normal(12.0, 0.01), 3))
    book.save(path)


def test_carried_limits_round_trip(tmp_path):
    november = tmp_path / "november.xlsx"
    write_demo(november)
    evaluated = tmp_path / "november-evaluated.xlsx"
    first = evaluate_file(november, evaluated, _settings(base_period="first 20"))
    entries = read_limits_block(evaluated)
    assert set(entries) == {"Bore diameter", "Leak test", "Crimp force"}  # the demo's three sheets
    december = tmp_path / "december.xlsx"
    write_demo(december)
    _next_month(december, seed=99)
    before = sha256(december)
    result = evaluate_file(december, tmp_path / "december-evaluated.xlsx", carried=entries,
                           carried_from=evaluated.name).characteristics[0]
    # the same limits applied to new data: nothing re-estimated
    old, new = _limits(first.characteristics[0]), _limits(result)
    for name in old:
        for a, b in zip(old[name], new[name], strict=True):
            assert b == pytest.approx(a, rel=1e-12)
    assert not result.fit.base.any()
    assert result.fit.limits_source.startswith("carried from november-evaluated.xlsx (first set by base period: "
                                               "the first 20 subgroups")
    assert sha256(december) == before
    # a third month carried from the second keeps the first origin, not a growing chain
    january = read_limits_block(tmp_path / "december-evaluated.xlsx")["Bore diameter"]
    assert january["set_by"] == first.characteristics[0].fit.limits_source
    third = fit_characteristic(result.characteristic, "Bore diameter", EvaluationOptions(carried=january))
    assert third.fit.limits_source == (f"carried from december-evaluated.xlsx (first set by "
                                       f"{first.characteristics[0].fit.limits_source})")


def test_carried_limits_for_ewma_and_p_keep_their_parameters():
    rng = np.random.default_rng(6)
    ch = _char(rng.normal(5, 1, (20, 3)))
    from sheettool.evaluation.carried import limits_entry
    first = fit_characteristic(ch, "s", EvaluationOptions(chart="ewma", ewma=EwmaParameters(0.1, 2.7)))
    entry = limits_entry(first)
    later = fit_characteristic(_char(rng.normal(5, 1, (20, 3))), "s", EvaluationOptions(carried=entry))
    assert later.fit.chart == "ewma" and later.fit.parameters["lambda"] == 0.1 and later.fit.parameters["L"] == 2.7
    assert later.fit.process_mean == first.fit.process_mean and later.fit.sigma_within == first.fit.sigma_within
    counts = Characteristic("c", Counts([3, 5, 2, 6], [40, 60, 20, 80]))
    p_entry = limits_entry(fit_characteristic(counts, "s"))
    again = fit_characteristic(Characteristic("c", Counts([1, 9], [50, 70])), "s",
                               EvaluationOptions(carried=p_entry))
    assert again.fit.parameters["p0"] == pytest.approx(16 / 200)


def test_cli_limits_from_an_earlier_output(run_cli, tmp_path):
    november = tmp_path / "november.xlsx"
    write_demo(november)
    evaluated = tmp_path / "nov-evaluated.xlsx"
    assert run_cli("evaluate", november, "-o", evaluated).code == 0
    december = tmp_path / "december.xlsx"
    write_demo(december)
    _next_month(december, seed=7)
    out = run_cli("evaluate", december, "-o", tmp_path / "dec.xlsx", "--limits-from", evaluated, "--json")
    assert out.code == 0, out.err
    char = next(c for c in out.json["characteristics"] if c["sheet"] == "Bore diameter")
    assert char["limits_source"].startswith("carried from nov-evaluated.xlsx")
    assert char["base_period_points"] == []
    assert char["carried"] == {"matched_by": "identity"}
    # a sheet the block does not know: its own base period, a problem saying so and exit 6 (written, not carried)
    book = openpyxl.load_workbook(december)
    book.active.title = "Outer diameter"
    book.save(december)
    out = run_cli("evaluate", december, "-o", tmp_path / "dec2.xlsx", "--limits-from", evaluated, "--json")
    assert out.code == 6
    outer = next(c for c in out.json["characteristics"] if c["sheet"] == "Outer diameter")
    assert outer["limits_source"].startswith("base period") and outer["carried"] == {"matched_by": None}
    assert any("no carried limits for identity" in p["message"] for p in out.json["problems"])


def test_limits_file_without_block_or_unknown_version(run_cli, tmp_path):
    plain = tmp_path / "plain.xlsx"
    write_demo(plain)
    with pytest.raises(InputError, match=r"plain\.xlsx: no sheettool limits block"):
        read_limits_block(plain)
    result = run_cli("evaluate", plain, "-o", tmp_path / "o.xlsx", "--limits-from", plain)
    assert result.code == 3 and "plain.xlsx" in result.err and "Traceback" not in result.err
    evaluated = tmp_path / "e.xlsx"
    evaluate_file(plain, evaluated)
    book = openpyxl.load_workbook(evaluated)
    book[LIMITS_SHEET]["C1"] = 7
    book.save(evaluated)
    with pytest.raises(InputError, match=r"e\.xlsx: sheet .limits-block., cell C1: limits block version 7 "):
        read_limits_block(evaluated)


# Property (common practice: limits are location-scale equivariant): for data a x + b with a > 0, the
# location chart's center and limits move to a * value + b; spread charts scale by a; widths scale by a.
@settings(max_examples=25, deadline=None)
@given(shift=st.floats(-1e3, 1e3), scale=st.floats(0.01, 100.0),
       chart=st.sampled_from(["xbar-r", "xbar-s", "individuals", "ewma", "cusum"]), seed=st.integers(0, 1000))
def test_limits_shift_and_scale_with_the_data(shift, scale, chart, seed):
    width = 1 if chart == "individuals" else 4
    values = np.random.default_rng(seed).normal(10.0, 1.0, (20, width))
    plain = fit_characteristic(_char(values), "s", EvaluationOptions(chart=chart))
    moved = fit_characteristic(_char(scale * values + shift), "s", EvaluationOptions(chart=chart))
    for a, b in zip(plain.fit.statistics, moved.fit.statistics, strict=True):
        location = a.name in ("mean", "individual", "ewma")
        offset = shift if location else 0.0
        for x, y in ((a.center, b.center), (a.lcl, b.lcl), (a.ucl, b.ucl)):
            assert y == pytest.approx(scale * x + offset, rel=1e-9, abs=1e-9 * (1 + abs(shift)))
        assert b.ucl - b.lcl == pytest.approx(scale * (a.ucl - a.lcl), rel=1e-9, abs=1e-9)


def _settings(**values: object) -> dict[str, Setting]:
    """Settings as the command line would give them."""
    return {name: convert(Setting(name, value, f"option --{name}")) for name, value in values.items()}


@pytest.mark.parametrize(("options", "words"), [
    (_settings(base_period="first 40"), "base period 'first 40' names 40 subgroups but there are 30"),
    (_settings(lsl=12.1, usl=11.9), "must be below the upper"),
    (_settings(chart="p"), "a p (proportion defective) chart needs attribute counts"),
])
def test_bad_settings_give_a_clear_input_error(tmp_path, options, words):
    path = tmp_path / "in.xlsx"
    write_demo(path)
    book = openpyxl.load_workbook(path)  # the bore sheet alone, so that nothing else can be evaluated
    for name in book.sheetnames[1:]:
        del book[name]
    book.save(path)
    before = sha256(path)
    with pytest.raises(InputError) as err:
        evaluate_file(path, tmp_path / "out.xlsx", options)
    message = str(err.value)
    assert "in.xlsx" in message and "sheet 'Bore diameter'" in message and words in message
    assert sha256(path) == before and not (tmp_path / "out.xlsx").exists()
