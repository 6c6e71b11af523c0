"""Variables charts: X-bar and R, X-bar and S, individuals and moving range.

All limits are written in terms of the process mean and the within-subgroup sigma, so a
subgroup of any size gets its own limits: mean +/- 3 sigma / sqrt(n_i); range d2(n_i) sigma +/-
3 d3(n_i) sigma; standard deviation c4(n_i) sigma +/- 3 sqrt(1 - c4(n_i)^2) sigma, floored at
zero. With a constant n these are exactly the A2, D3, D4, A3, B3, B4 limits (Montgomery 2009,
ch. 6; ASTM E2587).
"""

from __future__ import annotations

import warnings

import numpy as np

from sheettool.core.charts.base import ChartFit, ChartKind, PlottedStatistic, shewhart_statistic, typical_size
from sheettool.core.constants import c4, d2, d3
from sheettool.core.data import Characteristic, Measurements
from sheettool.core.sigma import SigmaMethod

_d2, _d3, _c4 = np.vectorize(d2, otypes=[float]), np.vectorize(d3, otypes=[float]), np.vectorize(c4, otypes=[float])


def subgroup_means(values: np.ndarray) -> np.ndarray:
    """Mean of each subgroup's readings; NaN for a subgroup without readings."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        return np.nanmean(values, axis=1)


def subgroup_ranges(values: np.ndarray) -> np.ndarray:
    """Range of each subgroup; NaN where fewer than two readings."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        r = np.nanmax(values, axis=1) - np.nanmin(values, axis=1)
    return np.where(np.sum(~np.isnan(values), axis=1) >= 2, r, np.nan)


def subgroup_sds(values: np.ndarray) -> np.ndarray:
    """Sample standard deviation (n - 1 divisor) of each subgroup; NaN where fewer than two readings."""
    sizes = np.sum(~np.isnan(values), axis=1)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        s = np.nanstd(values, axis=1, ddof=1)
    return np.where(sizes >= 2, s, np.nan)


def moving_ranges(x: np.ndarray) -> np.ndarray:
    """|x_i - x_(i-1)|, NaN at the first point and next to a missing value."""
    return np.concatenate([[np.nan], np.abs(np.diff(x))])


def individuals(data: Measurements) -> np.ndarray:
    """One value per row; ValueError naming the first row with more than one reading."""
    many = np.flatnonzero(data.sizes > 1)
    if many.size:
        raise ValueError(f"an individuals chart needs one reading per row; row {many[0] + 1} has "
                         f"{data.sizes[many[0]]}; choose an X-bar chart for subgroups")
    return subgroup_means(data.values)


def grand_mean(values: np.ndarray, base: np.ndarray) -> float:
    """Mean of all readings of the base subgroups (= the size-weighted mean of subgroup means)."""
    readings = values[base]
    readings = readings[~np.isnan(readings)]
    if readings.size == 0:
        raise ValueError("the base period holds no reading")
    return float(np.mean(readings))


def within_sigma(values: np.ndarray, base: np.ndarray,
                 family: SigmaMethod | None = None) -> tuple[float, SigmaMethod]:
    """Within-subgroup sigma from the base subgroups, and the method that gave it.

    family RANGE: mean of R_i / d2(n_i), R-bar / d2 for constant n; S_BAR: S-bar / c4(n) for constant n, else the
    pooled standard deviation divided by c4(1 + sum(n_i - 1)), which makes it unbiased (ASTM E2587; Montgomery
    2009, sec. 6.3); MOVING_RANGE: MR-bar / d2(2) over consecutive base points. None picks by the usual subgroup
    size: 1, 2..9, 10 or more.
    """
    sizes = np.sum(~np.isnan(values), axis=1)
    if family is None:
        n = typical_size(sizes[base])
        family = SigmaMethod.MOVING_RANGE if n == 1 else (SigmaMethod.RANGE if n < 10 else SigmaMethod.S_BAR)
    if family is SigmaMethod.MOVING_RANGE:
        x = subgroup_means(values)
        mr = moving_ranges(x)
        use = base & np.concatenate([[False], base[:-1]]) & ~np.isnan(mr)
        if not use.any():
            raise ValueError("the base period needs at least two consecutive individual values")
        return float(np.mean(mr[use])) / d2(2), SigmaMethod.MOVING_RANGE
    use = base & (sizes >= 2)
    if not use.any():
        raise ValueError("the base period holds no subgroup with two or more readings")
    n = sizes[use]
    constant = bool(np.all(n == n[0]))
    if family is SigmaMethod.RANGE:
        r = subgroup_ranges(values)[use]
        return float(np.mean(r / _d2(n))), SigmaMethod.RANGE if constant else SigmaMethod.RANGE_VARYING
    s = subgroup_sds(values)[use]
    if constant:
        return float(np.mean(s)) / c4(int(n[0])), SigmaMethod.S_BAR
    dof = int(np.sum(n - 1))
    pooled = float(np.sqrt(np.sum((n - 1) * s * s) / dof))
    return pooled / c4(dof + 1), SigmaMethod.POOLED


