"""Live formulas for --formulas: per-subgroup statistics over the copied readings and constant limits.

Every formula is checked before it is written: its value is worked out here in Python from the same
copied cells, and the formula is used only where that value equals sheettool's own result (1e-9
relative); anything else is written as a plain value and listed in the method notes. So a formula in
the output can never disagree with the number the evaluation used, whatever chart kind produced it.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from xlsxwriter.utility import xl_rowcol_to_cell

from sheettool.core.constants import constants
from sheettool.core.data import Measurements
from sheettool.evaluation.results import CharacteristicResult

TOLERANCE = 1e-9


def agrees(a: np.ndarray | float, b: np.ndarray | float) -> bool:
    """True where two results agree within TOLERANCE relative (absolute near zero)."""
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    return bool(np.all(np.isfinite(a)) and np.all(np.abs(a - b) <= TOLERANCE * np.maximum(1.0, np.abs(b))))


# --- per-subgroup statistics -------------------------------------------------------------------

def _cells(row: int, cols: list[int]) -> str:
    """The reading cells of one row: a range when the columns are adjacent, else a list."""
    if cols == list(range(cols[0], cols[0] + len(cols))):
        return f"{xl_rowcol_to_cell(row, cols[0])}:{xl_rowcol_to_cell(row, cols[-1])}"
    return ",".join(xl_rowcol_to_cell(row, c) for c in cols)


def _moving_range(r: np.ndarray) -> np.ndarray:
    out = np.full(r.shape[0], np.nan)
    out[1:] = np.abs(np.diff(r[:, 0]))
    return out


# statistic name -> (Excel text for a row, the same computed by numpy over the readings matrix)
_STATISTICS: dict[str, tuple[Callable[[int, list[int]], str], Callable[[np.ndarray], np.ndarray]]] = {
    "mean": (lambda row, cols: f"AVERAGE({_cells(row, cols)})", lambda r: np.nanmean(r, axis=1)),
    "range": (lambda row, cols: f"MAX({_cells(row, cols)})-MIN({_cells(row, cols)})",
              lambda r: np.nanmax(r, axis=1) - np.nanmin(r, axis=1)),
    # sample standard deviation, n - 1 in the denominator (common practice for the S chart)
    "sd": (lambda row, cols: f"STDEV({_cells(row, cols)})", lambda r: np.nanstd(r, axis=1, ddof=1)),
    "individual": (lambda row, cols: _cells(row, cols[:1]), lambda r: r[:, 0]),
    "moving_range": (lambda row, cols: f"ABS({_cells(row, cols[:1])}-{_cells(row - 1, cols[:1])})", _moving_range),
}
_ALIASES = {"stdev": "sd", "s": "sd", "std": "sd", "x": "individual", "value": "individual",
            "mr": "moving_range", "moving range": "moving_range"}


def statistic_formula(name: str, values: np.ndarray, readings: np.ndarray | None,
                      reading_cols: list[int]) -> Callable[[int], str] | None:
    """A builder of the formula of statistic `name` for a data-tab row, or None when it cannot be checked.

    `readings` holds the copied readings (subgroups x columns) as the data tab has them.
    """
    key = _ALIASES.get(name.lower(), name.lower())
    if readings is None or key not in _STATISTICS or not reading_cols:
        return None
    if key in ("individual", "moving_range") and len(reading_cols) != 1:
        return None
    text, compute = _STATISTICS[key]
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-empty rows: left blank anyway
        mine = compute(readings)
    shown = np.isfinite(values)
    if mine.shape != values.shape or not agrees(mine[shown], values[shown]):
        return None
    return lambda row: text(row, reading_cols)


# --- constant limits ---------------------------------------------------------------------------
# A limit is a tiny expression tree, rendered both as spreadsheet text and as a number, so the check
# above applies to the limits too. Leaves: ("mean_of", statistic) = average over the base subgroups,
# ("const", name), ("limit", statistic, "center"); nodes: ("+", a, b), ("-", a, b), ("*", a, b).
Expr = tuple


@dataclass
class LimitPlan:
    """The constants a chart kind's limits need, and each limit's expression."""

    constants: list[tuple[str, float, str]]  # name, value, what it is
    limits: dict[tuple[str, str], Expr]  # (statistic name, "center" | "lcl" | "ucl") -> expression


def _xbar_range(n: int) -> LimitPlan:
    # Shewhart X-bar and R: X-bar-bar +/- A2 R-bar; R chart D3 R-bar .. D4 R-bar (constants ASTM E2587)
    k = constants(n)
    rbar = ("limit", "range", "center")
    return LimitPlan(
        constants=[("A2", k.A2, f"A2 for subgroups of {n}"), ("D3", k.D3, f"D3 for subgroups of {n}"),
                   ("D4", k.D4, f"D4 for subgroups of {n}")],
        limits={("mean", "center"): ("mean_of", "mean"), ("range", "center"): ("mean_of", "range"),
                ("mean", "ucl"): ("+", ("limit", "mean", "center"), ("*", ("const", "A2"), rbar)),
                ("mean", "lcl"): ("-", ("limit", "mean", "center"), ("*", ("const", "A2"), rbar)),
                ("range", "ucl"): ("*", ("const", "D4"), rbar), ("range", "lcl"): ("*", ("const", "D3"), rbar)})


def _xbar_sd(n: int) -> LimitPlan:
    # X-bar and S: X-bar-bar +/- A3 S-bar; S chart B3 S-bar .. B4 S-bar (constants ASTM E2587)
    k = constants(n)
    sbar = ("limit", "sd", "center")
    return LimitPlan(
        constants=[("A3", k.A3, f"A3 for subgroups of {n}"), ("B3", k.B3, f"B3 for subgroups of {n}"),
                   ("B4", k.B4, f"B4 for subgroups of {n}")],
        limits={("mean", "center"): ("mean_of", "mean"), ("sd", "center"): ("mean_of", "sd"),
                ("mean", "ucl"): ("+", ("limit", "mean", "center"), ("*", ("const", "A3"), sbar)),
                ("mean", "lcl"): ("-", ("limit", "mean", "center"), ("*", ("const", "A3"), sbar)),
                ("sd", "ucl"): ("*", ("const", "B4"), sbar), ("sd", "lcl"): ("*", ("const", "B3"), sbar)})


def _individuals(n: int) -> LimitPlan:
    # Individuals and moving range: X-bar +/- E2 MR-bar, E2 = 3 / d2(2); MR chart D4(2) MR-bar (ASTM E2587)
    k = constants(2)
    mrbar = ("limit", "moving_range", "center")
    return LimitPlan(
        constants=[("E2", k.E2, "E2 = 3 / d2 for moving ranges of 2"), ("D4", k.D4, "D4 for moving ranges of 2")],
        limits={("individual", "center"): ("mean_of", "individual"),
                ("moving_range", "center"): ("mean_of", "moving_range"),
                ("individual", "ucl"): ("+", ("limit", "individual", "center"), ("*", ("const", "E2"), mrbar)),
                ("individual", "lcl"): ("-", ("limit", "individual", "center"), ("*", ("const", "E2"), mrbar)),
                ("moving_range", "ucl"): ("*", ("const", "D4"), mrbar)})


LIMIT_PLANS: dict[str, Callable[[int], LimitPlan]] = {"xbar-r": _xbar_range, "xbar-s": _xbar_sd,
                                                      "individuals": _individuals}


@dataclass
class LimitCell:
    """A limit as it will be written: the formula (None: write the value) and the value."""

    formula: str | None
    value: float


def limit_cells(result: CharacteristicResult, refs: Callable[[Expr], str]) -> tuple[
        dict[str, tuple[float, str]], dict[tuple[str, str], LimitCell]]:
    """The chart kind's constants (name -> value, meaning) and the checked constant-limit formulas.

    `refs` renders a leaf (mean_of, const, limit) as a cell reference; it is called only for the
    formulas that passed the check, so the constants it was asked for are exactly those used.
    """
    fit = result.fit
    factory = LIMIT_PLANS.get(fit.chart)
    if factory is None or not isinstance(result.characteristic.data, Measurements):
        return {}, {}
    try:
        plan = factory(fit.subgroup_size)
    except ValueError:
        return {}, {}
    stats = {s.name: s for s in fit.statistics}
    consts = {name: value for name, value, _ in plan.constants}
    base = np.asarray(fit.base, dtype=bool)

    def value(expr: Expr) -> float:
        op = expr[0]
        if op == "mean_of":
            v = stats[expr[1]].values[base]
            return float(np.mean(v[np.isfinite(v)]))
        if op == "const":
            return float(consts[expr[1]])
        if op == "limit":
            return value(plan.limits[(expr[1], expr[2])])
        a, b = value(expr[1]), value(expr[2])
        return a + b if op == "+" else a - b if op == "-" else a * b

    def text(expr: Expr) -> str:
        if expr[0] in ("mean_of", "const", "limit"):
            return refs(expr)
        return f"{text(expr[1])}{expr[0]}{text(expr[2])}"

    out: dict[tuple[str, str], LimitCell] = {}
    for (name, key), expr in plan.limits.items():
        stat = stats.get(name)
        if stat is None:
            continue
        arr = getattr(stat, key)
        if np.ptp(arr) != 0 or not np.isfinite(arr[0]):
            continue
        try:
            mine = value(expr)
        except (KeyError, ValueError):
            continue
        if agrees(mine, float(arr[0])):
            out[(name, key)] = LimitCell(text(expr), float(arr[0]))
    return {name: (v, meaning) for name, v, meaning in plan.constants}, out
