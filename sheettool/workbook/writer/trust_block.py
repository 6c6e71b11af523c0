"""The evaluation tab's "How far to trust these limits" block: the cost of estimated limits, the data's own shape
and dependence, and the requirements check, each shown only when the evaluation computed it.
"""

from __future__ import annotations

import math

from xlsxwriter.format import Format

from sheettool.core.data_shape import DataShapeReport
from sheettool.core.design import RequirementsCheck
from sheettool.core.estimated_limits import EstimatedLimitsReport
from sheettool.evaluation.results import CharacteristicResult
from sheettool.workbook import style
from sheettool.workbook.writer.tab import Tab

TITLE = "How far to trust these limits"
NO_VALUE = "—"
UNBOUNDED = "unbounded"
MET_WORDS = {True: "yes", False: "NO", None: "cannot judge"}
REQUIREMENT_LABELS = {"arl_in_control": "In-control ARL", "false_alarms_per_month": "False alarms a month",
                      "detect_arl": "ARL at the shift", "detect_hours": "Hours to catch the shift"}
# characters per printed line, taking a character as wide as a digit (text runs narrower, so no font cuts a line):
# the note column less its indent, and the tab's full width
_NOTE_CHARS = style.EVAL_COLUMNS[4] - 2
_FULL_CHARS = sum(style.EVAL_COLUMNS)


def has_checks(result: CharacteristicResult) -> bool:
    """Whether the block has anything to show for this characteristic."""
    return any(x is not None for x in (result.estimated_limits, result.data_shape, result.requirements_check))


def write_trust_block(tab: Tab, result: CharacteristicResult) -> None:
    """Write the block at the evaluation tab's row cursor, when there is something to show."""
    if not has_checks(result):
        return
    tab.section(TITLE)
    if result.estimated_limits is not None:
        _estimated(tab, result.estimated_limits)
    if result.data_shape is not None:
        _shape(tab, result.data_shape)
    if result.requirements_check is not None:
        _requirements(tab, result.requirements_check)


def _value(tab: Tab, col: int, value: float | None, fmt: Format) -> None:
    """A number, or a word where there is none: infinite -> 'unbounded', None or NaN -> a dash."""
    ws = tab.ws
    if value is None or math.isnan(value):
        ws.write_string(tab.row, col, NO_VALUE, tab.fmt["text_right"])
    elif math.isinf(value):
        ws.write_string(tab.row, col, UNBOUNDED, tab.fmt["text_right"])
    else:
        ws.write_number(tab.row, col, float(value), fmt)


def _note(tab: Tab, text: str) -> None:
    """The note column of the current row, the row made tall enough to show it all."""
    tab.text(4, text, "note")
    tab.fit(text, _NOTE_CHARS)


def _wide(tab: Tab, text: str, role: str) -> None:
    """One line of text across the tab's full width, wrapped (the lead sentence, a warning)."""
    tab.across(0, 4, text, role)
    tab.fit(text, _FULL_CHARS)
    tab.row += 1


def _line(tab: Tab, label: str, values: tuple[tuple[float | None, str], ...], note: str) -> None:
    tab.ws.write_string(tab.row, 0, label, tab.fmt["text"])
    for col, (value, role) in enumerate(values, start=1):
        if role:
            _value(tab, col, value, tab.fmt[role])
    _note(tab, note)
    tab.row += 1


