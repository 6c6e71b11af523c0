"""The cost of estimated limits for the whole scheme in use: its rules and its spread chart, not 3-sigma limits alone.

For a base period of m subgroups of n the estimates are mu_hat = mu + sigma Z / sqrt(m n) and sigma_hat = W sigma, Z
standard normal and W as in core/sigma.py, independent for normal data (Basu 1955). Given them, a plotted mean in units
of the estimated standard error is normal with shift a / W (a = |Z| / sqrt(m)) and standard deviation 1 / W; with
every zone boundary scaled by the factor L / 3 that is a point of the usual zones with shift 3a / (L W) and sigma ratio
3 / (L W). The exact zone chain there (Champ and Woodall 1987) gives the conditional in-control ARL; the R or S chart,
whose limits are sigma_hat times those for known sigma (D3, D4 or B3, B4 with the same factor L), signals
independently of the mean with the probability of a sigma ratio 1 / W. Integration over the estimators: Gauss-Hermite
half-line nodes in Z, W on a fine grid where log CARL is a cubic spline through Chebyshev nodes (the chain is solved at
those nodes only); P(CARL < x) adds the W-probability of the grid pieces where CARL < x, the crossings found by linear
interpolation, so a CARL that is not monotone in W (an R chart's lower limit) is handled. The remedies follow the
exceedance criterion of Goedhart, Schoonhoven and Does (2017) for the same scheme.
"""

from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache

import numpy as np
from scipy import interpolate, optimize, special

from sheettool.core.constants import constants, range_cdf
from sheettool.core.estimated_limits import (
    MAX_SUBGROUPS_SEARCHED,
    AdjustedFactor,
    CarlDistribution,
    EstimatedLimitsReport,
    SubgroupsNeeded,
    _check_criterion,
    estimated_limits_report,
    remedy_sentence,
)
from sheettool.core.rules import Rule
from sheettool.core.runlength.markov import arl_only
from sheettool.core.runlength.scheme import Scheme
from sheettool.core.runlength.zones import ZoneChain
from sheettool.core.sigma import SigmaEstimator, SigmaMethod, sigma_estimator
from sheettool.core.timing import THREE_SIGMA_ARL

CHAIN_Z_NODES, CHAIN_W_NODES = 6, 12  # chain solves per (m, L): their product
GEOMETRIC_Z_NODES = 12
FINE_W = 200


def scheme_words(scheme: Scheme) -> str:
    """The scheme in words, for the labels of figures that judge it whole."""
    location = {"i-mr": "individuals chart", "xbar-r": "X-bar chart", "xbar-s": "X-bar chart"}.get(
        scheme.chart, f"{scheme.chart} chart")
    rules = ", ".join(r.text for r in scheme.rules)
    spread = {"range": " and the R chart's limits", "sd": " and the S chart's limits"}.get(scheme.companion or "", "")
    left = " (the moving-range chart's own signals left out)" if scheme.chart == "i-mr" else ""
    return f"{location} with rules {rules}{spread}{left}"


def _half_nodes(count: int) -> tuple[np.ndarray, np.ndarray]:
    """|Z| nodes and weights: Gauss-Hermite (probabilists') of 2 count nodes, folded onto the half-line."""
    z, w = np.polynomial.hermite_e.hermegauss(2 * count)
    keep = z > 0
    return z[keep], w[keep] / w[keep].sum()


