"""p, np, c and u charts: exact cell probabilities from the binomial and Poisson distributions.

Every attribute chart plots a count X (or X / n) standardized with its in-control mean and standard
error: z = (X - mean0) / se0, with mean0 = n p0, se0 = sqrt(n p0 (1 - p0)) for p and np (binomial,
X ~ Bin(n, p1)) and mean0 = n u0, se0 = sqrt(n u0) for c (n = 1) and u (Poisson, X ~ Poisson(n u1)).
The p and np charts (and the c and u charts) therefore share their run length. The discrete
values fall into the cells of the zone chain of Champ and Woodall (1987), points exactly on a
threshold included, so zone rules and limits alike are exact. A lower limit below zero (as drawn,
floored at zero) can never be crossed, which the standardized support shows by itself.

A base period without a defective gives a rate of zero: the chart (center and UCL 0) signals on any
defective, and in control never; a chain that can never signal has no run length to solve for, so
the rate is taken as RATE_FLOOR (one in 10^9 units) wherever a spread or probability needs it, and
the in-control ARL shown is then the large finite value at that rate (the evaluation says so).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from sheettool.core.distributions import Counts
from sheettool.core.rules import Rule
from sheettool.core.runlength.zones import ZoneChain, discrete_cell_probabilities

RATE_FLOOR = 1e-9  # per unit: the rate a zero rate is taken as where a spread or probability needs one


@dataclass(frozen=True)
class CountModel:
    """The count behind an attribute chart: binomial (n, rate) or Poisson (n * rate)."""

    family: str  # "binomial" or "poisson"
    n: float
    rate0: float

    def __post_init__(self) -> None:
        if self.family == "binomial":
            if not 0.0 <= self.rate0 < 1.0:
                raise ValueError(f"p0 must be a proportion from 0 to below 1, got {self.rate0}")
            if self.n < 1 or self.n != int(self.n):
                raise ValueError(f"n (units inspected per subgroup) must be a whole number >= 1, got {self.n}")
        elif self.family == "poisson":
            if not self.rate0 >= 0.0:
                raise ValueError(f"the in-control defect rate must be zero or more, got {self.rate0}")
            if not self.n > 0:
                raise ValueError(f"n (units per subgroup) must be positive, got {self.n}")
        else:
            raise ValueError(f"unknown count family '{self.family}'")

    @property
    def mean0(self) -> float:
        """The in-control mean count per subgroup: n times the rate."""
        return self.n * self.rate0

    @property
    def se0(self) -> float:
        """In-control standard error of the count (at RATE_FLOOR when the rate is zero)."""
        rate = self.rate0 or RATE_FLOOR
        if self.family == "binomial":
            return float(np.sqrt(self.n * rate * (1.0 - rate)))
        return float(np.sqrt(self.n * rate))

    def rate_at(self, shift: float) -> float:
        """The rate moved by `shift` standard errors of the plotted statistic (kept within its range)."""
        rate = self.rate0 + shift * self.se0 / self.n
        return float(np.clip(rate, 0.0, 1.0) if self.family == "binomial" else max(rate, 0.0))

    def check_rate(self, rate: float) -> None:
        """Raise ValueError when a rate is outside the family's range."""
        if not np.isfinite(rate) or rate < 0 or (self.family == "binomial" and rate > 1):
            what = "a proportion from 0 to 1" if self.family == "binomial" else "zero or positive"
            raise ValueError(f"the shifted rate must be {what}, got {rate}")

    def support(self, rate: float, cuts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Standardized support and probabilities at `rate`, exact for the cells the cuts make.

        Only the counts next to a threshold (mean0 + cut * se0, two either side) are kept one by one; the mass of
        every stretch of counts between them lies in one cell and is carried by one of its counts (from the cdf or,
        above, the survival function). The work is thus a few points per cut, however many units are inspected
        (1e12 units inspected once needed an array of 4e10 counts).
        """
        self.check_rate(rate)
        rate = rate or RATE_FLOOR
        dist = Counts(self.family, self.n, rate)
        top = float(self.n) if self.family == "binomial" else None
        thresholds = self.mean0 + np.asarray(cuts, dtype=float) * self.se0
        near = np.unique(np.floor(thresholds)[:, None] + np.arange(-2, 4)[None, :])
        near = near[(near >= 0) & (near <= (np.inf if top is None else top))]
        if near.size == 0:  # every threshold beyond the support (a tiny n): the support itself is short
            near = np.arange(0, (top if top is not None else 0) + 1, dtype=float)
        gaps = np.flatnonzero(np.diff(near) > 1)  # counts strictly between near[g] and near[g + 1]
        x = [near, near[gaps] + 1]
        pmf = [dist.pmf(near), dist.cdf(near[gaps + 1] - 1) - dist.cdf(near[gaps])]
        if near[0] > 0:
            x.append(near[:1] - 1)
            pmf.append(dist.cdf(near[:1] - 1))
        if top is None or near[-1] < top:
            x.append(near[-1:] + 1)
            pmf.append(dist.sf(near[-1:]))
        return (np.concatenate(x) - self.mean0) / self.se0, np.concatenate(pmf)

    def sample(self, rng: np.random.Generator, rate: float, shape: tuple[int, int]) -> np.ndarray:
        """Standardized counts drawn at `rate`, for simulation."""
        rate = rate or RATE_FLOOR
        if self.family == "binomial":
            counts = rng.binomial(int(self.n), rate, shape)
        else:
            counts = rng.poisson(self.n * rate, shape)
        return (counts - self.mean0) / self.se0


def attribute_chain(model: CountModel, rules: list[Rule]) -> ZoneChain:
    """The zone chain of an attribute chart; its `shift` argument is the rate itself (p1, u1 or c1)."""

    def cells(cuts: np.ndarray, rate: float, _sigma_ratio: float) -> np.ndarray:
        z, pmf = model.support(rate, cuts)
        return discrete_cell_probabilities(cuts, z, pmf)

    return ZoneChain(rules, cells, in_control=(model.rate0, 1.0))
