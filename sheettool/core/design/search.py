"""Choose the monitoring scheme: search the candidates against the requirements, rank them and explain.

The requirements are in requirements.py, the calibration of EWMA and CUSUM in calibration.py, the candidates in
candidates.py and the words in words.py; `design` puts them together.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from sheettool.core.design.calibration import check_target
from sheettool.core.design.candidates import Candidate, Progress, Sampling, SearchGrid, candidates
from sheettool.core.design.requirements import Requirements
from sheettool.core.design.words import METHOD, no_sampling, shortfall, trade_off
from sheettool.core.runlength.scheme import CURVE_RUNS, scheme_run_lengths
from sheettool.core.timing import THREE_SIGMA_ARL


@dataclass
class DesignResult:
    """The ranked candidates, whether any meets every requirement, and the trade-off in plain words."""

    requirements: Requirements
    sampling: Sampling
    grid: SearchGrid
    shift: float  # the shift that matters, process standard deviations
    candidates: list[Candidate]  # schemes meeting every requirement first, each group by time to catch the shift
    feasible: bool  # some candidate meets every requirement
    messages: list[str]  # which requirement cannot be met and what the nearest scheme achieves
    trade_off: list[str]
    notes: list[str] = field(default_factory=list)
    method: str = ""


def design(req: Requirements, sampling: Sampling | None = None, grid: SearchGrid | None = None,
           progress: Progress | None = None) -> DesignResult:
    """Search, rank and explain; ValueError for malformed requirements, a result flag when none can be met.
    `progress`, when given, is told (schemes judged, schemes in all) as the search goes."""
    sampling = sampling or Sampling()
    grid = grid or SearchGrid()
    delta = req.delta()
    notes = []
    if sampling.intervals is None and sampling.budget is None:
        notes.append("no interval or budget given: one subgroup an hour is assumed, so hours equal points")
    if req.arl_in_control is None and req.false_alarms_per_month is None:
        req = replace(req, arl_in_control=THREE_SIGMA_ARL)
        notes.append(f"no in-control target given: at least {THREE_SIGMA_ARL:.1f} is required, the in-control "
                     "ARL of 3-sigma limits")
    pairs = sampling.pairs()
    for _, interval in pairs:
        check_target(req.target_arl(interval))
    if not pairs:
        return DesignResult(req, sampling, grid, delta, [], False, [no_sampling(sampling)], [], notes, METHOD)
    found = candidates(req, sampling, grid, progress)
    feasible = bool(found) and found[0].meets
    messages = [] if feasible else shortfall(found)
    return DesignResult(req, sampling, grid, delta, found, feasible, messages, trade_off(found, delta),
                        notes, METHOD)


def leading(found: list[Candidate], count: int) -> list[Candidate]:
    """The schemes to draw: the best of each chart kind, then the next in the ranking, in ranking order."""
    firsts = {}
    for c in found:
        firsts.setdefault(c.family, c)
    chosen = set(list(firsts.values())[:count])
    for c in found:
        if len(chosen) >= count:
            break
        chosen.add(c)
    return [c for c in found if c in chosen]


def arl_curve(candidate: Candidate, shifts: tuple[float, ...]) -> list[float]:
    """The candidate's zero-state ARL at each mean shift (process sigmas), for the comparison chart."""
    result = scheme_run_lengths(candidate.scheme, [(float(s), 1.0) for s in shifts], full=False, runs=CURVE_RUNS)
    return [float(rl.arl) for rl in result.results]


CURVE_SHIFTS: tuple[float, ...] = tuple(float(s) for s in np.round(np.linspace(0.0, 3.0, 31), 10))
