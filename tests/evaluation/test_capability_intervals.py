"""Cp and Cpk intervals use the degrees of freedom of the within-sigma estimator actually used.

Independent check: a simulation written here (normal readings, known Cp and Cpk, 2,000 replications);
a 95% interval must cover the true index 95% +/- 2% of the time (the simulation's standard error is
0.5%, so 2% is four of them).
"""

import numpy as np
import pytest

from sheettool.core.capability import process_capability, within_sigma_model
from sheettool.core.charts.variables import within_sigma
from sheettool.core.sigma import SigmaMethod

LSL, USL, MEAN = -4.0, 4.0, 0.5  # sigma 1: Cp = 8 / 6, Cpk = 3.5 / 3
CP, CPK = 8.0 / 6.0, 3.5 / 3.0


def _coverage(m: int, n: int, family: SigmaMethod, reps: int = 2000) -> tuple[float, float]:
    rng = np.random.default_rng(20261202 + m * n)
    hit_cp = hit_cpk = 0
    base = np.ones(m, dtype=bool)
    for _ in range(reps):
        x = rng.normal(MEAN, 1.0, (m, n))
        sigma, method = within_sigma(x, base, family)
        cap = process_capability(x, sigma, LSL, USL, sigma_method=method)
        hit_cp += cap.ci["cp"].low <= CP <= cap.ci["cp"].high
        hit_cpk += cap.ci["cpk"].low <= CPK <= cap.ci["cpk"].high
    return hit_cp / reps, hit_cpk / reps


@pytest.mark.slow
@pytest.mark.parametrize(("m", "n", "family"), [(10, 5, SigmaMethod.RANGE), (50, 1, SigmaMethod.MOVING_RANGE)])
def test_cp_cpk_intervals_cover_95_percent(m, n, family):
    # simulation written here (independent of the interval formulas): 50 readings in each case; with
    # n - 1 = 49 degrees of freedom these covered 88 to 92% (issue 13)
    cp, cpk = _coverage(m, n, family)
    assert cp == pytest.approx(0.95, abs=0.02)
    assert cpk == pytest.approx(0.95, abs=0.02)


def test_moving_range_sigma_has_fewer_degrees_of_freedom_than_n_minus_1():
    # MR-bar / d2 from 50 individuals: about 0.62 (m - 1) = 30 degrees of freedom (the usual effective degrees
    # of freedom of MR-bar, recalled from memory), within 5; the sample sd would have 49.
    model = within_sigma_model(np.zeros((50, 1)), SigmaMethod.MOVING_RANGE)
    assert model is not None and model.nu == pytest.approx(0.62 * 49, abs=5)
    # R-bar / d2 for 10 subgroups of 5: Var(R-bar / d2 / sigma) = (d3 / d2)^2 / m with d2 = 2.326, d3 = 0.864
    # (common practice, the tabled constants for n = 5), and a chi with nu degrees of freedom has relative
    # variance about 1 / (2 nu): nu about 36.2, within 1.5
    model = within_sigma_model(np.zeros((10, 5)), SigmaMethod.RANGE)
    assert model is not None and model.nu == pytest.approx(1 / (2 * (0.864 / 2.326) ** 2 / 10), abs=1.5)
    # the pooled standard deviation has exactly sum(n_i - 1) degrees of freedom
    x = np.zeros((3, 4))
    x[0, 3] = np.nan
    model = within_sigma_model(x, SigmaMethod.POOLED)
    assert model is not None and model.nu == 8 and model.exact
