"""Evaluate one characteristic in two steps: fit its chart (limits, signals, capability), then assess the scheme
(run lengths and the extra checks).

Pure computation over the core: a Characteristic in, a CharacteristicResult out. `fit_characteristic` needs no
run-length engine, so limits and signals can be computed and tested alone; `evaluate` is both steps.
"""

from __future__ import annotations

import numpy as np

from sheettool.base.problems import Problem
from sheettool.core.capability import AttributeRate, Capability, attribute_rate, check_specs, process_capability
from sheettool.core.charts import CHART_KINDS, ChartFit, ChartKind, chart_kind
from sheettool.core.charts.base import typical_size
from sheettool.core.charts.variables import within_sigma
from sheettool.core.data import Characteristic, Counts, Measurements
from sheettool.core.limits import fit_limits
from sheettool.core.parameters import EwmaParameters
from sheettool.core.presets import DEFAULT_RULES
from sheettool.core.rules import Rule, find_hits, parse_rules, standardized
from sheettool.core.runlength.ewma import limits_as_drawn
from sheettool.core.runlength.scheme import performance_of
from sheettool.evaluation.carried import carried_origin, carried_parameters
from sheettool.evaluation.checks import scheme_checks
from sheettool.evaluation.events import events_of, identity_of
from sheettool.evaluation.options import EvaluationOptions
from sheettool.evaluation.results import Assessment, CharacteristicResult, Fitted, Signal


def chart_choice(characteristic: Characteristic) -> tuple[str, str]:
    """The chart kind the data calls for, and why in words (stated in the output).

    Variables: one reading per subgroup -> individuals, 2 to 9 -> xbar-r, 10 or more -> xbar-s, by the
    usual subgroup size (Montgomery 2009, sec. 6.3). Counts: with the same number inspected in
    every subgroup the count itself is plotted (np, c), which reads directly; otherwise the
    proportion or rate (p, u) with limits per point.
    """
    data = characteristic.data
    if isinstance(data, Counts):
        seen = data.inspected[~np.isnan(data.counts)]
        same = bool(seen.size and np.ptp(seen) == 0)
        if data.kind == "defectives":
            if same:
                return "np", f"np chart: defectives counted among {seen[0]:g} unit(s) inspected each time"
            return "p", "p chart: defectives with a varying number inspected (limits per point)"
        if data.kind == "defects":
            if same:
                return "c", f"c chart: defects counted on {seen[0]:g} unit(s) inspected each time"
            return "u", "u chart: defects with a varying number inspected (limits per point)"
        raise ValueError(f"counts of kind '{data.kind}' are not known; use defectives or defects")
    n = typical_size(data.sizes)
    if n == 1:
        return "individuals", "individuals and moving range chart: one reading per subgroup"
    if n < 10:
        return "xbar-r", f"X-bar and R chart: subgroups of {n} readings (2 to 9)"
    return "xbar-s", f"X-bar and S chart: subgroups of {n} readings (10 or more)"


def _standard_values(kind: ChartKind, standard: dict[str, float]) -> tuple[dict[str, float], list[str]]:
    """The standard values that apply to `kind` (c0 stands for u0 on a u chart), and the unused names."""
    values = dict(standard)
    if "u0" in kind.needs and "u0" not in values and "c0" in values:
        values["u0"] = values.pop("c0")
    if "sigma" in values and not float(values["sigma"]) > 0:
        raise ValueError(f"the standard sigma must be positive, got {values['sigma']}")
    used = {k: float(v) for k, v in values.items() if k in kind.needs}
    return used, sorted(k for k in values if k not in kind.needs)


def evaluate(characteristic: Characteristic, sheet: str,
             options: EvaluationOptions | None = None) -> CharacteristicResult:
    """Fit the chart and assess the scheme: `fit_characteristic`, then `assess`."""
    options = options or EvaluationOptions()
    fitted = fit_characteristic(characteristic, sheet, options)
    return CharacteristicResult(fitted, assess(fitted, options))


