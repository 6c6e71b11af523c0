"""Variables charts (X-bar and R, X-bar and S, individuals and moving range) against their textbook formulas."""

import math

import numpy as np
import pytest
from scipy import special

from sheettool.core.data import Characteristic, Measurements
from sheettool.core.sigma import SigmaMethod
from sheettool.evaluation.evaluate import chart_choice, fit_characteristic
from sheettool.evaluation.options import EvaluationOptions

# Factors printed in ASTM E2587 (values recalled from memory, tests/reference/published-values.md);
# printed to 3 decimals, so limits built from them are compared within 1e-3 of the range scale.
A2_5, D4_5, A3_10, B3_10, B4_10, E2, D4_2 = 0.577, 2.114, 0.975, 0.284, 1.716, 2.660, 3.267


def _stat(result, name):
    return next(s for s in result.fit.statistics if s.name == name)


def test_xbar_r_limits_match_the_a2_d4_formula():
    rng = np.random.default_rng(4)
    values = rng.normal(50.0, 2.0, (25, 5))
    result = fit_characteristic(Characteristic("bore", Measurements(values)), "s")
    xbarbar, rbar = values.mean(), np.ptp(values, axis=1).mean()
    mean, rng_stat = _stat(result, "mean"), _stat(result, "range")
    # X-bar-bar +/- A2 R-bar; R chart 0 to D4 R-bar (Montgomery 2009, eq. 6.4-6.5; ASTM E2587 factors)
    assert mean.center[0] == pytest.approx(xbarbar, abs=1e-12)
    assert mean.ucl[0] == pytest.approx(xbarbar + A2_5 * rbar, abs=1e-3 * rbar)
    assert mean.lcl[0] == pytest.approx(xbarbar - A2_5 * rbar, abs=1e-3 * rbar)
    assert rng_stat.ucl[0] == pytest.approx(D4_5 * rbar, abs=1e-3 * rbar)
    assert rng_stat.lcl[0] == 0.0 and rng_stat.lcl_floored
    assert result.fit.sigma_method is SigmaMethod.RANGE and result.fit.sigma_words == "R-bar / d2"
    assert result.fit.parameters == {"n": 5.0}


def test_xbar_s_constant_size_matches_a3_b3_b4():
    rng = np.random.default_rng(5)
    values = rng.normal(0.0, 1.0, (20, 10))
    result = fit_characteristic(Characteristic("x", Measurements(values)), "s")
    sbar = values.std(axis=1, ddof=1).mean()
    mean, sd = _stat(result, "mean"), _stat(result, "sd")
    # X-bar-bar +/- A3 S-bar, S chart B3 S-bar to B4 S-bar (Montgomery 2009, eq. 6.27-6.29; ASTM E2587)
    assert result.fit.chart == "xbar-s"
    assert mean.ucl[0] - mean.center[0] == pytest.approx(A3_10 * sbar, abs=1e-3 * sbar)
    assert sd.center[0] == pytest.approx(sbar, rel=1e-12)
    assert sd.lcl[0] == pytest.approx(B3_10 * sbar, abs=1e-3 * sbar)
    assert sd.ucl[0] == pytest.approx(B4_10 * sbar, abs=1e-3 * sbar)


def _c4(n):
    return math.sqrt(2 / (n - 1)) * math.exp(special.gammaln(n / 2) - special.gammaln((n - 1) / 2))


def test_xbar_s_varying_sizes_limits_per_point():
    rng = np.random.default_rng(6)
    sizes = [10, 12, 8, 10, 11, 9, 10, 12, 10, 8]
    values = np.full((len(sizes), 12), np.nan)
    for i, n in enumerate(sizes):
        values[i, :n] = rng.normal(5.0, 0.5, n)
    result = fit_characteristic(Characteristic("x", Measurements(values)), "s", EvaluationOptions(chart="xbar-s"))
    n = np.array(sizes)
    s = np.nanstd(values, axis=1, ddof=1)
    # Size-weighted grand mean (Montgomery 2009, eq. 6.30); pooled s with the c4(1 + sum(n - 1))
    # unbiasing factor (ASTM E2587, variable subgroup sizes, recalled from memory); limits per point
    # mean +/- 3 sigma / sqrt(n_i), S chart c4(n_i) sigma +/- 3 sqrt(1 - c4(n_i)^2) sigma.
    xbarbar = np.nansum(values) / n.sum()
    dof = int(np.sum(n - 1))
    sigma = math.sqrt(np.sum((n - 1) * s**2) / dof) / _c4(dof + 1)
    mean, sd = _stat(result, "mean"), _stat(result, "sd")
    assert result.fit.sigma_within == pytest.approx(sigma, rel=1e-10)
    assert result.fit.sigma_method is SigmaMethod.POOLED and "pooled" in result.fit.sigma_words
    assert mean.ucl == pytest.approx(xbarbar + 3 * sigma / np.sqrt(n), rel=1e-10)
    assert mean.varies
    c4n = np.array([_c4(k) for k in sizes])
    assert sd.center == pytest.approx(c4n * sigma, rel=1e-10)
    assert sd.ucl == pytest.approx((c4n + 3 * np.sqrt(1 - c4n**2)) * sigma, rel=1e-10)
    assert any("limits per point" in note for note in result.fit.notes)


