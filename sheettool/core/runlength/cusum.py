"""Tabular CUSUM run length: the Markov chain of Brook and Evans (1972).

Upper side C_t = max(0, C_(t-1) + X_t - k), signal when C_t > h (k, h and X in standard errors).
The decision interval is cut into m cells of width w = 2h / (2m - 1): state 0 is C < w/2 (it holds
the atom at zero), state i is centred on i w; transitions use the normal distribution from the
centre of a cell (Brook and Evans 1972). The midpoint error falls like 1/m^2, so m is doubled and
the last two results are combined by Richardson extrapolation until the ARL settles in the 4th
significant figure. The lower side is the upper side of -X.

Two-sided scheme, ARL without head start: 1/ARL = 1/ARL+ + 1/ARL- (Van Dobben de Bruyn 1968; Lucas
and Crosier 1982). It is exact for the zero-state ARL when h <= 2k, because the two sides can then
never be non-zero together; for h > 2k (e.g. k = 0.5, h = 4 or 5) it is an approximation, known to
be very close (for k = 0.5, h = 5 it agrees with the joint chain to 5 figures). With a head start
the combination is poor, so the ARL comes from the joint chain of both sides (Woodall 1984):
states (upper cell, lower cell) reachable from the start, Richardson-extrapolated over two cell
counts. The joint chain also gives the SDRL, percentiles and steady-state ARL of the two-sided
scheme (at JOINT_CELLS cells per side, accurate to about 3 significant figures).
"""

from __future__ import annotations

import numpy as np
from scipy import sparse, special

from sheettool.core.runlength.markov import MarkovChart, arl_only

_TOLERANCE = 2e-5
_START_CELLS = 50
JOINT_CELLS = 60


class OneSidedCusum(MarkovChart):
    """Upper one-sided CUSUM (k, h) on a chain of `cells` states, optionally with a head start."""

    method = "Markov chain (Brook and Evans 1972)"

    def __init__(self, k: float, h: float, cells: int, head_start: float = 0.0) -> None:
        self.k, self.h, self.cells, self.head_start = float(k), float(h), int(cells), float(head_start)
        self.width = 2.0 * self.h / (2 * self.cells - 1)
        self.centres = np.arange(self.cells) * self.width

    def transient(self, shift: float, sigma_ratio: float) -> tuple[np.ndarray, np.ndarray]:
        """Q and start of one side's chain after a shift, from the normal cell probabilities (Brook and Evans 1972)."""
        # cell j (j >= 1) spans ((j - 1/2) w, (j + 1/2) w); cell 0 is everything below w / 2
        upper_edges = (np.arange(self.cells) + 0.5) * self.width
        cdf = special.ndtr((upper_edges[None, :] - self.centres[:, None] + self.k - shift) / sigma_ratio)
        q = np.diff(np.concatenate([np.zeros((self.cells, 1)), cdf], axis=1), axis=1)
        # a head start between two cell centres: ARL read by linear interpolation between them
        pos = min(self.head_start / self.width, self.cells - 1.0)
        low = int(np.floor(pos))
        start = np.zeros(self.cells)
        start[low] = 1.0 - (pos - low)
        if low + 1 < self.cells:
            start[low + 1] = pos - low
        return q, start


def one_sided_arl(k: float, h: float, shift: float, sigma_ratio: float = 1.0, head_start: float = 0.0,
                  scale: float | None = None) -> float:
    """Converged zero-state ARL of the upper CUSUM: cells doubled, Richardson-extrapolated.

    With `scale` (the other side's ARL) the refinement stops once this side's share of
    1/ARL+ + 1/ARL- is settled, which spares refining a side that hardly ever signals.
    """
    cells = _START_CELLS
    prev = None
    coarse = arl_only(*OneSidedCusum(k, h, cells, head_start).transient(shift, sigma_ratio))
    for _ in range(6):
        cells *= 2
        fine = arl_only(*OneSidedCusum(k, h, cells, head_start).transient(shift, sigma_ratio))
        if not np.isfinite(fine):
            return fine  # this side practically never signals
        extrapolated = (4.0 * fine - coarse) / 3.0  # midpoint error ~ c / m^2 (Richardson)
        if prev is not None:
            change = abs(extrapolated - prev)
            if change <= _TOLERANCE * extrapolated or (scale and change / extrapolated**2 <= _TOLERANCE / scale):
                return extrapolated
        prev, coarse = extrapolated, fine
    return prev


