"""A monitoring scheme's run length, whatever the chart: the one entry point of the engine.

`Scheme` names the chart, its parameters and rules; `scheme_run_lengths` picks the method (exact
zone chain, quadrature, Brook-Evans chain or Monte Carlo) and says which in `method`.
`performance_of` reads a fitted chart (`ChartFit.parameters`) and fills a `Performance`.

Shifts: for variables charts a mean shift in process standard deviations (the plotted mean of n
moves by shift * sqrt(n) standard errors) and a sigma ratio. For attribute charts
`scheme_run_lengths` takes the shifted rate itself (p1, c1 or u1); `performance_of` moves the rate
up by `shift` in-control standard errors of the plotted statistic, so the shift columns read alike.
Time (ATS, false alarms per month) comes from core/timing.py.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Protocol

import numpy as np

from sheettool.core.charts import ChartFit
from sheettool.core.parameters import CusumParameters, EwmaParameters
from sheettool.core.rules import Rule, parse_rules
from sheettool.core.runlength import cusum as cusum_chain
from sheettool.core.runlength.attributes import CountModel, attribute_chain
from sheettool.core.runlength.ewma import EwmaChart
from sheettool.core.runlength.markov import MarkovChart, RunLength, WithCompanion
from sheettool.core.runlength.montecarlo import normal_sampler, simulate_run_lengths, summarize
from sheettool.core.runlength.results import Performance, ShiftArl
from sheettool.core.runlength.shewhart import geometric_arl, range_beyond_probability, sd_beyond_probability
from sheettool.core.runlength.zones import MAX_STATES, TooManyStates, ZoneChain
from sheettool.core.timing import ats_hours, false_alarms_per_month

VARIABLES = ("xbar", "xbar-r", "xbar-s", "individuals")
ATTRIBUTES = ("p", "np", "c", "u")
SCHEME_CHARTS = (*VARIABLES, "ewma", "cusum", *ATTRIBUTES)
MONTE_CARLO_RUNS = 20_000
CURVE_RUNS = 2_000  # simulated runs per point of the fine curve (the tabled shifts use MONTE_CARLO_RUNS)
SEED = 20_261_202
CURVE_SHIFTS: tuple[float, ...] = tuple(np.round(np.linspace(0.0, 4.0, 41), 10))


def shewhart_chart(n: int) -> str:
    """The Shewhart scheme for subgroups of n, as `evaluate` chooses it: individuals and moving range for 1, X-bar
    and R for 2 to 9, X-bar and S from 10 (Montgomery 2009, sec. 6.3); `design` searches the same schemes."""
    return "individuals" if n == 1 else "xbar-r" if n < 10 else "xbar-s"


@dataclass(frozen=True)
class Scheme:
    """A chart with its parameters and rules. Unused parameters are ignored for a chart (ewma for the EWMA only,
    cusum and head_start for the CUSUM only)."""

    chart: str
    rules: tuple[Rule, ...] = field(default_factory=lambda: tuple(parse_rules("beyond-limits")))
    n: float = 1.0
    p0: float | None = None
    c0: float | None = None  # c chart: defects per subgroup; u chart: defects per unit
    ewma: EwmaParameters = field(default_factory=EwmaParameters)
    cusum: CusumParameters = field(default_factory=CusumParameters)
    head_start: float = 0.0  # CUSUM fast initial response, in standard errors (Lucas and Crosier 1982)

    def __post_init__(self) -> None:
        if self.chart not in SCHEME_CHARTS:
            raise ValueError(f"unknown chart '{self.chart}'; use one of {', '.join(SCHEME_CHARTS)}")
        if self.chart in ("xbar-r", "xbar-s") and (self.n < 2 or self.n != int(self.n)):
            raise ValueError(f"n must be a whole number of at least 2 for X-bar with R or S, got {self.n}")
        if not self.n >= 1:
            raise ValueError(f"n must be at least 1, got {self.n}")
        if self.chart == "cusum":
            cusum_chain.check_cusum(self.cusum.k, self.cusum.h, self.head_start)
        if self.chart in ("p", "np") and self.p0 is None:
            raise ValueError("a p or np chart needs p0, the in-control proportion")
        if self.chart in ("c", "u") and self.c0 is None:
            raise ValueError("a c or u chart needs c0, the in-control defect rate")

    @property
    def count_model(self) -> CountModel:
        """The count behind an attribute chart."""
        if self.chart in ("p", "np"):
            return CountModel("binomial", self.n, float(self.p0))
        return CountModel("poisson", 1.0 if self.chart == "c" else self.n, float(self.c0))

    @property
    def companion(self) -> str | None:
        """The companion chart whose limits also signal: "range", "sd" or None."""
        return {"xbar-r": "range", "xbar-s": "sd"}.get(self.chart)


@dataclass
class SchemeResult:
    """Run lengths at each condition, and the method that produced them."""

    method: str
    conditions: list[tuple[float, float]]  # (shift or rate, sigma ratio)
    results: list[RunLength]


def companion_probability(kind: str, n: int) -> Callable[[float, float], float]:
    """Per-subgroup probability that the R ("range") or S ("sd") chart signals, given the sigma ratio.

    Neither depends on the mean, and both are independent of the subgroup mean for normal data,
    which is what lets the companion act as an extra absorption probability per point.
    """
    beyond = range_beyond_probability if kind == "range" else sd_beyond_probability
    return lambda _shift, ratio: beyond(int(n), ratio)


def _standard_errors(scheme: Scheme, shift: float) -> float:
    return shift * np.sqrt(scheme.n)


def _chain(scheme: Scheme, rules: list[Rule]) -> MarkovChart:
    if scheme.chart in ATTRIBUTES:
        return attribute_chain(scheme.count_model, rules)
    chain: MarkovChart = ZoneChain(rules)
    if scheme.companion:
        chain = WithCompanion(chain, companion_probability(scheme.companion, int(scheme.n)), scheme.companion)
    return chain


def _method_note(scheme: Scheme, base: str) -> str:
    notes = [base]
    if scheme.companion == "range":
        notes.append("the R chart's limits add an independent per-subgroup signal probability "
                     "(normal range distribution, Tippett 1925)")
    elif scheme.companion == "sd":
        notes.append("the S chart's limits add an independent per-subgroup signal probability (chi distribution)")
    elif scheme.chart == "individuals":
        notes.append("the individuals chart alone: successive moving ranges share a reading, so the moving-range "
                     "chart's own signals are not in the figure")
    if scheme.chart in ATTRIBUTES:
        family = "binomial" if scheme.chart in ("p", "np") else "Poisson"
        notes.append(f"exact {family} cell probabilities")
    return "; ".join(notes)


def scheme_run_lengths(scheme: Scheme, conditions: list[tuple[float, float]], full: bool = True,
                       runs: int = MONTE_CARLO_RUNS, seed: int = SEED) -> SchemeResult:
    """Run lengths at each (shift, sigma ratio); for attribute charts the shift is the rate itself.

    full=False gives the ARL alone where that is cheaper (fine curves).
    """
    rules = list(scheme.rules)
    if scheme.chart == "ewma":
        check = ((0.0, 1.0), *[(_standard_errors(scheme, s), r) for s, r in conditions])
        chart = EwmaChart(scheme.ewma.lam, scheme.ewma.L, check=check)
        return _from_chain(chart, conditions, full, lambda s: _standard_errors(scheme, s),
                           f"{chart.method}, {len(chart.x)} nodes; asymptotic limits{_rules_left_out(rules)}")
    if scheme.chart == "cusum":
        return _cusum(scheme, conditions, full)
    why = "trend/alternate rules"
    if all(r.is_zone for r in rules):
        try:
            chain = _chain(scheme, rules)
        except TooManyStates:
            why = f"the zone rules need more than {MAX_STATES} chain states"
        else:
            convert = (lambda s: s) if scheme.chart in ATTRIBUTES else (lambda s: _standard_errors(scheme, s))
            count = chain.chart.states if isinstance(chain, WithCompanion) else chain.states
            base = (f"{ZoneChain.method}, exact, {count} states of the rule windows" if count > 1 else
                    "exact: each point signals on its own with the same chance, so the run length is geometric")
            return _from_chain(chain, conditions, full, convert, _method_note(scheme, base))
    return _monte_carlo(scheme, rules, conditions, runs, seed, why)


def _rules_left_out(rules: list[Rule]) -> str:
    """The note for EWMA and CUSUM, whose own limits are the scheme: other rules are not in the figure."""
    others = [r.text for r in rules if r.text != "1/1>3"]
    return f"; the rules {', '.join(others)} are not included" if others else ""


def _from_chain(chart: MarkovChart, conditions: list[tuple[float, float]], full: bool,
                convert: Callable[[float], float], method: str) -> SchemeResult:
    out = [chart.run_length(convert(s), r) if full else RunLength(arl=chart.arl(convert(s), r))
           for s, r in conditions]
    return SchemeResult(method, list(conditions), out)


def _cusum(scheme: Scheme, conditions: list[tuple[float, float]], full: bool) -> SchemeResult:
    if scheme.head_start > 0.0:
        how = (f"two-sided ARL from the {cusum_chain.TwoSidedCusum.method} with the head start, "
               "Richardson-extrapolated")
    else:
        exact = ("exact here (h <= 2k)" if cusum_chain.combination_is_exact(scheme.cusum.k, scheme.cusum.h)
                 else "a close approximation here")
        how = f"two-sided ARL by 1/ARL = 1/ARL+ + 1/ARL- (Lucas and Crosier 1982), {exact}"
    method = f"{cusum_chain.OneSidedCusum.method}, cells doubled with Richardson extrapolation; {how}"
    joint = cusum_chain.TwoSidedCusum(scheme.cusum.k, scheme.cusum.h, head_start=scheme.head_start) if full else None
    if joint is not None:
        method += (f"; SDRL, percentiles and steady state from the {joint.method}, {joint.cells} cells per side "
                   "(about 3 significant figures)")
    method += _rules_left_out(list(scheme.rules))
    out = []
    for s, r in conditions:
        arl = cusum_chain.two_sided_arl(scheme.cusum.k, scheme.cusum.h, _standard_errors(scheme, s), r,
                                        scheme.head_start)
        if joint is None:
            out.append(RunLength(arl=arl))
            continue
        rl = joint.run_length(_standard_errors(scheme, s), r)
        out.append(RunLength(arl=arl, sdrl=rl.sdrl, percentiles=rl.percentiles, steady_state_arl=rl.steady_state_arl))
    return SchemeResult(method, list(conditions), out)


def _monte_carlo(scheme: Scheme, rules: list[Rule], conditions: list[tuple[float, float]],
                 runs: int, seed: int, why: str) -> SchemeResult:
    out = []
    companion = companion_probability(scheme.companion, int(scheme.n)) if scheme.companion else None
    for i, (s, r) in enumerate(conditions):
        if scheme.chart in ATTRIBUTES:
            model = scheme.count_model
            model.check_rate(s)
            sampler = (lambda m, rate: lambda rng, shape: m.sample(rng, rate, shape))(model, s)
            out.append(summarize(simulate_run_lengths(rules, sampler, runs, seed + i)))
            continue
        lengths = _location_lengths(tuple(rules), float(_standard_errors(scheme, s)), float(r), runs, seed + i)
        if companion:  # the companion signals independently: the scheme stops at the first of the two
            lengths = np.minimum(lengths, np.random.default_rng(seed + i + 1).geometric(companion(s, r), runs))
        out.append(summarize(lengths))
    base = f"Monte Carlo, {runs} runs per condition, 95% CI by normal approximation, seed {seed} ({why})"
    return SchemeResult(_method_note(scheme, base), list(conditions), out)


@lru_cache(maxsize=64)
def _location_lengths(rules: tuple[Rule, ...], shift: float, ratio: float, runs: int, seed: int) -> np.ndarray:
    """Simulated run lengths of the location chart alone (cached: in control they serve every subgroup size)."""
    lengths = simulate_run_lengths(list(rules), normal_sampler(shift, ratio), runs, seed)
    lengths.flags.writeable = False
    return lengths


_NEEDS: dict[str, tuple[str, ...]] = {
    "xbar-r": ("n",), "xbar-s": ("n",), "individuals": (), "p": ("n", "p0"), "np": ("n", "p0"),
    "c": ("c0",), "u": ("u0", "n"), "ewma": (*EwmaParameters.NAMES.values(), "n"),
    "cusum": (*CusumParameters.NAMES.values(), "n"),
}


def scheme_of(fit: ChartFit, rules: list[Rule]) -> Scheme:
    """The scheme behind a fitted chart, from `fit.parameters` (keys agreed per chart kind)."""
    if fit.chart not in _NEEDS:
        raise ValueError(f"no run-length method for chart '{fit.chart}'")
    par = fit.parameters
    missing = [key for key in _NEEDS[fit.chart] if key not in par]
    if missing:
        raise ValueError(f"chart '{fit.chart}': the run length needs {', '.join(missing)} in the fitted parameters")
    n = float(par.get("n", 1.0))
    if fit.chart in ("p", "np"):
        n = float(max(1, round(n)))  # binomial needs whole units: the mean inspected, rounded
    return Scheme(chart=fit.chart, rules=tuple(rules), n=n, p0=par.get("p0"), c0=par.get("u0", par.get("c0")),
                  ewma=EwmaParameters.from_mapping(par), cusum=CusumParameters.from_mapping(par))


class PerformanceOptions(Protocol):
    """What `performance_of` reads from the evaluation's options (`EvaluationOptions` has these fields)."""

    shifts: tuple[float, ...]
    interval_hours: float | None
    hours_per_month: float | None