class _SchemeCarl:
    """log CARL(a, W) of one scheme at limit factor L: exact zone chain, or closed form for single-point rules."""

    def __init__(self, rules: tuple[Rule, ...], companion: str | None, n: int) -> None:
        zone = [r for r in rules if r.is_zone]
        self.left_out = [r.text for r in rules if not r.is_zone]
        self.chain = ZoneChain(zone)
        self.companion, self.n = companion, n
        self.geometric = self.chain.states == 1
        self._stay = self.chain.next[0] >= 0  # cells where a point does not signal (the one-state chain)

    def spread_probability(self, w: np.ndarray, L: float) -> np.ndarray:
        """Per-subgroup signal probability of the R or S chart with limits from sigma_hat = w sigma at factor L."""
        w = np.asarray(w, dtype=float)
        if self.companion is None:
            return np.zeros_like(w)
        c = constants(self.n, L)
        if self.companion == "range":  # the normal range distribution (Tippett 1925), as shewhart.py has it
            upper = 1.0 - range_cdf(c.D4 * c.d2 * w, self.n)
            lower = range_cdf(c.D3 * c.d2 * w, self.n) if c.D3 > 0 else 0.0
        else:  # (n - 1) S^2 / sigma^2 is chi-square with n - 1 degrees of freedom
            dof = self.n - 1
            upper = special.chdtrc(dof, dof * (c.B4 * c.c4 * w) ** 2)
            lower = special.chdtr(dof, dof * (c.B3 * c.c4 * w) ** 2) if c.B3 > 0 else 0.0
        return np.clip(upper + lower, 0.0, 1.0)

    def log_carl(self, a: np.ndarray, w: np.ndarray, L: float) -> np.ndarray:
        """log of the conditional in-control ARL at center offsets a (rows) and sigma ratios w (columns)."""
        ratio = 3.0 / (L * w)[None, :]
        shift = 3.0 * a[:, None] / (L * w)[None, :]
        spread = self.spread_probability(w, L)[None, :]
        if self.geometric:
            cuts = self.chain.cuts
            cdf = special.ndtr((cuts[None, None, :] - shift[..., None]) / ratio[..., None])
            cells = np.zeros((*shift.shape, 2 * len(cuts) + 1))
            cells[..., 0::2] = np.diff(np.concatenate([np.zeros((*shift.shape, 1)), cdf,
                                                       np.ones((*shift.shape, 1))], axis=-1), axis=-1)
            stay = cells[..., self._stay].sum(axis=-1) * (1.0 - spread)
            return -np.log1p(-np.minimum(stay, 1.0 - 2.0**-52))  # at most about exp(36)
        out = np.empty(shift.shape)
        for i in range(shift.shape[0]):
            for j in range(shift.shape[1]):
                q, start = self.chain.transient(float(shift[i, j]), float(ratio[0, j]))
                try:
                    arl = arl_only(q * (1.0 - float(spread[0, j])), start)
                except RuntimeError:  # singular: the scheme can no longer signal at these estimates
                    arl = math.inf
                out[i, j] = math.log(min(arl, 1e300))
        return out


