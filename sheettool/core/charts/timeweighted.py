"""Time-weighted charts of subgroup means or individual values: EWMA and two-sided tabular CUSUM.

Both use the process mean and within sigma of the variables charts (estimated from the base
period, or given). Their points are not independent, so the signal is the limit crossing alone;
pattern rules are not applied. Each evaluation starts the statistic afresh at the center line.
"""

from __future__ import annotations

import numpy as np

from sheettool.core.charts.base import ChartFit, ChartKind, PlottedStatistic, shewhart_statistic, typical_size
from sheettool.core.charts.variables import grand_mean, subgroup_means, within_sigma
from sheettool.core.data import Characteristic
from sheettool.core.parameters import CusumParameters, EwmaParameters
from sheettool.core.sigma import SigmaMethod


class _TimeWeighted(ChartKind):
    """Shared parts: the plotted series (means or individuals) and its estimates."""

    time_weighted = True

    def estimate(self, characteristic: Characteristic, base: np.ndarray) -> tuple[dict[str, float], SigmaMethod]:
        values = self.check(characteristic).values
        sigma, words = within_sigma(values, base)
        return {"mean": grand_mean(values, base), "sigma": sigma}, words

    def _series(self, characteristic: Characteristic) -> tuple[np.ndarray, np.ndarray, int, str]:
        data = self.check(characteristic)
        n = typical_size(data.sizes)
        what = "individual values" if n == 1 else "subgroup means"
        return subgroup_means(data.values), data.sizes.astype(float), n, what

    def signal_rule(self, fit: ChartFit) -> str:
        """The rule, in the rule grammar, that is the limit crossing of this chart."""
        raise NotImplementedError

    def signal_words(self, fit: ChartFit) -> str:
        """When this chart signals, in its own terms (the tab says this instead of a rule)."""
        raise NotImplementedError

    def _fit(self, characteristic: Characteristic, params: dict[str, float], method: SigmaMethod,
             stats: list[PlottedStatistic], n: int, parameters: dict[str, float], note: str) -> ChartFit:
        return ChartFit(chart=self.name, statistics=stats, subgroup_size=n, process_mean=params["mean"],
                        sigma_within=params["sigma"], sigma_method=method,
                        base=np.zeros(characteristic.data.subgroups, bool),
                        parameters={**parameters, "n": float(n)}, notes=[note])


class Ewma(_TimeWeighted):
    """EWMA z_i = lambda x_i + (1 - lambda) z_(i-1), z_0 = center, with exact time-varying limits."""

    name = "ewma"
    title = "EWMA"

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """The EWMA statistic with its limits from lambda and L (Lucas and Saccucci 1990)."""
        design = EwmaParameters.from_mapping(params)
        lam, width = design.lam, design.L
        x, sizes, n, what = self._series(characteristic)
        mu, sigma = params["mean"], params["sigma"]
        z = np.full(len(x), np.nan)
        var = np.full(len(x), np.nan)
        zi, vi = mu, 0.0
        for i, xi in enumerate(x):
            if not np.isnan(xi):
                # Var z_i = lambda^2 sigma^2 / n_i + (1 - lambda)^2 Var z_(i-1); for constant n this is
                # sigma^2 / n * lambda / (2 - lambda) * (1 - (1 - lambda)^(2i)) (Lucas and Saccucci 1990)
                zi = lam * xi + (1.0 - lam) * zi
                vi = lam * lam * sigma * sigma / sizes[i] + (1.0 - lam) ** 2 * vi
                z[i] = zi
            var[i] = vi if vi > 0 else lam * lam * sigma * sigma / n
        stat = shewhart_statistic("ewma", "EWMA", z, mu, np.sqrt(var), width=width)
        note = (f"EWMA of {what}, lambda {lam:g}, limits at L = {width:g} standard errors; it starts at the "
                "center line and its limits widen over the first points (exact variance)")
        return self._fit(characteristic, params, sigma_method, [stat], n, design.as_mapping(), note)

    def signal_rule(self, fit: ChartFit) -> str:
        """A point beyond the EWMA limits, L standard errors from the center, signals."""
        return f"1/1>{fit.parameters['L']:g}"

    def signal_words(self, fit: ChartFit) -> str:
        """The EWMA's limits in its own terms."""
        par = EwmaParameters.from_mapping(fit.parameters)
        return (f"the EWMA crosses a limit: L = {par.L:g} standard errors of the EWMA from the center line, "
                f"each point weighted lambda = {par.lam:g}")


class Cusum(_TimeWeighted):
    """Two-sided tabular CUSUM of standardized points, reference value k and decision interval h in sigmas.

    C+_i = max(0, y_i - k + C+_(i-1)), C-_i = max(0, -y_i - k + C-_(i-1)), y_i = (x_i - mu0) / (sigma / sqrt(n_i)),
    signal when either exceeds h (Page 1954; Montgomery 2009, sec. 9.1). Plotted in the unit of the data
    as C * sigma / sqrt(n), both sides upwards, with the limit h * sigma / sqrt(n).
    """

    name = "cusum"
    title = "CUSUM"

    def build(self, characteristic: Characteristic, params: dict[str, float], sigma_method: SigmaMethod) -> ChartFit:
        """The upper and lower tabular CUSUM sums, with the decision interval h as their limits."""
        design = CusumParameters.from_mapping(params)
        k, h = design.k, design.h
        x, sizes, n, what = self._series(characteristic)
        mu, sigma = params["mean"], params["sigma"]
        reference = float(params.get("reference", mu))
        upper, lower = np.full(len(x), np.nan), np.full(len(x), np.nan)
        hi = lo = 0.0
        with np.errstate(divide="ignore", invalid="ignore"):  # no sum over a zero sigma: nothing plotted
            y = (x - reference) / (sigma / np.sqrt(sizes)) if sigma > 0 else np.full(len(x), np.nan)
        for i, yi in enumerate(y):
            if not np.isnan(yi):
                hi = max(0.0, yi - k + hi)
                lo = max(0.0, -yi - k + lo)
                upper[i], lower[i] = hi, lo
        unit = sigma / np.sqrt(n)
        stats = [_side("cusum_upper", "CUSUM upper", upper * unit, unit, h),
                 _side("cusum_lower", "CUSUM lower", lower * unit, unit, h)]
        around = "the target" if "reference" in params and reference != mu else "the center line"
        note = (f"two-sided CUSUM of {what}, reference {reference:.6g} ({around}), k = {k:g} and h = {h:g} standard "
                "errors of the plotted point; both sides are plotted upwards")
        return self._fit(characteristic, params, sigma_method, stats, n,
                         {**design.as_mapping(), "reference": reference}, note)

    def signal_rule(self, fit: ChartFit) -> str:
        """A sum beyond the decision interval h signals."""
        return f"1/1>{fit.parameters['h']:g}"

    def signal_words(self, fit: ChartFit) -> str:
        """The CUSUM's decision interval in its own terms."""
        par = CusumParameters.from_mapping(fit.parameters)
        return (f"the upper or the lower sum exceeds the decision interval h = {par.h:g} standard errors of the "
                f"plotted point; each point adds its distance beyond the reference value k = {par.k:g}")


def _side(name: str, label: str, values: np.ndarray, unit: float, h: float) -> PlottedStatistic:
    m = len(values)
    return PlottedStatistic(name=name, label=label, values=values, center=np.zeros(m), lcl=np.zeros(m),
                            ucl=np.full(m, h * unit), sigma=np.full(m, unit))