def performance_of(fit: ChartFit, rules: list[Rule], options: PerformanceOptions) -> Performance:
    """How the scheme in use behaves: ARL (and its spread) in control and at options.shifts."""
    scheme = scheme_of(fit, rules)
    shifts = [0.0, *dict.fromkeys(float(s) for s in options.shifts if float(s) != 0.0)]
    attribute = scheme.chart in ATTRIBUTES

    def condition(shift: float) -> tuple[float, float]:
        return (scheme.count_model.rate_at(shift) if attribute else shift, 1.0)

    result = scheme_run_lengths(scheme, [condition(s) for s in shifts])
    curve = scheme_run_lengths(scheme, [condition(s) for s in CURVE_SHIFTS], full=False, runs=CURVE_RUNS)
    interval = options.interval_hours

    def row(shift: float, cond: tuple[float, float], rl: RunLength) -> ShiftArl:
        return ShiftArl(shift=shift, arl=rl.arl, ats_hours=ats_hours(rl.arl, interval),
                        sdrl=rl.sdrl, percentiles=rl.percentiles, steady_state_arl=rl.steady_state_arl,
                        ci=rl.ci, rate=cond[0] if attribute else None)

    rows = [row(s, c, rl) for s, c, rl in zip(shifts, result.conditions, result.results, strict=True)]
    arl0 = rows[0].arl
    return Performance(
        method=result.method,
        arl_in_control=arl0,
        shifts=[next(r for r in rows if r.shift == float(s)) for s in options.shifts],
        components=_components(scheme),
        interval_hours=interval,
        false_alarms_per_month=false_alarms_per_month(arl0, interval, options.hours_per_month),
        curve=[row(s, c, rl) for s, c, rl in zip(CURVE_SHIFTS, curve.conditions, curve.results, strict=True)],
        shift_unit="standard errors of the plotted rate, upward" if attribute else "process standard deviations",
    )


def _components(scheme: Scheme) -> dict[str, float]:
    """In-control ARL of the mean chart alone and of its companion alone (exact methods only)."""
    if not scheme.companion:
        return {}
    p = companion_probability(scheme.companion, int(scheme.n))(0.0, 1.0)
    out = {scheme.companion: float(geometric_arl(p))}
    if all(r.is_zone for r in scheme.rules):
        out = {"mean": ZoneChain(list(scheme.rules)).arl(0.0), **out}
    return out
