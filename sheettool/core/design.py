"""Choose the monitoring scheme: search candidate schemes against requirements and rank them.

Requirements: an in-control target (an ARL, or at most F false alarms per month given the production hours), the
shift that matters, how fast it must be caught (an ARL or hours) and the sampling allowed (subgroup sizes, intervals
or a budget of measurements per hour). Candidates, each at every allowed (n, interval):
- Shewhart charts of subgroup means with the rule presets; their in-control ARL is fixed by the rules.
- EWMA with lambda over a grid and L calibrated by root finding (Brent 1973, scipy.optimize.brentq) so that the
  in-control zero-state ARL is the target (the design procedure of Lucas and Saccucci 1990).
- Two-sided tabular CUSUM with k over a grid and h calibrated the same way (Brook and Evans 1972 chain), bracketed
  by Siegmund's (1985) approximation.
Time to catch the shift: the zero-state ARL at the shift times the interval (ATS): the scheme starts fresh with the
shift present from the first point, the figure tabled by Lucas and Saccucci (1990) and used by `evaluate`. Every
run length comes from the engine (`scheme_run_lengths`); a mean of n readings moves by shift * sqrt(n) standard
errors, so in-control ARLs are computed once per chart setting and ARLs at the shift once per (setting, n).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, replace
from functools import lru_cache

import numpy as np
from scipy import optimize, stats

from sheettool.core.rules import PRESETS, parse_rules
from sheettool.core.runlength import cusum
from sheettool.core.runlength.markov import RunLength
from sheettool.core.runlength.scheme import CURVE_RUNS, Scheme, scheme_run_lengths

DEFAULT_ARL_IN_CONTROL = 370.4  # 3-sigma limits alone (common practice)
LAMBDAS: tuple[float, ...] = (0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.4, 0.5, 0.75)
KS: tuple[float, ...] = (0.25, 0.5, 0.75, 1.0)
SIZES: tuple[int, ...] = tuple(range(1, 11))
ARL_RANGE = (10.0, 1.0e6)  # in-control targets the calibration handles
MET_TOLERANCE = 1e-3  # relative: a calibrated scheme meets its target to the engine's precision
REQUIREMENT_KEYS: dict[str, str] = {
    "arl_in_control": "in-control ARL at least, points between false alarms",
    "false_alarms_per_month": "false alarms per month at most; needs the interval and production hours",
    "shift": "the shift that matters, in process standard deviations",
    "shift_units": "the shift that matters, in the characteristic's unit; divided by sigma",
    "detect_arl": "ARL at the shift at most, points",
    "detect_hours": "average time to catch the shift at most, hours",
}


def _positive(name: str, value: float | None, low: float = 0.0, strict: bool = True) -> None:
    if value is None:
        return
    if not (isinstance(value, int | float) and math.isfinite(value)) or (value <= low if strict else value < low):
        relation = "above" if strict else "at least"
        raise ValueError(f"{name} must be a finite number {relation} {low:g}, got {value!r}")


@dataclass(frozen=True)
class Requirements:
    """What the scheme must achieve. Unset targets are not required (the in-control ARL defaults to 370.4)."""

    arl_in_control: float | None = None
    false_alarms_per_month: float | None = None
    hours_per_month: float | None = None
    shift: float | None = None  # process standard deviations; 1 when neither shift nor shift_units is given
    shift_units: float | None = None
    sigma: float | None = None  # the process sigma that turns shift_units into sigmas
    detect_arl: float | None = None
    detect_hours: float | None = None

    def __post_init__(self) -> None:
        _positive("the in-control ARL", self.arl_in_control, 1.0)
        _positive("the false alarms per month", self.false_alarms_per_month)
        _positive("the production hours per month", self.hours_per_month)
        _positive("the shift", self.shift)
        _positive("sigma", self.sigma)
        _positive("the ARL at the shift", self.detect_arl, 1.0, strict=False)
        _positive("the hours to catch the shift", self.detect_hours)
        if self.shift_units is not None and not (math.isfinite(self.shift_units) and self.shift_units != 0):
            raise ValueError(f"the shift in units must be a finite number other than 0, got {self.shift_units!r}")
        if self.shift is not None and self.shift_units is not None:
            raise ValueError("give the shift in sigmas or in the characteristic's unit, not both")

    @classmethod
    def from_mapping(cls, values: Mapping[str, float], hours_per_month: float | None = None,
                     sigma: float | None = None) -> Requirements:
        """Requirements from setting names (REQUIREMENT_KEYS); ValueError naming an unknown one."""
        unknown = sorted(set(values) - set(REQUIREMENT_KEYS))
        if unknown:
            raise ValueError(f"unknown requirement(s) {', '.join(unknown)}; use {', '.join(REQUIREMENT_KEYS)}")
        return cls(hours_per_month=hours_per_month, sigma=sigma, **{k: float(v) for k, v in values.items()})

    def delta(self, sigma: float | None = None) -> float:
        """The shift that matters in process standard deviations (absolute: the schemes are two-sided)."""
        if self.shift_units is None:
            return float(self.shift) if self.shift is not None else 1.0
        sigma = sigma if sigma is not None else self.sigma
        if not (sigma is not None and math.isfinite(sigma) and sigma > 0):
            raise ValueError("a shift in the characteristic's unit needs the process sigma (a positive number)")
        return abs(self.shift_units) / sigma

    def target_arl(self, interval_hours: float | None) -> float:
        """The in-control ARL a scheme sampled every `interval_hours` must reach: the stricter of both targets."""
        targets = [self.arl_in_control] if self.arl_in_control is not None else []
        if self.false_alarms_per_month is not None:
            if not (self.hours_per_month and interval_hours):
                raise ValueError("false alarms per month need the production hours per month and the interval")
            targets.append(self.hours_per_month / (interval_hours * self.false_alarms_per_month))
        return max(targets) if targets else DEFAULT_ARL_IN_CONTROL


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
            _positive("a sampling interval", t)
        _positive("the budget of measurements per hour", self.budget)

    def pairs(self) -> list[tuple[int, float]]:
        """Every allowed (subgroup size, interval): with a budget alone, each size as often as the budget allows."""
        if self.intervals is None:
            return [(int(n), int(n) / self.budget if self.budget else 1.0) for n in self.sizes]
        limit = (self.budget or math.inf) * (1.0 + 1e-9)
        return [(int(n), float(t)) for n in self.sizes for t in self.intervals if n / t <= limit]


@dataclass(frozen=True)
class SearchGrid:
    """The schemes searched: Shewhart rule presets, EWMA weights and CUSUM reference values."""

    presets: tuple[str, ...] = ("limits", "zones", "all")
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
class RequirementCheck:
    """One requirement against what a scheme achieves; met is None when it cannot be judged."""

    name: str  # a key of REQUIREMENT_KEYS
    required: float
    achieved: float | None
    met: bool | None
    words: str


@dataclass(frozen=True)
class RequirementsCheck:
    """Every requirement checked for one scheme."""

    items: tuple[RequirementCheck, ...]
    shift: float  # the shift judged, in process standard deviations

    @property
    def met(self) -> bool | None:
        """True when every requirement is met, False when one is not, None when one cannot be judged."""
        if any(i.met is False for i in self.items):
            return False
        return None if any(i.met is None for i in self.items) else True

    @property
    def missed(self) -> list[RequirementCheck]:
        """The requirements not met."""
        return [i for i in self.items if i.met is False]


def _meets(achieved: float | None, limit: float, at_least: bool) -> bool | None:
    if achieved is None or not math.isfinite(limit):
        return None
    slack = MET_TOLERANCE * limit
    return achieved >= limit - slack if at_least else achieved <= limit + slack


def _judged(name: str, required: float, achieved: float | None, at_least: bool, got: str,
            wanted: str) -> RequirementCheck:
    """One requirement judged, in words: what the scheme achieves, what is wanted, and the verdict."""
    met = _meets(achieved, required, at_least)
    verdict = {True: "met", False: "not met", None: "cannot be judged"}[met]
    return RequirementCheck(name, required, achieved, met, f"{got}, {wanted} wanted: {verdict}")


def check_requirements(req: Requirements, arl_in_control: float, arl_at_shift: float,
                       interval_hours: float | None, shift: float) -> RequirementsCheck:
    """Judge a scheme with these run lengths against the requirements (used by `design` and by `evaluate`)."""
    items = []
    if req.arl_in_control is not None:
        items.append(_judged("arl_in_control", req.arl_in_control, arl_in_control, True,
                             f"in-control ARL {arl_in_control:.1f} points", f"at least {req.arl_in_control:g}"))
    if req.false_alarms_per_month is not None:
        rate = (req.hours_per_month / (interval_hours * arl_in_control)
                if req.hours_per_month and interval_hours and arl_in_control > 0 else None)
        got = (f"{rate:.2f} false alarms a month expected" if rate is not None
               else "false alarms a month unknown without the interval and production hours")
        items.append(_judged("false_alarms_per_month", req.false_alarms_per_month, rate, False,
                             got, f"at most {req.false_alarms_per_month:g}"))
    if req.detect_arl is not None:
        items.append(_judged("detect_arl", req.detect_arl, arl_at_shift, False,
                             f"ARL {arl_at_shift:.1f} points at a shift of {shift:.3g} sigma",
                             f"at most {req.detect_arl:g}"))
    if req.detect_hours is not None:
        ats = arl_at_shift * interval_hours if interval_hours else None
        got = f"caught in {ats:.2f} h on average" if ats is not None else "time to signal unknown without the interval"
        items.append(_judged("detect_hours", req.detect_hours, ats, False,
                             f"a shift of {shift:.3g} sigma {got}", f"within {req.detect_hours:g} h"))
    return RequirementsCheck(tuple(items), float(shift))


# --- calibration ------------------------------------------------------------------------------------------------

@lru_cache(maxsize=4096)
def _run_length(scheme: Scheme, shift: float) -> RunLength:
    """Zero-state ARL of a scheme at a mean shift (process sigmas), from the engine; cached."""
    return scheme_run_lengths(scheme, [(shift, 1.0)], full=False).results[0]


def _calibrate(arl0: Callable[[float], float], low: float, high: float, target: float, what: str) -> float:
    """Root of log ARL0(x) = log target on [low, high], widening the bracket a few times if needed."""
    def f(x: float) -> float:
        return math.log(arl0(x)) - math.log(target)

    for _ in range(6):
        f_low, f_high = f(low), f(high)
        if f_low <= 0.0 <= f_high:
            return float(optimize.brentq(f, low, high, xtol=1e-7, rtol=1e-9))
        if f_low > 0.0:
            low = max(low / 2.0, 1e-3)
        if f_high < 0.0:
            high *= 1.5
    raise ValueError(f"{what} could not be calibrated to an in-control ARL of {target:g}")


@lru_cache(maxsize=1024)
def ewma_limit_width(lam: float, target: float) -> float:
    """EWMA L (asymptotic limits, zero state) giving an in-control ARL of `target` (Lucas and Saccucci 1990).

    Bracket: at lambda = 1 the EWMA is the Shewhart chart, L = z(1 - 1/(2 target)); a smaller lambda needs less.
    """
    _check_target(target)
    shewhart = float(stats.norm.isf(0.5 / target))
    return _calibrate(lambda width: _run_length(Scheme("ewma", lam=lam, L=width), 0.0).arl,
                      0.5 * shewhart, shewhart + 0.05, target, f"EWMA lambda {lam:g}")


def _siegmund_h(k: float, one_sided: float) -> float:
    """h whose one-sided in-control ARL is `one_sided` by Siegmund's (1985) approximation (a bracket guess)."""
    def arl(b: float) -> float:
        return cusum.siegmund_arl(k, b - 1.166, 0.0)

    high = 2.0
    while arl(high) < one_sided:
        high *= 2.0
    return float(optimize.brentq(lambda b: arl(b) - one_sided, 1e-9, high)) - 1.166


