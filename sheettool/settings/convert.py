"""Settings checked and converted to typed values, and the layers of settings merged, each keeping its origin.

Priority, lowest first: built-in default, the settings sheet (whole workbook, then the sheet's own
section), labelled cells above the sheet's header, command-line options. A bad value raises
ValueError naming where it was written ("'Bore'!B3: upper specification limit must be a number").
"""

from __future__ import annotations

import math
import re

from sheettool.core.charts import CHART_KINDS
from sheettool.core.design import REQUIREMENT_KEYS, Requirements
from sheettool.core.parameters import PARAMETER_SETTINGS
from sheettool.core.rules import parse_rules
from sheettool.settings.names import KNOWN_SETTINGS, MINUTE_FORMS, Setting, label_key
from sheettool.settings.typed_text import number_text

_NUMBERS = {"lsl", "usl", "target", "interval_hours", "hours_per_month", "mean", "sigma", "p0", "c0",
            "confidence", *PARAMETER_SETTINGS, *REQUIREMENT_KEYS}
_IN_HOURS = {"interval_hours", "ats_hours"}  # a value may say "30 min"
_TEXTS = {"unit", "part", "characteristic", "base_period"}
_WITH_UNIT = re.compile(r"^\s*([+-]?[\d.,]+(?:[eE][+-]?\d+)?)\s*([A-Za-zµμ°%/]{0,8})\s*$")
_MINUTES = {"min", "mins", "minute", "minutes", "m"}
_HOURS = {"", "h", "hr", "hrs", "hour", "hours"}
_YES = {"yes", "y", "true", "1", "on", "x"}
_NO = {"no", "n", "false", "0", "off", ""}
_ALTERNATIVES = (("shift", "shift_in_units", "give the shift to detect in process standard deviations or in the "
                  "characteristic's unit, not both"),)  # one or the other, never both


def _number(setting: Setting) -> tuple[float, str]:
    value = setting.value
    if isinstance(value, int | float) and not isinstance(value, bool):
        return float(value), ""
    text = str(value)
    if (plain := number_text(text)) is not None:
        return plain, ""
    if m := _WITH_UNIT.match(text):
        number = number_text(m.group(1))
        if number is not None:
            return number, m.group(2).lower()
    raise ValueError(f"{setting.origin}: {KNOWN_SETTINGS.get(setting.name, setting.name)} must be a number, "
                     f"not '{text}'")


def convert(setting: Setting) -> Setting:
    """The setting with its value checked and converted (numbers, chart name, rules, yes/no)."""
    name, value, origin = setting.name, setting.value, setting.origin
    if name in MINUTE_FORMS:
        minutes, _ = _number(setting)
        return convert(Setting(MINUTE_FORMS[name], minutes / 60.0, origin))
    if name in _NUMBERS:
        number, unit = _number(setting)
        if not math.isfinite(number):
            raise ValueError(f"{origin}: {KNOWN_SETTINGS[name]} must be a finite number, not '{value}'")
        if name in _IN_HOURS and unit in _MINUTES:
            number /= 60.0
        elif name in _IN_HOURS and unit not in _HOURS:
            raise ValueError(f"{origin}: {KNOWN_SETTINGS[name]} '{value}': give hours (h) or minutes (min)")
        if name == "confidence" and 1.0 < number < 100.0:
            number /= 100.0  # "95" or "95 %"
        if name in ("interval_hours", "hours_per_month", "sigma", "lambda", "L", "h") and number <= 0:
            raise ValueError(f"{origin}: {KNOWN_SETTINGS[name]} must be greater than zero, not '{value}'")
        if name in ("confidence", "lambda", "p0") and not 0.0 < number < 1.0 + (name == "lambda"):
            raise ValueError(f"{origin}: {KNOWN_SETTINGS[name]} must lie between 0 and 1, not '{value}'")
        if name in REQUIREMENT_KEYS:
            try:  # the checks of the design's requirements, said with the cell
                Requirements(**{name: number})
            except ValueError as exc:
                raise ValueError(f"{origin}: {KNOWN_SETTINGS[name]}: {exc}") from None
        if name in PARAMETER_SETTINGS:
            kind, attr = PARAMETER_SETTINGS[name]
            try:  # the checks of the chart parameters, said with the cell
                kind(**{attr: number})
            except ValueError as exc:
                raise ValueError(f"{origin}: {exc}") from None
        return Setting(name, number, origin)
    if name == "subgroup_size":
        number, _ = _number(setting)
        if not number.is_integer() or number < 1:
            raise ValueError(f"{origin}: subgroup size must be a whole number of at least 1, not '{value}'")
        return Setting(name, int(number), origin)
    if name == "chart":
        wanted = label_key(str(value))
        for kind in CHART_KINDS:
            if label_key(kind) == wanted:
                return Setting(name, kind, origin)
        raise ValueError(f"{origin}: unknown chart '{value}'; use one of {', '.join(CHART_KINDS)}")
    if name == "rules":
        text = str(value).strip()
        try:
            parse_rules(text)
        except ValueError as exc:
            raise ValueError(f"{origin}: rules '{text}': {exc}") from None
        return Setting(name, text, origin)
    if name in ("revise", "new_limits"):
        word = str(value).strip().lower()
        if word not in _YES | _NO:
            raise ValueError(f"{origin}: {name} must be yes or no, not '{value}'")
        return Setting(name, word in _YES, origin)
    if name in _TEXTS:
        text = str(int(value)) if isinstance(value, float) and value.is_integer() else str(value).strip()
        return Setting(name, text, origin)
    raise ValueError(f"{origin}: unknown setting '{name}'")


def merge(*layers: dict[str, Setting]) -> dict[str, Setting]:
    """Later layers win; every value converted (so a bad value anywhere in use is reported). A setting
    also replaces its alternative from an earlier layer (the shift in sigmas or in units)."""
    merged: dict[str, Setting] = {}
    for layer in layers:
        converted = [convert(setting) for setting in layer.values()]
        names = {s.name: s for s in converted}
        for one, other, words in _ALTERNATIVES:
            if one in names and other in names:
                raise ValueError(f"{names[one].origin} and {names[other].origin}: {words}")
        for setting in converted:
            for one, other, _ in _ALTERNATIVES:
                if setting.name in (one, other):
                    merged.pop(other if setting.name == one else one, None)
            merged[setting.name] = setting
    return merged
