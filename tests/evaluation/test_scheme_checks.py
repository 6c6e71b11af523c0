"""The scheme in use, judged whole: pattern rules on the location chart only, and the same figures in `design`."""

import numpy as np
import pytest

from sheettool.core.data import Characteristic, Measurements
from sheettool.core.design import Requirements, Sampling, SearchGrid, design
from sheettool.core.rules import find_hits, parse_rules
from sheettool.core.runlength.scheme import performance_of
from sheettool.evaluation.evaluate import assess, fit_characteristic
from sheettool.evaluation.options import EvaluationOptions


def test_pattern_rules_apply_to_the_location_chart_only():
    # Subgroups of 5 whose ranges climb slowly above their center for a stretch (4 of 5 beyond 1 sigma on the R
    # chart, no range beyond its upper limit) while the means stay put: under the zones rules the R chart keeps
    # its limit rule alone, so no range signal (the pattern rules assume normal, independent points).
    rng = np.random.default_rng(3)
    base = rng.normal(0.0, 1.0, (30, 5))
    base -= base.mean(axis=1, keepdims=True)  # every mean exactly 0: no location signal
    base[20:26] *= 1.6  # ranges about 1.6 times their usual size: beyond 1 sigma of the R chart, within its limits
    fitted = fit_characteristic(Characteristic("bore", Measurements(base)), "s", EvaluationOptions(rules="zones"))
    ranges = next(s for s in fitted.fit.statistics if s.name == "range")
    z = (ranges.values - ranges.center) / ranges.sigma
    assert find_hits(z, parse_rules("zones")) and np.all(z < 3.0)  # the pattern is there on the R chart
    assert [s for s in fitted.signals if s.statistic == "range"] == []
    assert fitted.signals == []


@pytest.mark.parametrize(("n", "rules", "chart"), [(5, "zones", "xbar-r"), (1, "zones", "individuals"),
                                                   (12, "beyond-limits", "xbar-s")])
def test_design_and_evaluate_give_the_same_in_control_figures(n, rules, chart):
    # The same scheme (chart with its spread chart, rules, subgroup size, every hour, 400 h a month) must give the
    # same in-control ARL and false alarms per month in both commands (issue 13: 3.84 against 5.39 before).
    values = np.random.default_rng(11).normal(10.0, 1.0, (30, n))
    options = EvaluationOptions(rules=rules, interval_hours=1.0, hours_per_month=400.0)
    fitted = fit_characteristic(Characteristic("bore", Measurements(values)), "s", options)
    assert fitted.fit.chart == chart
    performance = performance_of(fitted.fit, fitted.rules, options)
    found = design(Requirements(hours_per_month=400.0), Sampling(sizes=(n,), intervals=(1.0,)),
                   SearchGrid(presets=(rules,), lambdas=(), ks=())).candidates
    (c,) = found
    assert c.scheme.chart == chart
    assert c.arl_in_control == pytest.approx(performance.arl_in_control, rel=1e-9)
    assert c.false_alarms_per_month == pytest.approx(performance.false_alarms_per_month, rel=1e-9)
    # false alarms per month = production hours / (interval x in-control ARL) (definition, common practice)
    assert c.false_alarms_per_month == pytest.approx(400.0 / c.arl_in_control, rel=1e-12)


def test_a_designed_ewma_evaluates_to_the_design_figures():
    # design calibrates L for the limits as drawn, the figure evaluate reports (issue 13): the chart it proposes,
    # evaluated, shows the same in-control ARL and ARL at the shift, to 1e-9.
    found = design(Requirements(arl_in_control=400.0, shift=1.0, hours_per_month=400.0),
                   Sampling(sizes=(1,), intervals=(1.0,)), SearchGrid(presets=(), lambdas=(0.1,), ks=())).candidates
    (c,) = found
    values = np.random.default_rng(12).normal(10.0, 1.0, (40, 1))
    options = EvaluationOptions(chart="ewma", ewma=c.scheme.ewma, interval_hours=1.0, hours_per_month=400.0,
                                shifts=(1.0,))
    performance = assess(fit_characteristic(Characteristic("bore", Measurements(values)), "s", options),
                         options).performance
    assert performance.arl_in_control == pytest.approx(c.arl_in_control, rel=1e-9)
    assert c.arl_in_control == pytest.approx(400.0, rel=1e-6)
    assert performance.shifts[0].arl == pytest.approx(c.arl_at_shift, rel=1e-9)
