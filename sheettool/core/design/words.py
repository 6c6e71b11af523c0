"""The design's words: the method note, why a requirement cannot be met, and the trade-off between schemes."""

from __future__ import annotations

import math

from sheettool.core.design.candidates import Candidate, Sampling
from sheettool.core.design.requirements import REQUIREMENT_KEYS

METHOD = ("Candidates: the Shewhart schemes evaluate uses with the rule presets: individuals for n = 1 (the moving-"
          "range chart's own signals left out), X-bar with its R chart for n 2 to 9 and with its S chart from 10, "
          "the spread chart's limits signalling too and the pattern rules on the means only (exact zone chain, "
          "Champ and Woodall 1987; trend and alternate rules by seeded simulation); EWMA with lambda on a grid and "
          "L found by Brent's root finding so that the in-control zero-state ARL is the target (integral equation, "
          "Crowder 1987; design procedure of Lucas and Saccucci 1990); two-sided tabular CUSUM with k on a grid and"
          " h found the same way (Brook and Evans 1972 chain, bracketed by Siegmund 1985). ATS at the shift, the "
          "hours to signal it: the zero-state ARL at the shift (a fresh start with the shift present from the first "
          "point) times the "
          "sampling interval; a shift that starts between two samples is caught on average up to half an interval "
          "later. Ranked by that ATS, schemes meeting every requirement first; a mean of n readings moves by shift"
          " x sqrt(n) standard errors.")


def no_sampling(sampling: Sampling) -> str:
    """Why no (subgroup size, interval) fits the budget, and what would."""
    n, t = min(sampling.sizes), max(sampling.intervals or ())
    return (f"the sampling cannot be met: a budget of {sampling.budget:g} measurements per hour allows no subgroup "
            f"size with the intervals given; the least costly plan allowed, n = {n} every {t:g} h, takes "
            f"{n / t:.3g} measurements per hour; raise the budget to that or allow an interval of at least "
            f"{n / sampling.budget:.3g} h")


def shortfall(found: list[Candidate]) -> list[str]:
    """For each requirement that no scheme meets alongside the others, what the nearest scheme achieves."""
    messages = []
    names = [i.name for i in found[0].check.items]
    for name in names:
        others = [c for c in found if all(i.met is not False for i in c.check.items if i.name != name)]
        pool = others or found
        item = {c: next(i for i in c.check.items if i.name == name) for c in pool}
        if any(item[c].met is not False for c in pool):
            continue
        at_least = name == "arl_in_control"
        best = max(pool, key=lambda c: item[c].achieved or 0.0) if at_least else min(
            pool, key=lambda c: item[c].achieved if item[c].achieved is not None else math.inf)
        alongside = " while meeting the other requirements" if others else ""
        got = item[best]
        messages.append(f"the requirement {REQUIREMENT_KEYS[name]}, {got.required:g}, cannot be met{alongside}; "
                        f"the nearest scheme, {best.label} with {best.sampling_words}, achieves {got.achieved:.4g}")
    nearest = min(found, key=lambda c: (len(c.check.missed), c.ats_hours))
    messages.append(f"nearest overall: {nearest.label} with {nearest.sampling_words}: "
                    + "; ".join(i.words for i in nearest.check.items))
    return messages


def trade_off(found: list[Candidate], delta: float) -> list[str]:
    """The trade-off in plain words: subgroup size against frequency, chart kinds, cost and false alarms."""
    if not found:
        return []
    lines = []
    best = found[0]
    by_cost: dict[float, list[Candidate]] = {}
    for c in found:
        by_cost.setdefault(round(c.measurements_per_hour, 9), []).append(c)
    same = [group for group in by_cost.values() if len({c.n for c in group}) > 1]
    if same:
        group = max(same, key=lambda g: (len({c.n for c in g}), -min(c.ats_hours for c in g)))
        rows = {}
        for c in sorted(group, key=lambda c: c.ats_hours):
            rows.setdefault(c.n, c)
        small, large = rows[min(rows)], rows[max(rows)]
        winner = ("smaller subgroups more often win" if small.ats_hours < large.ats_hours
                  else "larger subgroups less often win")
        lines.append(f"At the same cost of {small.measurements_per_hour:.3g} measurements per hour, the best scheme "
                     f"with {small.sampling_words} catches a {delta:.3g}-sigma shift in {small.ats_hours:.3g} h, "
                     f"with {large.sampling_words} in {large.ats_hours:.3g} h: for this shift {winner}.")
    meeting = [c for c in found if c.meets]
    cheapest = min(meeting or found, key=lambda c: (c.measurements_per_hour, c.ats_hours))
    lines.append(f"Cost: the fastest scheme ({best.label}, {best.sampling_words}) takes "
                 f"{best.measurements_per_hour:.3g} measurements per hour and catches the shift in "
                 f"{best.ats_hours:.3g} h; the least costly {'meeting every requirement' if meeting else 'searched'} "
                 f"({cheapest.label}, {cheapest.sampling_words}) takes {cheapest.measurements_per_hour:.3g} per hour "
                 f"and {cheapest.ats_hours:.3g} h.")
    kinds: dict[str, Candidate] = {}
    for c in meeting or found:
        if c.family not in kinds or c.ats_hours < kinds[c.family].ats_hours:
            kinds[c.family] = c
    if len(kinds) > 1:
        names = {"shewhart": "Shewhart chart", "ewma": "EWMA", "cusum": "CUSUM"}
        listed = ", ".join(f"the best {names[f]} {c.ats_hours:.3g} h ({c.label}, {c.sampling_words})"
                           for f, c in sorted(kinds.items(), key=lambda kv: kv[1].ats_hours))
        fastest = min(kinds.values(), key=lambda c: c.ats_hours)
        moved = f"{delta * math.sqrt(fastest.n):.3g} standard errors"
        why = (f"EWMA and CUSUM add up the evidence of many points, which pays while the shift is small against "
               f"the scatter of one point (here {moved})" if fastest.family != "shewhart" else
               f"the shift moves each plotted point by {moved}, enough for single points beyond the limits to "
               "catch it soon, and Shewhart limits react to one point at once")
        among = " (schemes meeting every requirement)" if meeting else ""
        lines.append(f"Chart kinds for a {delta:.3g}-sigma shift{among}: {listed}; {why}.")
    fixed: dict[str, list[float]] = {}
    for c in found:
        if c.family == "shewhart":
            fixed.setdefault(c.preset or "", []).append(c.arl_in_control)
    if fixed:
        arls = ", ".join(f"{p} {min(a):.1f}" if max(a) - min(a) < 0.05 else f"{p} {min(a):.1f} to {max(a):.1f}"
                         for p, a in sorted(fixed.items(), key=lambda kv: -max(kv[1])))
        lines.append(f"False alarms: EWMA and CUSUM are calibrated to the in-control target; the Shewhart presets "
                     f"have their own in-control ARL, which with the spread chart's limits depends on n ({arls} "
                     "points): more rules catch shifts sooner at the price of more false alarms.")
    return lines