def fit_characteristic(characteristic: Characteristic, sheet: str,
                       options: EvaluationOptions | None = None) -> Fitted:
    """Choose the chart, fit it with limits from their source, apply the rules and compute capability."""
    options = options or EvaluationOptions()
    check_specs(options.lsl, options.usl)
    given: dict[str, float] = {}
    words, origin, notes = "", "", []
    if options.carried is not None:
        chart, given, words, origin = carried_parameters(options.carried)
        if options.chart and options.chart.strip().lower() != chart:
            raise ValueError(f"the carried limits are for a {chart} chart but the chart setting is "
                             f"{options.chart}; remove one of the two")
        why = f"{chart} chart, as in the carried limits"
    elif options.chart:
        chart, why = options.chart, f"{options.chart} chart, as set"
    else:
        chart, why = chart_choice(characteristic)
    kind = chart_kind(chart)
    if options.carried is None and options.standard:
        given, unused = _standard_values(kind, options.standard)
        words = "standard values: " + ", ".join(f"{k} = {v:g}" for k, v in given.items()) if given else ""
        if unused:
            notes.append(f"standard value(s) {', '.join(unused)} do not apply to a {kind.title} chart; not used")
    chosen = options.chart_parameters(kind.name)
    fit = fit_limits(kind, characteristic, options.base_period, {**chosen, **given}, words, options.revise)
    fit.notes[:0] = [why, *notes]
    fit.origin = origin
    if kind.time_weighted:
        rules = parse_rules(kind.signal_rule(fit))
        if parse_rules(options.rules) != parse_rules(DEFAULT_RULES):
            fit.notes.append(f"pattern rules are not applied to a {kind.title} chart (its points are not "
                             "independent); it signals when a point crosses a limit")
    else:
        rules = parse_rules(options.rules)
    flat = fit.sigma_within == 0 and isinstance(characteristic.data, Measurements)  # limits on the center line
    signals = [] if flat else find_signals(fit, rules, characteristic.labels, characteristic.notes)
    capability = capability_of(characteristic, fit, bool(signals), options)
    carried_n = (options.carried or {}).get("subgroup_size")
    if carried_n is not None and carried_n != fit.subgroup_size and isinstance(characteristic.data, Measurements):
        fit.notes.append(f"the carried limits were set on subgroups of {carried_n}, these have {fit.subgroup_size}: "
                         "the limits follow each subgroup's size from the carried mean and sigma")
    problems = [Problem("note", note, sheet=sheet) for note in fit.notes]
    if fit.sigma_within == 0:
        collapse = ("the readings do not vary in the base period (zero spread): limits collapse "
                    "to the center line; no signals judged; check the gauge resolution") if flat else (
                    "no count in the base period: the limits collapse onto zero; give a standard value (p0, c0) "
                    "or a longer base period")
        problems.append(Problem("warning", collapse, sheet=sheet))
    for note in getattr(capability, "notes", []):
        warn = note.startswith(("normality is doubtful", "the chart signals"))
        problems.append(Problem("warning" if warn else "note", f"capability: {note}", sheet=sheet))
    return Fitted(characteristic=characteristic, sheet=sheet, fit=fit, rules=rules, signals=signals,
                  capability=capability, problems=tuple(problems),
                  identity=identity_of(options.part, options.characteristic, sheet),
                  events=tuple(events_of(signals, characteristic.labels, characteristic.notes)),
                  carried_origin=carried_origin(options.carried) if options.carried is not None else None)


def assess(fitted: Fitted, options: EvaluationOptions | None = None) -> Assessment:
    """How the fitted scheme behaves (run lengths at the shifts), and the extra checks on it."""
    options = options or EvaluationOptions()
    performance = performance_of(fitted.fit, fitted.rules, options)
    if fitted.fit.chart == "ewma":  # the ARL of the exact, widening limits the chart draws
        performance = limits_as_drawn(performance, EwmaParameters.from_mapping(fitted.fit.parameters),
                                      fitted.fit.parameters["n"], options.hours_per_month)
    checks = scheme_checks(fitted.characteristic, fitted.fit, fitted.rules, performance, options, fitted.sheet)
    return Assessment(performance=performance, estimated_limits=checks.estimated_limits,
                      data_shape=checks.data_shape, requirements_check=checks.requirements,
                      problems=tuple(checks.problems))


def capability_of(characteristic: Characteristic, fit: ChartFit, signals: bool,
                  options: EvaluationOptions) -> Capability | AttributeRate | None:
    """Capability of this evaluation's data (excluded subgroups left out): indices when specs are
    given for measurements, the average proportion or rate for counts, else None."""
    use = ~np.asarray(characteristic.excluded, dtype=bool)
    data = characteristic.data
    if isinstance(data, Counts):
        ok = use & ~np.isnan(data.counts)
        kind = "proportion" if data.kind == "defectives" else "rate"
        return attribute_rate(float(np.sum(data.counts[ok])), float(np.sum(data.inspected[ok])), kind,
                              options.confidence)
    if options.lsl is None and options.usl is None:
        return None
    sigma, method = within_sigma(data.values, use, CHART_KINDS[fit.chart].sigma_estimator)
    return process_capability(data.values[use], sigma, options.lsl, options.usl, options.target,
                              options.confidence, stable=not signals, sigma_method=method)


def find_signals(fit: ChartFit, rules: list[Rule], labels: list[str], notes: list[str] | None = None
                 ) -> list[Signal]:
    """The signalled points: per statistic, each point with every rule it broke (the location chart under the
    rules, a spread chart under its limits alone, in standard errors), and the input's note of its subgroup.

    Pattern rules assume normal, independent points: a subgroup range or standard deviation is skewed, and
    successive moving ranges share a reading, so on a spread chart only a point beyond a limit signals.
    """
    found: dict[tuple[int, str], list[Rule]] = {}
    for stat in fit.statistics:
        stat_rules = list(SPREAD_RULES) if stat.name in SPREAD_STATISTICS else rules
        for hit in find_hits(standardized(stat.values, stat.center, stat.sigma, stat_rules), stat_rules):
            broken = found.setdefault((hit.point, stat.name), [])
            if hit.rule not in broken:
                broken.append(hit.rule)
    order = {s.name: i for i, s in enumerate(fit.statistics)}
    return [Signal(point=i + 1, label=labels[i], statistic=name, rules=tuple(r.text for r in broken),
                   note=notes[i] if notes else "")
            for (i, name), broken in sorted(found.items(), key=lambda kv: (kv[0][0], order[kv[0][1]]))]


# the spread charts of X-bar and R, X-bar and S, individuals and moving range
SPREAD_STATISTICS = ("range", "sd", "moving_range")
SPREAD_RULES: tuple[Rule, ...] = tuple(parse_rules("beyond-limits"))  # a spread chart signals beyond its limits only
