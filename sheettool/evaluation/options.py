"""The evaluation's own options, and how one sheet's settings become them."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

from sheettool.core.design import REQUIREMENT_KEYS
from sheettool.core.parameters import PARAMETER_SETTINGS, CusumParameters, EwmaParameters
from sheettool.core.presets import DEFAULT_RULES
from sheettool.settings import Setting
from sheettool.settings.convert import merge

# EvaluationOptions field -> setting name, for the settings listed even when left at their default.
_DEFAULTS_SHOWN = {"chart": "chart", "rules": "rules", "lsl": "lsl", "usl": "usl", "target": "target",
                   "base_period": "base_period", "interval_hours": "interval_hours",
                   "hours_per_month": "hours_per_month", "confidence": "confidence", "revise": "revise"}
_STANDARDS = {"mean", "sigma", "p0", "c0"}
_PARAMETER_FIELDS: dict[type, str] = {EwmaParameters: "ewma", CusumParameters: "cusum"}  # type -> options field
STANDARD_SHIFTS: tuple[float, ...] = (0.0, 0.5, 1.0, 1.5, 2.0, 3.0)


@dataclass
class EvaluationOptions:
    """Choices that shape an evaluation; filled from settings (workbook, options, defaults)."""

    chart: str | None = None
    rules: str = DEFAULT_RULES
    shifts: tuple[float, ...] = STANDARD_SHIFTS
    lsl: float | None = None
    usl: float | None = None
    target: float | None = None
    base_period: str = "all"
    standard: dict[str, float] = field(default_factory=dict)  # mean, sigma, p0, c0 given as standards
    carried: dict[str, object] | None = None  # a limits-block entry from an earlier output
    ewma: EwmaParameters = field(default_factory=EwmaParameters)  # settings lambda and L
    cusum: CusumParameters = field(default_factory=CusumParameters)  # settings k and h
    confidence: float = 0.95
    revise: bool = False
    interval_hours: float | None = None
    hours_per_month: float | None = None
    requirements: dict[str, float] = field(default_factory=dict)  # see core.design.REQUIREMENT_KEYS
    part: str = ""  # with the characteristic and the sheet name: the identity carried limits are matched by
    characteristic: str = ""

    def chart_parameters(self, chart: str) -> dict[str, float]:
        """The chart's own parameters these options set, by name: lambda and L of the EWMA; k, h and the
        reference of the CUSUM (the target, when one is set)."""
        if chart == "ewma":
            return self.ewma.as_mapping()
        if chart == "cusum":
            reference = {"reference": self.target} if self.target is not None else {}
            return {**self.cusum.as_mapping(), **reference}
        return {}


def options_for(sheet_read: Any, workbook_settings: Any, cli_settings: dict[str, Setting]
                ) -> tuple[EvaluationOptions, dict[str, Setting]]:
    """EvaluationOptions for one sheet and every setting behind them with its origin.

    sheet_read: a SheetRead (its .sheet and .settings, the labelled cells); workbook_settings: the
    SettingsSheet of the workbook, or None; cli_settings: from the command line, name -> Setting.
    """
    sheet_layer = workbook_settings.for_sheet(sheet_read.sheet) if workbook_settings is not None else {}
    used = merge(sheet_layer, sheet_read.settings, cli_settings)
    options = EvaluationOptions()
    kwargs: dict[str, Any] = {}
    standard: dict[str, float] = {}
    requirements: dict[str, float] = {}
    parameters: dict[type, dict[str, float]] = {}
    for name, setting in used.items():
        if name in _STANDARDS:
            standard[name] = setting.value  # type: ignore[assignment]
        elif name in REQUIREMENT_KEYS:
            requirements[name] = setting.value  # type: ignore[assignment]
        elif name in PARAMETER_SETTINGS:
            kind, attr = PARAMETER_SETTINGS[name]
            parameters.setdefault(kind, {})[attr] = setting.value  # type: ignore[assignment]
        elif hasattr(options, name):
            kwargs[name] = setting.value
    for field_name, name in _DEFAULTS_SHOWN.items():
        used.setdefault(name, Setting(name, getattr(options, field_name), "default"))
    lsl, usl = kwargs.get("lsl"), kwargs.get("usl")
    if lsl is not None and usl is not None and lsl >= usl:
        raise ValueError(f"{used['lsl'].origin} and {used['usl'].origin}: the lower specification limit "
                         f"({lsl:g}) must be below the upper ({usl:g})")
    if standard:
        kwargs["standard"] = standard
    if requirements:
        kwargs["requirements"] = requirements
    for kind, values in parameters.items():
        name = _PARAMETER_FIELDS[kind]
        kwargs[name] = replace(getattr(options, name), **values)
    for key, value in kwargs.items():
        setattr(options, key, value)
    return options, dict(sorted(used.items()))
