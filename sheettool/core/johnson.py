"""The normal and Johnson (1949) SU and SB families, fitted by maximum likelihood without loading scipy.stats.

The data-shape check needs three fits per characteristic and a few properties of the family kept. scipy.stats does the
same computation through its generic machinery, which costs most of a small workbook's evaluation (its import alone
takes longer than the fits). Here the same maximum likelihood is done directly: the same penalized negative
log-likelihood, the same start values (the family's SB(1, 1) or SU(1, 1) moments matched to the readings' mean and
variance, moved off the readings where SB's support would not hold them) and the same Nelder-Mead search
(scipy.optimize.fmin, default tolerances), so the fitted parameters and the family chosen are those of
`scipy.stats.johnsonsu.fit` and `johnsonsb.fit`; the tests hold them to that.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

_ROOT_TWO_PI = np.sqrt(2 * np.pi)
_LOG_ROOT_TWO_PI = float(np.log(_ROOT_TWO_PI))
_LOG_LARGEST = np.log(np.finfo(float).max)  # times 100: what each unsupported reading adds to -log L
# Mean and variance of SB(1, 1) and SU(1, 1), the start of the search: scipy.stats's own values (SB by numerical
# integration, SU in closed form), held equal to them in tests/core/test_distributions.py.
_START_MOMENTS = {"Johnson SB": (0.30326532985439253, 0.03335208940222002),
                  "Johnson SU": (-1.9375792053127157, 9.645324331425803)}


def _z(name: str, u: np.ndarray, a: float, b: float) -> np.ndarray:
    """The standard normal variable of a Johnson reading u in standard form: a + b g(u)."""
    return a + b * (np.arcsinh(u) if name == "Johnson SU" else special.logit(u))


def _standard_pdf(name: str, u: np.ndarray, a: float, b: float) -> np.ndarray:
    """Density of the family in standard form (loc 0, scale 1), written as scipy.stats writes it."""
    trm = np.exp(-_z(name, u, a, b) ** 2 / 2.0) / _ROOT_TWO_PI
    jacobian = np.sqrt(u * u + 1.0) if name == "Johnson SU" else u * (1 - u)
    return b * 1.0 / jacobian * trm


def _inside(name: str, u: np.ndarray) -> np.ndarray:
    """Whether standard-form readings lie in the family's support (SB: the open interval (0, 1))."""
    if name == "Johnson SU":
        return ~np.isnan(u)
    with np.errstate(invalid="ignore"):
        return (u > 0.0) & (u < 1.0)


def _penalized_nll(theta: np.ndarray, name: str, x: np.ndarray) -> float:
    """-log L of (a, b, loc, scale), with scipy.stats's penalty for readings outside the support and terms that are
    not finite. Called some 600 times a fit, so it does only what changes the sum (see `fit` for the floating-point
    state): SU's support is the whole line, where a reading that is not a number is a term that is not finite."""
    a, b, loc, scale = theta
    if not (b > 0 and a == a) or scale <= 0:
        return math.inf
    u = (x - loc) / scale
    bad = 0
    if name == "Johnson SB":
        keep = _inside(name, u)
        bad = u.size - int(np.count_nonzero(keep))
        if bad:
            u = u[keep]
    terms = np.log(_standard_pdf(name, u, a, b))
    finite = np.isfinite(terms)
    count = int(np.count_nonzero(finite))
    if count < terms.size:
        bad += terms.size - count
        terms = terms[finite]
    return -terms.sum() + bad * _LOG_LARGEST * 100 + len(x) * np.log(scale)


def _start(name: str, x: np.ndarray) -> tuple[float, float, float, float]:
    """Shapes (1, 1) and the loc and scale matching the readings' mean and variance (scipy.stats's start)."""
    mu, mu2 = _START_MOMENTS[name]
    scale = math.sqrt(x.var() / mu2)
    loc = x.mean() - scale * mu
    if not math.isfinite(loc):
        loc = 0
    if not (math.isfinite(scale) and scale > 0):
        scale = 1
    if name == "Johnson SB" and not (loc < x.min() and x.max() < loc + scale):
        margin = (x.max() - x.min()) * 0.1
        loc, scale = x.min() - margin, x.max() - x.min() + 2 * margin
    return 1.0, 1.0, float(loc), float(scale)