def _estimated(tab: Tab, rep: EstimatedLimitsReport) -> None:
    dist, what = rep.distribution, ("points" if rep.distribution.n == 1 else "subgroups")
    _wide(tab, rep.sentence, "lead")
    _wide(tab, f"These figures are for the whole scheme in use: the {rep.scheme}.", "wrap")
    tab.head(["Estimated limits", "In-control ARL", "", "", "What it means"], (1,))
    known = f"known mean and sigma give {dist.known_arl:,.1f} for this scheme"
    _line(tab, "Average over base periods", ((dist.mean, "arl"),),
          f"over all the base periods of {dist.m} {what} the process could give; {known}")
    _line(tab, "10th percentile", ((dist.p10, "arl"),),
          "one base period in ten gives limits with fewer points than this between false alarms")
    _line(tab, "50th percentile", ((dist.p50, "arl"),), "half the base periods give fewer, half more")
    _line(tab, f"Factor for {rep.exceed:.0%} assurance", ((rep.adjusted.factor, "ratio"),),
          f"every zone boundary and spread-chart limit at this many sigma gives the scheme an in-control ARL of at "
          f"least {rep.floor:,.0f} in {rep.exceed:.0%} of base periods (3 is the usual factor)"
          if not math.isnan(rep.adjusted.factor) else
          f"no factor up to 8 gives the scheme an in-control ARL of at least {rep.floor:,.0f} in {rep.exceed:.0%} "
          "of base periods: its rules that count points on one side of the center line do not widen with the limits")
    needed = rep.needed
    ws = tab.ws
    ws.write_string(tab.row, 0, f"{what.capitalize()} needed, 3-sigma", tab.fmt["text"])
    if needed.subgroups is not None:
        ws.write_number(tab.row, 1, needed.subgroups, tab.fmt["count_right"])
        enough = "enough already" if needed.subgroups <= dist.m else f"{dist.m} in use"
        note = f"fewest {what} for that assurance with the usual factor 3; {enough}"
    elif needed.reachable:
        ws.write_string(tab.row, 1, f"more than {needed.max_searched:,}", tab.fmt["text_right"])
        note = f"even {needed.max_searched:,} {what} would not give that assurance with the usual factor 3"
    else:
        ws.write_string(tab.row, 1, "none is enough", tab.fmt["text_right"])
        note = f"3-sigma cannot reach {rep.floor:,.0f} even with known mean and sigma"
    _note(tab, note)
    tab.row += 1
    for text in dist.notes:
        _wide(tab, f"Note: {text}", "wrap")


def _shape(tab: Tab, rep: DataShapeReport) -> None:
    shape, dep = rep.shape, rep.dependence
    tab.row += 1
    tab.head(["Shape and dependence", "This data", "Normal model", "", "Note"], (1, 2))
    ws = tab.ws
    ws.write_string(tab.row, 0, "Shape of the readings", tab.fmt["text"])
    ws.write_string(tab.row, 1, shape.family, tab.fmt["text_right"])
    ws.write_string(tab.row, 2, "normal", tab.fmt["text_right"])
    moments = "".join(f"; {word} {value:.2f}" for word, value in (("skewness", shape.skewness),
                                                                   ("excess kurtosis", shape.kurtosis))
                      if value is not None)
    _note(tab, f"lowest BIC of normal, Johnson SU and SB{moments}")
    tab.row += 1
    _line(tab, "In-control ARL, this shape", ((shape.arl_shape, "arl"), (shape.arl_normal, "arl")),
          f"{_capital(shape.scheme)}, fitted shape against normal (ratio {_ratio(shape.ratio)})")
    _line(tab, "Lag-1 autocorrelation", ((dep.r1, "ratio"), (dep.bound, "ratio")),
          f"beside it the bound 2/sqrt(N) for {dep.points} points; r1 is "
          + ("beyond it" if dep.significant else "within it"))
    if dep.significant:
        _line(tab, "In-control ARL, AR(1)", ((dep.arl_ar1, "arl"), (dep.arl_independent, "arl")),
              ("at least this (some simulated runs had not signalled); " if dep.censored else "")
              + f"{shape.scheme}, successive points following AR(1) with phi {dep.phi:.2f}")
    for text in rep.warnings:
        _wide(tab, f"Warning: {text}", "warn_wrap")


def _capital(text: str) -> str:
    return text[:1].upper() + text[1:]


def _ratio(value: float) -> str:
    return UNBOUNDED if math.isinf(value) else NO_VALUE if math.isnan(value) else f"{value:.2f}"


def _requirements(tab: Tab, check: RequirementsCheck) -> None:
    tab.row += 1
    tab.head(["Requirement", "Required", "Achieved", "Met", "In words"], (1, 2), centered=(3,))
    for item in check.items:
        tab.ws.write_string(tab.row, 0, REQUIREMENT_LABELS.get(item.name, item.name), tab.fmt["text"])
        _value(tab, 1, item.required, tab.fmt["figure"])
        _value(tab, 2, item.achieved, tab.fmt["figure"])
        tab.ws.write_string(tab.row, 3, MET_WORDS[item.met], tab.fmt["flag_warn" if item.met is False else "flag"])
        _note(tab, item.words)
        tab.row += 1
    overall = {True: "every requirement is met", False: "not every requirement is met",
               None: "some requirements cannot be judged from what was given"}[check.met]
    tab.fact("Requirements", f"{overall} (shift judged: {check.shift:.3g} sigma)")
