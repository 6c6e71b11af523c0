"""The cost of estimated limits: the in-control ARL a technician gets depends on the base period.

Limits set from m subgroups of size n (individuals: n = 1 and m points) are mu_hat +/- L sigma_hat / sqrt(n).
For a true N(0, 1) process a plotted point falls outside them with probability

    p(Z, W) = Phi(Z / sqrt(m) - L W) + Phi(-Z / sqrt(m) - L W),   Z = sqrt(m n) mu_hat ~ N(0, 1),   W = sigma_hat,

and the conditional in-control ARL is CARL = 1 / p (Quesenberry 1993; Chen 1997; reviewed by Jensen et al. 2006).
Z and W are independent: for normal data the grand mean is independent of every location-free statistic (ranges,
standard deviations, moving ranges; Basu 1955). The distribution of W for each way of estimating sigma is in
core/sigma.py (exact for the pooled standard deviation, a scaled chi with the exact mean and variance otherwise).
Against simulation the moving-range model's 1% and 99% quantiles are within about 2% at m = 25 (under 0.5% at
m = 100, 8% at m = 10); the R-bar and S-bar versions are within 1% at m = 25.

The mean and spread of CARL are decided by rare base periods that overstate sigma: E[CARL^k] is finite only when the
upper tail of W, P(W > w) ~ exp(-r w^2 / 2), falls faster than 1/p^k grows, i.e. r > k L^2. The rate r is computed
from the estimator's true tail (not the chi approximation's), and an unbounded moment is reported as infinity.
Integration: Gauss-Hermite in Z, composite Gauss-Legendre in W; percentiles and exceedance probabilities use the
conditional distribution function of W given the CARL level, so no density is differentiated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import special

from sheettool.core.sigma import SigmaEstimator, SigmaMethod, modelled_method, sigma_estimator
from sheettool.core.timing import THREE_SIGMA_ARL

MAX_SUBGROUPS_SEARCHED = 10_000

_Z, _ZW = np.polynomial.hermite_e.hermegauss(64)
_ZW = _ZW / math.sqrt(2.0 * math.pi)
_T, _TW = np.polynomial.legendre.leggauss(16)


def _log_p(a: np.ndarray, t: np.ndarray) -> np.ndarray:
    """log P(point beyond limits) with the center offset a and half-width t, in standard errors of a point."""
    return np.logaddexp(special.log_ndtr(-(t - a)), special.log_ndtr(-(t + a)))


def _half_width_for(q: float, a: np.ndarray) -> np.ndarray:
    """The half-width t with P(beyond) = q for each center offset a (vectorised bisection, bracketed)."""
    lo = np.maximum(a - special.ndtri(q), 0.0)
    hi = a - special.ndtri(q / 2.0)
    target = math.log(q)
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        above = _log_p(a, mid) > target  # still too many alarms: widen
        lo = np.where(above, mid, lo)
        hi = np.where(above, hi, mid)
    return 0.5 * (lo + hi)


def _offsets(m: int) -> np.ndarray:
    return np.abs(_Z) / math.sqrt(m)


def exceedance(level: float, m: int, n: int, sigma_method: SigmaMethod | str, L: float = 3.0) -> float:
    """P(CARL >= level): the probability that a base period gives limits with at least `level` points per alarm."""
    est = sigma_estimator(m, n, sigma_method)
    return _exceedance(level, est, _offsets(m), L)


def _exceedance(level: float, est: SigmaEstimator, a: np.ndarray, L: float) -> float:
    if level <= 1.0:
        return 1.0
    t = _half_width_for(1.0 / level, a)
    return float(np.clip(1.0 - est.cdf(t / L) @ _ZW, 0.0, 1.0))


def _quantile(q: float, est: SigmaEstimator, a: np.ndarray, L: float) -> float:
    """The q-quantile of CARL: the level x with P(CARL < x) = q."""
    from scipy import optimize

    def gap(log_x: float) -> float:
        return (1.0 - _exceedance(math.exp(log_x), est, a, L)) - q

    hi = math.log(1.0 / (2.0 * special.ndtr(-L)))
    while gap(hi) < 0:
        hi += 1.0
    return math.exp(optimize.brentq(gap, 0.0, hi, xtol=1e-10, rtol=1e-12))


def _moment(k: int, est: SigmaEstimator, a: np.ndarray, L: float) -> float:
    """E[CARL^k] by Gauss-Hermite (Z) x composite Gauss-Legendre (W) over the integrand's own support."""
    if est.tail_rate <= k * L * L or est.nu / est.scale**2 <= k * L * L:
        return math.inf

    def log_integrand(w: np.ndarray) -> np.ndarray:
        return est.logpdf(w) - k * _log_p(0.0, L * w)

    lo = est.ppf(1e-15)
    hi = est.ppf(1.0 - 1e-15)
    coarse = np.linspace(lo, hi, 400)
    peak = float(np.max(log_integrand(coarse)))
    while (edge := float(log_integrand(np.array([hi]))[0])) > peak - 40.0:  # near-unbounded moments: follow the tail
        peak = max(peak, edge)
        hi *= 1.25
    edges = np.linspace(lo, hi, 81)
    half = np.diff(edges) / 2.0
    w = ((edges[:-1] + edges[1:]) / 2.0)[:, None] + half[:, None] * _T
    ww = (half[:, None] * _TW).ravel()
    w = w.ravel()
    carl_k = np.exp(-k * _log_p(a[:, None], L * w[None, :]))  # (Z nodes, W nodes)
    return float(_ZW @ carl_k @ (np.exp(est.logpdf(w)) * ww))


