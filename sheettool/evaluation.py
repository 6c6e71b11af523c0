"""Evaluate one characteristic: fit its chart, find signals, describe the scheme's run lengths.

Pure computation over the core: a Characteristic in, a CharacteristicResult out.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from sheettool.core.capability import AttributeRate, Capability
from sheettool.core.charts import CHART_KINDS, ChartFit
from sheettool.core.data import Characteristic, Measurements
from sheettool.core.rules import Rule, find_hits, parse_rules
from sheettool.core.runlength.scheme import performance_of
from sheettool.problems import Problem
from sheettool.settings import Setting

STANDARD_SHIFTS: tuple[float, ...] = (0.0, 0.5, 1.0, 1.5, 2.0, 3.0)


@dataclass(frozen=True)
class Signal:
    """A rule's pattern completed at a plotted point (positions are 1-based)."""

    subgroup: int
    label: str
    statistic: str
    rule: str
    words: str
    points: tuple[int, ...]


@dataclass(frozen=True)
class ShiftArl:
    """ARL after a mean shift of `shift` process standard deviations; ATS where the interval is known.

    For attribute charts `shift` is in standard errors of the plotted rate and `rate` is the rate itself.
    """

    shift: float
    arl: float
    ats_hours: float | None = None
    sdrl: float | None = None
    percentiles: dict[int, float] | None = None  # 5th, 50th and 95th percentile of the run length
    steady_state_arl: float | None = None  # conditional steady state (see core/runlength/markov.py)
    ci: tuple[float, float] | None = None  # 95% interval of the ARL where it is simulated
    rate: float | None = None


@dataclass
class Performance:
    """How the scheme in use behaves: in-control ARL, false alarms, ARL at standard mean shifts."""

    method: str
    arl_in_control: float
    shifts: list[ShiftArl]
    components: dict[str, float] = field(default_factory=dict)  # in-control ARL per chart alone
    interval_hours: float | None = None
    false_alarms_per_month: float | None = None
    curve: list[ShiftArl] = field(default_factory=list)  # ARL over a fine grid, for the performance tab
    shift_unit: str = "process standard deviations"
    sdrl_in_control: float | None = None
    steady_state_arl_in_control: float | None = None


@dataclass
class EvaluationOptions:
    """Choices that shape an evaluation; filled from settings (workbook, options, defaults)."""

    chart: str | None = None
    rules: str = "limits"
    shifts: tuple[float, ...] = STANDARD_SHIFTS
    lsl: float | None = None
    usl: float | None = None
    target: float | None = None
    limits_from: str = "all"
    standard: dict[str, float] = field(default_factory=dict)  # mean, sigma, p0, c0 given as standards
    carried: dict[str, object] | None = None  # a limits-block entry from an earlier output
    ewma_lambda: float = 0.2
    ewma_L: float = 3.0
    cusum_k: float = 0.5
    cusum_h: float = 5.0
    confidence: float = 0.95
    revise: bool = False
    interval_hours: float | None = None
    hours_per_month: float | None = None


@dataclass
class CharacteristicResult:
    """Everything computed for one characteristic."""

    characteristic: Characteristic
    sheet: str
    fit: ChartFit
    rules: list[Rule]
    signals: list[Signal]
    performance: Performance
    capability: Capability | AttributeRate | None = None
    problems: list[Problem] = field(default_factory=list)
    settings: dict[str, Setting] = field(default_factory=dict)


def choose_chart(characteristic: Characteristic) -> str:
    """The chart kind the data calls for (the choice is stated in the output)."""
    if isinstance(characteristic.data, Measurements):
        return "xbar-r"
    raise ValueError("attribute counts are not supported yet")


def evaluate(characteristic: Characteristic, sheet: str,
             options: EvaluationOptions | None = None) -> CharacteristicResult:
    """Fit the chart, apply the rules and compute the performance of one characteristic."""
    options = options or EvaluationOptions()
    chart = options.chart or choose_chart(characteristic)
    kind = CHART_KINDS[chart]()
    base = ~np.asarray(characteristic.excluded, dtype=bool)
    fit = kind.fit(characteristic, base)
    rules = parse_rules(options.rules)
    signals = find_signals(fit, rules, characteristic.labels)
    problems = [Problem("note", sheet, note) for note in fit.notes]
    if fit.sigma_within == 0:
        problems.append(Problem("warning", sheet, "every subgroup has zero spread: the limits "
                                "collapse onto the center line; check the gauge resolution"))
    return CharacteristicResult(
        characteristic=characteristic,
        sheet=sheet,
        fit=fit,
        rules=rules,
        signals=signals,
        performance=performance_of(fit, rules, options),
        problems=problems,
    )


def find_signals(fit: ChartFit, rules: list[Rule], labels: list[str]) -> list[Signal]:
    """Apply the rules to each plotted statistic in standard-error units."""
    signals: list[Signal] = []
    for stat in fit.statistics:
        with np.errstate(divide="ignore", invalid="ignore"):
            z = (stat.values - stat.center) / stat.sigma
        for hit in find_hits(z, rules):
            signals.append(Signal(
                subgroup=hit.point + 1,
                label=labels[hit.point],
                statistic=stat.name,
                rule=hit.rule.text,
                words=hit.rule.words,
                points=tuple(p + 1 for p in hit.points),
            ))
    signals.sort(key=lambda s: (s.subgroup, s.statistic))
    return signals
