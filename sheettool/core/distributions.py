"""The few distribution functions the computation needs, from scipy.special, without loading scipy.stats.

Each is written as scipy.stats itself writes it (the same special functions in the same order, the same handling of
the support's edges), so the values are the same bit for bit; the tests hold them to scipy.stats. Loading
scipy.stats costs more than a small workbook's whole evaluation.
"""

from __future__ import annotations

import numpy as np
from scipy import special

try:  # the Boost functions scipy.stats.binom and beta call, kept with scipy.special's ufuncs by recent scipy
    from scipy.special._ufuncs import _beta_ppf, _binom_cdf, _binom_pmf, _binom_sf
except ImportError:  # a scipy from before they moved keeps them (as "pdf") with scipy.stats
    from scipy.stats._boost import _beta_ppf, _binom_cdf, _binom_sf  # type: ignore[no-redef]
    from scipy.stats._boost import _binom_pdf as _binom_pmf  # type: ignore[no-redef]

_ROOT_TWO_PI = np.sqrt(2 * np.pi)


def normal_pdf(x: np.ndarray) -> np.ndarray:
    """The standard normal density."""
    return np.exp(-np.asarray(x, dtype=float) ** 2 / 2.0) / _ROOT_TWO_PI


def chi2_logpdf(t: np.ndarray, nu: float) -> np.ndarray:
    """log density of the chi-square distribution with nu degrees of freedom; -inf below 0."""
    t = np.asarray(t, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        inside = special.xlogy(nu / 2.0 - 1, t) - t / 2.0 - special.gammaln(nu / 2.0) - (np.log(2) * nu) / 2.0
    return np.where(t >= 0, inside, -np.inf)


def chi2_ppf(q: float, nu: float) -> float:
    """The q-quantile of the chi-square distribution with nu degrees of freedom."""
    if q == 0:
        return 0.0
    if q == 1:
        return np.inf
    return float(2 * special.gammaincinv(nu / 2, q) * 1.0 + 0.0)


def beta_ppf(q: float, a: float, b: float) -> float:
    """The q-quantile of the beta distribution (a, b)."""
    if q == 0:
        return 0.0
    if q == 1:
        return 1.0
    return float(_beta_ppf(q, a, b) * 1.0 + 0.0)


class Counts:
    """Binomial (n trials, probability p) or Poisson (mean mu) counts: pmf, cdf and sf at whole counts."""

    def __init__(self, family: str, n: float, p: float) -> None:
        """family "binomial" with n trials of probability p, or "poisson" with mean n * p."""
        self.binomial = family == "binomial"
        self.n, self.p, self.mu = float(n), float(p), float(n) * float(p)
        self.top = self.n if self.binomial else np.inf

    def pmf(self, k: np.ndarray) -> np.ndarray:
        """P(K = k); 0 off the support."""
        k = np.asarray(k, dtype=float)
        inside = (k >= 0) & (k <= self.top) & (k == np.floor(k))
        if self.binomial:
            value = _binom_pmf(k, self.n, self.p)
        else:
            with np.errstate(invalid="ignore"):
                value = np.exp(special.xlogy(k, self.mu) - special.gammaln(k + 1) - self.mu)
        return np.where(inside, np.clip(value, 0, 1), 0.0)

    def cdf(self, k: np.ndarray) -> np.ndarray:
        """P(K <= k)."""
        k = np.floor(np.asarray(k, dtype=float))
        value = _binom_cdf(k, self.n, self.p) if self.binomial else special.pdtr(k, self.mu)
        return np.where(k >= self.top, 1.0, np.where(k >= 0, np.clip(value, 0, 1), 0.0))

    def sf(self, k: np.ndarray) -> np.ndarray:
        """P(K > k)."""
        k = np.floor(np.asarray(k, dtype=float))
        value = _binom_sf(k, self.n, self.p) if self.binomial else special.pdtrc(k, self.mu)
        return np.where(k < 0, 1.0, np.where(k < self.top, np.clip(value, 0, 1), 0.0))