@dataclass(frozen=True)
class Family:
    """One fitted family: its name ("normal", "Johnson SU", "Johnson SB") and parameters (a, b, loc, scale) or
    (mean, sd) for the normal, in scipy.stats's order."""

    name: str
    parameters: tuple[float, ...]

    def logpdf(self, x: np.ndarray) -> np.ndarray:
        """log density at x; -inf outside the support."""
        x = np.asarray(x, dtype=float)
        if self.name == "normal":
            loc, scale = self.parameters
            return -((x - loc) / scale) ** 2 / 2.0 - _LOG_ROOT_TWO_PI - np.log(scale)
        a, b, loc, scale = self.parameters
        u = (x - loc) / scale
        out = np.full(u.shape, -np.inf)
        keep = _inside(self.name, u)
        with np.errstate(divide="ignore"):
            out[keep] = np.log(_standard_pdf(self.name, u[keep], a, b)) - np.log(scale)
        return out

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """P(X <= x)."""
        return self._tail(x, upper=False)

    def sf(self, x: np.ndarray) -> np.ndarray:
        """P(X > x)."""
        return self._tail(x, upper=True)

    def _tail(self, x: np.ndarray, upper: bool) -> np.ndarray:
        sign = -1.0 if upper else 1.0
        x = np.asarray(x, dtype=float)
        if self.name == "normal":
            loc, scale = self.parameters
            return special.ndtr(sign * ((x - loc) / scale))
        a, b, loc, scale = self.parameters
        u = (x - loc) / scale
        if self.name == "Johnson SU":
            return special.ndtr(sign * _z(self.name, u, a, b))
        out = np.where(u >= 1.0, 0.0 if upper else 1.0, 1.0 if upper else 0.0)
        keep = _inside(self.name, u)
        out[keep] = special.ndtr(sign * _z(self.name, u[keep], a, b))
        return out

    def mean_sd(self) -> tuple[float, float]:
        """The distribution's mean and standard deviation: closed forms for the normal and SU (Johnson 1949), the
        moments of SB as scipy.stats computes them (scipy.integrate.quad of its quantile function's powers)."""
        if self.name == "normal":
            return float(self.parameters[0]), float(self.parameters[1])
        a, b, loc, scale = self.parameters
        if self.name == "Johnson SU":
            bn2, a_b = b ** -2.0, a / b
            expbn2 = np.exp(bn2)
            mu = -expbn2 ** 0.5 * np.sinh(a_b)
            mu2 = 0.5 * special.expm1(bn2) * (expbn2 * np.cosh(2 * a_b) + 1)
        else:
            from scipy import integrate

            def moment(m: int) -> float:  # E[U^m] = integral of the quantile function^m over (0, 1)
                return integrate.quad(lambda q: (special.expit(1.0 / b * (special.ndtri(q) - a)) * 1.0 + 0.0) ** m,
                                      0, 1)[0]

            with np.errstate(all="ignore"):
                mu = moment(1)
                mu2 = moment(2) - mu ** 2
        return float(mu * scale + loc), float(np.sqrt(mu2 * scale * scale))


def fit(name: str, x: np.ndarray) -> Family:
    """Maximum likelihood fit of a family to the readings x; ValueError when the search ends outside the family."""
    if name == "normal":
        return Family(name, (float(np.mean(x)), float(np.std(x))))
    from scipy import optimize

    with np.errstate(all="ignore"):  # a trial far from the readings underflows or divides by zero: a worse fit
        found = optimize.fmin(_penalized_nll, _start(name, x), args=(name, x), disp=0)
    a, b, loc, scale = (float(v) for v in found)
    if not (b > 0 and a == a and scale > 0):
        raise ValueError(f"{name}: the likelihood search ended outside the family's parameters")
    return Family(name, (a, b, loc, scale))