@dataclass
class CarlDistribution:
    """The distribution of the conditional in-control ARL over base periods of m subgroups of size n."""

    m: int
    n: int
    sigma_method: SigmaMethod
    L: float
    known_arl: float  # the in-control ARL if mean and sigma were known
    mean: float  # the unconditional in-control ARL (math.inf when unbounded)
    sd: float
    p10: float
    p50: float
    method: str
    notes: list[str] = field(default_factory=list)


def carl_distribution(m: int, n: int, sigma_method: SigmaMethod | str, L: float = 3.0) -> CarlDistribution:
    """Mean, standard deviation and 10th and 50th percentiles of the in-control CARL for limits from m subgroups."""
    _check_L(L)
    est = sigma_estimator(m, n, sigma_method)
    a = _offsets(m)
    mean = _moment(1, est, a, L)
    second = _moment(2, est, a, L)
    sd = math.sqrt(max(second - mean * mean, 0.0)) if math.isfinite(second) else math.inf
    notes = []
    if not math.isfinite(mean):
        notes.append("the average in-control ARL is unbounded: rare base periods overstate sigma so much that their "
                     "limits practically never give a false alarm; read the percentiles instead")
    elif not math.isfinite(sd):
        notes.append("the spread of the in-control ARL is unbounded and its average rests on rare base periods that "
                     "overstate sigma greatly (the approximation of sigma_hat's tail matters there); read the "
                     "percentiles instead")
    which = "exact" if est.exact else "approximate (scaled chi with exact mean and variance, Patnaik 1950)"
    return CarlDistribution(
        m=int(m), n=int(n), sigma_method=est.method, L=float(L),
        known_arl=float(1.0 / (2.0 * special.ndtr(-L))),
        mean=mean, sd=sd, p10=_quantile(0.1, est, a, L), p50=_quantile(0.5, est, a, L),
        method=(f"conditional in-control ARL of limits center +/- {L:g} sigma_hat/sqrt(n) with mean and sigma "
                f"({est.method.model_words}) estimated from {_base_words(m, n)}; sigma_hat distribution "
                f"{which}{est.method.model_error}; Gauss-Hermite and Gauss-Legendre integration (Jensen et al. 2006)"),
        notes=notes,
    )


def _base_words(m: int, n: int) -> str:
    return f"{m} points" if n == 1 else f"{m} subgroups of {n}"


def _check_L(L: float) -> None:
    if not math.isfinite(L) or L <= 0:
        raise ValueError(f"L (limit factor) must be a positive number, got {L}")


def _check_criterion(target: float, exceed: float, tolerance: float) -> float:
    if not math.isfinite(target) or target <= 1:
        raise ValueError(f"target (in-control ARL) must be a number above 1, got {target}")
    if not 0 < exceed < 1:
        raise ValueError(f"exceed (probability) must lie strictly between 0 and 1, got {exceed}")
    if not 0 <= tolerance < 1:
        raise ValueError(f"tolerance must lie from 0 up to (not including) 1, got {tolerance}")
    return target * (1.0 - tolerance)


