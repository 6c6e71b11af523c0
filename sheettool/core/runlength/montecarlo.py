"""Monte Carlo run lengths for any rule mix, including `trend` and `alternate`.

Many runs are simulated at once in blocks of points (numpy, seeded): each block is appended to the
last points of every unfinished run, every rule is tested on the whole block at once (windowed
counts by cumulative sums, streaks by a running maximum of break positions), and the runs that
signalled are taken out. The rules are the same predicates as `sheettool.core.rules` uses on data.
The ARL's 95% confidence interval is mean +/- 1.96 SD / sqrt(runs) (normal approximation, central
limit theorem).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from sheettool.core.rules import Rule, zone_flags
from sheettool.core.runlength.markov import PERCENTILES, RunLength

Sampler = Callable[[np.random.Generator, tuple[int, int]], np.ndarray]
MAX_POINTS = 2_000_000  # a run still going after this many points is reported as an error
_CHUNK = 25_000  # runs simulated together


def normal_sampler(shift: float, sigma_ratio: float) -> Sampler:
    """Standardized normal points with mean `shift` and standard deviation `sigma_ratio`."""
    return lambda rng, shape: shift + sigma_ratio * rng.standard_normal(shape)


def _positions(width: int) -> type[np.signedinteger]:
    """The narrowest integer type for positions and counts within a block: 16 bits halve the memory traffic."""
    return np.int16 if width < np.iinfo(np.int16).max else np.int64


def _streak(flag: np.ndarray) -> np.ndarray:
    """Length of the run of True ending at each position, along axis 1."""
    idx = np.arange(flag.shape[1], dtype=_positions(flag.shape[1]))
    last_break = np.maximum.accumulate(np.where(flag, -1, idx), axis=1)
    return idx - last_break


def _block_hits(full: np.ndarray, rules: list[Rule], context: int) -> np.ndarray:
    """Where a rule completes, for the points after the first `context` columns of `full`."""
    hit = np.zeros((full.shape[0], full.shape[1] - context), dtype=bool)
    steps = np.diff(full, axis=1)
    for rule in rules:
        if rule.kind == "trend":
            for moving in (steps > 0, steps < 0):
                hit |= _streak(moving)[:, context - 1:] >= rule.m - 1
        elif rule.kind == "alternate":
            hit |= _streak(steps[:, 1:] * steps[:, :-1] < 0)[:, context - 2:] >= rule.m - 2
        else:
            for flag in zone_flags(rule, full):
                if rule.k == 1:
                    hit |= flag[:, context:]
                    continue
                csum = np.cumsum(flag, axis=1, dtype=_positions(full.shape[1]))
                width = full.shape[1]
                # flagged points among the last m ending at each block position: csum[t] - csum[t - m]
                count = csum[:, context:] - csum[:, context - rule.m:width - rule.m]
                hit |= flag[:, context:] & (count >= rule.k)
    return hit


def simulate_run_lengths(rules: list[Rule], sampler: Sampler, runs: int, seed: int,
                         extra: float = 0.0) -> np.ndarray:
    """Run lengths of `runs` independent runs; `extra` is a companion chart's per-point signal probability."""
    if runs < 2:
        raise ValueError(f"at least two simulated runs are needed, got {runs}")
    rng = np.random.default_rng(seed)
    context = max(2, max(r.m for r in rules))
    out = []
    for first in range(0, runs, _CHUNK):
        active = min(_CHUNK, runs - first)
        last = np.full((active, context), np.nan)  # no points yet: the window is what there is
        elapsed, block = 0, 32
        while last.shape[0]:
            if elapsed > MAX_POINTS:
                raise ValueError(f"simulated runs did not signal within {MAX_POINTS} points")
            full = np.concatenate([last, sampler(rng, (last.shape[0], block))], axis=1)
            hit = _block_hits(full, rules, context)
            if extra > 0.0:
                hit |= rng.random(hit.shape) < extra
            done = hit.any(axis=1)
            out.append(elapsed + np.argmax(hit[done], axis=1) + 1)
            last = full[~done, -context:]
            elapsed += block
            block = min(block * 2, 1024)
    return np.concatenate(out)


def summarize(lengths: np.ndarray) -> RunLength:
    """ARL with its 95% confidence interval, SDRL and percentiles of simulated run lengths."""
    n = len(lengths)
    arl = float(np.mean(lengths))
    sdrl = float(np.std(lengths, ddof=1))
    half = 1.96 * sdrl / np.sqrt(n)
    pct = {p: float(np.quantile(lengths, p / 100.0, method="inverted_cdf")) for p in PERCENTILES}
    return RunLength(arl=arl, sdrl=sdrl, percentiles=pct, ci=(float(arl - half), float(arl + half)))