@lru_cache(maxsize=1024)
def cusum_decision_interval(k: float, target: float) -> float:
    """Two-sided CUSUM h for reference value k giving an in-control ARL of `target` (Brook and Evans 1972 chain).

    In control both sides are alike, so each one-sided ARL is 2 * target; Siegmund's approximation brackets h.
    """
    _check_target(target)
    guess = _siegmund_h(k, 2.0 * target)
    return _calibrate(lambda h: cusum.two_sided_arl(k, h, 0.0), max(guess - 0.5, 0.01), max(guess + 0.5, 0.5),
                      target, f"CUSUM k {k:g}")


def _check_target(target: float) -> None:
    low, high = ARL_RANGE
    if not (math.isfinite(target) and low <= target <= high):
        raise ValueError(f"an in-control ARL of {target:.4g} points is outside what the design calibrates "
                         f"({low:g} to {high:,.0f}); check the in-control target or false alarms per month")


# --- candidates -------------------------------------------------------------------------------------------------

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
        """Average time to signal at the shift (zero state): ARL times the interval."""
        return self.arl_at_shift * self.interval_hours

    @property
    def meets(self) -> bool:
        """True when every requirement is met."""
        return self.check.met is True

    @property
    def label(self) -> str:
        """The scheme in a few words, e.g. 'EWMA lambda 0.1, L 2.703'."""
        if self.family == "ewma":
            return f"EWMA lambda {self.scheme.lam:g}, L {self.scheme.L:.3f}"
        if self.family == "cusum":
            return f"CUSUM k {self.scheme.k:g}, h {self.scheme.h:.3f}"
        chart = "individuals" if self.n == 1 else "X-bar"
        return f"{chart}, rules {self.preset}"

    @property
    def sampling_words(self) -> str:
        """'n = 5 every 1 h'."""
        return f"n = {self.n} every {self.interval_hours:.3g} h"


