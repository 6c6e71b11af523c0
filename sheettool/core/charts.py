"""Chart kinds: from a characteristic's data to the plotted statistics and their control limits.

Each kind is a small class with one job, `fit`, sharing the result types below; the registry
`CHART_KINDS` maps the JSON name of a kind to its class, so adding a kind is one class and one
registry line. Formulas follow Montgomery, Introduction to Statistical Quality Control, ch. 6-7,
with the constants of `sheettool.core.constants`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from sheettool.core.constants import constants
from sheettool.core.data import Characteristic, Measurements


@dataclass
class PlottedStatistic:
    """One plotted series with its center line, limits and standard error, each per point."""

    name: str  # JSON name, e.g. "mean", "range"
    label: str  # words for the workbook, e.g. "Subgroup mean"
    values: np.ndarray
    center: np.ndarray
    lcl: np.ndarray
    ucl: np.ndarray
    sigma: np.ndarray  # standard error of the statistic per point, for pattern rules
    lcl_floored: bool = False  # the formula gave a negative lower limit, shown as zero

    @property
    def varies(self) -> bool:
        """True where the limits differ between points (varying subgroup size)."""
        return bool(np.ptp(self.lcl) > 0 or np.ptp(self.ucl) > 0)


@dataclass
class ChartFit:
    """A fitted chart: its statistics, the process estimates behind them and the base period."""

    chart: str
    statistics: list[PlottedStatistic]
    subgroup_size: int
    process_mean: float
    sigma_within: float
    sigma_method: str
    base: np.ndarray  # True for the subgroups that set the limits
    limits_source: str = "base period: all subgroups"  # where the limits came from, in words
    parameters: dict[str, float] = field(default_factory=dict)  # what the run-length engine needs
    notes: list[str] = field(default_factory=list)


class ChartKind:
    """Base class: a chart kind turns a characteristic into a ChartFit."""

    name = ""
    title = ""

    def fit(self, characteristic: Characteristic, base: np.ndarray) -> ChartFit:
        """Compute the plotted statistics and limits from the subgroups marked in `base`."""
        raise NotImplementedError


def _full(value: float, m: int) -> np.ndarray:
    return np.full(m, float(value))


class XbarR(ChartKind):
    """X-bar and R: limits from the grand mean and the average range, sigma = R-bar / d2."""

    name = "xbar-r"
    title = "X-bar and R"

    def fit(self, characteristic: Characteristic, base: np.ndarray) -> ChartFit:
        data = characteristic.data
        if not isinstance(data, Measurements):
            raise ValueError("an X-bar and R chart needs measurements, not counts")
        sizes = data.sizes
        n = int(np.max(sizes[base])) if base.any() else 0
        if n < 2:
            raise ValueError("an X-bar and R chart needs at least two readings per subgroup")
        means = np.nanmean(np.where(sizes[:, None] > 0, data.values, 0.0), axis=1)
        means[sizes == 0] = np.nan
        ranges = np.nanmax(data.values, axis=1) - np.nanmin(data.values, axis=1)
        ranges[sizes < 2] = np.nan
        usable = base & (sizes == n)
        if not usable.any():
            raise ValueError(f"no complete subgroup of size {n} in the base period")
        k = constants(n)
        grand_mean = float(np.mean(means[usable]))
        r_bar = float(np.mean(ranges[usable]))
        sigma = r_bar / k.d2
        m = data.subgroups
        se_mean = sigma / np.sqrt(n)
        mean_stat = PlottedStatistic(
            name="mean",
            label="Subgroup mean",
            values=means,
            center=_full(grand_mean, m),
            lcl=_full(grand_mean - k.A2 * r_bar, m),
            ucl=_full(grand_mean + k.A2 * r_bar, m),
            sigma=_full(se_mean, m),
        )
        range_stat = PlottedStatistic(
            name="range",
            label="Subgroup range",
            values=ranges,
            center=_full(r_bar, m),
            lcl=_full(k.D3 * r_bar, m),
            ucl=_full(k.D4 * r_bar, m),
            sigma=_full(k.d3 * sigma, m),
            lcl_floored=1.0 - 3.0 * k.d3 / k.d2 < 0.0,
        )
        notes = []
        if (sizes[base] < n).any():
            short = int(np.sum(base & (sizes < n)))
            notes.append(f"{short} short subgroup(s) plotted but left out of the limits")
        return ChartFit(
            chart=self.name,
            statistics=[mean_stat, range_stat],
            subgroup_size=n,
            process_mean=grand_mean,
            sigma_within=sigma,
            sigma_method="R-bar / d2",
            base=usable,
            limits_source=f"base period: {int(usable.sum())} of {m} subgroups",
            parameters={"n": float(n)},
            notes=notes,
        )


CHART_KINDS: dict[str, type[ChartKind]] = {cls.name: cls for cls in (XbarR,)}
