"""What every chart kind shares: the result types, the kind protocol and the limit helpers.

A kind works in two steps. `estimate` turns the base-period subgroups into process parameters
(mean and sigma, or p0, c0, u0); `build` turns parameters into plotted statistics with limits.
Standard values and carried limits are simply parameters given instead of estimated, so the
three sources of limits (base period, standard values, an earlier evaluation) share one path.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from sheettool.core.data import Characteristic, Counts, Measurements
from sheettool.core.rules import on_limit
from sheettool.core.sigma import SigmaMethod

SIGMA_WIDTH = 3.0  # Shewhart's 3-sigma limits (Shewhart 1931)


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
    sigma_method: SigmaMethod
    base: np.ndarray  # True for the subgroups that set the limits
    limits_source: str = "base period: all subgroups"  # where the limits came from, in words
    parameters: dict[str, float] = field(default_factory=dict)  # what the run-length engine needs
    notes: list[str] = field(default_factory=list)
    removed: list[int] = field(default_factory=list)  # 1-based points dropped from the base by revision
    origin: str = ""  # for carried limits: how they were first set (kept month after month)
    sigma_given: str = ""  # where a given sigma or rate came from (sigma_method GIVEN), in words

    @property
    def sigma_words(self) -> str:
        """How sigma (or the rate) was found, in the workbook's words: the method's, or where it was given."""
        return self.sigma_given if self.sigma_method is SigmaMethod.GIVEN else self.sigma_method.words


class ChartKind:
    """Base class: a chart kind turns a characteristic and its process parameters into a ChartFit.

    Subclasses set `name` (JSON), `title`, `data` (the data class they plot), `needs` (the
    parameters that set the limits, estimated from the base period unless given) and implement
    `estimate` and `build`.
    """

    name = ""
    title = ""
    data: type = Measurements
    needs: tuple[str, ...] = ("mean", "sigma")
    sigma_estimator: SigmaMethod | None = None  # within-sigma family for capability (see variables.within_sigma)
    time_weighted = False  # True: signals are limit crossings only; pattern rules do not apply

    def check(self, characteristic: Characteristic) -> Measurements | Counts:
        """The characteristic's data, or ValueError when this kind cannot plot it."""
        data = characteristic.data
        if not isinstance(data, self.data):
            what = "measurements" if self.data is Measurements else "attribute counts"
            raise ValueError(f"a {self.title} chart needs {what}; choose a chart that fits the data")
        return data

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], SigmaMethod]:
        """Process parameters from the subgroups marked in `base`, and how sigma was estimated."""
        raise NotImplementedError

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """Plotted statistics and limits from process parameters (base and source are set by `fit`)."""
        raise NotImplementedError

    def fit(self, characteristic: Characteristic, base: np.ndarray,
            given: dict[str, float] | None = None, given_words: str = "") -> ChartFit:
        """Estimate what `given` does not supply from the base subgroups, then build the chart.

        `given` holds standard or carried parameters and chart settings (lambda, L, k, h);
        `given_words` says where a given sigma came from.
        """
        self.check(characteristic)
        given = dict(given or {})
        base = np.asarray(base, dtype=bool)
        missing = [p for p in self.needs if p not in given]
        params: dict[str, float] = {}
        method = SigmaMethod.GIVEN
        if missing:
            if not base.any():
                raise ValueError("the base period holds no subgroup to set the limits from")
            params, estimated = self.estimate(characteristic, base)
            if "sigma" in missing or "sigma" not in self.needs:
                method = estimated
        params.update(given)
        fit = self.build(characteristic, params, method)
        if method is SigmaMethod.GIVEN:
            fit.sigma_given = given_words
        fit.base = base.copy() if missing else np.zeros(characteristic.data.subgroups, dtype=bool)
        fit.notes.extend(floor_notes(fit.statistics))
        return fit


def shewhart_statistic(name: str, label: str, values: np.ndarray, center: np.ndarray | float,
                       se: np.ndarray | float, floor: float | None = None,
                       width: float = SIGMA_WIDTH) -> PlottedStatistic:
    """Center +/- width standard errors per point; a lower limit below `floor` is raised to it."""
    m = len(values)
    center = np.broadcast_to(np.asarray(center, dtype=float), (m,)).copy()
    se = np.broadcast_to(np.asarray(se, dtype=float), (m,)).copy()
    lcl = center - width * se
    floored = False
    if floor is not None:
        floored = bool(np.any(lcl[~np.isnan(lcl)] < floor))
        lcl = np.maximum(lcl, floor)
    return PlottedStatistic(name=name, label=label, values=np.asarray(values, dtype=float), center=center,
                            lcl=lcl, ucl=center + width * se, sigma=se, lcl_floored=floored)


def floor_notes(statistics: list[PlottedStatistic]) -> list[str]:
    """The note said for each statistic whose lower limit was raised to zero."""
    return [f"{s.label}: the lower limit by the formula is below zero and is shown as zero"
            for s in statistics if s.lcl_floored]


def typical_size(sizes: np.ndarray) -> int:
    """The most common subgroup size among subgroups with data (the larger one on a tie)."""
    present = np.asarray(sizes)[np.asarray(sizes) > 0].astype(int)
    if present.size == 0:
        raise ValueError("no subgroup holds any reading")
    counts = np.bincount(present)
    return int(np.flatnonzero(counts == counts.max())[-1])


def beyond_limits(fit: ChartFit) -> np.ndarray:
    """True at each point where any plotted statistic lies outside its limits (on a limit is not beyond)."""
    out = np.zeros(len(fit.base), dtype=bool)
    for s in fit.statistics:
        with np.errstate(invalid="ignore"):
            out |= ((s.values > s.ucl) & ~on_limit(s.values, s.ucl)) | ((s.values < s.lcl) & ~on_limit(s.values, s.lcl))
    return out