def _sizes_for_limits(data: Measurements, low: int) -> np.ndarray:
    """Subgroup sizes, with the usual size standing in where a subgroup has fewer than `low` readings
    (its statistic is not plotted there, but the limit line runs on)."""
    sizes = data.sizes.astype(int)
    return np.where(sizes >= low, sizes, max(typical_size(sizes), low))


class _Variables(ChartKind):
    """Shared estimate for the subgroup charts: grand mean and within sigma by the kind's method."""

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], SigmaMethod]:
        values = characteristic.data.values
        sigma, words = within_sigma(values, base, self.sigma_estimator)
        return {"mean": grand_mean(values, base), "sigma": sigma}, words

    def _fit(self, characteristic: Characteristic, params: dict[str, float], method: SigmaMethod,
             statistics: list, n: int) -> ChartFit:
        data = characteristic.data
        notes = []
        sizes = data.sizes[data.sizes > 0]
        if sizes.size and np.ptp(sizes) > 0:
            notes.append(f"subgroup sizes vary from {int(sizes.min())} to {int(sizes.max())}: limits per point")
        return ChartFit(chart=self.name, statistics=statistics, subgroup_size=n, process_mean=params["mean"],
                        sigma_within=params["sigma"], sigma_method=method, base=np.zeros(data.subgroups, bool),
                        parameters={"n": float(n)}, notes=notes)


class _MeanAndSpread(_Variables):
    """Shared parts of X-bar with R or S: the subgroup mean chart and a spread chart beside it."""

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """The mean at mu +/- 3 sigma / sqrt(n_i) and the spread chart, limits per point."""
        data = self.check(characteristic)
        if typical_size(data.sizes) < 2:
            raise ValueError(f"an {self.title} chart needs at least two readings per subgroup; "
                             "choose the individuals and moving range chart (chart individuals)")
        mu, sigma = params["mean"], params["sigma"]
        stats = [
            shewhart_statistic("mean", "Subgroup mean", subgroup_means(data.values), mu,
                               sigma / np.sqrt(_sizes_for_limits(data, 1))),
            self._spread(data, _sizes_for_limits(data, 2), sigma),
        ]
        return self._fit(characteristic, params, sigma_method, stats, typical_size(data.sizes))

    def _spread(self, data: Measurements, n: np.ndarray, sigma: float) -> PlottedStatistic:
        """The spread statistic of subgroups of n (per point) at process sigma."""
        raise NotImplementedError


class XbarR(_MeanAndSpread):
    """X-bar and R: limits from the grand mean and sigma = R-bar / d2 (Shewhart 1931)."""

    name = "xbar-r"
    title = "X-bar and R"
    sigma_estimator = SigmaMethod.RANGE

    def _spread(self, data: Measurements, n: np.ndarray, sigma: float) -> PlottedStatistic:
        return shewhart_statistic("range", "Subgroup range", subgroup_ranges(data.values), _d2(n) * sigma,
                                  _d3(n) * sigma, floor=0.0)


class XbarS(_MeanAndSpread):
    """X-bar and S: limits from the grand mean and sigma = S-bar / c4 or the pooled sd (Montgomery 2009)."""

    name = "xbar-s"
    title = "X-bar and S"
    sigma_estimator = SigmaMethod.S_BAR

    def _spread(self, data: Measurements, n: np.ndarray, sigma: float) -> PlottedStatistic:
        k4 = _c4(n)
        return shewhart_statistic("sd", "Subgroup standard deviation", subgroup_sds(data.values), k4 * sigma,
                                  np.sqrt(1.0 - k4 * k4) * sigma, floor=0.0)


class IndividualsMR(_Variables):
    """Individuals and moving range: X-bar +/- 3 MR-bar / d2(2) = E2 MR-bar; MR up to D4(2) MR-bar."""

    name = "individuals"
    title = "individuals and moving range"
    sigma_estimator = SigmaMethod.MOVING_RANGE

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], SigmaMethod]:
        """As for every variables chart, after checking that each subgroup holds one reading."""
        individuals(self.check(characteristic))
        return super().estimate(characteristic, base)

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """The individuals at mu +/- 3 sigma and their moving ranges of two, with a floor at zero."""
        x = individuals(self.check(characteristic))
        mu, sigma = params["mean"], params["sigma"]
        stats = [
            shewhart_statistic("individual", "Individual value", x, mu, sigma),
            shewhart_statistic("moving_range", "Moving range", moving_ranges(x), d2(2) * sigma, d3(2) * sigma,
                               floor=0.0),
        ]
        return self._fit(characteristic, params, sigma_method, stats, 1)
