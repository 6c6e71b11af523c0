"""One summary row per characteristic over a reporting period: points, signals, capability, status words.

The review pack's summary tab shows these rows; an input or sheet that could not be evaluated gets a row too.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from sheettool.core.capability import Capability
from sheettool.core.charts import CHART_KINDS
from sheettool.core.timing import SignalsAgainstChance, signals_against_chance
from sheettool.evaluation.results import CharacteristicResult

MIN_BASE_SUBGROUPS = 20  # fewer subgroups than this set the limits: "too little data" (common practice: 20-25)
CAPABILITY_TARGET = 1.33  # Cpk below this: "below capability target" (common practice minimum)

STATUS_WORDS = {
    "steady": "in control",
    "signals": "signals to review",
    "capability": "below capability target",
    "little": "too little data",
    "uncarried": "no carried limits found",
    "failed": "not evaluated",
}


@dataclass(frozen=True)
class Period:
    """The reporting window: points dated from `start` (inclusive) to `end` (exclusive)."""

    start: dt.datetime
    end: dt.datetime
    label: str

    @classmethod
    def month(cls, text: str) -> Period:
        """Parse YYYY-MM; ValueError with a plain message otherwise."""
        try:
            start = dt.datetime.strptime(text.strip(), "%Y-%m")
        except ValueError:
            raise ValueError(f"period '{text}' is not a month; write it as YYYY-MM, e.g. 2026-11") from None
        end = start.replace(year=start.year + (start.month == 12), month=start.month % 12 + 1)
        return cls(start, end, text.strip())

    @classmethod
    def between(cls, start: str | None, end: str | None) -> Period:
        """Parse --from and --to dates (YYYY-MM-DD, both inclusive; either may be open)."""
        def day(text: str | None, default: dt.datetime) -> dt.datetime:
            if text is None:
                return default
            try:
                return dt.datetime.strptime(text.strip(), "%Y-%m-%d")
            except ValueError:
                raise ValueError(f"date '{text}' is not understood; write it as YYYY-MM-DD") from None
        low = day(start, dt.datetime.min)
        high = day(end, dt.datetime.max - dt.timedelta(days=1)) + dt.timedelta(days=1)
        if high <= low:
            raise ValueError("--to is before --from")
        return cls(low, high, f"{start or '...'} to {end or '...'}")

    def mask(self, dates: list[dt.datetime | None]) -> np.ndarray:
        """True for the points dated inside the period."""
        return np.array([d is not None and self.start <= d < self.end for d in dates], dtype=bool)


@dataclass
class PackRow:
    """One summary row: a characteristic, or a file or sheet that could not be evaluated."""

    source: str
    sheet: str
    characteristic: str
    chart: str = ""  # the chart's name in words, e.g. "individuals and moving range"
    points: int = 0
    points_signalled: int = 0
    events: int = 0
    events_open: int = 0
    latest_signal: str = ""
    cpk: float | None = None
    cpk_low: float | None = None
    cpk_high: float | None = None
    arl_in_control: float | None = None
    false_alarms_per_month: float | None = None
    status: str = ""
    reason: str = ""
    flags: list[str] = field(default_factory=list)
    chance: SignalsAgainstChance | None = None  # the period's points signalled against false alarms alone
    center: float | None = None  # the location chart's center line (at its first point)
    carried: str = ""  # how carried limits were matched (see CharacteristicResult.carried)
    tab: int | None = None  # position of the characteristic's evaluation tab in the pack


def period_points(result: CharacteristicResult, period: Period | None) -> np.ndarray:
    """Which plotted points belong to the period (all points without a period, or without dates)."""
    dates = result.characteristic.dates
    if period is None or not any(d is not None for d in dates):
        return np.ones(result.characteristic.data.subgroups, dtype=bool)
    return period.mask(dates)


def summary_row(source: str, result: CharacteristicResult, period: Period | None) -> PackRow:
    """The summary of one evaluated characteristic over the period."""
    inside = period_points(result, period)
    signals = [s for s in result.signals if inside[s.point - 1]]
    events = [e for e in result.events if inside[np.asarray(e.points) - 1].any()]
    row = PackRow(source=source, sheet=result.sheet, characteristic=result.identity or result.characteristic.name,
                  chart=CHART_KINDS[result.fit.chart].title, points=int(inside.sum()),
                  points_signalled=len({s.point for s in signals}), events=len(events),
                  events_open=result.events_open, carried=result.carried)
    if signals:
        last = max(signals, key=lambda s: s.point)
        row.latest_signal = f"point {last.point} ({last.label})" if last.label != str(last.point) \
            else f"point {last.point}"
    cap = result.capability
    if isinstance(cap, Capability) and cap.cpk is not None:
        row.cpk = cap.cpk
        interval = cap.ci.get("cpk")
        if interval is not None:
            row.cpk_low, row.cpk_high = interval.low, interval.high
    perf = result.performance
    row.arl_in_control = perf.arl_in_control if np.isfinite(perf.arl_in_control) else None
    row.false_alarms_per_month = perf.false_alarms_per_month
    row.center = float(result.fit.statistics[0].center[0]) if result.fit.statistics else None
    row.chance = signals_against_chance(row.points, row.points_signalled, perf.arl_in_control)
    origin, reasons = result.limits_origin, []
    if result.carried == "none":
        row.flags.append("uncarried")
        reasons.append("carried limits were asked for but none matched this characteristic: limits from its own "
                       "base period")
    base = origin.subgroups  # carried limits: the subgroups that first set them
    if not origin.how and base < MIN_BASE_SUBGROUPS:
        row.flags.append("little")
        reasons.append(f"limits from {base} subgroups, fewer than {MIN_BASE_SUBGROUPS}")
    if signals:
        row.flags.append("signals")
        c = row.chance
        reasons.append(f"{c.signalled} point(s) signalled where false alarms alone give {c.expected:.2g}; "
                       f"chance of as many: {odds(c.probability)}")
    if row.cpk is not None and row.cpk < CAPABILITY_TARGET:
        row.flags.append("capability")
        reasons.append(f"Cpk {row.cpk:.2f} below {CAPABILITY_TARGET}")
    row.status = "; ".join(STATUS_WORDS[f] for f in row.flags) or STATUS_WORDS["steady"]
    row.reason = "; ".join(reasons)
    return row


def chance_of(result: CharacteristicResult) -> SignalsAgainstChance:
    """All the points' signals against the false alarms the scheme expects for that many points."""
    return signals_against_chance(result.characteristic.data.subgroups, result.points_signalled,
                                  result.performance.arl_in_control)


def odds(probability: float) -> str:
    """A probability as a meeting reads it: a percentage, or "under 0.1%"."""
    return f"{probability:.1%}" if probability >= 0.001 else "under 0.1%"


def failed_row(source: str, sheet: str, reason: str) -> PackRow:
    """The row of a file or sheet that could not be evaluated."""
    return PackRow(source=source, sheet=sheet, characteristic="", status=STATUS_WORDS["failed"],
                   reason=reason, flags=["failed"])


def pack_key(source: str, sheet: str) -> str:
    """How a characteristic is named in the pack's limits block: source file and sheet."""
    return f"{source} :: {sheet}"
