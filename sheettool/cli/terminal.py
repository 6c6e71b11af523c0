"""What evaluate and pack say on stderr: per characteristic a line a technician can act on, then its warnings.

The line: points signalled, events and how many are open, false alarms per month, the requirements' verdict and
where the limits come from; below it every warning (cells that are not numbers, carried limits not found or found
by name alone, requirements not met...). --json prints none of it; --quiet only hides the progress bar.
"""

from __future__ import annotations

from sheettool.base.problems import Problem
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook.report import EvaluationReport

_VERDICT = {True: "requirements met", False: "requirements NOT met", None: "requirements not judged"}


def characteristic_lines(result: CharacteristicResult, read: tuple[Problem, ...] = ()) -> list[str]:
    """The summary line of one characteristic, its limits' origin and its warnings (`read`: the reader's
    problems of its sheet first), indented."""
    earlier = sum(e.is_open for e in result.fitted.earlier_events)
    parts = [f"{result.points_signalled} point(s) signalled in {len(result.events)} event(s); "
             f"{result.events_open} event(s) open" + (f" ({earlier} from earlier months)" if earlier else "")]
    alarms = result.performance.false_alarms_per_month
    parts.append(f"{alarms:.2g} false alarms per month expected" if alarms is not None
                 else "false alarms per month not known (give the sampling interval and hours per month)")
    if result.requirements_check is not None:
        parts.append(_VERDICT[result.requirements_check.met])
    carried = {"": "limits set by", "none": "none carried: limits set by"}.get(result.carried, "limits carried, set by")
    lines = [f"{result.identity}: " + "; ".join(parts), f"  {carried} {result.limits_origin.words}"]
    return lines + [f"  {p.severity}: {p.message}" + (f" ({p.cell})" if p.cell else "")
                    for p in (*read, *result.problems) if p.severity != "note"]


def report_lines(report: EvaluationReport) -> list[str]:
    """Every characteristic's lines (with the reader's warnings of its sheet), then the input's other warnings and
    errors (sheets not evaluated)."""
    sheets = {result.sheet for result in report.characteristics}
    lines = [line for result in report.characteristics
             for line in characteristic_lines(result, tuple(p for p in report.problems if p.sheet == result.sheet))]
    return lines + [f"{_where(p)}{p.severity}: {p.message}" for p in report.problems
                    if p.severity != "note" and p.sheet not in sheets]


def _where(problem: Problem) -> str:
    return f"{problem.where}: " if problem.where else ""