def test_individuals_and_moving_range_hand_worked():
    x = np.array([10.0, 12.0, 11.0, 13.0, 12.0, 10.0, 11.0, 12.0])
    result = fit_characteristic(Characteristic("x", Measurements(x[:, None])), "s")
    mrbar = np.mean(np.abs(np.diff(x)))  # (2+1+2+1+2+1+1)/7 = 10/7
    assert mrbar == pytest.approx(10 / 7)
    ind, mr = _stat(result, "individual"), _stat(result, "moving_range")
    # X-bar +/- E2 MR-bar, MR chart up to D4 MR-bar with E2 = 2.660 and D4 = 3.267 for n = 2
    # (ASTM E2587, recalled from memory; printed to 3 decimals)
    assert result.fit.chart == "individuals" and result.fit.parameters == {"n": 1.0}
    assert ind.ucl[0] == pytest.approx(x.mean() + E2 * mrbar, abs=2e-3)
    assert ind.lcl[0] == pytest.approx(x.mean() - E2 * mrbar, abs=2e-3)
    assert mr.ucl[0] == pytest.approx(D4_2 * mrbar, abs=2e-3)
    assert np.isnan(mr.values[0]) and mr.values[1] == 2.0


def test_short_subgroup_gets_its_own_limits():
    rng = np.random.default_rng(8)
    values = rng.normal(0, 1, (20, 5))
    values[7, 3:] = np.nan
    values[9, 1:] = np.nan
    result = fit_characteristic(Characteristic("x", Measurements(values)), "s")
    mean, rng_stat = _stat(result, "mean"), _stat(result, "range")
    sigma = result.fit.sigma_within
    # mean +/- 3 sigma / sqrt(n_i) (Montgomery 2009, sec. 6.3.2): wider for the subgroups of 3 and 1
    assert mean.ucl[7] - mean.center[7] == pytest.approx(3 * sigma / math.sqrt(3), rel=1e-12)
    assert mean.ucl[9] - mean.center[9] == pytest.approx(3 * sigma, rel=1e-12)
    assert mean.ucl[0] - mean.center[0] == pytest.approx(3 * sigma / math.sqrt(5), rel=1e-12)
    # the single reading has no range; its limit line runs on at the usual size
    assert np.isnan(rng_stat.values[9]) and rng_stat.ucl[9] == rng_stat.ucl[0]


@pytest.mark.parametrize(("size", "chart"), [(1, "individuals"), (2, "xbar-r"), (9, "xbar-r"), (10, "xbar-s"),
                                             (15, "xbar-s")])
def test_chart_choice_by_subgroup_size(size, chart):
    # n = 1: individuals; 2..9: X-bar and R; 10 or more: X-bar and S (common practice; Montgomery 2009, sec. 6.3)
    ch = Characteristic("x", Measurements(np.random.default_rng(1).normal(size=(12, size))))
    assert chart_choice(ch)[0] == chart
    result = fit_characteristic(ch, "s")
    assert result.fit.chart == chart
    reason = result.fit.notes[0]
    assert ("one reading" if size == 1 else f"subgroups of {size} readings") in reason
    assert any(p.message == reason for p in result.problems)


def test_individuals_chart_refuses_subgroups():
    ch = Characteristic("x", Measurements(np.ones((5, 3))))
    with pytest.raises(ValueError, match="one reading per row"):
        fit_characteristic(ch, "s", EvaluationOptions(chart="individuals"))


def test_unknown_chart_name():
    ch = Characteristic("x", Measurements(np.ones((5, 3))))
    with pytest.raises(ValueError, match=r"chart 'zigzag' is not known; use one of: xbar-r"):
        fit_characteristic(ch, "s", EvaluationOptions(chart="zigzag"))
