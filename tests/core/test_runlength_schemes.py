"""Attribute charts, companion charts and the scheme dispatch against direct computation and simulation."""

import numpy as np
import pytest
from scipy import stats

from sheettool.core.charts import ChartFit
from sheettool.core.constants import constants
from sheettool.core.rules import find_hits, parse_rules
from sheettool.core.runlength.attributes import CountModel, attribute_chain
from sheettool.core.runlength.montecarlo import simulate_run_lengths, summarize
from sheettool.core.runlength.scheme import (
    CURVE_SHIFTS,
    Scheme,
    companion_probability,
    performance_of,
    scheme_run_lengths,
)
from sheettool.core.runlength.zones import discrete_cell_probabilities, zone_cuts
from sheettool.core.sigma import SigmaMethod
from sheettool.evaluation.options import EvaluationOptions


@pytest.mark.parametrize("n, p0, p1", [(100, 0.05, 0.05), (100, 0.05, 0.09), (50, 0.02, 0.02), (200, 0.1, 0.13)])
def test_p_chart_limits_against_binomial(n, p0, p1):
    # ARL = 1 / P(count beyond n p0 +/- 3 sqrt(n p0 (1 - p0))), computed directly with scipy.stats.binom.
    se = np.sqrt(n * p0 * (1 - p0))
    upper, lower = n * p0 + 3 * se, n * p0 - 3 * se
    q = stats.binom.sf(np.floor(upper), n, p1) + (stats.binom.cdf(np.ceil(lower) - 1, n, p1) if lower > 0 else 0)
    chain = attribute_chain(CountModel("binomial", n, p0), parse_rules("beyond-limits"))
    assert chain.arl(p1) == pytest.approx(1 / q, rel=1e-9)


@pytest.mark.parametrize("c0, c1", [(4.0, 4.0), (4.0, 9.0), (16.0, 16.0), (0.8, 2.0)])
def test_c_chart_limits_against_poisson(c0, c1):
    # ARL = 1 / P(count beyond c0 +/- 3 sqrt(c0)), directly with scipy.stats.poisson.
    upper, lower = c0 + 3 * np.sqrt(c0), c0 - 3 * np.sqrt(c0)
    q = stats.poisson.sf(np.floor(upper), c1) + (stats.poisson.cdf(np.ceil(lower) - 1, c1) if lower > 0 else 0)
    chain = attribute_chain(CountModel("poisson", 1.0, c0), parse_rules("beyond-limits"))
    assert chain.arl(c1) == pytest.approx(1 / q, rel=1e-9)


def test_u_chart_is_the_c_chart_of_the_subgroup_total():
    # A u chart of n units at u0 plots the Poisson(n u0) total scaled by 1/n (common practice).
    u = attribute_chain(CountModel("poisson", 8.0, 0.5), parse_rules("zones"))
    c = attribute_chain(CountModel("poisson", 1.0, 4.0), parse_rules("zones"))
    assert u.arl(0.75) == pytest.approx(c.arl(6.0), rel=1e-12)


def test_attribute_zone_rules_against_simulation():
    # Zone rules on binomial counts, points exactly on a threshold included: simulated counts, 3.5 SE.
    model = CountModel("binomial", 64, 0.25)  # se = sqrt(12): thresholds fall between counts except 0 at 16
    rules = parse_rules("zones")
    for rate in (0.25, 0.3):
        exact = attribute_chain(model, rules).arl(rate)
        runs = simulate_run_lengths(rules, lambda rng, shape, r=rate: model.sample(rng, r, shape), 6000, seed=9)
        assert np.mean(runs) == pytest.approx(exact, abs=3.5 * np.std(runs) / np.sqrt(len(runs)))


def test_companion_probabilities_against_simulation():
    # Per-subgroup signal probability of the R and S charts (3-sigma limits), normal subgroups of 5
    # (numpy simulation, seeded), at sigma ratio 1 and 1.5.
    rng = np.random.default_rng(17)
    c = constants(5)
    for ratio in (1.0, 1.5):
        x = ratio * rng.standard_normal((400_000, 5))
        r = np.ptp(x, axis=1)
        s = np.std(x, axis=1, ddof=1)
        p_r = np.mean((r > c.D4 * c.d2) | (r < c.D3 * c.d2))
        p_s = np.mean((s > c.B4 * c.c4) | (s < c.B3 * c.c4))
        assert companion_probability("range", 5)(0.0, ratio) == pytest.approx(p_r, rel=0.04)
        assert companion_probability("sd", 5)(0.0, ratio) == pytest.approx(p_s, rel=0.04)


def test_xbar_r_scheme_against_simulated_subgroups():
    # The scheme signals when either chart does: zone rules on the means and the R chart's limits.
    # Simulated subgroups of 5 (numpy, seeded), rules applied with find_hits; within 3.5 SE.
    n, shift, ratio = 5, 0.25, 1.3
    scheme = Scheme("xbar-r", tuple(parse_rules("zones")), n=n)
    exact = scheme_run_lengths(scheme, [(shift, ratio)]).results[0].arl
    rng = np.random.default_rng(2)
    c = constants(n)
    rules = parse_rules("zones")
    lengths = []
    for _ in range(1500):
        x = shift + ratio * rng.standard_normal((300, n))
        z = x.mean(axis=1) * np.sqrt(n)
        hits = find_hits(z, rules)
        r = np.ptp(x, axis=1)
        beyond = np.flatnonzero(r > c.D4 * c.d2)
        ends = [h.point for h in hits[:1]] + list(beyond[:1])
        lengths.append(min(ends) + 1)
    lengths = np.array(lengths)
    assert np.mean(lengths) == pytest.approx(exact, abs=3.5 * np.std(lengths) / np.sqrt(len(lengths)))


