"""The JSON form of the results (a stable contract for scripts): evaluations, run lengths, the reader's account."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from sheettool import tool_json
from sheettool.base.problems import Problem
from sheettool.core.capability import AttributeRate, Capability
from sheettool.core.charts import PlottedStatistic
from sheettool.core.data_shape import DataShapeReport
from sheettool.core.design import RequirementsCheck
from sheettool.core.estimated_limits import EstimatedLimitsReport
from sheettool.core.runlength.results import Performance
from sheettool.core.timing import SignalsAgainstChance
from sheettool.evaluation.results import CharacteristicResult, Event
from sheettool.evaluation.summary import chance_of
from sheettool.settings import Setting
from sheettool.workbook.reader import SheetRead
from sheettool.workbook.report import EvaluationReport


def _number(value: float) -> float | None:
    value = float(value)
    return None if math.isnan(value) else (value if math.isfinite(value) else None)


def _limit_value(values: np.ndarray) -> float | list[float | None] | None:
    if np.ptp(values) == 0:
        return _number(values[0])
    return [_number(v) for v in values]


def limits_json(stat: PlottedStatistic) -> dict[str, Any]:
    """center/lcl/ucl of one statistic: numbers, or lists where they vary by point."""
    return {"center": _limit_value(stat.center), "lcl": _limit_value(stat.lcl), "ucl": _limit_value(stat.ucl)}


def _optional(value: float | None) -> float | None:
    return None if value is None else _number(value)


def capability_json(cap: Capability | AttributeRate | None) -> dict[str, Any] | None:
    """Capability indices with their intervals, or the attribute rate with its interval."""
    if cap is None:
        return None
    if isinstance(cap, AttributeRate):
        return {"kind": cap.kind, "estimate": _number(cap.estimate), "ci": [_number(cap.ci.low), _number(cap.ci.high)],
                "confidence": cap.confidence, "count": cap.count, "units": cap.units, "method": cap.method}
    out: dict[str, Any] = {name: _optional(getattr(cap, name)) for name in
                           ("cp", "cpk", "pp", "ppk", "cpm", "ppm_out", "ppm_within", "lsl", "usl", "target", "mean",
                            "sigma_within", "sigma_overall", "normality_p", "normality_statistic")}
    out.update({
        "ci": {k: [_number(v.low), _number(v.high)] for k, v in cap.ci.items()},
        "confidence": cap.confidence,
        "sigma_method": cap.sigma_method.words if cap.sigma_method else "",
        "readings": cap.readings,
        "normality_doubtful": cap.normality_doubtful,
        "stable": cap.stable,
        "notes": list(cap.notes),
    })
    return out


def run_length_json(arl: float, sdrl: float | None, percentiles: dict[int, float] | None,
                    steady_state_arl: float | None, ci: tuple[float, float] | None) -> dict[str, Any]:
    """The run-length figures of one condition; null where a method does not give one."""
    return {
        "arl": _number(arl),
        "sdrl": _optional(sdrl),
        "percentiles": {str(k): _optional(v) for k, v in percentiles.items()} if percentiles else None,
        "steady_state_arl": _optional(steady_state_arl),
        "arl_ci95": [_number(ci[0]), _number(ci[1])] if ci else None,
    }


def performance_json(perf: Performance) -> dict[str, Any]:
    """The scheme's performance: method, in-control ARL, false alarms and the ARL at each shift."""
    shifts = []
    for s in perf.shifts:
        item: dict[str, Any] = {"shift": s.shift}
        item.update(run_length_json(s.arl, s.sdrl, s.percentiles, s.steady_state_arl, s.ci))
        item["ats_hours"] = _optional(s.ats_hours)
        if s.rate is not None:
            item["rate"] = s.rate
        shifts.append(item)
    return {
        "method": perf.method,
        "arl_in_control": _number(perf.arl_in_control),
        "shift_unit": perf.shift_unit,
        "interval_hours": perf.interval_hours,
        "false_alarms_per_month": _optional(perf.false_alarms_per_month),
        "shifts": shifts,
    }


def characteristic_json(result: CharacteristicResult) -> dict[str, Any]:
    """The JSON object of one characteristic."""
    fit = result.fit
    perf = result.performance
    origin = result.limits_origin
    return {
        "name": result.characteristic.name,
        "identity": result.identity,
        "sheet": result.sheet,
        "chart": fit.chart,
        "subgroups": result.characteristic.data.subgroups,
        "subgroup_size": fit.subgroup_size,
        "limits": {stat.name: limits_json(stat) for stat in fit.statistics},
        "signals": [{"point": s.point, "label": s.label, "statistic": s.statistic, "rules": list(s.rules),
                     "note": s.note} for s in result.signals],
        "points_signalled": result.points_signalled,
        "events": [event_json(e) for e in (*result.fitted.earlier_events, *result.events)],
        "events_open": result.events_open,
        "limits_source": fit.limits_source,
        "limits_origin": {"file": origin.file, "sheet": origin.sheet, "month": origin.month or None,
                          "period": origin.period or None, "base": origin.base or None,
                          "base_period_points": origin.subgroups, "how": origin.how or None,
                          "carried_from": origin.carried_from or None},
        "carried": None if not result.carried else {
            "matched_by": None if result.carried == "none" else result.carried},
        "base_period_points": [int(i) + 1 for i in np.flatnonzero(fit.base)],
        "removed": list(fit.removed),
        "capability": capability_json(result.capability),
        "performance": performance_json(perf),
        "estimated_limits": estimated_limits_json(result.estimated_limits),
        "data_shape": data_shape_json(result.data_shape),
        "requirements": requirements_json(result.requirements_check),
        "signals_against_chance": chance_json(chance_of(result)),
    }


