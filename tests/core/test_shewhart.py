"""Run lengths of Shewhart limits against the trade's known figures, through the run-length engine."""

import pytest
from scipy import stats

from sheettool.core.rules import parse_rules
from sheettool.core.runlength.scheme import Scheme, companion_probability, scheme_run_lengths
from sheettool.core.runlength.shewhart import range_beyond_probability


def _arl(scheme: Scheme, shift: float = 0.0) -> float:
    return scheme_run_lengths(scheme, [(shift, 1.0)]).results[0].arl


def test_three_sigma_false_alarm_and_arl():
    # 3-sigma limits: false-alarm probability 0.0027 per point, in-control ARL 370.4 (common practice).
    arl = _arl(Scheme("individuals", parse_rules("beyond-limits")))
    assert 1 / arl == pytest.approx(0.0027, abs=1e-4)
    assert arl == pytest.approx(370.4, abs=0.05)


def test_shifted_mean_of_five():
    # A 1-sigma shift of the process seen through means of 5: standardized shift sqrt(5); ARL = 1/p
    # with p from the normal distribution (scipy.stats as reference).
    p = stats.norm.sf(3 - 5**0.5) + stats.norm.cdf(-3 - 5**0.5)
    assert _arl(Scheme("xbar", parse_rules("beyond-limits"), n=5), 1.0) == pytest.approx(1 / p, rel=1e-12)


def test_range_chart_false_alarm_by_simulation():
    # R chart with D3/D4 limits for n = 5: compare with a simulation of normal ranges (numpy reference).
    import numpy as np

    from sheettool.core.constants import constants

    c = constants(5)
    rng = np.random.default_rng(11)
    r = np.ptp(rng.standard_normal((2_000_000, 5)), axis=1)
    simulated = np.mean(r > c.D4 * c.d2)
    assert range_beyond_probability(5) == pytest.approx(simulated, rel=0.05)


def test_either_chart_signals_as_independent_charts():
    # X-bar and R together: a point signals when either chart does, independent for normal data, so
    # 1 / ARL = 1 - (1 - p_mean)(1 - p_range) (common practice; p_mean from scipy.stats).
    p_mean = 2 * stats.norm.sf(3)
    p_range = companion_probability("range", 5)(0.0, 1.0)
    arl = _arl(Scheme("xbar-r", parse_rules("beyond-limits"), n=5))
    assert arl == pytest.approx(1 / (1 - (1 - p_mean) * (1 - p_range)), rel=1e-9)
