"""What an evaluation hands back: the fitted chart with its signals, the scheme's assessment, and both together.

`Fitted` (from `fit_characteristic`) needs no run-length engine; `Assessment` (from `assess`) is how the scheme
behaves and what the extra checks found; `CharacteristicResult` is made of both and reads like either.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from sheettool.base.problems import Problem
from sheettool.core.capability import AttributeRate, Capability
from sheettool.core.charts import ChartFit
from sheettool.core.data import Characteristic
from sheettool.core.data_shape import DataShapeReport
from sheettool.core.design import RequirementsCheck
from sheettool.core.estimated_limits import EstimatedLimitsReport
from sheettool.core.rules import Rule
from sheettool.core.runlength.results import Performance, ShiftArl
from sheettool.settings import Setting

__all__ = ["Assessment", "CharacteristicResult", "Event", "Fitted", "LimitsOrigin", "Performance", "ShiftArl", "Signal"]


@dataclass(frozen=True)
class Signal:
    """A plotted point that broke one or more rules: its position (from 1) on one statistic, the rules (in the
    grammar's spelling, in the order of the rules in use) and the input's note for its subgroup."""

    point: int
    label: str
    statistic: str
    rules: tuple[str, ...]
    note: str = ""


@dataclass(frozen=True)
class Event:
    """Consecutive signalled points taken together: what a technician looks into once.

    points: the signalled positions (a point signalled on two statistics counts once); rules: "statistic: rule"
    in the order met; note: the input's notes of those subgroups. The action-log fields are what the technician
    wrote (cause, action, by, date, closed); `found_in` names the input the event was first found in.
    """

    first_point: int
    last_point: int
    points: tuple[int, ...]
    rules: tuple[str, ...]
    note: str = ""
    first_label: str = ""
    last_label: str = ""
    cause: str = ""
    action: str = ""
    by: str = ""
    date: str = ""
    closed: str = ""
    found_in: str = ""  # the input file the event was first found in ("" for this evaluation's)

    @property
    def is_open(self) -> bool:
        """Open until the technician writes something in "closed" other than no."""
        return self.closed.strip().lower() in ("", "no", "n", "open")


@dataclass(frozen=True)
class LimitsOrigin:
    """Where a characteristic's limits were set: the file, sheet and month, and the base subgroups (their positions
    and how many). Carried limits keep the origin of the month that set them; `carried_from` names the output they
    were last read from ("" when they were set in this evaluation)."""

    file: str
    sheet: str
    month: str = ""  # YYYY-MM of the base subgroups' dates (or "FIRST to LAST" across months); "" without dates
    period: str = ""  # the base subgroups' first and last label or date
    base: str = ""  # their positions, e.g. "1-20, 22-25"
    subgroups: int = 0
    how: str = ""  # the limits' source in words where no base subgroups set them (standard values)
    carried_from: str = ""

    @property
    def words(self) -> str:
        """The origin in one line, e.g. "base subgroups 1-25 (25 subgroups, 2026-03) of bore-2026-03.xlsx, sheet
        Bore"."""
        when = ", ".join(x for x in (f"{self.subgroups} subgroups" if self.subgroups else "", self.month,
                                      self.period) if x)
        text = (f"base subgroups {self.base}" + (f" ({when})" if when else "")) if self.base else (
            self.how or "an earlier evaluation")
        text += f" of {self.file or 'an earlier workbook'}" + (f", sheet {self.sheet}" if self.sheet else "")
        return text + (f"; carried from {self.carried_from}" if self.carried_from else "")


def spans(mask: np.ndarray) -> str:
    """Positions (from 1) of a mask as compact ranges, e.g. "1-21, 23-30"; "" for none."""
    idx = (np.flatnonzero(mask) + 1).tolist()
    parts: list[list[int]] = []
    for i in idx:
        if parts and i == parts[-1][1] + 1:
            parts[-1][1] = i
        else:
            parts.append([i, i])
    return ", ".join(f"{a}-{b}" if b > a else f"{a}" for a, b in parts)


def months(dates: list[dt.datetime]) -> str:
    """The month of the dates as YYYY-MM, or "FIRST to LAST" when they span months; "" without dates."""
    if not dates:
        return ""
    first, last = f"{min(dates):%Y-%m}", f"{max(dates):%Y-%m}"
    return first if first == last else f"{first} to {last}"


