"""Exact run length of any mix of K/M zone rules: the Markov chain of Champ and Woodall (1987).

The thresholds of all rules cut the standardized axis into cells (open intervals and the cut
points themselves, which carry probability only for discrete statistics). A state is the part of
the recent history that can still matter: for each counted side of each rule, the ages of the
flagged points that some future window could still complete into K of M. States are built by
exploring the histories reachable from the empty start (no points yet: the window is what there
is, as in `sheettool.core.rules`), then equivalent states are merged by partition refinement
(Moore 1956), so the chain is minimal for the rules and valid for every set of cell probabilities.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import cache

import numpy as np
from scipy import sparse, special

from sheettool.core.rules import Rule, zone_flags
from sheettool.core.runlength.markov import MarkovChart

MAX_STATES = 6000  # beyond this the exact chain is too large; callers fall back to simulation

_Counter = tuple[int, int, np.ndarray]  # K, M, flag per cell


class TooManyStates(ValueError):
    """The exact chain of a rule set would exceed MAX_STATES states."""


@cache
def _prune(ages: tuple[int, ...], k: int, m: int) -> tuple[int, ...]:
    """Drop flagged points that no future window of M points could complete to K flags."""
    keep = []
    for a in ages:
        # window ending j points from now holds the old points of age <= m - 1 - j plus j new ones
        if any(sum(1 for b in ages if b <= m - 1 - j) + j >= k for j in range(1, m - a)):
            keep.append(a)
    return tuple(keep)


def zone_cuts(rules: list[Rule]) -> np.ndarray:
    """The sorted distinct thresholds (standard errors) of the K/M rules."""
    cuts = {0.0} if any(r.kind == "same_side" and r.z == 0 for r in rules) else set()
    for r in rules:
        if r.z > 0:
            cuts.update((r.z, -r.z))
    return np.array(sorted(cuts))


def cell_values(cuts: np.ndarray) -> np.ndarray:
    """One representative value per cell: below the first cut, each cut, between cuts, above the last."""
    reps = [cuts[0] - 1.0]
    for i, c in enumerate(cuts):
        reps.append(c)
        reps.append((c + cuts[i + 1]) / 2.0 if i + 1 < len(cuts) else c + 1.0)
    return np.array(reps)


class ZoneChain(MarkovChart):
    """The minimal chain of a rule set; `cell_probabilities` is the hook a statistic supplies."""

    method = "Markov chain (Champ and Woodall 1987)"

    def __init__(self, rules: list[Rule],
                 cell_probabilities: Callable[[np.ndarray, float, float], np.ndarray] | None = None,
                 in_control: tuple[float, float] = (0.0, 1.0)) -> None:
        zone = list(rules)
        if not zone or not all(r.is_zone for r in zone):
            raise ValueError("the exact chain takes K/M rules only; trend and alternate rules are simulated")
        self.rules = zone
        self._cell_probabilities = cell_probabilities or normal_cell_probabilities
        self.in_control = in_control
        self.cuts, self.next, self.start_state = _structure(tuple(zone))
        self._rows, self._cells = np.nonzero(self.next >= 0)
        self._cols = self.next[self._rows, self._cells]
        self._signals = (self.next < 0).astype(float)  # per state and cell: 1 where the point signals

    @property
    def states(self) -> int:
        """Number of transient states of the minimal chain."""
        return int(self.next.shape[0])

    def cell_probabilities(self, shift: float, sigma_ratio: float) -> np.ndarray:
        """Probability of each cell for one point."""
        return self._cell_probabilities(self.cuts, shift, sigma_ratio)

    def transient(self, shift: float, sigma_ratio: float) -> tuple[sparse.csc_matrix, np.ndarray]:
        """Q (sparse) and start of the zone chain after a shift, from the cell probabilities."""
        # each state has at most one successor per cell: Q is sparse (duplicates are summed)
        p = self.cell_probabilities(shift, sigma_ratio)
        b = self.states
        q = sparse.csc_matrix((p[self._cells], (self._rows, self._cols)), shape=(b, b))
        start = np.zeros(b)
        start[self.start_state] = 1.0
        return q, start

    def in_control_chain(self) -> tuple[sparse.csc_matrix, np.ndarray]:
        """The chain at the in-control condition."""
        return self.transient(*self.in_control)

    def exits(self, shift: float, sigma_ratio: float) -> np.ndarray:
        """Each state's signal probability, summed over the cells that signal from it (no 1 - row sum)."""
        return self._signals @ self.cell_probabilities(shift, sigma_ratio)


