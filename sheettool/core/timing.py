"""Points and hours: time to signal, false alarms per month, and the in-control target, each written once.

Points are sampled every `interval_hours`. ATS = ARL x interval. Expected false alarms per month =
hours_per_month / (interval x zero-state in-control ARL), the renewal rate of a scheme that restarts after each
alarm (Montgomery, Introduction to Statistical Quality Control, ch. 6); read backwards, at most F false alarms a
month needs an in-control ARL of at least hours_per_month / (interval x F).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import overload

from scipy import special

# 3-sigma limits with known mean and sigma: 1 / (2 Phi(-3)) = 370.4 points between false alarms (common practice).
THREE_SIGMA_ARL = float(1.0 / (2.0 * special.ndtr(-3.0)))


@overload
def ats_hours(arl: float, interval_hours: float) -> float: ...
@overload
def ats_hours(arl: float, interval_hours: float | None) -> float | None: ...
def ats_hours(arl: float, interval_hours: float | None) -> float | None:
    """Average time to signal in hours, ARL x interval; None without the interval."""
    return arl * interval_hours if interval_hours is not None else None


def false_alarms_per_month(arl_in_control: float, interval_hours: float | None,
                           hours_per_month: float | None) -> float | None:
    """hours_per_month / (interval x in-control ARL); None without the interval, the hours or a positive ARL.

    An infinite in-control ARL (a scheme that cannot signal in control) gives zero.
    """
    if not (interval_hours and hours_per_month) or not arl_in_control > 0:
        return None
    return hours_per_month / (interval_hours * arl_in_control)


def arl_for_false_alarms(false_alarms: float, interval_hours: float | None,
                         hours_per_month: float | None) -> float | None:
    """The in-control ARL that gives `false_alarms` per month: hours_per_month / (interval x false_alarms)."""
    if not (interval_hours and hours_per_month):
        return None
    return hours_per_month / (interval_hours * false_alarms)


def in_control_target(arl_in_control: float | None, false_alarms: float | None, interval_hours: float | None,
                      hours_per_month: float | None) -> float:
    """The in-control ARL a scheme must reach: the stricter (larger) of a required ARL and the ARL that at most
    `false_alarms` per month needs at this interval and production hours; THREE_SIGMA_ARL when neither is given.

    A false-alarm target without the interval or the hours cannot be turned into points and is left out here;
    `Requirements.target_arl` (the design) refuses it instead.
    """
    targets = [float(arl_in_control)] if arl_in_control is not None else []
    if false_alarms is not None:
        implied = arl_for_false_alarms(false_alarms, interval_hours, hours_per_month)
        if implied is not None:
            targets.append(implied)
    return max(targets) if targets else THREE_SIGMA_ARL



@dataclass(frozen=True)
class SignalsAgainstChance:
    """The points signalled in a period beside what false alarms alone would give over that many points."""

    points: int  # points plotted in the period
    signalled: int  # of them, points that signalled
    expected: float  # false alarms the in-control scheme expects over `points`: points / in-control ARL
    probability: float  # chance that false alarms alone give `signalled` or more (Poisson with mean `expected`)


def signals_against_chance(points: int, signalled: int, arl_in_control: float) -> SignalsAgainstChance:
    """Compare the points signalled with the false alarms expected over `points` plotted points.

    False alarms of a scheme that restarts after each alarm form a renewal process with mean spacing ARL0, so
    their count over n points is close to Poisson with mean n / ARL0 (exactly binomial for a Shewhart chart;
    Montgomery, ch. 6). P(N >= k) for Poisson is the regularized lower incomplete gamma function P(k, mean).
    A run rule that signals several points in a row counts each of them, so a low probability means "more than
    chance", not "this many separate causes".
    """
    if points < 0 or signalled < 0:
        raise ValueError("points and signalled must be at least 0")
    expected = points / arl_in_control if arl_in_control > 0 and math.isfinite(arl_in_control) else 0.0
    if signalled == 0:
        probability = 1.0
    elif expected == 0.0:
        probability = 0.0
    else:
        probability = float(special.gammainc(signalled, expected))
    return SignalsAgainstChance(points, signalled, expected, probability)
