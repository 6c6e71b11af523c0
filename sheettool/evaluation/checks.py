"""The extra checks `evaluate` makes on a fitted chart: the cost of estimated limits, the data's own shape and
whether the scheme in use meets the requirements of the settings. A failure in one becomes a note, never a crash.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from sheettool.base.problems import Problem
from sheettool.core.charts import ChartFit
from sheettool.core.data import Characteristic, Measurements
from sheettool.core.data_shape import DataShapeReport, ShapeScheme, data_shape_report
from sheettool.core.design import Requirements, RequirementsCheck, check_requirements
from sheettool.core.estimated_limits import EstimatedLimitsReport
from sheettool.core.rules import Rule
from sheettool.core.runlength.results import Performance
from sheettool.core.runlength.scheme import ATTRIBUTES, Scheme, scheme_of, scheme_run_lengths
from sheettool.core.scheme_limits import scheme_estimated_limits, scheme_words
from sheettool.core.timing import in_control_target
from sheettool.evaluation.options import EvaluationOptions

_SHEWHART_VARIABLES = ("xbar-r", "xbar-s", "individuals")
# the report depends on (scheme, m, estimator, target) only: one computation per base-period shape (read-only results)
_estimated_limits_report = lru_cache(maxsize=256)(scheme_estimated_limits)
# Limits "meet" the target when their in-control ARL is at least 90% of it: the exceedance criterion of Goedhart,
# Schoonhoven and Does (2017) with a tolerance; with none, no finite base period reaches even the known-parameter ARL.
ASSURANCE_TOLERANCE = 0.1


@dataclass
class SchemeChecks:
    """What the extra checks found for one characteristic, and the problems they raise."""

    estimated_limits: EstimatedLimitsReport | None = None
    data_shape: DataShapeReport | None = None
    requirements: RequirementsCheck | None = None
    problems: list[Problem] = field(default_factory=list)


def scheme_checks(characteristic: Characteristic, fit: ChartFit, rules: list[Rule], performance: Performance,
                  options: EvaluationOptions, sheet: str) -> SchemeChecks:
    """Run the three checks that apply to this chart; each failure is reported as a note problem."""
    out = SchemeChecks()
    scheme = scheme_of(fit, rules)  # the scheme every figure judges: chart, spread chart, rules, n
    steps = [("the cost of estimated limits", lambda: _estimated(fit, scheme, options)),
             ("the data's shape", lambda: _shape(characteristic, fit, scheme)),
             ("the requirements", lambda: _requirements(fit, rules, performance, options))]
    for (what, step), name in zip(steps, ("estimated_limits", "data_shape", "requirements"), strict=True):
        try:
            setattr(out, name, step())
        except ValueError as exc:
            out.problems.append(Problem("note", f"{what} not computed: {exc}", sheet=sheet))
    if out.estimated_limits is not None:
        out.problems.append(Problem("note", f"estimated limits: {out.estimated_limits.sentence}", sheet=sheet))
    for warning in out.data_shape.warnings if out.data_shape else []:
        out.problems.append(Problem("warning", f"data shape: {warning}", sheet=sheet))
    for item in out.requirements.items if out.requirements else []:
        if item.met is not True:
            out.problems.append(Problem("warning", f"requirement {item.name}: {item.words}", sheet=sheet))
    return out


def _estimated(fit: ChartFit, scheme: Scheme, options: EvaluationOptions) -> EstimatedLimitsReport | None:
    """For X-bar and individuals limits whose mean and sigma both came from this base period: the whole scheme."""
    given = set(options.standard) & {"mean", "sigma"}
    key = fit.sigma_method.modelled
    if fit.chart not in _SHEWHART_VARIABLES or options.carried is not None or given or key is None:
        return None
    if not fit.base.any():
        return None
    return _estimated_limits_report(scheme, int(fit.base.sum()), key, target=_in_control_target(options),
                                    tolerance=ASSURANCE_TOLERANCE)


def _in_control_target(options: EvaluationOptions) -> float:
    """The in-control ARL the limits should give, by the rule `design` uses too (`timing.in_control_target`): the
    stricter of a required ARL and the one a false-alarms-per-month requirement implies at the sampling interval
    and production hours, else that of 3-sigma limits with known mean and sigma, 370.4."""
    req = options.requirements
    return in_control_target(req.get("arl_in_control"), req.get("false_alarms_per_month"), options.interval_hours,
                             options.hours_per_month)


def _shape(characteristic: Characteristic, fit: ChartFit, scheme: Scheme) -> DataShapeReport | None:
    """For variables charts: the base period's readings (all subgroups in use when limits were not estimated)."""
    data = characteristic.data
    if not isinstance(data, Measurements):
        return None
    rows = fit.base if fit.base.any() else ~np.asarray(characteristic.excluded, dtype=bool)
    values = data.values[rows]
    if fit.subgroup_size == 1:
        values = values[:, 0]
        values = values[np.isfinite(values)]
    judged = ShapeScheme(rules=scheme.rules, companion=scheme.companion, words=scheme_words(scheme),
                         n=int(fit.subgroup_size))
    return data_shape_report(values, int(fit.subgroup_size), scheme=judged)


def _requirements(fit: ChartFit, rules: list[Rule], performance: Performance,
                  options: EvaluationOptions) -> RequirementsCheck | None:
    """Whether the scheme in use meets the requirements of the settings, by the engine's ARL at their shift."""
    if not options.requirements:
        return None
    req = Requirements.from_mapping(options.requirements, hours_per_month=options.hours_per_month,
                                    sigma=fit.sigma_within if fit.sigma_within > 0 else None)
    shift = req.delta()
    known = [s for s in performance.shifts if s.shift == shift]
    if known:
        arl = known[0].arl
    else:
        scheme = scheme_of(fit, rules)
        condition = scheme.count_model.rate_at(shift) if scheme.chart in ATTRIBUTES else shift
        arl = scheme_run_lengths(scheme, [(condition, 1.0)], full=False).results[0].arl
    return check_requirements(req, performance.arl_in_control, arl, options.interval_hours, shift)