class _Grid:
    """log CARL over |Z| nodes and a fine W grid for one base-period size m and factor L."""

    def __init__(self, carl: _SchemeCarl, est: SigmaEstimator, m: int, L: float) -> None:
        count = GEOMETRIC_Z_NODES if carl.geometric else CHAIN_Z_NODES
        z, self.weights = _half_nodes(count)
        a = z / math.sqrt(m)
        lo, hi = est.ppf(1e-9), est.ppf(1.0 - 1e-12)
        self.w = np.linspace(lo, hi, FINE_W)
        if carl.geometric:
            self.log_carl = carl.log_carl(a, self.w, L)
        else:  # Chebyshev nodes in log W, a cubic spline through them onto the fine grid
            t = np.cos(np.pi * (np.arange(CHAIN_W_NODES) + 0.5) / CHAIN_W_NODES)[::-1]
            nodes = np.exp(math.log(lo) + (t + 1.0) / 2.0 * (math.log(hi) - math.log(lo)))
            coarse = carl.log_carl(a, nodes, L)
            self.log_carl = interpolate.CubicSpline(np.log(nodes), coarse, axis=1)(np.log(self.w))
        self.cdf = est.cdf(self.w)
        self.pdf = np.exp(est.logpdf(self.w))

    def below(self, x: float) -> float:
        """P(CARL < x): the W-probability of the grid pieces where log CARL < log x, for each node, weighted."""
        g = self.log_carl - math.log(x)
        g0, g1 = g[:, :-1], g[:, 1:]
        c0, c1 = self.cdf[None, :-1], self.cdf[None, 1:]
        with np.errstate(divide="ignore", invalid="ignore"):
            cut = np.clip(g0 / (g0 - g1), 0.0, 1.0)  # where the line crosses, as a share of the piece
        wc = self.w[None, :-1] + cut * np.diff(self.w)[None, :]
        fc = np.interp(wc, self.w, self.cdf)
        piece = np.where((g0 < 0) & (g1 < 0), c1 - c0,
                         np.where(g0 < 0, fc - c0, np.where(g1 < 0, c1 - fc, 0.0)))
        total = piece.sum(axis=1) + np.where(g[:, 0] < 0, self.cdf[0], 0.0) + np.where(
            g[:, -1] < 0, 1.0 - self.cdf[-1], 0.0)
        return float(np.clip(self.weights @ total, 0.0, 1.0))

    def quantile(self, q: float) -> float:
        """The level x with P(CARL < x) = q."""
        lo, hi = 0.0, float(self.log_carl.max())
        if self.below(math.exp(hi)) < q:
            return math.exp(hi)
        return math.exp(optimize.brentq(lambda v: self.below(math.exp(v)) - q, lo, hi, xtol=1e-9))

    def moment(self, k: int) -> float:
        """E[CARL^k] by the trapezoid rule on the W grid; infinite when the integrand has not died out at its end."""
        integrand = self.pdf[None, :] * np.exp(k * self.log_carl)
        if np.any(integrand[:, -1] > 1e-6 * integrand.max(axis=1)):
            return math.inf
        return float(self.weights @ np.trapezoid(integrand, self.w, axis=1))


@lru_cache(maxsize=64)
def _carl(rules: tuple[Rule, ...], companion: str | None, n: int) -> _SchemeCarl:
    return _SchemeCarl(rules, companion, n)


@lru_cache(maxsize=256)
def _grid(rules: tuple[Rule, ...], companion: str | None, n: int, method: SigmaMethod, m: int, L: float) -> _Grid:
    return _Grid(_carl(rules, companion, n), sigma_estimator(m, n, method), m, L)


def _is_three_sigma_alone(scheme: Scheme) -> bool:
    return scheme.companion is None and [r.text for r in scheme.rules] == ["1/1>3"]