@dataclass(frozen=True)
class Fitted:
    """A characteristic's chart: its limits, the rules applied, the signals, capability and the fit's problems."""

    characteristic: Characteristic
    sheet: str
    fit: ChartFit
    rules: list[Rule]
    signals: list[Signal]
    capability: Capability | AttributeRate | None = None
    problems: tuple[Problem, ...] = ()
    identity: str = ""  # part, characteristic and sheet: what carried limits and the action log are matched by
    events: tuple[Event, ...] = ()  # this evaluation's events, with what the action log wrote of them
    earlier_events: tuple[Event, ...] = ()  # events of earlier months read back from the action log
    carried_origin: LimitsOrigin | None = None  # where carried limits were first set; None when set here

    @property
    def points_signalled(self) -> int:
        """How many plotted positions signalled (on any statistic): what every count of signals counts."""
        return len({s.point for s in self.signals})

    @property
    def events_open(self) -> int:
        """Events not closed in the action log, this month's and earlier ones."""
        return sum(e.is_open for e in (*self.events, *self.earlier_events))

    def origin_in(self, file: str) -> LimitsOrigin:
        """Where the limits were set, read from `file`: carried limits keep their first origin."""
        if self.carried_origin is not None:
            return self.carried_origin
        base = np.asarray(self.fit.base, dtype=bool)
        ch = self.characteristic
        chosen = np.flatnonzero(base)
        dates = [d for d in (ch.dates[i] for i in chosen) if isinstance(d, dt.datetime)]
        period = f"{ch.labels[chosen[0]]} to {ch.labels[chosen[-1]]}" if chosen.size and not dates else ""
        return LimitsOrigin(file=file, sheet=self.sheet, month=months(dates), period=period, base=spans(base),
                            subgroups=int(chosen.size), how="" if chosen.size else self.fit.limits_source)


@dataclass(frozen=True)
class Assessment:
    """How the scheme in use behaves, and what the extra checks found (with their problems)."""

    performance: Performance
    estimated_limits: EstimatedLimitsReport | None = None  # X-bar and individuals limits estimated from data
    data_shape: DataShapeReport | None = None  # variables charts: the base period's shape and dependence
    requirements_check: RequirementsCheck | None = None  # when the settings give requirements
    problems: tuple[Problem, ...] = ()


@dataclass(frozen=True)
class CharacteristicResult:
    """Everything computed for one characteristic: the fit and the assessment, the settings behind them and the
    file they came from (which every problem is located in)."""

    fitted: Fitted
    assessment: Assessment
    settings: dict[str, Setting] = field(default_factory=dict)
    file: str = ""
    carried: str = ""  # how carried limits were matched ("identity", "file name"...); "none": asked, none found

    @property
    def characteristic(self) -> Characteristic:
        """The characteristic evaluated."""
        return self.fitted.characteristic

    @property
    def sheet(self) -> str:
        """The sheet it was read from."""
        return self.fitted.sheet

    @property
    def fit(self) -> ChartFit:
        """The fitted chart."""
        return self.fitted.fit

    @property
    def rules(self) -> list[Rule]:
        """The rules applied."""
        return self.fitted.rules

    @property
    def signals(self) -> list[Signal]:
        """The signals found."""
        return self.fitted.signals

    @property
    def identity(self) -> str:
        """Part, characteristic and sheet, as matched across months."""
        return self.fitted.identity

    @property
    def limits_origin(self) -> LimitsOrigin:
        """Where the limits were set: carried limits keep their first origin; limits set here name this file."""
        return self.fitted.origin_in(self.file)

    @property
    def events(self) -> tuple[Event, ...]:
        """Runs of consecutive signalled points, with the action log's entries."""
        return self.fitted.events

    @property
    def points_signalled(self) -> int:
        """Plotted positions that signalled."""
        return self.fitted.points_signalled

    @property
    def events_open(self) -> int:
        """Events not closed, this month's and earlier ones."""
        return self.fitted.events_open

    @property
    def capability(self) -> Capability | AttributeRate | None:
        """Capability indices (measurements with specs) or the attribute rate (counts)."""
        return self.fitted.capability

    @property
    def performance(self) -> Performance:
        """The scheme's run lengths."""
        return self.assessment.performance

    @property
    def estimated_limits(self) -> EstimatedLimitsReport | None:
        """The cost of estimated limits, where it applies."""
        return self.assessment.estimated_limits

    @property
    def data_shape(self) -> DataShapeReport | None:
        """The base period's shape and dependence (variables charts)."""
        return self.assessment.data_shape

    @property
    def requirements_check(self) -> RequirementsCheck | None:
        """The requirements of the settings, judged."""
        return self.assessment.requirements_check

    @property
    def problems(self) -> list[Problem]:
        """The fit's problems, then the assessment's, each located in this result's file and sheet."""
        return [p.located(self.file, self.sheet) for p in (*self.fitted.problems, *self.assessment.problems)]
