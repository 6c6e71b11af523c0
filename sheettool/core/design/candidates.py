"""The schemes searched and the sampling allowed: every candidate, calibrated, with its run lengths judged.

Candidates, each at every allowed (n, interval): the Shewhart scheme `evaluate` would use (individuals for n = 1,
X-bar with its R chart for n 2 to 9, with its S chart from 10; the spread chart's limits signal too) with the rule
presets (their in-control ARL is fixed by the rules and n); EWMA with lambda over a grid and L calibrated to the in-
control target; CUSUM with k over a grid and h calibrated the same way (calibration.py). ATS at the shift, the hours
to signal it: the zero-state ARL at the shift times the interval, the scheme starting fresh with the shift present
from the first point, the figure tabled by Lucas and Saccucci (1990) and used by `evaluate`. A mean of n readings
moves by shift * sqrt(n) standard errors, so EWMA and CUSUM in-control ARLs are computed once per chart setting and
ARLs at the shift once per (setting, n).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from sheettool.core.charts import CHART_KINDS
from sheettool.core.design.calibration import cusum_decision_interval, ewma_limit_width, run_length
from sheettool.core.design.requirements import Requirements, RequirementsCheck, check_number, check_requirements
from sheettool.core.parameters import CusumParameters, EwmaParameters
from sheettool.core.rules import PRESETS, parse_rules
from sheettool.core.runlength.scheme import Scheme, shewhart_chart
from sheettool.core.timing import ats_hours, false_alarms_per_month

LAMBDAS: tuple[float, ...] = (0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.4, 0.5, 0.75)
KS: tuple[float, ...] = (0.25, 0.5, 0.75, 1.0)
SIZES: tuple[int, ...] = tuple(range(1, 11))


@dataclass(frozen=True)
class Sampling:
    """The sampling allowed: subgroup sizes, and intervals (hours) or a budget of measurements per hour, or both."""

    sizes: tuple[int, ...] = SIZES
    intervals: tuple[float, ...] | None = None
    budget: float | None = None

    def __post_init__(self) -> None:
        if not self.sizes:
            raise ValueError("no subgroup size allowed; give at least one size, e.g. 1-10")
        for n in self.sizes:
            if not (float(n) == int(n) and 1 <= n <= 100):
                raise ValueError(f"a subgroup size must be a whole number from 1 to 100, got {n!r}")
        if self.intervals is not None and not self.intervals:
            raise ValueError("no sampling interval allowed; give at least one interval in hours")
        for t in self.intervals or ():
            check_number("a sampling interval", t)
        check_number("the budget of measurements per hour", self.budget)

    def pairs(self) -> list[tuple[int, float]]:
        """Every allowed (subgroup size, interval): with a budget alone, each size as often as the budget allows."""
        if self.intervals is None:
            return [(int(n), int(n) / self.budget if self.budget else 1.0) for n in self.sizes]
        limit = (self.budget or math.inf) * (1.0 + 1e-9)
        return [(int(n), float(t)) for n in self.sizes for t in self.intervals if n / t <= limit]


@dataclass(frozen=True)
class SearchGrid:
    """The schemes searched: Shewhart rule presets, EWMA weights and CUSUM reference values."""

    presets: tuple[str, ...] = ("beyond-limits", "zones", "all")
    lambdas: tuple[float, ...] = LAMBDAS
    ks: tuple[float, ...] = KS

    def __post_init__(self) -> None:
        for p in self.presets:
            if p not in PRESETS:
                raise ValueError(f"unknown rule preset '{p}'; use {', '.join(PRESETS)}")
        for lam in self.lambdas:
            if not 0.0 < lam <= 1.0:
                raise ValueError(f"an EWMA lambda must be above 0 and at most 1, got {lam!r}")
        for k in self.ks:
            if not (math.isfinite(k) and 0.0 < k <= 3.0):
                raise ValueError(f"a CUSUM k must be above 0 and at most 3 standard errors, got {k!r}")
        if not (self.presets or self.lambdas or self.ks):
            raise ValueError("no scheme to search: give a preset, a lambda or a k")


@dataclass(frozen=True)
class Candidate:
    """One scheme at one sampling plan, with its run lengths and the requirements judged."""

    family: str  # "shewhart", "ewma" or "cusum"
    scheme: Scheme
    preset: str | None  # Shewhart rule preset
    n: int
    interval_hours: float
    arl_in_control: float
    arl_at_shift: float
    arl_ci95: tuple[float, float] | None  # Monte Carlo schemes
    false_alarms_per_month: float | None
    check: RequirementsCheck

    @property
    def measurements_per_hour(self) -> float:
        """What the scheme costs: readings taken per hour."""
        return self.n / self.interval_hours

    @property
    def ats_hours(self) -> float:
        """Average time to signal at the shift (zero state)."""
        return ats_hours(self.arl_at_shift, self.interval_hours)

    @property
    def meets(self) -> bool:
        """True when every requirement is met."""
        return self.check.met is True

    @property
    def label(self) -> str:
        """The scheme in a few words, e.g. 'EWMA lambda 0.1, L 2.703'."""
        if self.family == "ewma":
            return f"EWMA lambda {self.scheme.ewma.lam:g}, L {self.scheme.ewma.L:.3f}"
        if self.family == "cusum":
            return f"CUSUM k {self.scheme.cusum.k:g}, h {self.scheme.cusum.h:.3f}"
        return f"{CHART_KINDS[self.scheme.chart].title} with the '{self.preset}' rules"

    @property
    def sampling_words(self) -> str:
        """'n = 5 every 1 h'."""
        return f"n = {self.n} every {self.interval_hours:.3g} h"


def _candidate(family: str, scheme: Scheme, preset: str | None, n: int, interval: float, arl0: float,
               req: Requirements, delta: float) -> Candidate:
    rl = run_length(scheme, delta)
    return Candidate(family=family, scheme=scheme, preset=preset, n=n, interval_hours=interval,
                     arl_in_control=arl0, arl_at_shift=rl.arl, arl_ci95=rl.ci,
                     false_alarms_per_month=false_alarms_per_month(arl0, interval, req.hours_per_month),
                     check=check_requirements(req, arl0, rl.arl, interval, delta))


Progress = Callable[[int, int], None]  # told (schemes judged, schemes in all) as the search goes


def candidates(req: Requirements, sampling: Sampling, grid: SearchGrid,
               progress: Progress | None = None) -> list[Candidate]:
    """Every scheme of the grid at every allowed (n, interval), calibrated to that interval's in-control target;
    schemes meeting every requirement first, each group by ATS at the shift."""
    delta = req.delta()
    out: list[Candidate] = []
    pairs = sampling.pairs()
    total = len(pairs) * (len(grid.presets) + len(grid.lambdas) + len(grid.ks))
    for n, interval in pairs:
        if progress is not None:
            progress(len(out), total)
        target = req.target_arl(interval)
        for preset in grid.presets:
            scheme = Scheme(shewhart_chart(n), rules=tuple(parse_rules(preset)), n=n)
            arl0 = run_length(scheme, 0.0).arl  # with the R or S chart's limits: it depends on n
            out.append(_candidate("shewhart", scheme, preset, n, interval, arl0, req, delta))
        for lam in grid.lambdas:
            ewma = EwmaParameters(lam, ewma_limit_width(lam, target))
            arl0 = run_length(Scheme("ewma", ewma=ewma), 0.0).arl
            out.append(_candidate("ewma", Scheme("ewma", n=n, ewma=ewma), None, n, interval, arl0, req, delta))
        for k in grid.ks:
            plan = CusumParameters(k, cusum_decision_interval(k, target))
            arl0 = run_length(Scheme("cusum", cusum=plan), 0.0).arl
            out.append(_candidate("cusum", Scheme("cusum", n=n, cusum=plan), None, n, interval, arl0, req, delta))
    if progress is not None:
        progress(len(out), total)
    out.sort(key=lambda c: (not c.meets, c.ats_hours, c.measurements_per_hour, -c.arl_in_control))
    return out
