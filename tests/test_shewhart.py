"""Run lengths of Shewhart limits against the trade's known figures."""

import pytest
from scipy import stats

from sheettool.core.runlength.shewhart import (
    either_signals,
    geometric_arl,
    mean_beyond_probability,
    range_beyond_probability,
)


def test_three_sigma_false_alarm_and_arl():
    # 3-sigma limits: false-alarm probability 0.0027 per point, in-control ARL 370.4 (common practice).
    p = float(mean_beyond_probability(0.0))
    assert p == pytest.approx(0.0027, abs=1e-4)
    assert float(geometric_arl(p)) == pytest.approx(370.4, abs=0.05)


def test_shifted_mean_of_five():
    # A 1-sigma shift of the process seen through means of 5: standardized shift sqrt(5); ARL = 1/p
    # with p from the normal distribution (scipy.stats as reference).
    p = stats.norm.sf(3 - 5**0.5) + stats.norm.cdf(-3 - 5**0.5)
    assert float(geometric_arl(mean_beyond_probability(1.0, n=5))) == pytest.approx(1 / p, rel=1e-12)


def test_range_chart_false_alarm_by_simulation():
    # R chart with D3/D4 limits for n = 5: compare with a simulation of normal ranges (numpy reference).
    import numpy as np

    from sheettool.core.constants import constants

    c = constants(5)
    rng = np.random.default_rng(11)
    r = np.ptp(rng.standard_normal((2_000_000, 5)), axis=1)
    simulated = np.mean(r > c.D4 * c.d2)
    assert range_beyond_probability(5) == pytest.approx(simulated, rel=0.05)


def test_either_signals_combines_independent_charts():
    assert float(either_signals(0.1, 0.2)) == pytest.approx(1 - 0.9 * 0.8)
