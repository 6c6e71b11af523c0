"""What an evaluation hands back: the signals and everything computed for one characteristic."""

from __future__ import annotations

from dataclasses import dataclass, field

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

__all__ = ["CharacteristicResult", "Performance", "ShiftArl", "Signal"]


@dataclass(frozen=True)
class Signal:
    """A rule's pattern completed at a plotted point (positions are 1-based)."""

    subgroup: int
    label: str
    statistic: str
    rule: str
    words: str
    points: tuple[int, ...]


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
    estimated_limits: EstimatedLimitsReport | None = None  # X-bar and individuals limits estimated from data
    data_shape: DataShapeReport | None = None  # variables charts: the base period's shape and dependence
    requirements_check: RequirementsCheck | None = None  # when the settings give requirements
