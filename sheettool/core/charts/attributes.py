"""Attribute charts: p and np (binomial), c and u (Poisson).

Limits are center +/- 3 standard errors per point (Montgomery 2009, ch. 7):
p: p0 +/- 3 sqrt(p0 (1 - p0) / n_i); np: n_i p0 +/- 3 sqrt(n_i p0 (1 - p0));
c: c0 +/- 3 sqrt(c0); u: u0 +/- 3 sqrt(u0 / n_i). A negative lower limit is shown as zero.
"""

from __future__ import annotations

import numpy as np

from sheettool.core.charts.base import ChartFit, ChartKind, shewhart_statistic
from sheettool.core.data import Characteristic, Counts


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


def _present(data: Counts, base: np.ndarray) -> np.ndarray:
    return base & ~np.isnan(data.counts)


class _Attribute(ChartKind):
    """Shared parts: validation, the pooled rate over the base period, the fit record."""

    data = Counts
    counts_kind = "defectives"
    rate_name = "p0"

    def check(self, characteristic: Characteristic) -> Counts:
        return check_counts(characteristic, self.counts_kind, self.title)

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], str]:
        data = self.check(characteristic)
        use = _present(data, base)
        if not use.any():
            raise ValueError("the base period holds no subgroup with a count")
        # pooled over the base: total count / total units (Montgomery 2009, eq. 7.8 and 7.17)
        rate = float(np.sum(data.counts[use]) / np.sum(data.inspected[use]))
        words = f"{self.rate_name} = total {self.counts_kind} / total inspected in the base period"
        return {self.rate_name: rate}, words

    def _fit(self, characteristic: Characteristic, stat, rate: float, spread: float, method: str,
             parameters: dict[str, float]) -> ChartFit:
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

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: str) -> ChartFit:
        data = self.check(characteristic)
        p0 = _proportion(params["p0"])
        stat = shewhart_statistic("proportion", "Proportion defective", data.counts / data.inspected, p0,
                                  np.sqrt(p0 * (1 - p0) / data.inspected), floor=0.0)
        return self._fit(characteristic, stat, p0, float(np.sqrt(p0 * (1 - p0))), sigma_method, {"p0": p0})


class NPChart(PChart):
    """np chart: number defective per subgroup (best read with a constant number inspected)."""

    name = "np"
    title = "np (number defective)"

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: str) -> ChartFit:
        data = self.check(characteristic)
        p0 = _proportion(params["p0"])
        n = data.inspected
        stat = shewhart_statistic("defectives", "Number defective", data.counts, n * p0,
                                  np.sqrt(n * p0 * (1 - p0)), floor=0.0)
        return self._fit(characteristic, stat, p0, float(np.sqrt(p0 * (1 - p0))), sigma_method, {"p0": p0})


class CChart(_Attribute):
    """c chart: defects per subgroup, for a constant inspection unit."""

    name = "c"
    title = "c (defects per subgroup)"
    needs = ("c0",)
    counts_kind = "defects"
    rate_name = "c0"

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], str]:
        data = self.check(characteristic)
        use = _present(data, base)
        if not use.any():
            raise ValueError("the base period holds no subgroup with a count")
        return {"c0": float(np.mean(data.counts[use]))}, "c0 = mean defects per subgroup in the base period"

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: str) -> ChartFit:
        data = self.check(characteristic)
        c0 = _nonnegative("c0", params["c0"])
        stat = shewhart_statistic("defects", "Defects", data.counts, c0, np.sqrt(c0), floor=0.0)
        fit = self._fit(characteristic, stat, c0, float(np.sqrt(c0)), sigma_method, {"c0": c0})
        if any(n.startswith("units inspected vary") for n in fit.notes):
            fit.notes.append("a c chart assumes the same amount inspected each time; a u chart fits varying sizes")
        return fit


class UChart(_Attribute):
    """u chart: defects per unit inspected, limits per point for varying sizes."""

    name = "u"
    title = "u (defects per unit)"
    needs = ("u0",)
    counts_kind = "defects"
    rate_name = "u0"

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: str) -> ChartFit:
        data = self.check(characteristic)
        u0 = _nonnegative("u0", params["u0"])
        stat = shewhart_statistic("defects_per_unit", "Defects per unit", data.counts / data.inspected, u0,
                                  np.sqrt(u0 / data.inspected), floor=0.0)
        return self._fit(characteristic, stat, u0, float(np.sqrt(u0)), sigma_method, {"u0": u0})


def _proportion(p: float) -> float:
    if not 0.0 <= p <= 1.0:
        raise ValueError(f"the proportion defective p0 must be from 0 to 1, got {p:g}")
    return float(p)


def _nonnegative(name: str, value: float) -> float:
    if value < 0:
        raise ValueError(f"{name} must be zero or more, got {value:g}")
    return float(value)
