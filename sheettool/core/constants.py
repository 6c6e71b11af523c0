"""Control-chart constants computed from the normal distribution rather than typed from a table.

d2 and d3 are the mean and standard deviation of the range of n standard normal values, from the
range distribution F(w) = n * integral phi(x) [Phi(x + w) - Phi(x)]^(n-1) dx (Tippett 1925;
tabulated in ASTM E2587). c4 is the mean of the sample standard deviation in sigma units.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

import numpy as np
from scipy import special

from sheettool.core.distributions import normal_pdf

MAX_SUBGROUP_SIZE = 100


def _gauss_legendre(low: float, high: float, panels: int, nodes: int) -> tuple[np.ndarray, np.ndarray]:
    """Composite Gauss-Legendre nodes and weights on [low, high]."""
    t, wt = np.polynomial.legendre.leggauss(nodes)
    edges = np.linspace(low, high, panels + 1)
    half = np.diff(edges) / 2.0
    mid = (edges[:-1] + edges[1:]) / 2.0
    return (mid[:, None] + half[:, None] * t).ravel(), (half[:, None] * wt).ravel()


# The integrands are smooth and decay like phi, so composite Gauss-Legendre on these ranges is
# accurate to about 1e-10 for n up to 100.
_X, _XW = _gauss_legendre(-9.0, 9.0, 12, 24)
_W, _WW = _gauss_legendre(0.0, 12.0, 8, 24)


def _check_n(n: int, low: int = 2) -> None:
    if not isinstance(n, int | np.integer) or not low <= n <= MAX_SUBGROUP_SIZE:
        raise ValueError(f"subgroup size must be a whole number from {low} to {MAX_SUBGROUP_SIZE}, got {n}")


def range_cdf(w: np.ndarray | float, n: int) -> np.ndarray:
    """P(W <= w) for the range W of n independent standard normal values."""
    _check_n(n)
    w = np.atleast_1d(np.asarray(w, dtype=float))
    phi = normal_pdf(_X)
    big_phi = special.ndtr(_X)
    inner = special.ndtr(_X[None, :] + np.clip(w, 0.0, None)[:, None]) - big_phi[None, :]
    out = n * (inner ** (n - 1)) @ (phi * _XW)
    return np.where(w <= 0.0, 0.0, np.clip(out, 0.0, 1.0))


@cache
def _range_moments(n: int) -> tuple[float, float]:
    tail = 1.0 - range_cdf(_W, n)
    mean = float(tail @ _WW)
    second = float((2.0 * _W * tail) @ _WW)
    return mean, float(np.sqrt(second - mean * mean))


def d2(n: int) -> float:
    """Mean of the range of n standard normal values."""
    _check_n(n)
    return _range_moments(int(n))[0]


def d3(n: int) -> float:
    """Standard deviation of the range of n standard normal values."""
    _check_n(n)
    return _range_moments(int(n))[1]


def c4(n: int) -> float:
    """Mean of the sample standard deviation of n standard normal values (any n >= 2: the gamma
    formula is exact, which the pooled standard deviation needs for its 1 + sum(n - 1) readings)."""
    if not isinstance(n, int | np.integer) or n < 2:
        raise ValueError(f"c4 needs a whole number of readings of at least 2, got {n}")
    return float(np.sqrt(2.0 / (n - 1)) * np.exp(special.gammaln(n / 2) - special.gammaln((n - 1) / 2)))


@dataclass(frozen=True)
class ChartConstants:
    """The usual factors for subgroup size n, all derived from d2, d3 and c4 at 3 sigma."""

    n: int
    d2: float
    d3: float
    c4: float
    A2: float
    A3: float
    B3: float
    B4: float
    D3: float
    D4: float
    E2: float


@cache
def constants(n: int, k: float = 3.0) -> ChartConstants:
    """Factors for subgroup size n and k-sigma limits (k = 3 gives the published tables)."""
    _check_n(n)
    dd2, dd3, cc4 = d2(n), d3(n), c4(n)
    s_ratio = np.sqrt(1.0 - cc4 * cc4) / cc4
    return ChartConstants(
        n=int(n),
        d2=dd2,
        d3=dd3,
        c4=cc4,
        A2=k / (dd2 * np.sqrt(n)),
        A3=k / (cc4 * np.sqrt(n)),
        B3=max(0.0, 1.0 - k * s_ratio),
        B4=1.0 + k * s_ratio,
        D3=max(0.0, 1.0 - k * dd3 / dd2),
        D4=1.0 + k * dd3 / dd2,
        E2=k / d2(2),
    )
