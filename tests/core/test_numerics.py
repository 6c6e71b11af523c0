"""Numerical defects found by independent checks (issue 13): each test names its independent check."""

from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from sheettool.core.rules import parse_rules
from sheettool.core.runlength.markov import WithCompanion
from sheettool.core.runlength.zones import ZoneChain


def _success_run_arl(p: float, k: int) -> float:
    """Expected waiting time for a run of k successes with success probability p: (1 - p^k) / ((1 - p) p^k)
    (Feller 1968, waiting time for a success run; recalled from memory)."""
    return (1 - p**k) / ((1 - p) * p**k)


@pytest.mark.parametrize("shift", [0.0, 1.0, 2.0, 3.0, 4.0, 5.0])
def test_within_band_rule_alone_matches_the_success_run_waiting_time(shift):
    # "15 in a row within 1 sigma" alone signals at the first run of 15 points with |Z| < 1; p from scipy.stats.
    # Independent check: Feller's closed form for the waiting time of a success run (recalled from memory),
    # to 1e-9 relative. Before, shift 3 gave 7.4e16 (true 4.6e24) and shift 4 a negative ARL.
    chain = ZoneChain(parse_rules("15/15<1"))
    p = stats.norm.cdf(1 - shift) - stats.norm.cdf(-1 - shift)
    expected = _success_run_arl(p, 15)
    assert chain.arl(shift) == pytest.approx(expected, rel=1e-9)
    rl = chain.run_length(shift)
    assert rl.arl == pytest.approx(expected, rel=1e-9)
    # the run length is geometric-tailed: SDRL about ARL for large ARLs (SDRL^2 = ARL^2 - ARL for a geometric)
    assert rl.sdrl == pytest.approx(np.sqrt(max(expected**2 - expected, 0.0)), rel=0.1)
    if shift >= 3:
        # median of a geometric with mean A: A ln 2 (common practice), to 1e-6
        assert rl.percentiles[50] == pytest.approx(expected * np.log(2), rel=1e-6)


def test_within_band_rule_with_a_companion_stays_finite_and_positive():
    # A companion (independent) chart that signals with probability c on each point (as the R chart beside
    # X-bar). Independent check, a renewal argument written here: attempts are runs of q = p (1 - c) points
    # (in band, no companion signal), restarted by an out-of-band point without a companion signal
    # (r = (1 - p)(1 - c)), ended by a companion signal or the 15th point in band. Points per attempt
    # (1 - q^15) / (1 - q), P(an attempt ends) (c + r q^15) / (1 - q), so ARL = (1 - q^15) / (c + r q^15)
    # (c = 0 gives Feller's form). Compared to 1e-9 relative.
    shift, c = 3.0, 1e-12
    p = stats.norm.cdf(1 - shift) - stats.norm.cdf(-1 - shift)
    q, r = p * (1 - c), (1 - p) * (1 - c)
    expected = (1 - q**15) / (c + r * q**15)
    chart = WithCompanion(ZoneChain(parse_rules("15/15<1")), lambda s, sr: c, "test")
    assert chart.arl(shift) == pytest.approx(expected, rel=1e-9)
    assert chart.run_length(shift).arl == pytest.approx(expected, rel=1e-9)


def _individuals(values):
    from sheettool.core.data import Characteristic, Measurements

    x = np.asarray(values, dtype=float)[:, None]
    return Characteristic(name="On limit", data=Measurements(x), labels=[str(i + 1) for i in range(len(x))])


_ON_LINES = {"1/1>3": [3, -3] * 4, "2/3>2": [2, 2, 2, -2, -2, -2], "4/5>1": [1] * 5 + [-1] * 5,
             "15/15<1": [1, -1] * 8, "8/8>>1": [1, -1] * 4}


