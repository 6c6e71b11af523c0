"""EWMA and tabular CUSUM against their formulas and a hand-worked sequence."""

import numpy as np
import pytest

from sheettool.core.data import Characteristic, Measurements
from sheettool.core.parameters import CusumParameters, EwmaParameters
from sheettool.evaluation.evaluate import fit_characteristic
from sheettool.evaluation.options import EvaluationOptions


def _run(values, **options):
    ch = Characteristic("x", Measurements(np.asarray(values, float)))
    return fit_characteristic(ch, "s", EvaluationOptions(**options))


def test_ewma_time_varying_limits_match_the_closed_form():
    rng = np.random.default_rng(12)
    values = rng.normal(10.0, 1.0, (30, 4))
    lam, width, mu, sigma = 0.2, 2.962, 10.0, 1.0
    result = _run(values, chart="ewma", ewma=EwmaParameters(lam, width), standard={"mean": mu, "sigma": sigma})
    (stat,) = result.fit.statistics
    i = np.arange(1, 31)
    # mu +/- L sigma/sqrt(n) sqrt(lambda / (2 - lambda) (1 - (1 - lambda)^(2i))) (Lucas and Saccucci 1990;
    # Montgomery 2009, eq. 9.24-9.25)
    half = width * sigma / 2 * np.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * i)))
    assert stat.ucl == pytest.approx(mu + half, rel=1e-12)
    assert stat.lcl == pytest.approx(mu - half, rel=1e-12)
    # the recursion z_i = lambda x_i + (1 - lambda) z_(i-1), z_0 = mu
    z, expected = mu, []
    for x in values.mean(axis=1):
        z = lam * x + (1 - lam) * z
        expected.append(z)
    assert stat.values == pytest.approx(expected, rel=1e-12)
    assert result.fit.parameters == {"lambda": lam, "L": width, "n": 4.0}
    assert result.fit.limits_source == "standard values: mean = 10, sigma = 1"
    assert [r.text for r in result.rules] == ["1/1>2.962"]


def test_ewma_of_individuals_signals_on_a_shift():
    values = np.r_[np.zeros(10), np.full(10, 2.0)][:, None]
    result = _run(values, chart="ewma", standard={"mean": 0.0, "sigma": 1.0})
    (stat,) = result.fit.statistics
    beyond = np.flatnonzero(stat.values > stat.ucl) + 1
    assert beyond.size and {s.point for s in result.signals} == set(beyond.tolist())
    assert all(s.point > 10 for s in result.signals)


def test_cusum_hand_worked_sequence():
    # mu0 = 10, sigma = 1, n = 1, k = 0.5, h = 5: C+_i = max(0, x_i - 10.5 + C+_(i-1)),
    # C-_i = max(0, 9.5 - x_i + C-_(i-1)) (Montgomery 2009, eq. 9.2-9.3); worked by hand below.
    x = [10.5, 11.0, 12.0, 9.0, 10.0, 13.0, 8.0, 7.0, 7.5]
    upper = [0.0, 0.5, 2.0, 0.5, 0.0, 2.5, 0.0, 0.0, 0.0]
    lower = [0.0, 0.0, 0.0, 0.5, 0.0, 0.0, 1.5, 4.0, 6.0]
    result = _run(np.array(x)[:, None], chart="cusum", standard={"mean": 10.0, "sigma": 1.0})
    up, low = result.fit.statistics
    assert (up.name, low.name) == ("cusum_upper", "cusum_lower")
    assert up.values == pytest.approx(upper, abs=1e-12)
    assert low.values == pytest.approx(lower, abs=1e-12)
    assert up.ucl[0] == low.ucl[0] == 5.0
    assert [(s.point, s.statistic) for s in result.signals] == [(9, "cusum_lower")]
    assert result.fit.parameters == {"k": 0.5, "h": 5.0, "reference": 10.0, "n": 1.0}


def test_cusum_reference_around_the_target_and_subgroup_means():
    # Means of 4 standardized by sigma / sqrt(4) = 0.5; reference at the target 11 rather than the mean 10.
    values = np.full((3, 4), 11.5)
    result = _run(values, chart="cusum", target=11.0, standard={"mean": 10.0, "sigma": 1.0})
    up, _ = result.fit.statistics
    # y = (11.5 - 11) / 0.5 = 1; C+ = 0.5, 1.0, 1.5 in sigmas of the mean, plotted times 0.5
    assert up.values == pytest.approx([0.25, 0.5, 0.75])
    assert up.ucl[0] == pytest.approx(5 * 0.5)
    assert "the target" in result.fit.notes[1]


def test_time_weighted_settings_are_checked():
    with pytest.raises(ValueError, match="lambda"):
        _run(np.ones((5, 1)) + np.arange(5)[:, None], chart="ewma", ewma=EwmaParameters(lam=1.5))
    with pytest.raises(ValueError, match="h > 0"):
        _run(np.ones((5, 1)) + np.arange(5)[:, None], chart="cusum", cusum=CusumParameters(h=0.0))


def test_time_weighted_charts_say_when_they_signal_in_their_own_terms():
    from sheettool.core.charts import chart_kind

    ch = Characteristic("x", Measurements(np.random.default_rng(4).normal(10, 1, (30, 1))))
    cusum = fit_characteristic(ch, "x", EvaluationOptions(chart="cusum", cusum=CusumParameters(k=0.5, h=4))).fit
    words = chart_kind("cusum").signal_words(cusum)
    assert "decision interval h = 4" in words and "k = 0.5" in words and "center line" not in words
    ewma = fit_characteristic(ch, "x", EvaluationOptions(chart="ewma", ewma=EwmaParameters(lam=0.1, L=2.7))).fit
    said = chart_kind("ewma").signal_words(ewma)
    assert "L = 2.7" in said and "lambda = 0.1" in said
