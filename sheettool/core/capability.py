"""Process capability: Cp, Cpk, Pp, Ppk, Cpm with intervals; attribute rates with intervals.

Indices (Montgomery 2009, ch. 8; Kane 1986): Cp = (USL - LSL) / 6 sigma_within,
Cpk = min(USL - mean, mean - LSL) / 3 sigma_within; Pp and Ppk the same with the overall
standard deviation; Cpm = (USL - LSL) / 6 sqrt(sigma_overall^2 + (mean - T)^2) (Chan, Cheng and
Spiring 1988). With one specification limit only the one-sided index (Cpk, Ppk) is defined.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import special

from sheettool.core.constants import c4
from sheettool.core.distributions import beta_ppf, chi2_ppf
from sheettool.core.sigma import SigmaEstimator, SigmaMethod, sigma_estimator


@dataclass(frozen=True)
class Interval:
    """A two-sided confidence interval."""

    low: float
    high: float


@dataclass
class Capability:
    """Capability of a variables characteristic against its specification limits.

    Indices are None where a one-sided specification or a missing target makes them undefined.
    `stable` is False when the chart signals: the indices then do not describe a stable process.
    """

    lsl: float | None
    usl: float | None
    target: float | None
    mean: float
    sigma_within: float
    sigma_overall: float
    cp: float | None
    cpk: float | None
    pp: float | None
    ppk: float | None
    cpm: float | None
    ppm_out: float | None  # expected parts per million out of spec, normal model with the overall sigma
    ci: dict[str, Interval]
    confidence: float
    normality_p: float | None  # approximate Anderson-Darling p-value (D'Agostino and Stephens 1986)
    stable: bool = True
    notes: list[str] = field(default_factory=list)
    ppm_within: float | None = None  # the same with the within sigma
    normality_statistic: float | None = None  # Anderson-Darling A^2
    normality_doubtful: bool = False  # A^2 above the 5% critical value
    readings: int = 0
    sigma_method: SigmaMethod | None = None  # how the within sigma was estimated


@dataclass
class AttributeRate:
    """The average proportion defective or defects per unit, with its confidence interval."""

    kind: str  # "proportion" or "rate"
    estimate: float
    ci: Interval
    confidence: float
    count: float = 0.0
    units: float = 0.0
    method: str = ""


def check_specs(lsl: float | None, usl: float | None) -> None:
    """ValueError when the specification limits are reversed or equal."""
    if lsl is not None and usl is not None and not lsl < usl:
        raise ValueError(f"the lower specification limit (lsl = {lsl:g}) must be below the upper one "
                         f"(usl = {usl:g}); check the two settings")


def _check_confidence(confidence: float) -> float:
    if not 0.0 < confidence < 1.0:
        raise ValueError(f"the confidence level must be between 0 and 1 (e.g. 0.95), got {confidence:g}")
    return float(confidence)


def anderson_darling(x: np.ndarray) -> tuple[float, float]:
    """Anderson-Darling A^2 for normality (mean and sd estimated) and its approximate p-value.

    A^2 as in Stephens (1974); p from the modified A* = A^2 (1 + 0.75/n + 2.25/n^2) by the
    formulas of D'Agostino and Stephens (1986, table 4.9).
    """
    x = np.sort(np.asarray(x, dtype=float))
    n = x.size
    z = (x - x.mean()) / x.std(ddof=1)
    i = np.arange(1, n + 1)
    a2 = float(-n - np.sum((2 * i - 1) * (special.log_ndtr(z) + special.log_ndtr(-z[::-1]))) / n)
    a = a2 * (1 + 0.75 / n + 2.25 / n**2)
    if a >= 0.6:
        p = np.exp(1.2937 - 5.709 * a + 0.0186 * a * a)
    elif a >= 0.34:
        p = np.exp(0.9177 - 4.279 * a - 1.38 * a * a)
    elif a >= 0.2:
        p = 1 - np.exp(-8.318 + 42.796 * a - 59.938 * a * a)
    else:
        p = 1 - np.exp(-13.436 + 101.14 * a - 223.73 * a * a)
    return a2, float(min(max(p, 0.0), 1.0))


def ad_critical_5pct(n: int) -> float:
    """The 5% critical value of A^2 for normality with estimated parameters (Stephens 1974)."""
    return 0.752 / (1 + 0.75 / n + 2.25 / n**2)


def _indices(mean: float, sigma: float, lsl: float | None, usl: float | None) -> tuple[float | None, float | None]:
    """(Cp-like, Cpk-like) for one sigma; None where undefined."""
    if not sigma > 0:
        return None, None
    sides = [(usl - mean) / (3 * sigma)] if usl is not None else []
    sides += [(mean - lsl) / (3 * sigma)] if lsl is not None else []
    both = (usl - lsl) / (6 * sigma) if lsl is not None and usl is not None else None
    return both, (min(sides) if sides else None)


def _ppm(mean: float, sigma: float, lsl: float | None, usl: float | None) -> float | None:
    if not sigma > 0:
        return None
    low = special.ndtr((lsl - mean) / sigma) if lsl is not None else 0.0
    high = special.ndtr(-((usl - mean) / sigma)) if usl is not None else 0.0
    return float(1e6 * (low + high))


def cp_interval(cp: float, nu: float, confidence: float, scale: float = 1.0) -> Interval:
    """Chi-square interval for Cp when sigma_hat / sigma is scale * chi_nu / sqrt(nu) (Kane 1986; Montgomery
    2009, eq. 8.19 with scale 1, the sample standard deviation; Patnaik's (1950) scaled chi otherwise)."""
    alpha = 1 - confidence
    return Interval(cp * scale * float(np.sqrt(special.chdtri(nu, 1 - alpha / 2) / nu)),
                    cp * scale * float(np.sqrt(special.chdtri(nu, alpha / 2) / nu)))


def cpk_interval(cpk: float, n: int, confidence: float, nu: float | None = None) -> Interval:
    """Normal-approximation interval for Cpk from n readings (Bissell 1990), sigma with nu degrees of
    freedom (n - 1 for the sample standard deviation)."""
    nu = n - 1 if nu is None else nu
    z = float(special.ndtri(1 - (1 - confidence) / 2))
    half = z * float(np.sqrt(1 / (9 * n) + cpk * cpk / (2 * nu)))
    return Interval(cpk - half, cpk + half)


def within_sigma_model(readings: np.ndarray, method: SigmaMethod | None) -> SigmaEstimator | None:
    """The distribution of the within sigma_hat / sigma for readings as (subgroups, n) under `method`, or None
    when the method is not known (the sample standard deviation is then assumed).

    Pooled standard deviation / c4: exact, chi with sum(n_i - 1) degrees of freedom. R-bar / d2, S-bar / c4,
    MR-bar / d2: Patnaik's (1950) scaled chi with the estimator's exact mean and variance (core/sigma.py);
    R / d2 with varying sizes is modelled at the usual subgroup size.
    """
    x = np.asarray(readings, dtype=float)
    if method is None or x.ndim != 2:
        return None
    sizes = np.sum(~np.isnan(x), axis=1)
    sizes = sizes[sizes > 0]
    if method is SigmaMethod.MOVING_RANGE:
        return sigma_estimator(int(sizes.size), 1, method) if sizes.size >= 2 else None
    sizes = sizes[sizes >= 2]
    if sizes.size == 0:
        return None
    if method is SigmaMethod.POOLED:
        nu = int(np.sum(sizes - 1))
        return SigmaEstimator(method, float(nu), 1.0 / c4(nu + 1), 0.0, exact=True)
    if sizes.size < 2 or method.modelled is None:
        return None
    n = int(np.bincount(sizes).argmax())
    return sigma_estimator(int(sizes.size), n, method.modelled)


def process_capability(readings: np.ndarray, sigma_within: float, lsl: float | None, usl: float | None,
                       target: float | None = None, confidence: float = 0.95, stable: bool = True,
                       sigma_method: SigmaMethod | None = None) -> Capability:
    """Capability indices, intervals, expected ppm and a normality check for individual readings."""
    check_specs(lsl, usl)
    if lsl is None and usl is None:
        raise ValueError("capability needs at least one specification limit (lsl or usl)")
    confidence = _check_confidence(confidence)
    x = np.asarray(readings, dtype=float).ravel()
    x = x[~np.isnan(x)]
    n = x.size
    if n < 2:
        raise ValueError("capability needs at least two readings")
    mean, overall = float(np.mean(x)), float(np.std(x, ddof=1))
    cp, cpk = _indices(mean, sigma_within, lsl, usl)
    pp, ppk = _indices(mean, overall, lsl, usl)
    cpm = None
    if lsl is not None and usl is not None and target is not None and overall > 0:
        cpm = (usl - lsl) / (6 * float(np.sqrt(overall**2 + (mean - target) ** 2)))
    # Pp, Ppk: the sample standard deviation, nu = n - 1; Cp, Cpk: the degrees of freedom (and scale) of the
    # within-sigma estimator actually used, which for ranges are fewer than n - 1
    model = within_sigma_model(readings, sigma_method)
    nu, scale = (model.nu, model.scale) if model is not None else (n - 1, 1.0)
    ci = {}
    for name, value, dof, factor, form in (("cp", cp, nu, scale, "chi2"), ("pp", pp, n - 1, 1.0, "chi2"),
                                           ("cpk", cpk, nu, scale, "bissell"), ("ppk", ppk, n - 1, 1.0, "bissell")):
        if value is not None:
            ci[name] = (cp_interval(value, dof, confidence, factor) if form == "chi2"
                        else cpk_interval(value, n, confidence, dof))
    within = sigma_method.words if sigma_method else "as the chart"
    dof_words = f"{nu:.1f} degrees of freedom" + (", Patnaik's scaled chi" if model and not model.exact else "")
    notes = [f"from {n} readings; within sigma {within} (Cp and Cpk intervals with {dof_words}), overall sigma the "
             "sample standard deviation; expected ppm out of spec under a normal model with the overall sigma"]
    if not sigma_within > 0 or not overall > 0:
        notes.append("the readings have no spread: the indices are undefined; check the gauge resolution")
    cap = Capability(lsl=lsl, usl=usl, target=target, mean=mean, sigma_within=float(sigma_within),
                     sigma_overall=overall, cp=cp, cpk=cpk, pp=pp, ppk=ppk, cpm=cpm,
                     ppm_out=_ppm(mean, overall, lsl, usl), ci=ci, confidence=confidence, normality_p=None,
                     stable=stable, notes=notes, ppm_within=_ppm(mean, sigma_within, lsl, usl), readings=n,
                     sigma_method=sigma_method)
    if n >= 8 and overall > 0:
        a2, p = anderson_darling(x)
        cap.normality_statistic, cap.normality_p = a2, p
        cap.normality_doubtful = a2 > ad_critical_5pct(n)
        if cap.normality_doubtful:
            cap.notes.append(f"normality is doubtful (Anderson-Darling A2 = {a2:.3f} above the 5% critical value "
                             f"{ad_critical_5pct(n):.3f}, approximate p = {p:.3g}): the indices and the expected "
                             "ppm assume a normal distribution")
    else:
        cap.notes.append("fewer than 8 readings: normality was not checked")
    if not stable:
        cap.notes.append("the chart signals: the indices do not reflect a stable process")
    return cap


def attribute_rate(count: float, units: float, kind: str, confidence: float = 0.95) -> AttributeRate:
    """Average proportion (Clopper-Pearson exact interval) or rate per unit (exact Poisson interval).

    Clopper and Pearson (1934): beta quantiles; Garwood (1936): chi2(alpha/2, 2x)/2 to chi2(1 - alpha/2, 2x + 2)/2.
    """
    confidence = _check_confidence(confidence)
    alpha = 1 - confidence
    if units <= 0:
        raise ValueError("no units inspected: the rate is undefined")
    if kind == "proportion":
        low = beta_ppf(alpha / 2, count, units - count + 1) if count > 0 else 0.0
        high = beta_ppf(1 - alpha / 2, count + 1, units - count) if count < units else 1.0
        method = "Clopper-Pearson exact binomial interval"
    elif kind == "rate":
        low = chi2_ppf(alpha / 2, 2 * count) / (2 * units) if count > 0 else 0.0
        high = chi2_ppf(1 - alpha / 2, 2 * count + 2) / (2 * units)
        method = "exact Poisson interval (Garwood)"
    else:
        raise ValueError(f"kind must be 'proportion' or 'rate', got {kind!r}")
    return AttributeRate(kind=kind, estimate=float(count / units), ci=Interval(low, high), confidence=confidence,
                         count=float(count), units=float(units), method=method)
