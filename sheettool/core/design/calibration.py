"""Calibrate EWMA and CUSUM to an in-control target: the limit width L or decision interval h by root finding.

EWMA: lambda given, L (for the exact limits the chart draws) found by Brent's method (Brent 1973,
scipy.optimize.brentq) so that the in-control zero-state ARL is the target (the design procedure of Lucas and
Saccucci 1990). Two-sided tabular CUSUM: k given, h found the same way on the Brook and Evans (1972) chain,
bracketed by Siegmund's (1985) approximation. Every run length comes from the engine, cached.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from functools import lru_cache

from scipy import special

from sheettool.core.parameters import EwmaParameters
from sheettool.core.runlength import cusum
from sheettool.core.runlength.ewma import EwmaChart, drawn_limits_arl
from sheettool.core.runlength.markov import RunLength
from sheettool.core.runlength.scheme import Scheme, scheme_run_lengths

ARL_RANGE = (10.0, 1.0e6)  # in-control targets the calibration handles


@lru_cache(maxsize=4096)
def run_length(scheme: Scheme, shift: float, as_drawn: bool = True) -> RunLength:
    """Zero-state ARL of a scheme at a mean shift (process sigmas), from the engine; cached.

    An EWMA's ARL is by default that of the limits as drawn (`drawn_limits_arl`), the figure `evaluate` reports,
    so a design and the evaluation of the chart it proposes agree; `as_drawn=False` gives asymptotic limits.
    """
    if scheme.chart == "ewma" and as_drawn:
        chart = EwmaChart(scheme.ewma.lam, scheme.ewma.L)
        return RunLength(arl=drawn_limits_arl(chart, shift * math.sqrt(scheme.n)))
    return scheme_run_lengths(scheme, [(shift, 1.0)], full=False).results[0]


def _calibrate(arl0: Callable[[float], float], low: float, high: float, target: float, what: str) -> float:
    """Root of log ARL0(x) = log target on [low, high], widening the bracket a few times if needed."""
    from scipy import optimize

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
def ewma_limit_width(lam: float, target: float, as_drawn: bool = True) -> float:
    """EWMA L (zero state) giving an in-control ARL of `target` (Lucas and Saccucci 1990), for the limits as drawn
    or, with `as_drawn=False`, for asymptotic limits (the published tables' convention).

    Bracket: at lambda = 1 the EWMA is the Shewhart chart, L = z(1 - 1/(2 target)); a smaller lambda needs less.
    """
    check_target(target)
    shewhart = float(-special.ndtri(0.5 / target))
    return _calibrate(lambda width: run_length(Scheme("ewma", ewma=EwmaParameters(lam, width)), 0.0, as_drawn).arl,
                      0.5 * shewhart, shewhart + 0.05, target, f"EWMA lambda {lam:g}")


def _siegmund_h(k: float, one_sided: float) -> float:
    """h whose one-sided in-control ARL is `one_sided` by Siegmund's (1985) approximation (a bracket guess)."""
    from scipy import optimize

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
    check_target(target)
    guess = _siegmund_h(k, 2.0 * target)
    return _calibrate(lambda h: cusum.two_sided_arl(k, h, 0.0), max(guess - 0.5, 0.01), max(guess + 0.5, 0.5),
                      target, f"CUSUM k {k:g}")


def check_target(target: float) -> None:
    """ValueError when an in-control target lies outside what the calibration handles (ARL_RANGE)."""
    low, high = ARL_RANGE
    if not (math.isfinite(target) and low <= target <= high):
        raise ValueError(f"an in-control ARL of {target:.4g} points is outside what the design calibrates "
                         f"({low:g} to {high:,.0f}); check the in-control target or false alarms per month")