@dataclass
class AdjustedFactor:
    """The limit factor L* with P(CARL >= (1 - tolerance) target) = exceed (Goedhart, Schoonhoven and Does 2017)."""

    m: int
    n: int
    sigma_method: SigmaMethod
    target: float
    exceed: float
    tolerance: float
    factor: float
    method: str


def adjusted_factor(m: int, n: int, sigma_method: SigmaMethod | str, target: float = THREE_SIGMA_ARL,
                    exceed: float = 0.9, tolerance: float = 0.0) -> AdjustedFactor:
    """Solve for the limit factor that makes the in-control ARL at least the target with probability `exceed`."""
    from scipy import optimize

    floor = _check_criterion(target, exceed, tolerance)
    est = sigma_estimator(m, n, sigma_method)
    a = _offsets(m)
    t = _half_width_for(1.0 / floor, a)  # does not depend on L: P(CARL >= floor) = 1 - E[F_W(t / L)]

    def gap(L: float) -> float:
        return 1.0 - float(est.cdf(t / L) @ _ZW) - exceed

    lo, hi = 0.1, 10.0
    while gap(lo) > 0 and lo > 1e-6:
        lo /= 10.0
    while gap(hi) < 0:
        if hi > 1e4:
            raise ValueError(f"exceed: no limit factor gives P(in-control ARL >= {floor:.4g}) = {exceed:g} with "
                             f"{m} subgroups; lower exceed or base the limits on more subgroups")
        hi *= 4.0
    factor = optimize.brentq(gap, lo, hi, xtol=1e-10)
    return AdjustedFactor(
        m=int(m), n=int(n), sigma_method=est.method, target=float(target), exceed=float(exceed),
        tolerance=float(tolerance), factor=float(factor),
        method=(f"limit factor with P(in-control ARL >= {floor:.4g}) = {exceed:g} for limits from "
                f"{_base_words(m, n)} ({est.method.model_words}); exceedance criterion of Goedhart, "
                f"Schoonhoven and Does (2017), solved by root finding"),
    )


@dataclass
class SubgroupsNeeded:
    """The fewest subgroups for which limits at factor L meet the exceedance criterion; None when none up to max_m.

    reachable is False when no number of subgroups can meet it (the known-parameter ARL is below the floor).
    """

    n: int
    sigma_method: SigmaMethod
    L: float
    target: float
    exceed: float
    tolerance: float
    subgroups: int | None
    max_searched: int
    reachable: bool
    method: str


def subgroups_needed(n: int, sigma_method: SigmaMethod | str, target: float = THREE_SIGMA_ARL, exceed: float = 0.9,
                     tolerance: float = 0.0, L: float = 3.0, max_m: int = MAX_SUBGROUPS_SEARCHED) -> SubgroupsNeeded:
    """Search m (doubling, then bisection) for the fewest subgroups meeting P(CARL >= floor) >= exceed at factor L.

    The exceedance probability rises with m (more data, less spread), which the bisection relies on.
    """
    floor = _check_criterion(target, exceed, tolerance)
    _check_L(L)
    method = modelled_method(sigma_method)
    reachable = bool(1.0 / (2.0 * special.ndtr(-L)) > floor)

    def meets(m: int) -> bool:
        return exceedance(floor, m, n, method, L) >= exceed

    found: int | None = None
    if reachable:
        lo, hi = 1, 2
        while hi < max_m and not meets(hi):
            lo, hi = hi, min(2 * hi, max_m)
        if meets(hi):
            while hi - lo > 1:
                mid = (lo + hi) // 2
                lo, hi = (lo, mid) if meets(mid) else (mid, hi)
            found = hi
    unit = "points" if n == 1 else f"subgroups of {n}"
    return SubgroupsNeeded(
        n=int(n), sigma_method=method, L=float(L), target=float(target), exceed=float(exceed),
        tolerance=float(tolerance), subgroups=found, max_searched=int(max_m), reachable=reachable,
        method=(f"fewest {unit} with P(in-control ARL >= {floor:.4g}) >= {exceed:g} at limit factor {L:g} "
                f"({method.model_words}); search up to {max_m:,}"),
    )


