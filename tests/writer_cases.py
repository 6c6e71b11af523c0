"""Results built directly (fixed seeds) so the writer is tested on every shape a chart kind can give:
limits varying by point, a floored LCL, capability of an unstable process, an attribute rate, dates
on the x axis, a performance curve with ATS, settings with origins.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
from pathlib import Path
from typing import Any

import numpy as np

from sheettool.core.capability import AttributeRate, Capability, Interval
from sheettool.core.charts import ChartFit, PlottedStatistic
from sheettool.core.constants import c4
from sheettool.core.data import Characteristic, Counts, Measurements
from sheettool.core.rules import parse_rules
from sheettool.core.sigma import SigmaMethod
from sheettool.evaluation.evaluate import find_signals
from sheettool.evaluation.results import Assessment, CharacteristicResult, Fitted, Performance, ShiftArl
from sheettool.settings import Setting
from sheettool.workbook.reader import SheetRead
from sheettool.workbook.report import EvaluationReport, SheetEvaluation

START = dt.datetime(2026, 11, 2, 6, 0)


def _full(v: float, m: int) -> np.ndarray:
    return np.full(m, float(v))


def _performance(interval: float | None) -> Performance:
    curve = [ShiftArl(s, 370.4 / (1 + 40 * s * s), 370.4 / (1 + 40 * s * s) * interval if interval else None)
             for s in np.round(np.arange(0, 3.01, 0.25), 2)]
    return Performance(method="geometric run length (built for the test)", arl_in_control=370.4,
                       shifts=[c for c in curve if c.shift in (0.0, 1.0, 2.0)], interval_hours=interval,
                       false_alarms_per_month=(730 / interval / 370.4) if interval else None, curve=curve)


def with_checks(result: CharacteristicResult, **checks: Any) -> CharacteristicResult:
    """The result with its assessment's checks (estimated_limits, data_shape, requirements_check) replaced."""
    return dataclasses.replace(result, assessment=dataclasses.replace(result.assessment, **checks))


def varying_sizes_case(m: int = 40, seed: int = 5) -> tuple[CharacteristicResult, SheetRead]:
    """Means and standard deviations of subgroups of 3 to 6 readings: limits vary per point."""
    rng = np.random.default_rng(seed)
    sizes = rng.integers(3, 7, m)
    values = np.full((m, 6), np.nan)
    for i, n in enumerate(sizes):
        values[i, :n] = np.round(rng.normal(25.0 + (0.02 if i > 30 else 0.0), 0.01, n), 3)
    means = np.nanmean(values, axis=1)
    sds = np.nanstd(values, axis=1, ddof=1)
    base = np.ones(m, dtype=bool)
    center = float(np.mean(means))
    sbar = float(np.mean(sds))
    sigma = sbar / c4(int(np.round(np.mean(sizes))))
    se = sigma / np.sqrt(sizes)
    c4n = np.array([c4(int(n)) for n in sizes])
    s_sigma = sigma * np.sqrt(1 - c4n**2)
    stats = [
        PlottedStatistic("mean", "Subgroup mean", means, _full(center, m), center - 3 * se, center + 3 * se, se),
        PlottedStatistic("sd", "Subgroup standard deviation", sds, c4n * sigma,
                         np.maximum(0.0, c4n * sigma - 3 * s_sigma), c4n * sigma + 3 * s_sigma, s_sigma,
                         lcl_floored=True),
    ]
    fit = ChartFit("xbar-s", stats, int(sizes.max()), center, sigma, SigmaMethod.S_BAR, base,
                   limits_source=f"base period: all {m} subgroups", parameters={"n": float(sizes.max())})
    dates = [START + dt.timedelta(hours=2 * i) for i in range(m)]
    labels = [f"{d:%Y-%m-%d %H:%M}" for d in dates]
    ch = Characteristic("Sleeve length", Measurements(values), labels=labels, unit="mm", dates=dates)
    rules = parse_rules("zones")
    cap = Capability(lsl=24.95, usl=25.05, target=25.0, mean=center, sigma_within=sigma, sigma_overall=sigma * 1.3,
                     cp=1.6, cpk=1.4, pp=1.2, ppk=1.1, cpm=1.3, ppm_out=12.5,
                     ci={"cp": Interval(1.3, 1.9), "cpk": Interval(1.1, 1.7)}, confidence=0.95,
                     normality_p=0.42, stable=False, notes=["indices computed for the test"])
    result = CharacteristicResult(
        Fitted(characteristic=ch, sheet="Sleeve", fit=fit, rules=rules, signals=find_signals(fit, rules, labels),
               capability=cap), Assessment(performance=_performance(2.0)),
        settings={"lsl": Setting("lsl", 24.95, "cell 'Sleeve'!B1"), "interval_hours": Setting("interval_hours", 2.0,
                                                                                               "option --interval")})
    header = ["When", *[f"Reading {j + 1}" for j in range(6)], "Remark"]
    rows = [(dates[i], *[None if np.isnan(v) else float(v) for v in values[i]], "+tool change" if i == 3 else None)
            for i in range(m)]
    columns = {"A": "subgroup key (When)", **{chr(66 + j): f"measurement (Reading {j + 1})" for j in range(6)},
               "H": "note (Remark)"}
    read = SheetRead("Sleeve", ch, header_row=1, first_row=2, last_row=m + 1, columns=columns, header=header,
                     rows=rows)
    return result, read


