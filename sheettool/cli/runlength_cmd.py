"""`sheettool runlength`: how a monitoring scheme behaves, without a workbook."""

from __future__ import annotations

import argparse
import math
from typing import Any

from sheettool import tool_json
from sheettool.app.json_form import run_length_json
from sheettool.base.errors import UsageError
from sheettool.cli.common import number, number_list, print_json, setting_value, write_stdout
from sheettool.core.charts import CHART_KINDS
from sheettool.core.parameters import CusumParameters, EwmaParameters
from sheettool.core.presets import DEFAULT_RULES, presets_help
from sheettool.core.rules import parse_rules
from sheettool.core.runlength.scheme import ATTRIBUTES, Scheme, SchemeResult, scheme_run_lengths
from sheettool.core.timing import ats_hours, false_alarms_per_month

# The chart codes of evaluate and design, and "xbar": the X-bar chart alone, as published single-chart tables give it.
_CHARTS = ("xbar-r", "xbar-s", "individuals", "p", "np", "c", "u", "ewma", "cusum", "xbar")
_VARIABLE_SHIFTS = "0,0.5,1,1.5,2,3"
_ATTRIBUTE_SHIFTS = "0,1,2,3"
# option -> the chart parameter's setting name (the symbols lambda, L, k and h stay in the tables and the JSON)
_PARAMETER_OPTIONS = {"weight": "lambda", "limit_width": "L", "reference": "k", "decision_interval": "h"}


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The sub-command's options (its line in the list of commands is in cli/main.py)."""
    p.description = ("Run-length behaviour of a monitoring scheme: average run length (ARL), its standard deviation "
                     "and percentiles, steady-state ARL and time to signal.")
    p.add_argument("--chart", default="xbar", choices=_CHARTS,
                   help="chart code, as evaluate and the JSON write it (default xbar: the X-bar chart alone; xbar-r "
                   "and xbar-s add the R or S chart's limits; individuals: the individuals chart, one reading per "
                   "point)")
    p.add_argument("--n", help="readings per subgroup (variables) or units inspected per subgroup (p, np, u)")
    p.add_argument("--rules", default=DEFAULT_RULES, help="Shewhart and attribute charts: a preset or rules like "
                   "1/1>3,2/3>2 (docs/command-line.md, Pattern rules). "
                   f"Presets (default {DEFAULT_RULES}): {presets_help()}")
    ewma, cusum = EwmaParameters(), CusumParameters()
    p.add_argument("--weight", help=f"EWMA: the weight of the newest point, lambda, above 0 and at most 1 "
                   f"(default {ewma.lam:g})")
    p.add_argument("--limit-width", help=f"EWMA: the limits' distance from the center line in standard errors of "
                   f"the EWMA, L (default {ewma.L:g})")
    p.add_argument("--reference", help=f"CUSUM: the slack subtracted from each point before it is added to a sum, "
                   f"in standard errors, k (default {cusum.k:g}; half the shift to catch)")
    p.add_argument("--decision-interval", help=f"CUSUM: a sum above this signals, in standard errors, h "
                   f"(default {cusum.h:g})")
    p.add_argument("--p0", help="in-control proportion defective (p, np)")
    p.add_argument("--c0", help="in-control defects per subgroup (c) or per unit (u)")
    p.add_argument("--shift", help="comma-separated list of shifts: of the mean in process standard deviations "
                   f"(default {_VARIABLE_SHIFTS}); for p, np, c and u, upward in standard errors of the plotted rate, "
                   f"as evaluate reports them (default {_ATTRIBUTE_SHIFTS})")
    p.add_argument("--rates", help="p, np, c and u: comma-separated list of shifted proportions or rates "
                   "themselves, instead of --shift")
    p.add_argument("--sigma-ratio", default="1", help="process sigma as a multiple of the in-control sigma")
    p.add_argument("--interval", help="hours between subgroups, e.g. 1 or '30 min': gives the average time to "
                   "signal (ATS)")
    p.add_argument("--hours-per-month", help="production hours per month: gives expected false alarms per month")
    p.add_argument("--json", action="store_true", help="print the results as one JSON object on stdout")
    p.set_defaults(run=run)