def _candidate(family: str, scheme: Scheme, preset: str | None, n: int, interval: float, arl0: float,
               req: Requirements, delta: float) -> Candidate:
    rl = _run_length(scheme, delta)
    per_month = req.hours_per_month / (interval * arl0) if req.hours_per_month and arl0 > 0 else None
    return Candidate(family=family, scheme=scheme, preset=preset, n=n, interval_hours=interval,
                     arl_in_control=arl0, arl_at_shift=rl.arl, arl_ci95=rl.ci, false_alarms_per_month=per_month,
                     check=check_requirements(req, arl0, rl.arl, interval, delta))


def candidates(req: Requirements, sampling: Sampling, grid: SearchGrid) -> list[Candidate]:
    """Every scheme of the grid at every allowed (n, interval), calibrated to that interval's in-control target."""
    delta = req.delta()
    out = []
    for n, interval in sampling.pairs():
        target = req.target_arl(interval)
        for preset in grid.presets:
            rules = tuple(parse_rules(preset))
            arl0 = _run_length(Scheme("xbar", rules=rules), 0.0).arl  # the same for every n
            out.append(_candidate("shewhart", Scheme("xbar", rules=rules, n=n), preset, n, interval, arl0, req,
                                  delta))
        for lam in grid.lambdas:
            width = ewma_limit_width(lam, target)
            arl0 = _run_length(Scheme("ewma", lam=lam, L=width), 0.0).arl
            out.append(_candidate("ewma", Scheme("ewma", n=n, lam=lam, L=width), None, n, interval, arl0, req, delta))
        for k in grid.ks:
            h = cusum_decision_interval(k, target)
            arl0 = _run_length(Scheme("cusum", k=k, h=h), 0.0).arl
            out.append(_candidate("cusum", Scheme("cusum", n=n, k=k, h=h), None, n, interval, arl0, req, delta))
    out.sort(key=lambda c: (not c.meets, c.ats_hours, c.measurements_per_hour, -c.arl_in_control))
    return out


