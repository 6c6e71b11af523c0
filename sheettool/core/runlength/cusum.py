"""Tabular CUSUM run length: the Markov chain of Brook and Evans (1972).

Upper side C_t = max(0, C_(t-1) + X_t - k), signal when C_t > h (k, h and X in standard errors).
The decision interval is cut into m cells of width w = 2h / (2m - 1): state 0 is C < w/2 (it holds
the atom at zero), state i is centred on i w; transitions use the normal distribution from the
centre of a cell (Brook and Evans 1972). The midpoint error falls like 1/m^2, so m is doubled and
the last two results are combined by Richardson extrapolation until the ARL settles in the 4th
significant figure. The lower side is the upper side of -X.

Two-sided scheme: 1/ARL = 1/ARL+ + 1/ARL- (Van Dobben de Bruyn 1968; Lucas and Crosier 1982). It is
exact for the zero-state ARL when h <= 2k, because the two sides can then never be non-zero
together; for h > 2k (e.g. k = 0.5, h = 4 or 5) it is an approximation, known to be very close
for the zero-state ARL without head start. With a head start (both sides starting at the same
value, Lucas and Crosier 1982) the combination is an approximation as well.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from sheettool.core.runlength.markov import MarkovChart, arl_only

_TOLERANCE = 2e-5
_START_CELLS = 50


class OneSidedCusum(MarkovChart):
    """Upper one-sided CUSUM (k, h) on a chain of `cells` states, optionally with a head start."""

    method = "Markov chain (Brook and Evans 1972)"

    def __init__(self, k: float, h: float, cells: int, head_start: float = 0.0) -> None:
        self.k, self.h, self.cells, self.head_start = float(k), float(h), int(cells), float(head_start)
        self.width = 2.0 * self.h / (2 * self.cells - 1)
        self.centres = np.arange(self.cells) * self.width

    def transient(self, shift: float, sigma_ratio: float) -> tuple[np.ndarray, np.ndarray]:
        # cell j (j >= 1) spans ((j - 1/2) w, (j + 1/2) w); cell 0 is everything below w / 2
        upper_edges = (np.arange(self.cells) + 0.5) * self.width
        cdf = stats.norm.cdf((upper_edges[None, :] - self.centres[:, None] + self.k - shift) / sigma_ratio)
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
        extrapolated = (4.0 * fine - coarse) / 3.0  # midpoint error ~ c / m^2 (Richardson)
        if prev is not None:
            change = abs(extrapolated - prev)
            if change <= _TOLERANCE * extrapolated or (scale and change / extrapolated**2 <= _TOLERANCE / scale):
                return extrapolated
        prev, coarse = extrapolated, fine
    return prev


def two_sided_arl(k: float, h: float, shift: float, sigma_ratio: float = 1.0, head_start: float = 0.0) -> float:
    """Two-sided CUSUM ARL by 1/ARL = 1/ARL+ + 1/ARL- (see the module note on exactness)."""
    check_cusum(k, h, head_start)
    near = one_sided_arl(k, h, abs(shift), sigma_ratio, head_start)  # the side the shift moves toward
    far = one_sided_arl(k, h, -abs(shift), sigma_ratio, head_start, scale=near)
    return 1.0 / (1.0 / near + 1.0 / far)


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
