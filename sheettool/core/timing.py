"""Points and hours: time to signal, false alarms per month, and the in-control target, each written once.

Points are sampled every `interval_hours`. ATS = ARL x interval. Expected false alarms per month =
hours_per_month / (interval x zero-state in-control ARL), the renewal rate of a scheme that restarts after each
alarm (Montgomery, Introduction to Statistical Quality Control, ch. 6); read backwards, at most F false alarms a
month needs an in-control ARL of at least hours_per_month / (interval x F).
"""

from __future__ import annotations

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