# --- the design -------------------------------------------------------------------------------------------------

@dataclass
class DesignResult:
    """The ranked candidates, whether any meets every requirement, and the trade-off in plain words."""

    requirements: Requirements
    sampling: Sampling
    grid: SearchGrid
    shift: float  # the shift that matters, process standard deviations
    candidates: list[Candidate]  # schemes meeting every requirement first, each group by time to catch the shift
    feasible: bool  # some candidate meets every requirement
    messages: list[str]  # which requirement cannot be met and what the nearest scheme achieves
    trade_off: list[str]
    notes: list[str] = field(default_factory=list)
    method: str = ""


METHOD = ("Candidates: Shewhart charts of subgroup means with the rule presets (exact zone chain, Champ and Woodall "
          "1987; trend and alternate rules by seeded simulation); EWMA with lambda on a grid and L found by Brent's "
          "root finding so that the in-control zero-state ARL is the target (integral equation, Crowder 1987; "
          "design procedure of Lucas and Saccucci 1990); two-sided tabular CUSUM with k on a grid and h found the "
          "same way (Brook and Evans 1972 chain, bracketed by Siegmund 1985). Time to catch the shift: the "
          "zero-state ARL at the shift (a fresh start with the shift present from the first point) times the "
          "sampling interval; a shift that starts between two samples is caught on average up to half an interval "
          "later. Ranked by that time, schemes meeting every requirement first; a mean of n readings moves by "
          "shift x sqrt(n) standard errors.")