def chance_json(chance: SignalsAgainstChance) -> dict[str, Any]:
    """Points signalled beside the false alarms expected over the points plotted, and the chance of as many."""
    return {"points": chance.points, "points_signalled": chance.signalled,
            "false_alarms_expected": chance.expected, "chance_from_false_alarms": chance.probability}


def event_json(event: Event) -> dict[str, Any]:
    """One event: its points, the rules broken, the input's note and what the action log says of it."""
    return {"first_point": event.first_point, "last_point": event.last_point, "points": list(event.points),
            "first_label": event.first_label, "last_label": event.last_label, "rules": list(event.rules),
            "note": event.note, "cause": event.cause, "action": event.action, "by": event.by, "date": event.date,
            "closed": event.closed, "open": event.is_open, "found_in": event.found_in or None}


def estimated_limits_json(rep: EstimatedLimitsReport | None) -> dict[str, Any] | None:
    """The cost of estimated limits: the conditional in-control ARL's spread and the two remedies."""
    if rep is None:
        return None
    d = rep.distribution
    return {"carl_mean": _number(d.mean), "carl_sd": _number(d.sd), "carl_p10": _number(d.p10),
            "carl_p50": _number(d.p50), "adjusted_factor": _number(rep.adjusted.factor),
            "subgroups_needed": rep.needed.subgroups, "sentence": rep.sentence, "method": rep.method}


def data_shape_json(rep: DataShapeReport | None) -> dict[str, Any] | None:
    """The in-control ARL under the data's fitted shape and, when r1 is material, under AR(1) dependence."""
    if rep is None:
        return None
    dep = rep.dependence
    return {"family": rep.shape.family, "arl_normal": _number(rep.shape.arl_normal),
            "arl_shape": _number(rep.shape.arl_shape), "r1": _number(dep.r1), "significant": bool(dep.significant),
            "arl_ar1": _number(dep.arl_ar1) if dep.significant else None, "warnings": list(rep.warnings),
            "method": rep.method}


def requirements_json(check: RequirementsCheck | None) -> dict[str, Any] | None:
    """Whether the scheme in use meets the requirements of the settings, item by item."""
    if check is None:
        return None
    return {"met": check.met, "shift": check.shift,
            "items": [{"name": i.name, "required": i.required, "achieved": _optional(i.achieved), "met": i.met,
                       "words": i.words} for i in check.items]}


def report_json(report: EvaluationReport) -> dict[str, Any]:
    """The whole report as one JSON-ready object."""
    problems = report.problems + [p for c in report.characteristics for p in c.problems]
    return {
        "tool": tool_json(),
        "input": str(report.input),
        "input_sha256": report.input_sha256,
        "output": str(report.output) if report.output else None,
        "characteristics": [{**characteristic_json(s.result), **reader_json(s.result.settings, s.read)}
                            for s in report.sheets],
        "problems": [problem_json(p) for p in problems],
    }


def reader_json(settings: dict[str, Setting], read: SheetRead | None) -> dict[str, Any]:
    """The "settings" (value and origin of each) and "read" (what the reader took from the sheet) keys."""
    out: dict[str, Any] = {"settings": {name: {"value": s.value, "origin": s.origin} for name, s in settings.items()}}
    if read is not None:
        ch = read.characteristic
        out["read"] = {
            "sheet": read.sheet, "header_row": read.header_row, "units_row": read.units_row or None,
            "first_row": read.first_row, "last_row": read.last_row, "layout": read.layout,
            "columns": read.columns, "subgroups": read.subgroups, "readings": read.readings,
            "blanks": read.blanks, "blank_rows": read.blank_rows, "not_numbers": read.not_numbers,
            "short_subgroups": read.short_subgroups,
            "excluded": [{"point": int(i) + 1, "label": ch.labels[i], "note": ch.notes[i]}
                         for i in np.flatnonzero(ch.excluded)],
            "hidden_rows": read.hidden_rows, "hidden_columns": read.hidden_columns,
            "formulas_without_value": read.formulas_without_value, "unit": ch.unit or None,
        }
    return out


def problem_json(problem: Problem, source: str = "") -> dict[str, Any]:
    """A problem: its severity, its place in words and as fields, and the message."""
    where = f"{source}: {problem.where}" if source else problem.where
    return {"severity": problem.severity, "where": where, "file": problem.file or None,
            "sheet": problem.sheet or None, "cell": problem.cell or None, "message": problem.message}