def attribute_case(m: int = 25, seed: int = 9) -> tuple[CharacteristicResult, SheetRead]:
    """Proportion defective with varying lot sizes, and its attribute rate."""
    rng = np.random.default_rng(seed)
    inspected = rng.integers(80, 160, m).astype(float)
    counts = rng.binomial(inspected.astype(int), 0.04).astype(float)
    p = counts / inspected
    pbar = float(counts.sum() / inspected.sum())
    se = np.sqrt(pbar * (1 - pbar) / inspected)
    stat = PlottedStatistic("proportion", "Proportion defective", p, _full(pbar, m), np.maximum(0, pbar - 3 * se),
                            pbar + 3 * se, se, lcl_floored=True)
    fit = ChartFit("p", [stat], int(inspected.max()), pbar, float(np.sqrt(pbar * (1 - pbar))),
                   SigmaMethod.PROPORTION, np.ones(m, dtype=bool))
    ch = Characteristic("Seal leaks", Counts(counts, inspected), labels=[f"L{i + 100}" for i in range(m)])
    rules = parse_rules("beyond-limits")
    result = CharacteristicResult(
        Fitted(characteristic=ch, sheet="Leaks", fit=fit, rules=rules, signals=find_signals(fit, rules, ch.labels),
               capability=AttributeRate("proportion", pbar, Interval(pbar * 0.8, pbar * 1.2), 0.95)),
        Assessment(performance=Performance("geometric run length (built for the test)", 300.0,
                                           [ShiftArl(0.0, 300.0), ShiftArl(1.0, 40.0)])))
    rows = [(f"L{i + 100}", float(counts[i]), float(inspected[i])) for i in range(m)]
    read = SheetRead("Leaks", ch, 1, 2, m + 1, {"A": "subgroup key (Lot)", "B": "count (Leaks)",
                                                 "C": "inspected (Tested)"}, ["Lot", "Leaks", "Tested"], rows)
    return result, read


def report_for(tmp: Path, cases: list[tuple[CharacteristicResult, SheetRead]]) -> EvaluationReport:
    """A report over an (empty, stand-in) input file in tmp."""
    source = tmp / "built-input.xlsx"
    source.write_bytes(b"stand-in input for writer tests")
    digest = hashlib.sha256(source.read_bytes()).hexdigest()
    report = EvaluationReport(input=source, input_sha256=digest, input_size=source.stat().st_size,
                              output=None, sheets=[SheetEvaluation(read, result) for result, read in cases])
    return report


def cusum_ewma_case(m: int = 60, seed: int = 13) -> tuple[CharacteristicResult, SheetRead]:
    """Individual readings with three statistics: an EWMA with widening limits (Lucas and Saccucci 1990 form)
    and the two one-sided CUSUMs, which have an upper decision interval and no lower limit (Page 1954)."""
    rng = np.random.default_rng(seed)
    x = np.round(rng.normal(50.0, 0.5, m) + np.where(np.arange(m) > 40, 0.6, 0.0), 2)
    mu, sigma, lam, big_l, k, h = 50.0, 0.5, 0.2, 3.0, 0.5, 5.0
    z = np.empty(m)
    up, down = np.empty(m), np.empty(m)
    prev_z, prev_up, prev_down = mu, 0.0, 0.0
    for i, v in enumerate(x):
        prev_z = lam * v + (1 - lam) * prev_z
        prev_up = max(0.0, v - (mu + k * sigma) + prev_up)
        prev_down = max(0.0, (mu - k * sigma) - v + prev_down)
        z[i], up[i], down[i] = prev_z, prev_up, prev_down
    i = np.arange(1, m + 1)
    se = sigma * np.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * i)))
    none = np.full(m, np.nan)
    stats = [
        PlottedStatistic("ewma", "EWMA", z, _full(mu, m), mu - big_l * se, mu + big_l * se, se),
        PlottedStatistic("cusum_upper", "CUSUM above target", up, _full(0.0, m), none, _full(h * sigma, m),
                         _full(sigma, m)),
        PlottedStatistic("cusum_lower", "CUSUM below target", down, _full(0.0, m), none, _full(h * sigma, m),
                         _full(sigma, m)),
    ]
    fit = ChartFit("ewma", stats, 1, mu, sigma, SigmaMethod.GIVEN, np.ones(m, dtype=bool),
                   limits_source="standard values given in the settings", sigma_given="standard value")
    ch = Characteristic("Torque", Measurements(x[:, None]), unit="N m")
    rules = parse_rules("beyond-limits")
    result = CharacteristicResult(Fitted(characteristic=ch, sheet="Torque", fit=fit, rules=rules,
                                         signals=find_signals(fit, rules, ch.labels)),
                                  Assessment(performance=_performance(None)))
    read = SheetRead("Torque", ch, 1, 2, m + 1, {"A": "measurement (Torque)"}, ["Torque"],
                     [(float(v),) for v in x])
    return result, read