def design(req: Requirements, sampling: Sampling | None = None, grid: SearchGrid | None = None) -> DesignResult:
    """Search, rank and explain; ValueError for malformed requirements, a result flag when none can be met."""
    sampling = sampling or Sampling()
    grid = grid or SearchGrid()
    delta = req.delta()
    notes = []
    if sampling.intervals is None and sampling.budget is None:
        notes.append("no interval or budget given: one subgroup an hour is assumed, so hours equal points")
    if req.arl_in_control is None and req.false_alarms_per_month is None:
        req = replace(req, arl_in_control=DEFAULT_ARL_IN_CONTROL)
        notes.append(f"no in-control target given: at least {DEFAULT_ARL_IN_CONTROL:g} is required, the in-control "
                     "ARL of 3-sigma limits")
    pairs = sampling.pairs()
    for _, interval in pairs:
        _check_target(req.target_arl(interval))
    if not pairs:
        return DesignResult(req, sampling, grid, delta, [], False, [_no_sampling(sampling)], [], notes, METHOD)
    found = candidates(req, sampling, grid)
    feasible = bool(found) and found[0].meets
    messages = [] if feasible else _shortfall(found)
    return DesignResult(req, sampling, grid, delta, found, feasible, messages, trade_off(found, delta),
                        notes, METHOD)


def _no_sampling(sampling: Sampling) -> str:
    n, t = min(sampling.sizes), max(sampling.intervals or ())
    return (f"the sampling cannot be met: a budget of {sampling.budget:g} measurements per hour allows no subgroup "
            f"size with the intervals given; the least costly plan allowed, n = {n} every {t:g} h, takes "
            f"{n / t:.3g} measurements per hour; raise the budget to that or allow an interval of at least "
            f"{n / sampling.budget:.3g} h")


def _shortfall(found: list[Candidate]) -> list[str]:
    """For each requirement that no scheme meets alongside the others, what the nearest scheme achieves."""
    messages = []
    names = [i.name for i in found[0].check.items]
    for name in names:
        others = [c for c in found if all(i.met is not False for i in c.check.items if i.name != name)]
        pool = others or found
        item = {c: next(i for i in c.check.items if i.name == name) for c in pool}
        if any(item[c].met is not False for c in pool):
            continue
        at_least = name == "arl_in_control"
        best = max(pool, key=lambda c: item[c].achieved or 0.0) if at_least else min(
            pool, key=lambda c: item[c].achieved if item[c].achieved is not None else math.inf)
        alongside = " while meeting the other requirements" if others else ""
        got = item[best]
        messages.append(f"{name} = {got.required:g} ({REQUIREMENT_KEYS[name]}) cannot be met{alongside}; "
                        f"the nearest scheme, {best.label} with {best.sampling_words}, achieves {got.achieved:.4g}")
    nearest = min(found, key=lambda c: (len(c.check.missed), c.ats_hours))
    messages.append(f"nearest overall: {nearest.label} with {nearest.sampling_words}: "
                    + "; ".join(i.words for i in nearest.check.items))
    return messages


