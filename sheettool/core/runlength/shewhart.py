"""Shewhart limits alone: each point signals independently, so the run length is geometric.

ARL = 1 / p with p the probability that one point falls beyond a limit (common practice;
for 3-sigma limits p = 2 * Phi(-3) = 0.0027 and ARL = 370.4).
"""

from __future__ import annotations

import numpy as np
from scipy import special

from sheettool.core.constants import constants, range_cdf


def range_beyond_probability(n: int, sigma_ratio: float = 1.0, k: float = 3.0) -> float:
    """P(a subgroup range falls beyond the R chart's limits when sigma is multiplied by sigma_ratio.

    From the normal range distribution (Tippett 1925) at D3 d2 sigma and D4 d2 sigma.
    """
    c = constants(n, k)
    upper = 1.0 - float(range_cdf(c.D4 * c.d2 / sigma_ratio, n)[0])
    lower = float(range_cdf(c.D3 * c.d2 / sigma_ratio, n)[0]) if c.D3 > 0 else 0.0
    return upper + lower


def sd_beyond_probability(n: int, sigma_ratio: float = 1.0, k: float = 3.0) -> float:
    """P(a subgroup standard deviation falls beyond the S chart's limits B3 c4 sigma, B4 c4 sigma).

    (n - 1) S^2 / sigma^2 is chi-square with n - 1 degrees of freedom (normal data; common practice).
    """
    c = constants(n, k)
    dof = n - 1
    upper = float(special.chdtrc(dof, dof * (c.B4 * c.c4 / sigma_ratio) ** 2))
    lower = float(special.chdtr(dof, dof * (c.B3 * c.c4 / sigma_ratio) ** 2)) if c.B3 > 0 else 0.0
    return upper + lower


def geometric_arl(p: np.ndarray | float) -> np.ndarray:
    """Average run length 1 / p of a scheme whose points signal independently with probability p."""
    p = np.asarray(p, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(p > 0, 1.0 / p, np.inf)

