"""Attribute charts: p and np (binomial), c and u (Poisson).

Limits are center +/- 3 standard errors per point (Montgomery 2009, ch. 7):
p: p0 +/- 3 sqrt(p0 (1 - p0) / n_i); np: n_i p0 +/- 3 sqrt(n_i p0 (1 - p0));
c: c0 +/- 3 sqrt(c0); u: u0 +/- 3 sqrt(u0 / n_i). A negative lower limit is shown as zero.
"""

from __future__ import annotations

import numpy as np

from sheettool.core.charts.base import ChartFit, ChartKind, PlottedStatistic, shewhart_statistic
from sheettool.core.data import Characteristic, Counts
from sheettool.core.sigma import SigmaMethod


def check_counts(characteristic: Characteristic, kind: str, title: str) -> Counts:
    """The counts, or ValueError naming the first subgroup whose numbers cannot be right."""
    data = characteristic.data
    if not isinstance(data, Counts):
        raise ValueError(f"a {title} chart needs attribute counts and units inspected, not measurements; "
                         "choose a chart that fits the data")
    if data.kind != kind:
        fits = "p or np" if data.kind == "defectives" else "c or u"
        raise ValueError(f"this chart plots {kind} but the data count {data.kind}; choose a {fits} chart")
    for i, (c, n) in enumerate(zip(data.counts, data.inspected, strict=True)):
        label = characteristic.labels[i]
        where = f"subgroup {i + 1}" + (f" ({label})" if label != str(i + 1) else "")
        if np.isnan(c):
            continue
        if c < 0:
            raise ValueError(f"{where}: the count {c:g} is negative; counts are zero or more")
        if np.isnan(n) or n <= 0:
            raise ValueError(f"{where}: {'no' if np.isnan(n) else f'{n:g}'} units inspected; "
                             "each subgroup needs at least one unit inspected")
        if kind == "defectives" and c > n:
            raise ValueError(f"{where}: {c:g} defectives out of {n:g} inspected; defectives cannot "
                             "exceed the units inspected")
    return data


_NONE_YET = ("no {kind} in the base period, so the center line and UCL are 0: the chart shows when {kind} appear "
             "(any one is a signal) but not how often they occur in control, and its false alarms cannot be judged "
             "(the run lengths are those at a rate of 1 in 10^9 units); a base period long enough to hold several "
             "{kind} (about 5 / p units for an expected proportion or rate p) gives limits that can")


def _fractions(characteristic: Characteristic, data: Counts, kind: str) -> list[str]:
    """A note naming the subgroups whose count or units inspected is not a whole number (2.5 defectives)."""
    whole = lambda x: np.isnan(x) | (x == np.round(x))  # noqa: E731
    odd = np.flatnonzero(~whole(data.counts) | ~whole(data.inspected))
    if not odd.size:
        return []
    shown = ", ".join(f"subgroup {i + 1} ({characteristic.labels[i]}: {data.counts[i]:g} of {data.inspected[i]:g})"
                      for i in odd[:5]) + (f" and {odd.size - 5} more" if odd.size > 5 else "")
    return [f"{odd.size} count(s) of {kind} or units inspected are not whole numbers: {shown}; counts are whole "
            "numbers, so check these cells (used as written)"]


def _present(data: Counts, base: np.ndarray) -> np.ndarray:
    return base & ~np.isnan(data.counts)


