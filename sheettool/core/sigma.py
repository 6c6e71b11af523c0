"""How a chart's spread was found, as one enumeration with its words, and how an estimated sigma scatters.

`SigmaMethod` names the within-sigma estimator of a variables chart, the in-control rate of an attribute chart, or
values given instead (standards, carried limits); its words, shown in the workbook, are written here only.
`sigma_estimator` gives the distribution of sigma_hat / sigma for the four estimators that the cost of estimated
limits models (see core/estimated_limits.py for the method notes):

- pooled standard deviation / c4(m(n-1)+1): EXACT, W^2 c4^2 m(n-1) ~ chi-square with m(n-1) degrees of freedom.
- S-bar / c4(n): APPROXIMATE, a scaled chi with the exact mean and variance of S-bar (exact when m = 1).
- R-bar / d2(n): APPROXIMATE, Patnaik's (1950) scaled chi d2* chi_nu / sqrt(nu) fitted to the exact mean d2 and
  variance d3^2 / m of the average range.
- MR-bar / d2(2) for individuals: APPROXIMATE, a scaled chi fitted to the exact mean and variance of the average of the
  m - 1 moving ranges; adjacent moving ranges are correlated, and the variance includes their covariance
  E|A||B| - E|A| E|B| for A, B ~ N(0, 2) with correlation -1/2 (bivariate normal absolute moments, Cryer and Ryan 1990).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import Enum

import numpy as np
from scipy import special

from sheettool.core.constants import c4, d2, d3


class SigmaMethod(Enum):
    """How the fit's sigma (variables) or in-control rate (counts) was found; the value is its stable key."""

    RANGE = "range"  # R-bar / d2, one subgroup size
    RANGE_VARYING = "range-varying"  # mean of R_i / d2(n_i)
    S_BAR = "s-bar"  # S-bar / c4, one subgroup size
    POOLED = "pooled"  # pooled standard deviation / c4(1 + sum(n_i - 1))
    MOVING_RANGE = "moving-range"  # MR-bar / d2(2), individuals
    PROPORTION = "proportion"  # p0 pooled over the base period
    DEFECTS_PER_UNIT = "defects-per-unit"  # u0 pooled over the base period
    DEFECTS_PER_SUBGROUP = "defects-per-subgroup"  # c0, the mean count
    GIVEN = "given"  # standard values or carried limits: the words say where from

    @property
    def words(self) -> str:
        """The method in the words the workbook shows ("R-bar / d2"); empty for given values."""
        return _WORDS[self]

    @property
    def modelled(self) -> SigmaMethod | None:
        """The estimator whose distribution stands for this method in the cost of estimated limits, if any."""
        return _MODELLED_AS.get(self)

    @property
    def model_words(self) -> str:
        """The estimator in the words of the estimated-limits method notes ("pooled standard deviation / c4")."""
        return _MODEL_WORDS[self]

    @property
    def model_error(self) -> str:
        """What the scaled-chi model of this estimator is known to get wrong, for the method notes ("" if nothing
        worth saying): measured against 200,000 simulated base periods (tests/core/test_estimated_limits.py)."""
        if self is SigmaMethod.MOVING_RANGE:
            return ("; against simulation this model puts the median conditional ARL about 4% too high from 25 points, "
                    "2% from 50 and 1% from 100, and the 10th percentile about 3%, 1% and 1% too low")
        return ""


_WORDS: dict[SigmaMethod, str] = {
    SigmaMethod.RANGE: "R-bar / d2",
    SigmaMethod.RANGE_VARYING: "mean of R / d2(n) (subgroup sizes vary)",
    SigmaMethod.S_BAR: "S-bar / c4",
    SigmaMethod.POOLED: "pooled standard deviation / c4(1 + sum(n - 1)) (subgroup sizes vary)",
    SigmaMethod.MOVING_RANGE: "MR-bar / d2(2)",
    SigmaMethod.PROPORTION: "p0 = total defectives / total inspected in the base period",
    SigmaMethod.DEFECTS_PER_UNIT: "u0 = total defects / total inspected in the base period",
    SigmaMethod.DEFECTS_PER_SUBGROUP: "c0 = mean defects per subgroup in the base period",
    SigmaMethod.GIVEN: "",
}
_MODEL_WORDS: dict[SigmaMethod, str] = {
    SigmaMethod.RANGE: "R-bar / d2",
    SigmaMethod.S_BAR: "S-bar / c4",
    SigmaMethod.POOLED: "pooled standard deviation / c4",
    SigmaMethod.MOVING_RANGE: "MR-bar / d2 (individuals)",
}
_MODELLED_AS: dict[SigmaMethod, SigmaMethod] = {
    SigmaMethod.RANGE: SigmaMethod.RANGE, SigmaMethod.RANGE_VARYING: SigmaMethod.RANGE,
    SigmaMethod.S_BAR: SigmaMethod.S_BAR, SigmaMethod.POOLED: SigmaMethod.POOLED,
    SigmaMethod.MOVING_RANGE: SigmaMethod.MOVING_RANGE,
}
MODELLED: tuple[SigmaMethod, ...] = tuple(_MODEL_WORDS)