def _scheme(args: argparse.Namespace) -> Scheme:
    chart = args.chart
    rules = tuple(parse_rules(setting_value("rules", "--rules", args.rules)))
    n = number("--n", args.n, positive=True)
    if chart == "individuals" and n not in (None, 1.0):
        raise UsageError("--n: an individuals chart plots single readings; leave --n out or use --chart xbar")
    if n is None:
        if chart in ("xbar", "xbar-r", "xbar-s", "p", "np", "u"):
            raise UsageError(f"--n: needed for the {args.chart} chart (readings or units per subgroup)")
        n = 1.0
    # the chart parameters given, by setting name (each option is named as its setting)
    given = {name: setting_value(name, f"--{option.replace('_', '-')}", getattr(args, option))
             for option, name in _PARAMETER_OPTIONS.items() if getattr(args, option) is not None}
    return Scheme(chart=chart, rules=rules, n=n,
                  p0=setting_value("p0", "--p0", args.p0), c0=setting_value("c0", "--c0", args.c0),
                  ewma=EwmaParameters.from_mapping(given), cusum=CusumParameters.from_mapping(given))


def _shifts(args: argparse.Namespace, attribute: bool) -> tuple[list[float | None], list[float]]:
    """(shifts, rates) asked for: shifts in standard deviations or standard errors, or the rates themselves (then
    the shifts are None)."""
    if args.rates is not None:
        if not attribute:
            raise UsageError("--rates: for p, np, c and u only; give mean shifts with --shift")
        if args.shift is not None:
            raise UsageError("give either --shift (in standard errors) or --rates (the rates themselves), not both")
        rates = list(number_list("--rates", args.rates))
        return [None] * len(rates), rates
    default = _ATTRIBUTE_SHIFTS if attribute else _VARIABLE_SHIFTS
    return list(number_list("--shift", args.shift if args.shift is not None else default)), []


def run(args: argparse.Namespace) -> int:
    """Compute the run lengths and print them as JSON or a table."""
    ratio = number("--sigma-ratio", args.sigma_ratio, positive=True)
    interval = setting_value("interval_hours", "--interval", args.interval)
    per_month = setting_value("hours_per_month", "--hours-per-month", args.hours_per_month)
    try:
        scheme = _scheme(args)
        attribute = scheme.chart in ATTRIBUTES
        shifts, rates = _shifts(args, attribute)
        if attribute:
            rates = rates or [scheme.count_model.rate_at(s) for s in shifts]
        conditions = [(r, 1.0) for r in rates] if attribute else [(s, ratio) for s in shifts]
        in_control = (scheme.count_model.rate0 if attribute else 0.0, 1.0)
        extra = [] if in_control in conditions else [in_control]  # the in-control ARL, for false alarms
        result = scheme_run_lengths(scheme, conditions + extra)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    arl0 = result.results[(conditions + extra).index(in_control)].arl
    del result.conditions[len(conditions):], result.results[len(conditions):]
    doc = _document(args, scheme, result, arl0, interval, per_month, shifts)
    if args.json:
        print_json(doc)
    else:
        write_stdout(_table(doc))
    return 0