class _Attribute(ChartKind):
    """Shared parts: validation, the pooled rate over the base period, the fit record."""

    data = Counts
    counts_kind = "defectives"
    rate_name = "p0"
    rate_method = SigmaMethod.PROPORTION  # how the rate is estimated from the base period

    def check(self, characteristic: Characteristic) -> Counts:
        return check_counts(characteristic, self.counts_kind, self.title)

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], SigmaMethod]:
        data = self.check(characteristic)
        use = _present(data, base)
        if not use.any():
            raise ValueError("the base period holds no subgroup with a count")
        # pooled over the base: total count / total units (Montgomery 2009, eq. 7.8 and 7.17)
        rate = float(np.sum(data.counts[use]) / np.sum(data.inspected[use]))
        return {self.rate_name: rate}, self.rate_method

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """The one plotted statistic, center +/- 3 standard errors per point with a floor at zero."""
        data = self.check(characteristic)
        rate = self._checked_rate(params[self.rate_name])
        name, label, values, center, standard_error = self._plotted(data, rate)
        stat = shewhart_statistic(name, label, values, center, standard_error, floor=0.0)
        fit = self._fit(characteristic, stat, rate, self._unit_spread(rate), sigma_method, {self.rate_name: rate})
        fit.notes += _fractions(characteristic, data, self.counts_kind)
        if rate == 0:
            fit.notes.append(_NONE_YET.format(kind=self.counts_kind))
        return fit

    def _checked_rate(self, rate: float) -> float:
        """The in-control proportion (binomial); the Poisson charts check a rate instead."""
        return _proportion(rate)

    def _unit_spread(self, rate: float) -> float:
        """Standard deviation of one unit's count: sqrt(p0 (1 - p0)) binomial, sqrt(rate) Poisson."""
        return float(np.sqrt(rate * (1 - rate)))

    def _plotted(self, data: Counts, rate: float) -> tuple[str, str, np.ndarray, np.ndarray | float,
                                                           np.ndarray | float]:
        """Name, label, values, center and standard error of the plotted statistic."""
        raise NotImplementedError

    def _fit(self, characteristic: Characteristic, stat: PlottedStatistic, rate: float, spread: float,
             method: SigmaMethod, parameters: dict[str, float]) -> ChartFit:
        data = characteristic.data
        seen = data.inspected[~np.isnan(data.counts)]
        n = float(np.mean(seen)) if seen.size else float("nan")
        notes = []
        if seen.size and np.ptp(seen) > 0:
            notes.append(f"units inspected vary from {seen.min():g} to {seen.max():g}: limits per point")
        return ChartFit(chart=self.name, statistics=[stat], subgroup_size=round(n) if np.isfinite(n) else 0,
                        process_mean=rate, sigma_within=spread, sigma_method=method,
                        base=np.zeros(data.subgroups, bool), parameters={"n": n, **parameters}, notes=notes)


class PChart(_Attribute):
    """p chart: proportion defective per subgroup, limits per point for varying sizes."""

    name = "p"
    title = "p (proportion defective)"
    needs = ("p0",)

    def _plotted(self, data: Counts, rate: float) -> tuple[str, str, np.ndarray, float, np.ndarray]:
        return ("proportion", "Proportion defective", data.counts / data.inspected, rate,
                np.sqrt(rate * (1 - rate) / data.inspected))


class NPChart(PChart):
    """np chart: number defective per subgroup (best read with a constant number inspected)."""

    name = "np"
    title = "np (number defective)"

    def _plotted(self, data: Counts, rate: float) -> tuple[str, str, np.ndarray, np.ndarray, np.ndarray]:
        n = data.inspected
        return "defectives", "Number defective", data.counts, n * rate, np.sqrt(n * rate * (1 - rate))


class _Poisson(_Attribute):
    """Shared parts of the defect charts: a rate of zero or more, Poisson spread."""

    counts_kind = "defects"

    def _checked_rate(self, rate: float) -> float:
        return _nonnegative(self.rate_name, rate)

    def _unit_spread(self, rate: float) -> float:
        return float(np.sqrt(rate))


class CChart(_Poisson):
    """c chart: defects per subgroup, for a constant inspection unit."""

    name = "c"
    title = "c (defects per subgroup)"
    needs = ("c0",)
    rate_name = "c0"

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], SigmaMethod]:
        """c0 as the mean count per subgroup over the base period (Montgomery 2009, ch. 7)."""
        data = self.check(characteristic)
        use = _present(data, base)
        if not use.any():
            raise ValueError("the base period holds no subgroup with a count")
        return {"c0": float(np.mean(data.counts[use]))}, SigmaMethod.DEFECTS_PER_SUBGROUP

    def _plotted(self, data: Counts, rate: float) -> tuple[str, str, np.ndarray, float, float]:
        return "defects", "Defects", data.counts, rate, float(np.sqrt(rate))

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """As for every attribute chart, with a note when the amount inspected varies."""
        fit = super().build(characteristic, params, sigma_method)
        if any(n.startswith("units inspected vary") for n in fit.notes):
            fit.notes.append("a c chart assumes the same amount inspected each time; a u chart fits varying sizes")
        return fit


class UChart(_Poisson):
    """u chart: defects per unit inspected, limits per point for varying sizes."""

    name = "u"
    title = "u (defects per unit)"
    needs = ("u0",)
    rate_name = "u0"
    rate_method = SigmaMethod.DEFECTS_PER_UNIT

    def _plotted(self, data: Counts, rate: float) -> tuple[str, str, np.ndarray, float, np.ndarray]:
        return ("defects_per_unit", "Defects per unit", data.counts / data.inspected, rate,
                np.sqrt(rate / data.inspected))


def _proportion(p: float) -> float:
    if not 0.0 <= p <= 1.0:
        raise ValueError(f"the proportion defective p0 must be from 0 to 1, got {p:g}")
    return float(p)


def _nonnegative(name: str, value: float) -> float:
    if value < 0:
        raise ValueError(f"{name} must be zero or more, got {value:g}")
    return float(value)