@pytest.mark.parametrize(("mean", "sigma"), [(10.0, 0.1), (2.0, 0.01), (0.3, 0.1), (100.0, 0.7)])
@pytest.mark.parametrize("rule", list(_ON_LINES))
def test_a_reading_on_a_limit_is_not_beyond_for_every_rule(mean, sigma, rule):
    # Readings typed as the displayed lines center + j sigma (given standards, individuals), for each rule
    # on its own lines: on a limit is neither beyond nor within, for every rule alike, whatever the rounding
    # of z. Independent check: the decimal arithmetic of the typed values (common practice: a point on the
    # line is not beyond it); the ulps of (x - center) / sigma decided it before (10.3 flagged, 2.03 not).
    from sheettool.core.charts.base import beyond_limits
    from sheettool.evaluation.evaluate import fit_characteristic
    from sheettool.evaluation.options import EvaluationOptions

    on = [round(mean + j * sigma, 10) for j in _ON_LINES[rule]]
    options = EvaluationOptions(rules=rule, standard={"mean": mean, "sigma": sigma})
    fitted = fit_characteristic(_individuals(on), "On limit", options)
    first = fitted.fit.statistics[0].name  # the individual values (the moving range has limits of its own)
    assert [s for s in fitted.signals if s.statistic == first] == []
    if rule == "1/1>3":
        assert not beyond_limits(replace(fitted.fit, statistics=fitted.fit.statistics[:1])).any()
    # one part in 1e9 beyond (or, for the within rule, inside) each line counts: the comparison is not loose
    inward = -1 if rule == "15/15<1" else 1
    nudged = [x + inward * np.sign(j) * abs(x) * 1e-9 for x, j in zip(on, _ON_LINES[rule], strict=True)]
    fitted = fit_characteristic(_individuals(nudged), "On limit", options)
    assert [s for s in fitted.signals if s.statistic == first]


def _simulated_ewma_arl(lam: float, L: float, shift: float, runs: int, seed: int) -> tuple[float, float]:
    """Mean run length and its standard error of an EWMA from Z_0 = 0 with the exact limits
    L sqrt(lambda / (2 - lambda) (1 - (1 - lambda)^(2t))), simulated here."""
    rng = np.random.default_rng(seed)
    z, out, active, t = np.zeros(runs), np.zeros(runs), np.arange(runs), 0
    while active.size:
        t += 1
        z[active] = lam * rng.normal(shift, 1.0, active.size) + (1 - lam) * z[active]
        beyond = np.abs(z[active]) > L * np.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * t)))
        out[active[beyond]] = t
        active = active[~beyond]
    return float(out.mean()), float(out.std(ddof=1) / np.sqrt(runs))


@pytest.mark.parametrize(("shift", "runs"), [(0.5, 100_000), (1.0, 200_000), (2.0, 200_000)])
def test_ewma_arl_for_the_limits_as_drawn_matches_a_simulation(shift, runs):
    # Independent check: the EWMA with its exact, widening limits simulated here; within 4 standard errors
    # of the simulation. The asymptotic-limit ARL lies well outside (44.13 against 42.71 at shift 0.5).
    from sheettool.core.runlength.ewma import EwmaChart, drawn_limits_arl

    chart = EwmaChart(0.2, 3.0)
    mean, se = _simulated_ewma_arl(0.2, 3.0, shift, runs, seed=13)
    assert drawn_limits_arl(chart, shift) == pytest.approx(mean, abs=4 * se)
    assert abs(chart.arl(shift) - mean) > 8 * se


def test_evaluate_reports_the_ewma_arl_for_the_limits_as_drawn():
    # evaluate's in-control ARL is that of the chart as drawn (554.5 for lambda 0.2, L 3, against 559.9 for
    # asymptotic limits); the value itself is checked against the simulation above.
    from sheettool.core.data import Characteristic, Measurements
    from sheettool.core.runlength.ewma import EwmaChart, drawn_limits_arl
    from sheettool.evaluation.evaluate import evaluate
    from sheettool.evaluation.options import EvaluationOptions

    x = np.random.default_rng(5).normal(10.0, 1.0, (25, 4))
    ch = Characteristic(name="E", data=Measurements(x), labels=[str(i + 1) for i in range(25)])
    result = evaluate(ch, "E", EvaluationOptions(chart="ewma", shifts=(1.0,)))
    perf = result.performance
    assert perf.arl_in_control == pytest.approx(drawn_limits_arl(EwmaChart(0.2, 3.0), 0.0), rel=1e-12)
    assert perf.arl_in_control == pytest.approx(554.5, abs=0.05)
    assert perf.shifts[0].arl == pytest.approx(drawn_limits_arl(EwmaChart(0.2, 3.0), 2.0), rel=1e-12)  # 1 sd, n 4
    assert "as drawn" in perf.method and "asymptotic limits" not in perf.method.split(";")[0]
