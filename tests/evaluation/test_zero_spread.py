"""Readings that do not vary in the base period: the limits collapse onto the center line, and no signals are
judged from them; a warning says why (issue 19, item 5)."""

import numpy as np
import pytest

from sheettool.core.data import Characteristic, Measurements
from sheettool.evaluation.evaluate import evaluate, fit_characteristic
from sheettool.evaluation.options import EvaluationOptions


def _flat(m: int, n: int, later: list[float] | None = None) -> Characteristic:
    x = np.full((m, n), 5.0)
    if later:
        x = np.vstack([x, np.repeat(np.array(later)[:, None], n, axis=1)])
    return Characteristic(name="Flat", data=Measurements(x), labels=[str(i + 1) for i in range(len(x))])


@pytest.mark.parametrize(("n", "chart"), [(1, None), (3, None), (12, None), (1, "ewma"), (3, "ewma"),
                                          (1, "cusum"), (3, "cusum")])
def test_flat_readings_give_no_signals_and_say_why(n, chart):
    # Independent check: common practice, a chart whose limits collapse (sigma 0) cannot judge signals;
    # today the EWMA flagged every point (its rounding off the center line divided by zero).
    later = [5.0, 5.1, 4.9]  # after a flat base period of 20, readings that do vary
    ch = _flat(20, n, later)
    options = EvaluationOptions(chart=chart, base_period="first 20")
    fitted = fit_characteristic(ch, "Flat", options)
    assert fitted.fit.sigma_within == 0.0
    assert fitted.signals == []
    warnings = [p for p in fitted.problems if p.severity == "warning"]
    assert any(p.sheet == "Flat" and "do not vary in the base period" in p.message and "no signals judged"
               in p.message for p in warnings)
    if chart == "cusum":  # no sum over a zero sigma: nothing is plotted
        assert all(np.isnan(s.values).all() for s in fitted.fit.statistics)


def test_flat_readings_evaluate_whole():
    # the run-length engine and the checks do not fail on flat data; the in-control ARL of 3-sigma
    # limits stays 370.4 (common practice), as the scheme's figures do not depend on sigma
    result = evaluate(_flat(25, 1), "Flat", EvaluationOptions(shifts=(1.0,)))
    assert result.signals == []
    assert result.performance.arl_in_control == pytest.approx(370.4, abs=0.1)
