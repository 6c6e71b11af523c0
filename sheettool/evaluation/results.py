"""What an evaluation hands back: the fitted chart with its signals, the scheme's assessment, and both together.

`Fitted` (from `fit_characteristic`) needs no run-length engine; `Assessment` (from `assess`) is how the scheme
behaves and what the extra checks found; `CharacteristicResult` is made of both and reads like either.
"""

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

__all__ = ["Assessment", "CharacteristicResult", "Fitted", "Performance", "ShiftArl", "Signal"]


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
class Fitted:
    """A characteristic's chart: its limits, the rules applied, the signals, capability and the fit's problems."""

    characteristic: Characteristic
    sheet: str
    fit: ChartFit
    rules: list[Rule]
    signals: list[Signal]
    capability: Capability | AttributeRate | None = None
    problems: tuple[Problem, ...] = ()


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