def two_sided_arl(k: float, h: float, shift: float, sigma_ratio: float = 1.0, head_start: float = 0.0) -> float:
    """Two-sided CUSUM ARL: 1/ARL = 1/ARL+ + 1/ARL- without head start, else the joint chain."""
    check_cusum(k, h, head_start)
    if head_start > 0.0:
        coarse = TwoSidedCusum(k, h, JOINT_CELLS // 2, head_start).arl(shift, sigma_ratio)
        fine = TwoSidedCusum(k, h, JOINT_CELLS, head_start).arl(shift, sigma_ratio)
        return (4.0 * fine - coarse) / 3.0  # Richardson, as for one side
    near = one_sided_arl(k, h, abs(shift), sigma_ratio, head_start)  # the side the shift moves toward
    far = one_sided_arl(k, h, -abs(shift), sigma_ratio, head_start, scale=near)
    return 1.0 / (1.0 / near + 1.0 / far)


class TwoSidedCusum(MarkovChart):
    """Joint Brook-Evans chain of the upper and lower CUSUM (Woodall 1984), `cells` per side.

    From cell centres (c_i, c_j) the next upper value is c_i + x - k and the next lower c_j - x - k:
    both move with the same x, so each state reaches a path of cell pairs, one per x-segment
    between the cell edges of either side. Only states reachable from the start are kept.
    """

    method = "joint Markov chain of both sides (Woodall 1984)"

    def __init__(self, k: float, h: float, cells: int = JOINT_CELLS, head_start: float = 0.0) -> None:
        self.k, self.h, self.cells, self.head_start = float(k), float(h), int(cells), float(head_start)
        m = self.cells
        w = 2.0 * self.h / (2 * m - 1)
        centre = np.arange(m) * w
        edges = (np.arange(1, m) - 0.5) * w  # lower edges of cells 1 .. m-1 (each side)
        up, down = np.divmod(np.arange(m * m), m)
        lo = centre[down] - self.k - self.h  # x at or below: the lower side signals
        hi = self.h - centre[up] + self.k  # x at or above: the upper side signals
        cuts = np.concatenate([edges[None, :] - centre[up, None] + self.k,
                               centre[down, None] - self.k - edges[None, :]], axis=1)
        cuts = np.sort(np.clip(np.concatenate([lo[:, None], cuts, hi[:, None]], axis=1), lo[:, None], hi[:, None]),
                       axis=1)
        seg_lo, seg_hi = cuts[:, :-1], cuts[:, 1:]
        mid = (seg_lo + seg_hi) / 2.0
        new_up = np.searchsorted(edges, mid + centre[up, None] - self.k, side="right")
        new_down = np.searchsorted(edges, centre[down, None] - self.k - mid, side="right")
        keep = seg_hi > seg_lo
        rows = np.broadcast_to(np.arange(m * m)[:, None], mid.shape)[keep]
        dest = (new_up * m + new_down)[keep]
        # start: the head start on both sides, read between the two nearest cell centres
        pos = min(self.head_start / w, m - 1.0)
        i = int(np.floor(pos))
        f = pos - i
        weights: dict[int, float] = {}
        for a, wa in ((i, 1.0 - f), (i + 1, f)):
            for b, wb in ((i, 1.0 - f), (i + 1, f)):
                if wa * wb > 0 and a < m and b < m:
                    weights[a * m + b] = wa * wb
        from scipy.sparse.csgraph import breadth_first_order  # here: evaluations without a CUSUM never load it

        graph = sparse.csr_matrix((np.ones(len(rows)), (rows, dest)), shape=(m * m, m * m))
        reach = np.unique(np.concatenate([breadth_first_order(graph, s, return_predecessors=False)
                                          for s in weights]))
        index = np.full(m * m, -1)
        index[reach] = np.arange(len(reach))
        ok = (index[rows] >= 0) & (index[dest] >= 0)
        self._rows, self._dest = index[rows[ok]], index[dest[ok]]
        self._lo, self._hi = seg_lo[keep][ok], seg_hi[keep][ok]
        self.states = len(reach)
        self._start = np.zeros(self.states)
        for state, weight in weights.items():
            self._start[index[state]] = weight

    def transient(self, shift: float, sigma_ratio: float) -> tuple[sparse.csc_matrix, np.ndarray]:
        """Q (sparse) and start of the joint chain of both sums after a shift."""
        p = special.ndtr((self._hi - shift) / sigma_ratio) - special.ndtr((self._lo - shift) / sigma_ratio)
        q = sparse.csc_matrix((p, (self._rows, self._dest)), shape=(self.states, self.states))
        return q, self._start


def combination_is_exact(k: float, h: float, head_start: float = 0.0) -> bool:
    """True when the two sides can never be non-zero together (h <= 2k, no head start)."""
    return h <= 2.0 * k and head_start == 0.0


def siegmund_arl(k: float, h: float, shift: float) -> float:
    """Siegmund's (1985) approximation of the one-sided ARL, b = h + 1.166."""
    d, b = shift - k, h + 1.166
    if abs(d) < 1e-12:
        return b * b
    return (np.exp(-2.0 * d * b) + 2.0 * d * b - 1.0) / (2.0 * d * d)


def check_cusum(k: float, h: float, head_start: float = 0.0) -> None:
    """Raise ValueError naming a bad CUSUM parameter."""
    if not k >= 0.0:
        raise ValueError(f"CUSUM k must be zero or positive (standard errors), got {k}")
    if not h > 0.0:
        raise ValueError(f"CUSUM h must be a positive number of standard errors, got {h}")
    if not 0.0 <= head_start < h:
        raise ValueError(f"CUSUM head start must be from 0 up to h, got {head_start}")