@dataclass
class EstimatedLimitsReport:
    """What estimated limits cost, for a technician: the CARL spread, the remedies, and one plain sentence."""

    distribution: CarlDistribution
    floor: float  # the in-control ARL wanted with probability `exceed`: target * (1 - tolerance)
    exceed: float
    low_arl: float  # the (1 - exceed) quantile of CARL: that share of base periods gives fewer points per alarm
    probability_meeting: float  # P(CARL >= floor) with the limits in use
    adjusted: AdjustedFactor
    needed: SubgroupsNeeded
    sentence: str
    method: str
    scheme: str = "3-sigma limits on the location chart alone"  # what the figures are for, in words


def _share_in_words(share: float) -> str:
    """0.1 -> 'one set of limits in ten'; shares that are not 1/k -> 'N% of the sets of limits'."""
    k = round(1.0 / share)
    words = {2: "two", 3: "three", 4: "four", 5: "five", 10: "ten", 20: "twenty", 100: "a hundred"}
    if abs(k * share - 1.0) < 1e-9 and k in words:
        return f"one set of limits in {words[k]}"
    return f"{share * 100:g}% of the sets of limits"


def estimated_limits_report(m: int, n: int, sigma_method: SigmaMethod | str, target: float = THREE_SIGMA_ARL,
                            exceed: float = 0.9, tolerance: float = 0.0, L: float = 3.0) -> EstimatedLimitsReport:
    """The cost of limits estimated from m subgroups of n, with the remedies, for `evaluate` to show in words."""
    floor = _check_criterion(target, exceed, tolerance)
    dist = carl_distribution(m, n, sigma_method, L)
    est = sigma_estimator(m, n, sigma_method)
    a = _offsets(m)
    low = _quantile(1.0 - exceed, est, a, L)
    meeting = _exceedance(floor, est, a, L)
    adjusted = adjusted_factor(m, n, sigma_method, target, exceed, tolerance)
    needed = subgroups_needed(n, sigma_method, target, exceed, tolerance, L)
    sentence = remedy_sentence(m, n, low, floor, exceed, dist.known_arl, adjusted, needed, f"{L:g}-sigma limits")
    return EstimatedLimitsReport(
        distribution=dist, floor=floor, exceed=float(exceed), low_arl=low, probability_meeting=meeting,
        adjusted=adjusted, needed=needed, sentence=sentence,
        method=(f"{dist.method}. Remedies: {adjusted.method}; {needed.method}."),
    )


def remedy_sentence(m: int, n: int, low: float, floor: float, exceed: float, known: float, adjusted: AdjustedFactor,
                    needed: SubgroupsNeeded, scheme: str) -> str:
    """The plain sentence: how low the in-control ARL of `scheme` goes for one base period in 1/(1 - exceed), and
    what would give the assurance wanted."""
    what = "points" if n == 1 else "subgroups"
    base = f"{m} points" if n == 1 else f"{m} subgroups"
    if math.isnan(adjusted.factor):  # no factor up to 8: only more subgroups, or other rules, can help
        factor, no_factor = "", "; no limit factor up to 8 gets there either, since rules counting points on one " \
                                "side of the center line do not widen with the limits"
    else:
        factor, no_factor = f" or use a limit factor of {adjusted.factor:.2f}", ""
    if needed.subgroups is not None and needed.subgroups <= m:
        remedy = f"these {base} are already enough"
    elif needed.subgroups is not None:
        remedy = f"base the limits on {needed.subgroups} {what}{factor}{no_factor}"
    elif needed.reachable:
        remedy = (f"{factor.removeprefix(' or ') or 'choose other rules'} (with {scheme} even "
                  f"{needed.max_searched:,} {what} would not be enough{no_factor})")
    else:
        remedy = (f"{factor.removeprefix(' or ') or 'choose other rules'} (no number of {what} gets {scheme} "
                  f"there: even with known mean and sigma they give {known:.1f}{no_factor})")
    return (f"With limits from these {base}, {_share_in_words(1.0 - exceed)} would give fewer than "
            f"{low:.0f} plotted points between false alarms; to be {exceed * 100:g}% sure of at least "
            f"{floor:.0f}, {remedy}.")