def trade_off(found: list[Candidate], delta: float) -> list[str]:
    """The trade-off in plain words: subgroup size against frequency, chart kinds, cost and false alarms."""
    if not found:
        return []
    lines = []
    best = found[0]
    by_cost: dict[float, list[Candidate]] = {}
    for c in found:
        by_cost.setdefault(round(c.measurements_per_hour, 9), []).append(c)
    same = [group for group in by_cost.values() if len({c.n for c in group}) > 1]
    if same:
        group = max(same, key=lambda g: (len({c.n for c in g}), -min(c.ats_hours for c in g)))
        rows = {}
        for c in sorted(group, key=lambda c: c.ats_hours):
            rows.setdefault(c.n, c)
        small, large = rows[min(rows)], rows[max(rows)]
        winner = ("smaller subgroups more often win" if small.ats_hours < large.ats_hours
                  else "larger subgroups less often win")
        lines.append(f"At the same cost of {small.measurements_per_hour:.3g} measurements per hour, the best scheme "
                     f"with {small.sampling_words} catches a {delta:.3g}-sigma shift in {small.ats_hours:.3g} h, "
                     f"with {large.sampling_words} in {large.ats_hours:.3g} h: for this shift {winner}.")
    meeting = [c for c in found if c.meets]
    cheapest = min(meeting or found, key=lambda c: (c.measurements_per_hour, c.ats_hours))
    lines.append(f"Cost: the fastest scheme ({best.label}, {best.sampling_words}) takes "
                 f"{best.measurements_per_hour:.3g} measurements per hour and catches the shift in "
                 f"{best.ats_hours:.3g} h; the least costly {'meeting every requirement' if meeting else 'searched'} "
                 f"({cheapest.label}, {cheapest.sampling_words}) takes {cheapest.measurements_per_hour:.3g} per hour "
                 f"and {cheapest.ats_hours:.3g} h.")
    kinds: dict[str, Candidate] = {}
    for c in meeting or found:
        if c.family not in kinds or c.ats_hours < kinds[c.family].ats_hours:
            kinds[c.family] = c
    if len(kinds) > 1:
        names = {"shewhart": "Shewhart chart", "ewma": "EWMA", "cusum": "CUSUM"}
        listed = ", ".join(f"the best {names[f]} {c.ats_hours:.3g} h ({c.label}, {c.sampling_words})"
                           for f, c in sorted(kinds.items(), key=lambda kv: kv[1].ats_hours))
        fastest = min(kinds.values(), key=lambda c: c.ats_hours)
        moved = f"{delta * math.sqrt(fastest.n):.3g} standard errors"
        why = (f"EWMA and CUSUM add up the evidence of many points, which pays while the shift is small against "
               f"the scatter of one point (here {moved})" if fastest.family != "shewhart" else
               f"the shift moves each plotted point by {moved}, enough for single points beyond the limits to "
               "catch it soon, and Shewhart limits react to one point at once")
        among = " (schemes meeting every requirement)" if meeting else ""
        lines.append(f"Chart kinds for a {delta:.3g}-sigma shift{among}: {listed}; {why}.")
    fixed = sorted({(c.preset, c.arl_in_control) for c in found if c.family == "shewhart"}, key=lambda p: -p[1])
    if fixed:
        arls = ", ".join(f"{p} {a:.1f}" for p, a in fixed)
        lines.append(f"False alarms: EWMA and CUSUM are calibrated to the in-control target; the Shewhart presets "
                     f"have their own in-control ARL ({arls} points): more rules catch shifts sooner at the price of "
                     "more false alarms.")
    return lines


def leading(found: list[Candidate], count: int) -> list[Candidate]:
    """The schemes to draw: the best of each chart kind, then the next in the ranking, in ranking order."""
    firsts = {}
    for c in found:
        firsts.setdefault(c.family, c)
    chosen = set(list(firsts.values())[:count])
    for c in found:
        if len(chosen) >= count:
            break
        chosen.add(c)
    return [c for c in found if c in chosen]


def arl_curve(candidate: Candidate, shifts: tuple[float, ...]) -> list[float]:
    """The candidate's zero-state ARL at each mean shift (process sigmas), for the comparison chart."""
    result = scheme_run_lengths(candidate.scheme, [(float(s), 1.0) for s in shifts], full=False, runs=CURVE_RUNS)
    return [float(rl.arl) for rl in result.results]


CURVE_SHIFTS: tuple[float, ...] = tuple(float(s) for s in np.round(np.linspace(0.0, 3.0, 31), 10))
