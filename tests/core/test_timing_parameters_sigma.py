"""The typed values the layers share: time (ATS, false alarms per month, the in-control target), the parameters of
the time-weighted charts and the sigma-method enumeration."""

import math

import pytest
from scipy import stats

from sheettool.core.parameters import PARAMETER_SETTINGS, CusumParameters, EwmaParameters
from sheettool.core.sigma import SigmaMethod, modelled_method
from sheettool.core.timing import (
    THREE_SIGMA_ARL,
    arl_for_false_alarms,
    ats_hours,
    false_alarms_per_month,
    in_control_target,
    signals_against_chance,
)


def test_time_to_signal_and_false_alarms():
    # ATS = ARL x interval; false alarms per month = hours / (interval x ARL0) (definitions, common practice)
    assert ats_hours(40.0, 0.5) == pytest.approx(20.0)
    assert ats_hours(40.0, None) is None
    assert false_alarms_per_month(370.4, 2.0, 400.0) == pytest.approx(400.0 / (2.0 * 370.4))
    assert false_alarms_per_month(370.4, None, 400.0) is None and false_alarms_per_month(370.4, 2.0, None) is None
    assert false_alarms_per_month(float("inf"), 2.0, 400.0) == 0.0  # a scheme that cannot signal in control
    # read backwards: the ARL that gives that many false alarms
    assert arl_for_false_alarms(false_alarms_per_month(500.0, 1.5, 300.0), 1.5, 300.0) == pytest.approx(500.0)


def test_in_control_target_is_the_stricter_of_both():
    # 3-sigma limits with known parameters: 1 / (2 Phi(-3)) = 370.4 (common practice; scipy.stats as reference)
    assert in_control_target(None, None, None, None) == pytest.approx(1.0 / (2.0 * stats.norm.sf(3.0)), rel=1e-12)
    assert abs(THREE_SIGMA_ARL - 370.398) < 5e-4
    assert in_control_target(200.0, 1.0, 2.0, 480.0) == pytest.approx(240.0)  # 480 / (2 x 1)
    assert in_control_target(300.0, 1.0, 2.0, 480.0) == pytest.approx(300.0)
    assert in_control_target(None, 4.0, 1.0, 480.0) == pytest.approx(120.0)
    assert in_control_target(250.0, 1.0, None, 480.0) == 250.0  # without the interval the false alarms give no ARL


def test_time_weighted_parameters_have_one_set_of_names_and_defaults():
    # the usual textbook defaults: EWMA lambda 0.2 with 3-sigma-wide limits, CUSUM k 0.5 and h 5 (Montgomery 2009,
    # ch. 9, recalled from memory)
    assert EwmaParameters().as_mapping() == {"lambda": 0.2, "L": 3.0}
    assert CusumParameters().as_mapping() == {"k": 0.5, "h": 5.0}
    assert EwmaParameters.from_mapping({"lambda": 0.1, "n": 4.0}) == EwmaParameters(lam=0.1)
    assert set(PARAMETER_SETTINGS) == {"lambda", "L", "k", "h"}
    for bad, words in ((lambda: EwmaParameters(lam=0.0), "lambda"), (lambda: EwmaParameters(L=-1.0), "L must"),
                       (lambda: CusumParameters(k=-0.5), "k must"), (lambda: CusumParameters(h=0.0), "h must")):
        with pytest.raises(ValueError, match=words):
            bad()


def test_sigma_methods_words_and_the_estimators_modelled():
    assert SigmaMethod.RANGE.words == "R-bar / d2" and SigmaMethod.MOVING_RANGE.words == "MR-bar / d2(2)"
    words = [m.words for m in SigmaMethod if m is not SigmaMethod.GIVEN]
    assert len(set(words)) == len(words)  # one method, one wording
    assert SigmaMethod.RANGE_VARYING.modelled is SigmaMethod.RANGE
    assert SigmaMethod.POOLED.modelled is SigmaMethod.POOLED and SigmaMethod.GIVEN.modelled is None
    assert SigmaMethod.PROPORTION.modelled is None
    assert modelled_method("s-bar") is SigmaMethod.S_BAR
    with pytest.raises(ValueError, match="sigma_method must be one of range, s-bar, pooled, moving-range"):
        modelled_method(SigmaMethod.PROPORTION)


def test_signals_against_chance_is_the_poisson_tail():
    # 3-sigma limits, known parameters: ARL 370.4 (common practice); 720 hourly points expect 1.94 false alarms
    chance = signals_against_chance(720, 5, THREE_SIGMA_ARL)
    assert chance.expected == pytest.approx(720 / 370.398, rel=1e-4)
    # reference: scipy.stats.poisson, P(N >= 5) = sf(4)
    assert chance.probability == pytest.approx(stats.poisson.sf(4, chance.expected), rel=1e-10)
    m = chance.expected  # an independent computation: 1 - sum over k < 5 of e^-m m^k / k!
    assert chance.probability == pytest.approx(1 - sum(math.exp(-m) * m**k / math.factorial(k) for k in range(5)))
    # the binomial count of a Shewhart chart is close to it: 720 points, p = 0.0027 (common practice)
    assert chance.probability == pytest.approx(stats.binom.sf(4, 720, 1 / THREE_SIGMA_ARL), rel=0.02)
    assert signals_against_chance(30, 0, 137.2).probability == 1.0
    assert signals_against_chance(30, 2, math.inf).probability == 0.0  # a scheme that never alarms falsely
    with pytest.raises(ValueError):
        signals_against_chance(-1, 0, 370.0)