def _fit(chart: str, **parameters: float) -> ChartFit:
    return ChartFit(chart=chart, statistics=[], subgroup_size=int(parameters.get("n", 1)), process_mean=0.0,
                    sigma_within=1.0, sigma_method=SigmaMethod.GIVEN, base=np.ones(1, dtype=bool),
                    parameters=parameters)


@pytest.mark.parametrize("chart, parameters", [
    ("xbar-r", {"n": 5}), ("xbar-s", {"n": 5}), ("individuals", {"n": 1}), ("p", {"n": 100, "p0": 0.05}),
    ("np", {"n": 100, "p0": 0.05}), ("c", {"c0": 4.0}), ("u", {"u0": 0.5, "n": 8}),
    ("ewma", {"lambda": 0.2, "L": 2.962, "n": 1}), ("cusum", {"k": 0.5, "h": 4.0, "n": 1}),
])
def test_performance_of_every_chart_kind(chart, parameters):
    options = EvaluationOptions(interval_hours=2.0, hours_per_month=400.0)
    perf = performance_of(_fit(chart, **parameters), parse_rules("beyond-limits"), options)
    assert [s.shift for s in perf.shifts] == list(options.shifts)
    assert perf.arl_in_control == pytest.approx(perf.shifts[0].arl)
    # false alarms per month = hours per month / (interval * in-control ARL) (definition, common practice)
    assert perf.false_alarms_per_month == pytest.approx(400.0 / (2.0 * perf.arl_in_control))
    assert all(s.ats_hours == pytest.approx(2.0 * s.arl) for s in perf.shifts)
    assert len(perf.curve) == len(CURVE_SHIFTS) == 41
    arls = [s.arl for s in perf.shifts]
    assert arls == sorted(arls, reverse=True)  # a larger shift is caught sooner
    assert perf.method


def test_attribute_shift_is_in_standard_errors():
    perf = performance_of(_fit("p", n=100, p0=0.05), parse_rules("beyond-limits"), EvaluationOptions())
    se = np.sqrt(0.05 * 0.95 / 100)
    assert [s.rate for s in perf.shifts] == pytest.approx([0.05 + d * se for d in EvaluationOptions().shifts])


def test_xbar_limits_performance_matches_the_geometric_case():
    perf = performance_of(_fit("xbar-r", n=5), parse_rules("beyond-limits"), EvaluationOptions())
    p_mean = 2 * stats.norm.sf(3)  # common practice: 0.0027 per point
    p_range = companion_probability("range", 5)(0.0, 1.0)
    assert perf.arl_in_control == pytest.approx(1 / (1 - (1 - p_mean) * (1 - p_range)), rel=1e-9)
    assert perf.components["mean"] == pytest.approx(370.398, abs=0.001)


def test_missing_parameters_are_named():
    with pytest.raises(ValueError, match="p0"):
        performance_of(_fit("p", n=100), parse_rules("beyond-limits"), EvaluationOptions())
    with pytest.raises(ValueError, match="no run-length method"):
        performance_of(_fit("mystery"), parse_rules("beyond-limits"), EvaluationOptions())


def test_trend_rules_use_monte_carlo_and_say_so():
    result = scheme_run_lengths(Scheme("xbar", tuple(parse_rules("limits,trend 6")), n=1), [(0.0, 1.0)], runs=3000)
    rl = result.results[0]
    assert result.method.startswith("Monte Carlo, 3000 runs")
    assert rl.ci[0] < rl.arl < rl.ci[1]
    assert summarize(np.array([1, 2, 3, 4])).percentiles[50] == 2  # smallest t with F(t) >= 0.5


@pytest.mark.parametrize(("family", "n", "rate0"), [("binomial", 50, 0.05), ("binomial", 7, 0.3),
                                                    ("poisson", 1.0, 4.0), ("poisson", 2.5, 0.7)])
@pytest.mark.parametrize("rules", ["beyond-limits", "zones"])
def test_attribute_cells_match_the_whole_support(family, n, rate0, rules):
    # Independent computation: every count of the support from scipy.stats, cell by cell, against the few counts
    # next to the thresholds that the chain keeps (the rest lumped by the cdf); to 1e-12.
    model = CountModel(family, n, rate0)
    cuts = zone_cuts(parse_rules(rules))
    for rate in (rate0, model.rate_at(1.5)):
        x = np.arange(int(n) + 1) if family == "binomial" else np.arange(200)
        pmf = stats.binom.pmf(x, int(n), rate) if family == "binomial" else stats.poisson.pmf(x, n * rate)
        whole = discrete_cell_probabilities(cuts, (x - model.mean0) / model.se0, pmf)
        z, mass = model.support(rate, cuts)
        assert discrete_cell_probabilities(cuts, z, mass) == pytest.approx(whole, abs=1e-12)


@pytest.mark.parametrize("family", ["binomial", "poisson"])
def test_a_huge_number_inspected_is_the_normal_chart(family):
    # 1e12 units inspected a subgroup: the count is as good as normal, so 3-sigma limits give an in-control ARL of
    # 370.4 and the four zone rules 91.75 (tests/reference/published-values.md: common practice; Champ and Woodall
    # 1987, Table 2), within 0.1%; before, the chain enumerated 4e10 counts and ran out of memory.
    model = CountModel(family, 1e12, 0.004)
    assert attribute_chain(model, parse_rules("beyond-limits")).arl(model.rate0, 1.0) == pytest.approx(370.4, rel=1e-3)
    assert attribute_chain(model, parse_rules("zones")).arl(model.rate0, 1.0) == pytest.approx(91.75, rel=1e-3)