def _document(args: argparse.Namespace, scheme: Scheme, result: SchemeResult, arl0: float,
              interval: float | None, per_month: float | None, shifts: list[float | None]) -> dict[str, Any]:
    attribute = scheme.chart in ATTRIBUTES
    info: dict[str, Any] = {"chart": args.chart, "n": scheme.n}
    if scheme.chart == "ewma":
        info.update(scheme.ewma.as_mapping())
    elif scheme.chart == "cusum":
        info.update(scheme.cusum.as_mapping())
    else:
        info["rules"] = [r.text for r in scheme.rules]
    if scheme.chart in ("p", "np"):
        info["p0"] = scheme.p0
    if scheme.chart in ("c", "u"):
        info["c0"] = scheme.c0
    info.update({"interval_hours": interval, "hours_per_month": per_month})
    rows = []
    for shift, (condition, ratio), rl in zip(shifts, result.conditions, result.results, strict=True):
        row: dict[str, Any] = {"shift": shift, "rate": condition if attribute else None,
                               "sigma_ratio": None if attribute else ratio}
        row.update(run_length_json(rl.arl, rl.sdrl, rl.percentiles, rl.steady_state_arl, rl.ci))
        ats = ats_hours(rl.arl, interval)
        row["ats_hours"] = ats if ats is not None and math.isfinite(ats) else None
        rows.append(row)
    return {
        "tool": tool_json(),
        "scheme": info,
        "method": result.method,
        "arl_in_control": arl0 if math.isfinite(arl0) else None,
        "false_alarms_per_month": false_alarms_per_month(arl0, interval, per_month),
        "results": rows,
    }


def _fmt(value: float | None, digits: int = 4) -> str:
    return "-" if value is None else f"{value:.{digits}g}"


def _scheme_words(scheme: dict[str, Any]) -> str:
    """The scheme in words for the terminal: "X-bar and R, n 5, rules 1/1>3; every 1 h, 400 h per month"."""
    chart = scheme["chart"]
    parts = ["X-bar chart alone" if chart == "xbar" else CHART_KINDS[chart].title, f"n {scheme['n']:g}"]
    parts += [f"{key} {scheme[key]:g}" for key in ("lambda", "L", "k", "h", "p0", "c0") if scheme.get(key) is not None]
    if scheme.get("rules"):
        parts.append(f"rules {','.join(scheme['rules'])}")
    timing = [f"every {scheme['interval_hours']:g} h" if scheme.get("interval_hours") else "",
              f"{scheme['hours_per_month']:g} production hours per month" if scheme.get("hours_per_month") else ""]
    return ", ".join(parts) + "".join(f"; {t}" for t in timing if t)


def _table(doc: dict[str, Any]) -> str:
    scheme = doc["scheme"]
    shown = _scheme_words(scheme)
    attribute = scheme["chart"] in ATTRIBUTES
    lines = [f"Scheme: {shown}", f"Method: {doc['method']}", f"In-control ARL: {_fmt(doc['arl_in_control'])}"]
    if doc["false_alarms_per_month"] is not None:
        lines.append(f"Expected false alarms per month: {doc['false_alarms_per_month']:.3g}")
    head = ["shift", "rate" if attribute else "sigma ratio", "ARL", "SDRL", "5%", "50%", "95%", "steady ARL",
            "ATS (hours)"]
    body = []
    for r in doc["results"]:
        pct = r["percentiles"] or {}
        arl = _fmt(r["arl"])
        if r["arl_ci95"]:
            arl += f" ({_fmt(r['arl_ci95'][0], 3)}-{_fmt(r['arl_ci95'][1], 3)})"
        body.append([_fmt(r["shift"]), _fmt(r["rate"] if attribute else r["sigma_ratio"]), arl, _fmt(r["sdrl"]),
                     _fmt(pct.get("5")), _fmt(pct.get("50")), _fmt(pct.get("95")), _fmt(r["steady_state_arl"]),
                     _fmt(r["ats_hours"])])
    widths = [max(len(h), *(len(row[i]) for row in body)) if body else len(h) for i, h in enumerate(head)]
    lines.append("")
    lines.append("  ".join(h.rjust(w) for h, w in zip(head, widths, strict=True)))
    lines.extend("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)) for row in body)
    lines.append("")
    unit = "standard errors of the plotted rate, upward" if attribute else "process standard deviations"
    lines.append(f"Shift: in {unit}. ARL: average number of points until the scheme signals; percentiles of the "
                 "run length in points; steady state: after a long in-control run without a false alarm. ATS: the "
                 "ARL in hours, the hours to signal.")
    return "\n".join(lines) + "\n"
