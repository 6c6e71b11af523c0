"""Carried limits: what the limits block keeps of a characteristic, and those limits back as typed parameters.

The block's sheet is read and written by sheettool.workbook.limits_block; this module holds only the entries:
what one keeps, whether one read back can be trusted (`entry_problem`), and its limits as parameters.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from sheettool.evaluation.events import identity_key
from sheettool.evaluation.results import CharacteristicResult, Fitted, LimitsOrigin
from sheettool.evaluation.summary import pack_key


def _finite(value: float) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


_ORIGIN_TEXTS = ("file", "sheet", "month", "period", "base", "how")


def limits_entry(result: Fitted | CharacteristicResult) -> dict[str, Any]:
    """What the block keeps of one characteristic: enough to apply the same limits next month.

    process_mean and sigma_within (variables, EWMA, CUSUM) and the chart parameters (p0, c0, u0,
    lambda, L, k, h, reference, n) rebuild the limits through `carried_parameters`; `identity` is what
    next month's characteristic is matched by; `origin` (file, sheet, month and base subgroups that set
    the limits) travels unchanged with carried limits; `limits` (first point) and `limits_source` are
    for people reading the block.
    """
    fit = result.fit
    origin = result.limits_origin if isinstance(result, CharacteristicResult) else result.origin_in("")
    return {
        "identity": result.identity,
        "origin": {**{k: getattr(origin, k) for k in _ORIGIN_TEXTS}, "subgroups": origin.subgroups},
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
_TEXTS = ("sheet", "chart", "key", "sigma_method", "limits_source", "set_by", "identity")


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
    origin = entry.get("origin", {})
    if not isinstance(origin, dict) or any(not isinstance(origin.get(k, ""), str) for k in _ORIGIN_TEXTS) \
            or not _is_number(origin.get("subgroups", 0)):
        return "origin is not an object of file, sheet, month, period, base and subgroups"
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


def carried_origin(entry: dict[str, Any]) -> LimitsOrigin:
    """Where a block entry's limits were first set (blocks written before origins were kept: their source in
    words), and the output they were read from."""
    origin = entry.get("origin") or {}
    how = "" if origin else str(entry.get("set_by") or entry.get("limits_source") or "")
    return LimitsOrigin(**{k: str(origin.get(k) or "") for k in _ORIGIN_TEXTS if k != "how"},
                        subgroups=int(origin.get("subgroups") or 0), how=str(origin.get("how") or how),
                        carried_from=str(entry.get("read_from") or ""))


@dataclass(frozen=True)
class Match:
    """The block entry carried to one characteristic (None when none matched) and how it was found, in words."""

    entry: dict[str, Any] | None
    how: str = ""
    warning: str = ""  # said where the match was by name alone, or none was found


def match_entry(entries: dict[str, dict[str, Any] | None], identity: str, sheet: str, source: str) -> Match:
    """The entry whose limits this characteristic carries: the same identity (part, characteristic, sheet); among
    several, or where none has it, the entry written under the same file and sheet name (a pack's "source :: sheet",
    or the sheet of a single workbook's block), said as a warning since names are a last resort."""
    if sheet in entries and entries[sheet] is None:  # the caller chose the sheet's own base period
        return Match(None, "own base period")
    key = identity_key(identity)
    same = [k for k, e in entries.items() if e is not None and identity_key(str(e.get("identity") or "")) == key]
    named = [k for k in (pack_key(source, sheet), sheet) if entries.get(k) is not None]
    if len(same) == 1:
        return Match(entries[same[0]], "identity")
    chosen = next((k for k in named if k in same), None)
    if chosen is not None:
        return Match(entries[chosen], "identity and file name")
    entry = (entries[named[0]] or {}) if named else {}
    theirs = str(entry.get("identity") or "")
    if named and _compatible(identity_key(theirs), key):
        why = f"its identity was '{theirs}', this one is '{identity}'" if theirs else "it has no identity"
        return Match(entry, "file name", f"carried limits matched by file and sheet name only ({why}); check that "
                                         "they are this characteristic's")
    if same:
        return Match(None, "", f"{len(same)} characteristics in the limits file share the identity '{identity}' and "
                               "none has this file's name; give each a part or characteristic cell; its limits come "
                               "from its own base period")
    return Match(None, "", f"no carried limits for identity '{identity}'; its limits come from its own base period"
                 + (f" (the entry of the same file and sheet name is for '{theirs}')" if named else ""))


def _compatible(theirs: str, ours: str) -> bool:
    """Two identities that may name one characteristic: either has no identity, or one's parts hold the other's (a
    part or characteristic cell added or removed since); a different part or characteristic never matches."""
    a, b = set(theirs.split(" / ")) - {""}, set(ours.split(" / ")) - {""}
    return not a or a <= b or b <= a