def modelled_method(method: SigmaMethod | str) -> SigmaMethod:
    """One of the four modelled estimators, from the member or its key ("range"); ValueError otherwise."""
    try:
        found = SigmaMethod(method)
    except ValueError:
        found = None
    if found not in MODELLED:
        raise ValueError(f"sigma_method must be one of {', '.join(m.value for m in MODELLED)}, got {method!r}")
    return found


@dataclass(frozen=True)
class SigmaEstimator:
    """W = sigma_hat / sigma modelled as scale * chi_nu / sqrt(nu); tail_rate r of the true W (see module notes)."""

    method: SigmaMethod
    nu: float
    scale: float
    tail_rate: float
    exact: bool

    def cdf(self, w: np.ndarray) -> np.ndarray:
        """P(W <= w)."""
        return special.chdtr(self.nu, self.nu * (np.asarray(w) / self.scale) ** 2)

    def logpdf(self, w: np.ndarray) -> np.ndarray:
        """log density of W at w > 0."""
        from scipy import stats

        w = np.asarray(w, dtype=float)
        t = self.nu * (w / self.scale) ** 2
        return stats.chi2.logpdf(t, self.nu) + np.log(2.0 * self.nu * w / self.scale**2)

    def ppf(self, q: float) -> float:
        """The q-quantile of W."""
        from scipy import stats

        return float(self.scale * math.sqrt(stats.chi2.ppf(q, self.nu) / self.nu))


def _chi_shortfall(nu: float) -> float:
    """1 - E[chi_nu / sqrt(nu)] = 1 - c4(nu + 1) for real nu, without cancellation for large nu.

    Large nu: Gamma(x + 1/2) / Gamma(x) = sqrt(x) (1 - 1/(8x) + 1/(128x^2) + 5/(1024x^3) + ...) (Abramowitz and
    Stegun 1964, 6.1.47) with x = nu / 2; below 1000 the log-gamma difference is exact to double precision.
    """
    if nu >= 1000.0:
        return 1.0 / (4.0 * nu) - 1.0 / (32.0 * nu**2) - 5.0 / (128.0 * nu**3)
    return -math.expm1(0.5 * math.log(2.0 / nu) + special.gammaln((nu + 1) / 2) - special.gammaln(nu / 2))


def _chi_mean(nu: float) -> float:
    """E[chi_nu / sqrt(nu)] = c4(nu + 1), for real nu."""
    return 1.0 - _chi_shortfall(nu)


def _moment_matched(method: SigmaMethod, variance: float, tail_rate: float) -> SigmaEstimator:
    """Scaled chi with mean 1 and the given variance (Patnaik 1950): solve (1 - c^2) / c^2 = variance for nu."""
    from scipy import optimize

    def gap(log_nu: float) -> float:
        short = _chi_shortfall(math.exp(log_nu))
        c = 1.0 - short
        return math.log(short * (1.0 + c) / (c * c)) - math.log(variance)

    nu = math.exp(optimize.brentq(gap, math.log(0.05), math.log(1e9), xtol=1e-12))
    return SigmaEstimator(method, nu, 1.0 / _chi_mean(nu), tail_rate, exact=False)


def sigma_estimator(m: int, n: int, sigma_method: SigmaMethod | str) -> SigmaEstimator:
    """The distribution of sigma_hat / sigma for m subgroups of size n under the named estimator."""
    method = modelled_method(sigma_method)
    if not isinstance(m, int | np.integer) or m < 2:
        raise ValueError(f"m (subgroups in the base period) must be a whole number of at least 2, got {m}")
    if method is SigmaMethod.MOVING_RANGE:
        if n != 1:
            raise ValueError(f"moving-range sigma is for individuals: n must be 1, got {n}")
        k = m - 1
        a = 2.0 / math.sqrt(math.pi)  # E|A| for A ~ N(0, 2) (= d2(2))
        rho = -0.5
        # E|A||B| for A, B ~ N(0, 2), correlation rho: 2 * (2 / pi) (sqrt(1 - rho^2) + rho asin rho).
        cov = 4.0 / math.pi * (math.sqrt(1 - rho * rho) + rho * math.asin(rho)) - a * a
        var_mr = (k * d3(2) ** 2 + 2.0 * (k - 1) * cov) / (k * k)
        # Upper tail: sum |A_i| >= s.A for the alternating sign vector s, Var(s.A) = 4k - 2.
        return _moment_matched(method, var_mr / d2(2) ** 2, d2(2) ** 2 * k * k / (4.0 * k - 2.0))
    if not isinstance(n, int | np.integer) or n < 2:
        raise ValueError(f"n (subgroup size) must be a whole number of at least 2 for {method.value}, got {n}")
    if method is SigmaMethod.POOLED:
        nu = float(m * (n - 1))
        return SigmaEstimator(method, nu, 1.0 / _chi_mean(nu), nu * _chi_mean(nu) ** 2, exact=True)
    if method is SigmaMethod.S_BAR:
        cc = c4(n)
        return _moment_matched(method, (1.0 - cc * cc) / (cc * cc * m), m * (n - 1) * cc * cc)
    # Range: the sum of m ranges is at least a sum of m pair differences, each N(0, 2).
    return _moment_matched(method, (d3(n) / d2(n)) ** 2 / m, m * d2(n) ** 2 / 2.0)