def scheme_estimated_limits(scheme: Scheme, m: int, sigma_method: SigmaMethod | str, target: float = THREE_SIGMA_ARL,
                            exceed: float = 0.9, tolerance: float = 0.0) -> EstimatedLimitsReport:
    """The cost of limits estimated from m subgroups for the scheme in use (chart, spread chart and rules)."""
    n = int(scheme.n)
    words = scheme_words(scheme)
    if _is_three_sigma_alone(scheme):  # the closed form of core/estimated_limits, exact in W
        return replace(estimated_limits_report(m, n, sigma_method, target, exceed, tolerance), scheme=words)
    floor = _check_criterion(target, exceed, tolerance)
    est = sigma_estimator(m, n, sigma_method)
    method = est.method
    key = (tuple(scheme.rules), scheme.companion, n, method)
    grid = _grid(*key, int(m), 3.0)
    carl = _carl(*key[:3])
    known = _known_arl(carl, n)
    mean, second = grid.moment(1), grid.moment(2)
    sd = math.sqrt(max(second - mean * mean, 0.0)) if math.isfinite(second) else math.inf
    left = f"; the rules {', '.join(carl.left_out)} are left out (no exact chain)" if carl.left_out else ""
    dist = CarlDistribution(
        m=int(m), n=n, sigma_method=method, L=3.0, known_arl=known, mean=mean, sd=sd, p10=grid.quantile(0.1),
        p50=grid.quantile(0.5),
        method=(f"conditional in-control ARL of the {words} with mean and sigma ({method.model_words}) estimated "
                f"from {m} {'points' if n == 1 else f'subgroups of {n}'}: exact zone chain at the shift and sigma "
                f"ratio the estimates give (Champ and Woodall 1987){left}; Gauss-Hermite in the mean, a W grid for "
                f"sigma_hat (Jensen et al. 2006){method.model_error}"),
        notes=[] if math.isfinite(mean) else ["the average in-control ARL is unbounded: rare base periods overstate "
                                              "sigma so much that the scheme practically never signals; read the "
                                              "percentiles instead"])
    factor = _adjusted(key, int(m), floor, exceed)
    adjusted = AdjustedFactor(
        m=int(m), n=n, sigma_method=method, target=float(target), exceed=float(exceed), tolerance=float(tolerance),
        factor=factor,
        method=(f"one factor on every zone boundary and on the spread chart's limits with P(in-control ARL >= "
                f"{floor:.4g}) = {exceed:g} for the {words}; exceedance criterion of Goedhart, Schoonhoven and Does "
                "(2017), solved by root finding"))
    reachable = known > floor
    needed = SubgroupsNeeded(
        n=n, sigma_method=method, L=3.0, target=float(target), exceed=float(exceed), tolerance=float(tolerance),
        subgroups=_needed(key, int(m), floor, exceed) if reachable else None, max_searched=MAX_SUBGROUPS_SEARCHED,
        reachable=reachable,
        method=(f"fewest {'points' if n == 1 else f'subgroups of {n}'} with P(in-control ARL >= {floor:.4g}) >= "
                f"{exceed:g} for the {words} at the usual factor 3; search up to {MAX_SUBGROUPS_SEARCHED:,}"))
    low = grid.quantile(1.0 - exceed)
    return EstimatedLimitsReport(
        distribution=dist, floor=floor, exceed=float(exceed), low_arl=low, probability_meeting=1.0 - grid.below(floor),
        adjusted=adjusted, needed=needed,
        sentence=remedy_sentence(m, n, low, floor, exceed, dist.known_arl, adjusted, needed, f"the {words}"),
        method=f"{dist.method}. Remedies: {adjusted.method}; {needed.method}.", scheme=words)


def _known_arl(carl: _SchemeCarl, n: int) -> float:
    """The scheme's in-control ARL with known mean and sigma."""
    spread = float(carl.spread_probability(np.array([1.0]), 3.0)[0])
    q, start = carl.chain.transient(0.0, 1.0)
    return float(arl_only(q * (1.0 - spread), start))


def _adjusted(key: tuple, m: int, floor: float, exceed: float) -> float:
    """The factor L with P(CARL >= floor) = exceed (it rises with L), by Brent's method on a bracket around 3;
    NaN when no factor up to 8 reaches it (rules counting points on one side of the center do not widen)."""
    def gap(L: float) -> float:
        return (1.0 - _grid(*key, m, round(L, 6)).below(floor)) - exceed

    lo, hi = 2.5, 3.5
    while gap(lo) > 0 and lo > 0.5:
        lo -= 0.5
    while gap(hi) < 0:
        if hi > 8.0:
            return math.nan
        hi += 1.0
    return float(optimize.brentq(gap, lo, hi, xtol=2e-4))


def _needed(key: tuple, m: int, floor: float, exceed: float) -> int | None:
    """The fewest subgroups meeting the criterion at factor 3, searched from the m in use (doubling, bisection)."""
    def meets(k: int) -> bool:
        return 1.0 - _grid(*key, k, 3.0).below(floor) >= exceed

    if meets(m):
        lo, hi = 1, m
    else:
        lo, hi = m, min(2 * m, MAX_SUBGROUPS_SEARCHED)
        while not meets(hi):
            if hi >= MAX_SUBGROUPS_SEARCHED:
                return None
            lo, hi = hi, min(2 * hi, MAX_SUBGROUPS_SEARCHED)
    while hi - lo > 1:
        mid = (lo + hi) // 2
        lo, hi = (lo, mid) if meets(mid) else (mid, hi)
    return hi

