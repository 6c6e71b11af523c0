"""Carried limits: what the limits block keeps of a characteristic, and those limits back as typed parameters.

The block's sheet is read and written by sheettool.workbook.limits_block; this module holds only the entries:
what one keeps, whether one read back can be trusted (`entry_problem`), and its limits as parameters.
"""

from __future__ import annotations

import math
from typing import Any

from sheettool.evaluation.results import CharacteristicResult, Fitted


def _finite(value: float) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


def limits_entry(result: Fitted | CharacteristicResult) -> dict[str, Any]:
    """What the block keeps of one characteristic: enough to apply the same limits next month.

    process_mean and sigma_within (variables, EWMA, CUSUM) and the chart parameters (p0, c0, u0,
    lambda, L, k, h, reference, n) rebuild the limits through `carried_parameters`; `limits`
    (first point) and `limits_source` are for people reading the block.
    """
    fit = result.fit
    return {
        "sheet": result.sheet,
        "chart": fit.chart,
        "subgroup_size": fit.subgroup_size,
        "process_mean": _finite(fit.process_mean),
        "sigma_within": _finite(fit.sigma_within),
        "sigma_method": fit.sigma_words,
        "parameters": {k: _finite(v) for k, v in fit.parameters.items()},
        "limits_source": fit.limits_source,
        "set_by": fit.origin or fit.limits_source,
        "limits": {s.name: {"center": _finite(s.center[0]), "lcl": _finite(s.lcl[0]), "ucl": _finite(s.ucl[0])}
                   for s in fit.statistics},
    }


# Chart codes that blocks written by earlier versions hold, and the code each is now.
EARLIER_CHART_CODES = {"i-mr": "individuals"}
_TEXTS = ("sheet", "chart", "key", "sigma_method", "limits_source", "set_by")


def entry_problem(entry: dict[str, Any]) -> str:
    """What makes a limits-block entry unfit to carry, in words ("" when it is fit): the types `limits_entry`
    writes, every number finite, sigma above zero, and each series' LCL <= center <= UCL."""
    if not isinstance(entry.get("sheet"), str) or not isinstance(entry.get("chart"), str):
        return "the entry has no sheet name or chart kind"
    for key in _TEXTS:
        if entry.get(key) is not None and not isinstance(entry[key], str):
            return f"{key} is not text"
    size = entry.get("subgroup_size")
    if size is not None and (not _is_number(size) or size < 1):
        return f"subgroup_size {size!r} is not a positive number"
    for key in ("process_mean", "sigma_within"):
        if entry.get(key) is not None and not _is_number(entry[key]):
            return f"{key} {entry[key]!r} is not a finite number"
    if entry.get("sigma_within") is not None and entry["sigma_within"] <= 0:
        return f"sigma_within {entry['sigma_within']!r} is not above zero"
    parameters = entry.get("parameters", {})
    if not isinstance(parameters, dict):
        return "parameters is not an object of numbers"
    for name, value in parameters.items():
        if value is not None and not _is_number(value):
            return f"parameter {name} {value!r} is not a finite number"
    limits = entry.get("limits", {})
    if not isinstance(limits, dict) or not all(isinstance(v, dict) for v in limits.values()):
        return "limits is not an object of center, lcl and ucl per series"
    for series, line in limits.items():
        values = [line.get(k) for k in ("lcl", "center", "ucl")]
        if any(v is not None and not _is_number(v) for v in values):
            return f"the limits of {series} are not finite numbers"
        known = [v for v in values if v is not None]
        if known != sorted(known):
            return f"the limits of {series} are out of order (LCL <= center <= UCL)"
    return ""


def _is_number(value: object) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool) and math.isfinite(value)


def carried_parameters(entry: dict[str, Any]) -> tuple[str, dict[str, float], str, str]:
    """(chart, given parameters, words, origin) that apply a block entry's limits to new data.

    origin says how the limits were first set, carried unchanged through every later month.
    """
    try:
        chart = EARLIER_CHART_CODES.get(str(entry["chart"]), str(entry["chart"]))
        given = {k: float(v) for k, v in entry.get("parameters", {}).items() if v is not None and k != "n"}
        for key, name in (("process_mean", "mean"), ("sigma_within", "sigma")):
            if entry.get(key) is not None:
                given[name] = float(entry[key])
    except (KeyError, TypeError, ValueError, AttributeError):
        raise ValueError("the carried limits entry is incomplete or damaged; evaluate with a base period "
                         "instead") from None
    where = f" from {entry['read_from']}" if entry.get("read_from") else ""
    origin = str(entry.get("set_by") or entry.get("limits_source") or "")
    return chart, given, f"carried{where}" + (f" (first set by {origin})" if origin else ""), origin
