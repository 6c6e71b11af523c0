"""Process capability: Cp, Cpk, Pp, Ppk, Cpm with intervals; attribute rates with intervals."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class Interval:
    """A two-sided confidence interval."""

    low: float
    high: float


@dataclass
class Capability:
    """Capability of a variables characteristic against its specification limits.

    Indices are None where a one-sided specification or a missing target makes them undefined.
    `stable` is False when the chart signals: the indices then do not describe a stable process.
    """

    lsl: float | None
    usl: float | None
    target: float | None
    mean: float
    sigma_within: float
    sigma_overall: float
    cp: float | None
    cpk: float | None
    pp: float | None
    ppk: float | None
    cpm: float | None
    ppm_out: float | None
    ci: dict[str, Interval]
    confidence: float
    normality_p: float | None
    stable: bool = True
    notes: list[str] = field(default_factory=list)


@dataclass
class AttributeRate:
    """The average proportion defective or defects per unit, with its confidence interval."""

    kind: str  # "proportion" or "rate"
    estimate: float
    ci: Interval
    confidence: float
