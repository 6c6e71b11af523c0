"""What a monitoring scheme must achieve, and a scheme judged against it (by `design` and by `evaluate`).

Requirements: an in-control target (an ARL, or at most F false alarms per month given the production hours), the
shift that matters, and how fast it must be caught (an ARL or hours). The in-control target and the hours come
from core/timing.py.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from sheettool.core.timing import ats_hours, false_alarms_per_month, in_control_target

MET_TOLERANCE = 1e-3  # relative: a calibrated scheme meets its target to the engine's precision
REQUIREMENT_KEYS: dict[str, str] = {
    "arl_in_control": "in-control ARL at least, points between false alarms",
    "false_alarms_per_month": "false alarms per month at most; needs the interval and production hours",
    "shift": "the shift that matters, in process standard deviations",
    "shift_in_units": "the shift that matters, in the characteristic's unit; divided by sigma",
    "arl_at_shift": "ARL at the shift at most, in points",
    "ats_hours": "ATS at the shift at most: the average hours to signal it",
}


def check_number(name: str, value: float | None, low: float = 0.0, strict: bool = True) -> None:
    """ValueError unless value is None or a finite number above `low` (at least `low` when not strict)."""
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
    shift: float | None = None  # process standard deviations; 1 when neither shift nor shift_in_units is given
    shift_in_units: float | None = None
    sigma: float | None = None  # the process sigma that turns shift_in_units into sigmas
    arl_at_shift: float | None = None
    ats_hours: float | None = None

    def __post_init__(self) -> None:
        check_number("the in-control ARL", self.arl_in_control, 1.0)
        check_number("the false alarms per month", self.false_alarms_per_month)
        check_number("the production hours per month", self.hours_per_month)
        check_number("the shift", self.shift)
        check_number("sigma", self.sigma)
        check_number("the ARL at the shift", self.arl_at_shift, 1.0, strict=False)
        check_number("the ATS at the shift (hours)", self.ats_hours)
        if self.shift_in_units is not None and not (math.isfinite(self.shift_in_units) and self.shift_in_units != 0):
            raise ValueError(f"the shift in units must be a finite number other than 0, got {self.shift_in_units!r}")
        if self.shift is not None and self.shift_in_units is not None:
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
        if self.shift_in_units is None:
            return float(self.shift) if self.shift is not None else 1.0
        sigma = sigma if sigma is not None else self.sigma
        if not (sigma is not None and math.isfinite(sigma) and sigma > 0):
            raise ValueError("a shift in the characteristic's unit needs the process sigma (a positive number)")
        return abs(self.shift_in_units) / sigma

    def target_arl(self, interval_hours: float | None) -> float:
        """The in-control ARL a scheme sampled every `interval_hours` must reach (`timing.in_control_target`);
        ValueError when false alarms per month are required without the production hours or the interval."""
        if self.false_alarms_per_month is not None and not (self.hours_per_month and interval_hours):
            raise ValueError("false alarms per month need the production hours per month and the interval")
        return in_control_target(self.arl_in_control, self.false_alarms_per_month, interval_hours,
                                 self.hours_per_month)


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
        rate = false_alarms_per_month(arl_in_control, interval_hours, req.hours_per_month)
        got = (f"{rate:.2f} false alarms per month expected" if rate is not None
               else "false alarms per month unknown without the interval and production hours")
        items.append(_judged("false_alarms_per_month", req.false_alarms_per_month, rate, False,
                             got, f"at most {req.false_alarms_per_month:g}"))
    if req.arl_at_shift is not None:
        items.append(_judged("arl_at_shift", req.arl_at_shift, arl_at_shift, False,
                             f"ARL {arl_at_shift:.1f} points at a shift of {shift:.3g} process standard deviations",
                             f"at most {req.arl_at_shift:g}"))
    if req.ats_hours is not None:
        ats = ats_hours(arl_at_shift, interval_hours)
        got = f"ATS {ats:.2f} hours" if ats is not None else "ATS unknown without the interval"
        items.append(_judged("ats_hours", req.ats_hours, ats, False,
                             f"{got} at a shift of {shift:.3g} process standard deviations",
                             f"at most {req.ats_hours:g} hours"))
    return RequirementsCheck(tuple(items), float(shift))