def normal_cell_probabilities(cuts: np.ndarray, shift: float, sigma_ratio: float) -> np.ndarray:
    """Cell probabilities of a normal point with mean `shift` and sd `sigma_ratio` (standard errors)."""
    cdf = special.ndtr((cuts - shift) / sigma_ratio)
    between = np.diff(np.concatenate([[0.0], cdf, [1.0]]))
    out = np.zeros(2 * len(cuts) + 1)
    out[0::2] = between
    return out


def cell_of(cuts: np.ndarray, z: np.ndarray) -> np.ndarray:
    """Cell index of each standardized value: 2i for the interval below cut i, 2i + 1 for cut i itself."""
    z = np.asarray(z, dtype=float)
    on = np.isclose(z[:, None], cuts[None, :], rtol=0.0, atol=1e-9)
    return np.where(on.any(axis=1), 2 * np.argmax(on, axis=1) + 1, 2 * np.searchsorted(cuts, z))


def discrete_cell_probabilities(cuts: np.ndarray, z: np.ndarray, pmf: np.ndarray) -> np.ndarray:
    """Cell probabilities of a discrete statistic with standardized support z and masses pmf."""
    out = np.zeros(2 * len(cuts) + 1)
    np.add.at(out, cell_of(cuts, z), pmf)
    return out


@cache
def _structure(rules: tuple[Rule, ...]) -> tuple[np.ndarray, np.ndarray, int]:
    """Cuts, minimal transition table and start state of a rule set (built once per rule set)."""
    cuts = zone_cuts(list(rules))
    reps = cell_values(cuts)
    counters: list[_Counter] = [(r.k, r.m, f) for r in rules for f in zone_flags(r, reps)]
    nxt, start = _minimal_chain(counters, len(reps))
    return cuts, nxt, start


def _minimal_chain(counters: list[_Counter], cells: int) -> tuple[np.ndarray, int]:
    """Explore reachable histories from the empty one, then merge equivalent states."""
    empty = tuple(() for _ in counters)
    index = {empty: 0}
    order = [empty]
    rows: list[list[int]] = []
    i = 0
    while i < len(order):
        state = order[i]
        row = []
        for c in range(cells):
            nxt = _step(state, counters, c)
            if nxt is None:
                row.append(-1)
                continue
            if nxt not in index:
                if len(order) >= MAX_STATES:
                    raise TooManyStates(f"the rules need more than {MAX_STATES} chain states")
                index[nxt] = len(order)
                order.append(nxt)
            row.append(index[nxt])
        rows.append(row)
        i += 1
    nxt_all = np.array(rows, dtype=int)
    block = _refine(nxt_all)
    reps = np.unique(block, return_index=True)[1]
    minimal = np.where(nxt_all[reps] >= 0, block[np.maximum(nxt_all[reps], 0)], -1)
    return minimal, int(block[0])


def _step(state: tuple, counters: list[_Counter], cell: int) -> tuple | None:
    """The history after one more point in `cell`, or None when a rule signals."""
    out = []
    for ages, (k, m, flag) in zip(state, counters, strict=True):
        older = tuple(a + 1 for a in ages if a + 1 <= m - 2)
        if flag[cell]:
            if len(ages) + 1 >= k:
                return None
            out.append(_prune((0, *older), k, m))
        else:
            out.append(_prune(older, k, m))
    return tuple(out)


def _refine(nxt: np.ndarray) -> np.ndarray:
    """Moore's partition refinement: states with the same future under every cell share a block."""
    block = np.zeros(nxt.shape[0], dtype=int)
    count = 1
    while True:
        target = np.where(nxt >= 0, block[np.maximum(nxt, 0)], -1)
        keys = np.concatenate([block[:, None], target], axis=1)
        _, new = np.unique(keys, axis=0, return_inverse=True)
        new = new.ravel()
        new_count = int(new.max()) + 1
        if new_count == count:
            return new
        block, count = new, new_count
