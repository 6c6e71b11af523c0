"""The data's own shape: the in-control ARL when the points are not normal, or not independent.

Run-length figures assume normal, independent points. Two checks on a characteristic's base-period data:

- Shape. The readings are fitted by the normal and by the two unbounded/bounded Johnson (1949) families SU and SB
  (maximum likelihood, core/johnson.py: scipy.stats's fits without its machinery), and the family with the lowest BIC
  (Schwarz 1978) is kept; the lognormal with a shift (Johnson SL) is the boundary between SU and SB and is covered
  by both. A fitted family is chosen over the empirical distribution of the base period because 3-sigma limits sit
  where a base period of a hundred readings has almost no points: resampling them (bootstrap) can say nothing
  beyond the largest reading. Limits are put at the fitted distribution's own mean +/- k standard deviations of the
  plotted point, so the difference from the normal figure is due to the shape alone (the cost of estimating the
  limits is in `estimated_limits`).
- Dependence. The lag-1 autocorrelation r1 of the plotted points, judged against the rough bound 2 / sqrt(N) for
  independent points (Box and Jenkins 1976, standard error 1 / sqrt(N) after Bartlett 1946), and the in-control ARL
  under the AR(1) model with phi = r1 (Yule-Walker) by seeded simulation.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.special import ndtr

from sheettool.core.johnson import Family, fit
from sheettool.core.shape_scheme import (
    DEFAULT_SEED,
    ShapeScheme,
    ar1_block,
    ar1_scheme_arl,
    family_moments,
    johnson_draws,
    scheme_normal_arl,
    scheme_shape_arl,
)

DIFFERENCE_WARNED = 0.30  # relative difference of the ARL from the normal figure that earns a warning
MIN_READINGS = 20


def _normal_arl(k: float) -> float:
    return 1.0 / (2.0 * ndtr(-k))


@dataclass
class ShapeCheck:
    """The in-control ARL of k-sigma limits under the fitted shape of the readings, beside the normal figure."""

    family: str  # "normal", "Johnson SU" or "Johnson SB"
    parameters: tuple[float, ...]  # parameters of the family kept, in scipy.stats order
    bic: dict[str, float]  # BIC of every family that could be fitted
    skewness: float | None  # of the fitted distribution itself (None where it is not finite)
    subgroup_size: int
    arl_normal: float
    arl_shape: float  # math.inf when the fitted distribution cannot reach the limits
    arl_shape_se: float  # simulation standard error (0 when computed from the cdf)
    ratio: float  # arl_shape / arl_normal
    method: str
    warnings: list[str] = field(default_factory=list)
    kurtosis: float | None = None  # excess kurtosis of the fitted distribution (None where it is not finite)
    scheme: str = "3-sigma limits"  # what the ARL figures are for, in words


FIT_READINGS = 20_000  # largest sample the families are fitted to; more readings add time, not information


def _fits(x: np.ndarray) -> dict[str, tuple[Family, float]]:
    """Maximum likelihood fits of the candidate families with their BIC; families that fail to fit are left out.

    A base period of more than FIT_READINGS readings is thinned to that many, evenly spaced in the sorted readings
    (deterministic, keeping both tails), so that a 100,000-subgroup sheet fits in the time of a month's data.
    """
    if x.size > FIT_READINGS:
        x = np.sort(x)[np.linspace(0, x.size - 1, FIT_READINGS).round().astype(int)]
    scored = {}
    for name in ("normal", "Johnson SU", "Johnson SB"):
        try:
            with np.errstate(all="ignore"):
                family = fit(name, x)
                loglik = float(np.sum(family.logpdf(x)))
        except (ValueError, RuntimeError, FloatingPointError):
            continue
        if math.isfinite(loglik):
            scored[name] = (family, -2.0 * loglik + len(family.parameters) * math.log(x.size))
    return scored


def shape_check(values: np.ndarray, subgroup_size: int = 1, k: float = 3.0, simulations: int = 1_000_000,
                seed: int = DEFAULT_SEED, scheme: ShapeScheme | None = None) -> ShapeCheck:
    """Fit the shape of the base-period readings and give the in-control ARL of k-sigma limits under it.

    values: the readings of an in-control base period, pooled (any shape; NaN ignored). For individuals the
    exceedance comes from the fitted cdf; for subgroup means of n it comes from `simulations` seeded means of n draws
    from the fitted distribution.
    """
    x = np.asarray(values, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if x.size < MIN_READINGS:
        raise ValueError(f"values: at least {MIN_READINGS} readings are needed to judge their shape, got {x.size}")
    if not isinstance(subgroup_size, int | np.integer) or subgroup_size < 1:
        raise ValueError(f"subgroup_size must be a whole number of at least 1, got {subgroup_size}")
    if np.ptp(x) == 0:
        raise ValueError("values: every reading is the same, so there is no shape to fit")
    fits = _fits(x)
    name = min(fits, key=lambda f: fits[f][1])
    dist = fits[name][0]
    params = dist.parameters
    mean, sd = dist.mean_sd()
    n = int(subgroup_size)
    arl_normal = _normal_arl(k)
    se = 0.0
    scheme = scheme or ShapeScheme()
    if not scheme.plain:
        arl_normal, arl, se, how = scheme_shape_arl(name, params, dist, n, scheme, simulations, seed)
    elif name == "normal":
        arl = arl_normal
        how = "the normal distribution fits best, so the normal figure stands"
    elif n == 1:
        p = float(dist.sf(mean + k * sd) + dist.cdf(mean - k * sd))
        arl = 1.0 / p if p > 0 else math.inf
        how = "individuals: beyond-limits probability from the fitted cdf"
    else:
        rng = np.random.default_rng(seed)
        half = k * sd / math.sqrt(n)
        hits, done, chunk = 0, 0, max(1, 200_000 // n)
        while done < simulations:
            size = min(chunk, simulations - done)
            means = johnson_draws(name, params, rng.standard_normal((size, n))).mean(axis=1)
            hits += int(np.count_nonzero(np.abs(means - mean) > half))
            done += size
        p = hits / simulations
        arl = 1.0 / p if p > 0 else math.inf
        se = arl * math.sqrt((1.0 - p) / hits) if hits else math.inf
        how = f"subgroup means of {n}: {simulations:,} seeded simulated means from the fitted distribution"
    ratio = arl / arl_normal
    skewness, kurtosis = family_moments(name, params)
    notes = []
    if abs(ratio - 1.0) > DIFFERENCE_WARNED:
        direction = "more" if ratio < 1 else "fewer"
        arl_words = "no false alarms at all" if math.isinf(arl) else f"about {arl:.0f} points between false alarms"
        skew_words = f", skewness {skewness:.2f}" if skewness is not None else ""
        what = f"{k:g}-sigma limits" if scheme.plain else f"the {scheme.words}"
        notes.append(f"the readings are not normal in shape ({name}{skew_words}): {what} "
                     f"would give {arl_words} instead of {arl_normal:.0f}, so expect {direction} false alarms than "
                     f"the normal figures say")
    if x.size < 100 and name != "normal":
        notes.append(f"the shape is judged from only {x.size} readings: the tail beyond the limits is a rough guess")
    return ShapeCheck(
        family=name, parameters=params, bic={f: v[1] for f, v in fits.items()},
        skewness=skewness, subgroup_size=n, arl_normal=arl_normal, arl_shape=arl,
        arl_shape_se=se, ratio=ratio,
        method=(f"shape of {x.size} readings: normal, Johnson SU and Johnson SB fitted by maximum likelihood, the "
                f"lowest BIC kept (Johnson 1949; Schwarz 1978); "
                + ("" if scheme.plain else f"in-control ARL of the {scheme.words}; ")
                + f"limits at the fitted mean +/- {k:g} standard deviations of the plotted point"
                + ("" if scheme.plain else ", zone boundaries likewise")
                + f"; {how}"),
        warnings=notes, kurtosis=kurtosis, scheme=scheme.words,
    )


@dataclass
class DependenceCheck:
    """Lag-1 autocorrelation of the plotted points and the in-control ARL under the fitted AR(1).

    arl_ar1 is computed at phi = r1 even when r1 is within the bound (then it mostly shows the noise in r1): show it
    where `significant` is True.
    """

    points: int
    r1: float
    bound: float  # 2 / sqrt(N)
    significant: bool
    phi: float  # the AR(1) coefficient used (r1, kept inside +/- 0.99)
    limits_sigma: str  # "moving-range" or "marginal"
    half_width: float  # the limits' half-width in marginal standard deviations
    arl_independent: float
    arl_ar1: float  # a lower bound when censored
    arl_ar1_se: float
    censored: bool  # some simulated runs had not signalled when the simulation stopped
    method: str
    warnings: list[str] = field(default_factory=list)


def lag1_autocorrelation(points: np.ndarray) -> float:
    """r1 = sum (x_t - xbar)(x_t+1 - xbar) / sum (x_t - xbar)^2 (Box and Jenkins 1976)."""
    x = np.asarray(points, dtype=float)
    d = x - x.mean()
    denom = float(d @ d)
    if denom == 0:
        raise ValueError("points: every point is the same, so no autocorrelation can be computed")
    return float(d[:-1] @ d[1:]) / denom


def ar1_arl(phi: float, half_width: float, paths: int = 5_000, max_steps: int = 40_000, seed: int = DEFAULT_SEED,
            block: int = 256) -> tuple[float, float, bool]:
    """Mean run length of |X_t| > half_width for a stationary AR(1) with unit marginal variance, by simulation.

    X_t = phi X_t-1 + sqrt(1 - phi^2) e_t with X_0 from the stationary law; all paths advance together in blocks.
    Returns (ARL, standard error, censored); a censored ARL is a lower bound.
    """
    if not -1 < phi < 1:
        raise ValueError(f"phi must lie strictly between -1 and 1, got {phi}")
    rng = np.random.default_rng(seed)
    state = rng.standard_normal(paths)
    run = np.zeros(paths)
    alive = np.arange(paths)
    steps = 0
    innov = math.sqrt(1.0 - phi * phi)
    while alive.size and steps < max_steps:
        e = innov * rng.standard_normal((alive.size, block))
        x = ar1_block(e, phi, state[alive])
        out = np.abs(x) > half_width
        hit = out.any(axis=1)
        first = np.argmax(out, axis=1)
        run[alive[hit]] = steps + first[hit] + 1
        state[alive] = x[:, -1]
        alive = alive[~hit]
        steps += block
    censored = bool(alive.size)
    run[alive] = steps
    return float(run.mean()), float(run.std(ddof=1) / math.sqrt(paths)), censored


def dependence_check(points: np.ndarray, limits_sigma: str = "moving-range", k: float = 3.0, paths: int = 5_000,
                     seed: int = DEFAULT_SEED, scheme: ShapeScheme | None = None) -> DependenceCheck:
    """Lag-1 autocorrelation of the plotted points, whether it matters, and the in-control ARL under AR(1).

    limits_sigma says how the chart sets its sigma: "moving-range" (individuals: MR-bar / d2, which under AR(1)
    tends to sigma sqrt(1 - phi), the case where dependence bites) or "marginal" (the points' own standard deviation).
    """
    if limits_sigma not in ("moving-range", "marginal"):
        raise ValueError(f"limits_sigma must be 'moving-range' or 'marginal', got {limits_sigma!r}")
    x = np.asarray(points, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if x.size < MIN_READINGS:
        raise ValueError(f"points: at least {MIN_READINGS} points are needed to judge their dependence, got {x.size}")
    r1 = lag1_autocorrelation(x)
    bound = 2.0 / math.sqrt(x.size)
    phi = float(np.clip(r1, -0.99, 0.99))
    # E|X_t - X_t-1| / d2(2) = sigma sqrt(1 - phi) for a stationary AR(1) with marginal sigma (common practice).
    half = k * math.sqrt(1.0 - phi) if limits_sigma == "moving-range" else k
    scheme = scheme or ShapeScheme()
    if scheme.plain:
        arl, se, censored = ar1_arl(phi, half, paths=paths, seed=seed)
        arl_ind = _normal_arl(k)
    else:
        arl, se, censored = ar1_scheme_arl(phi, half, k, scheme, paths=paths, seed=seed)
        arl_ind = scheme_normal_arl(scheme)
    notes = []
    significant = abs(r1) > bound
    if significant:
        sign = "successive points move together" if r1 > 0 else "successive points tend to alternate"
        at_least = "at least " if censored else ""
        if abs(arl / arl_ind - 1.0) > DIFFERENCE_WARNED:
            effect = f"under that dependence the chart's in-control ARL is {at_least}about {arl:.0f}, not {arl_ind:.0f}"
        else:
            effect = (f"the in-control ARL stays near {arl_ind:.0f}, but the pattern rules and the shift figures "
                      f"assume independent points")
        notes.append(f"the points are not independent (lag-1 autocorrelation {r1:.2f}, beyond the rough bound "
                     f"{bound:.2f} for {x.size} points; {sign}): {effect}; look for the cause (drift, tool wear, "
                     f"sampling too often) before trusting the run-length figures")
    basis = ("sigma from moving ranges, sigma sqrt(1 - phi) in the long run" if limits_sigma == "moving-range"
             else "the points' own (marginal) sigma")
    return DependenceCheck(
        points=int(x.size), r1=r1, bound=bound, significant=significant, phi=phi, limits_sigma=limits_sigma,
        half_width=half, arl_independent=arl_ind, arl_ar1=arl, arl_ar1_se=se, censored=censored,
        method=("lag-1 autocorrelation against 2/sqrt(N) (Box and Jenkins 1976); in-control ARL of "
                + ("limits" if scheme.plain else f"the {scheme.words}, limits and zone boundaries")
                + f" at +/- {k:g} sigma ({basis}) under AR(1) with phi = r1, {paths:,} seeded simulated runs, "
                "stationary start"),
        warnings=notes,
    )


@dataclass
class DataShapeReport:
    """Both checks for one characteristic's base period, with their warnings together."""

    shape: ShapeCheck
    dependence: DependenceCheck
    warnings: list[str]
    method: str


def data_shape_report(readings: np.ndarray, subgroup_size: int = 1, k: float = 3.0, seed: int = DEFAULT_SEED,
                      scheme: ShapeScheme | None = None) -> DataShapeReport:
    """Shape and dependence of a base period: readings as (subgroups, n) or a 1-D series of individuals.

    The plotted points are the subgroup means (NaN readings left out) or the individuals themselves; limits for the
    dependence check follow the chart: moving ranges for individuals, the points' own sigma for subgroup means.
    """
    x = np.asarray(readings, dtype=float)
    if subgroup_size == 1:
        points, basis = x.ravel(), "moving-range"
    else:
        rows = np.atleast_2d(x)
        kept = np.isfinite(rows).any(axis=1)
        points, basis = np.nanmean(rows[kept], axis=1), "marginal"
    shape = shape_check(x, subgroup_size, k=k, seed=seed, scheme=scheme)
    dependence = dependence_check(points, basis, k=k, seed=seed, scheme=scheme)
    return DataShapeReport(shape=shape, dependence=dependence, warnings=shape.warnings + dependence.warnings,
                           method=f"{shape.method}. {dependence.method}.")

