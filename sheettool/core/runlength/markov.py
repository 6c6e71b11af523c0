"""The general absorbing Markov-chain engine every chart plugs into.

A chart supplies the transient transition matrix Q (transient states only; the missing row mass
is the probability of a signal) and the start state. From them (Brook and Evans 1972; Champ and
Woodall 1987; Fu and Lou 2003 for the run-length distribution):
  ARL vector    mu = (I - Q)^-1 1
  E[N^2] vector v = (I - Q)^-1 (1 + 2 Q mu),  SDRL = sqrt(v - mu^2)
  survival      P(N > t) = s0 Q^t 1
The zero-state ARL starts from the chart's own start state. The steady-state ARL here is the
*conditional* steady state (Lucas and Saccucci 1990; Champ and Woodall 1987): the scheme has run
in control for a long time without a false alarm when the shift happens, so the starting
distribution is the quasi-stationary distribution of the in-control chain, the normalized left
Perron eigenvector of Q_in-control (Darroch and Seneta 1965). The first shifted point is point 1.

A chain that almost never signals (ARL beyond about 1e7, e.g. a within-band rule alone after a large shift) makes
I - Q nearly singular: its rows sum to the tiny signal probability, which a plain LU solve loses to cancellation.
A chart that knows its exit (signal) probabilities exactly supplies them (`exits`), and such a solve is redone by
state reduction without subtraction (Grassmann, Taksar and Heyman 1985), accurate to rounding at any ARL.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import linalg, sparse
from scipy.sparse.linalg import splu

PERCENTILES: tuple[int, ...] = (5, 50, 95)
_MAX_STEPS = 200_000  # survival is iterated this far at most, then extended geometrically
TRUSTED_ARL = 1e7  # above this (or a failed LU) the solve is redone without subtraction where exits are known
STABLE_MAX_STATES = 1500  # the subtraction-free solve is dense, O(states^3); larger chains report inf there


@dataclass(frozen=True)
class RunLength:
    """The run-length figures of one scheme at one condition (mean shift, sigma ratio).

    percentiles: the p-th percentile is the smallest t with P(N <= t) >= p / 100.
    ci: a 95% confidence interval for the ARL where it is estimated (Monte Carlo), else None.
    """

    arl: float
    sdrl: float | None = None
    percentiles: dict[int, float] | None = None
    steady_state_arl: float | None = None
    ci: tuple[float, float] | None = None


Matrix = np.ndarray | sparse.sparray | sparse.spmatrix


def _solver(a: Matrix) -> Callable[[np.ndarray], np.ndarray]:
    """Factor a once (dense LU, or sparse LU for the sparse zone chains) and return its solve."""
    if sparse.issparse(a):
        return splu(sparse.csc_matrix(a)).solve
    with warnings.catch_warnings():  # a side that almost never signals is ill-conditioned, harmlessly
        warnings.simplefilter("ignore", linalg.LinAlgWarning)
        lu = linalg.lu_factor(a, check_finite=False)
    return lambda b: linalg.lu_solve(lu, b, check_finite=False)


def _identity_minus(q: Matrix) -> Matrix:
    size = q.shape[0]
    return sparse.identity(size, format="csc") - q if sparse.issparse(q) else np.eye(size) - q


def zero_state_moments(q: Matrix, start: np.ndarray,
                       exits: np.ndarray | None = None) -> tuple[float, float, np.ndarray]:
    """Zero-state ARL, SDRL and the ARL vector mu of every transient state (exits: see `absorbing_solve`)."""
    ones = np.ones(q.shape[0])
    try:
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            solve = _solver(_identity_minus(q))
            mu = solve(ones)
            second = solve(ones + 2.0 * (q @ mu))
    except (RuntimeError, linalg.LinAlgError):  # exactly singular to working precision
        mu = second = np.full(q.shape[0], np.inf)
    arl = float(start @ mu)
    if not (np.all(np.isfinite(mu)) and np.all(mu > 0) and arl <= TRUSTED_ARL) and exits is not None:
        if q.shape[0] > STABLE_MAX_STATES:
            return float("inf"), float("inf"), np.full(q.shape[0], np.inf)
        factors = _reduction(q, exits)
        mu = _reduced_solve(factors, ones)
        second = _reduced_solve(factors, ones + 2.0 * (q @ mu))
        arl = float(start @ mu)
    var = float(start @ second) - arl * arl
    return arl, float(np.sqrt(max(var, 0.0))), mu


def arl_only(q: Matrix, start: np.ndarray, exits: np.ndarray | None = None) -> float:
    """Zero-state ARL alone (one linear solve), for fine curves; inf when the chain can never signal
    (I - Q singular to working precision, e.g. the far side of a CUSUM after a large shift)."""
    try:
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            arl = float(start @ _solver(_identity_minus(q))(np.ones(q.shape[0])))
    except (RuntimeError, linalg.LinAlgError):
        arl = float("nan")
    if not (np.isfinite(arl) and 0 < arl <= TRUSTED_ARL) and exits is not None:
        return absorbing_arl(q, start, exits)
    return arl if np.isfinite(arl) and arl > 0 else float("inf")


def absorbing_arl(q: Matrix, start: np.ndarray, exits: np.ndarray) -> float:
    """Zero-state ARL by the subtraction-free solve; inf for a chain over STABLE_MAX_STATES states."""
    if q.shape[0] > STABLE_MAX_STATES:
        return float("inf")
    return float(start @ _reduced_solve(_reduction(q, exits), np.ones(q.shape[0])))


def _reduction(q: Matrix, exits: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The factors of I - Q by Gaussian elimination without subtraction, for exits = each state's exact signal
    probability: the censored chains' entries in place of Q, and the pivots.

    Eliminating in state order leaves as trailing block I minus the chain censored on the states left, whose pivot
    1 - Q_kk is its exit plus its off-diagonal row sum (Grassmann, Taksar and Heyman 1985); every step adds and
    multiplies nonnegative numbers, so the solve keeps full relative accuracy.
    """
    a = q.toarray() if sparse.issparse(q) else np.array(q, dtype=float)
    e = np.array(exits, dtype=float)
    size = a.shape[0]
    pivots = np.empty(size)
    for k in range(size):
        pivots[k] = e[k] + a[k, k + 1:].sum()
        if pivots[k] <= 0.0:  # the states left can never signal
            pivots[k:] = 0.0
            break
        col = a[k + 1:, k] / pivots[k]
        a[k + 1:, k + 1:] += np.outer(col, a[k, k + 1:])
        e[k + 1:] += col * e[k]
    return a, pivots


def _reduced_solve(factors: tuple[np.ndarray, np.ndarray], b: np.ndarray) -> np.ndarray:
    """Forward and back substitution with the factors of `_reduction` (all terms nonnegative for b >= 0)."""
    a, pivots = factors
    size = a.shape[0]
    y = np.array(b, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        for k in range(size):
            y[k + 1:] += a[k + 1:, k] * (y[k] / pivots[k])
        x = np.empty(size)
        for k in range(size - 1, -1, -1):
            x[k] = (y[k] + a[k, k + 1:] @ x[k + 1:]) / pivots[k]
    return np.where(np.isnan(x), np.inf, x)


def quasi_stationary(q: Matrix) -> np.ndarray:
    """Quasi-stationary distribution of a transient chain: normalized left Perron eigenvector of Q.

    Inverse iteration on I - Q: its smallest eigenvalue is 1 - rho (rho the Perron root), so
    v <- v (I - Q)^-1 converges to the Perron vector quickly for the slow-signalling chains of interest.
    """
    size = q.shape[0]
    v = np.full(size, 1.0 / size)
    try:
        solve = _solver(_identity_minus(q).T)
    except (RuntimeError, linalg.LinAlgError):  # rho is 1 to working precision: power iteration on Q instead
        def solve(x: np.ndarray) -> np.ndarray:
            return np.asarray(x @ q).ravel()
    for _ in range(500):
        new = np.abs(solve(v))
        new /= new.sum()
        if np.max(np.abs(new - v)) < 1e-13:
            return new
        v = new
    return v


def run_length_percentiles(q: np.ndarray, start: np.ndarray, levels: tuple[int, ...] = PERCENTILES,
                           exits: np.ndarray | None = None) -> dict[int, float]:
    """Run-length percentiles from the survival function P(N > t) = s0 Q^t 1 (Fu and Lou 2003).

    Once the hazard P(N = t + 1 | N > t) has settled to 1 - the chain's Perron root, the far tail is
    geometric and the remaining percentiles are read from it in closed form; with exact `exits` the
    hazard is s_t . exits / P(N > t), exact even when it is far below rounding of 1.
    """
    targets = sorted(levels)
    out: dict[int, float] = {}
    s = np.asarray(start, dtype=float)
    survival, hazard = 1.0, np.nan
    t = 0
    while targets and t < _MAX_STEPS and survival > 0.0:
        leaving = float(s @ exits) if exits is not None else None
        s = s @ q
        t += 1
        new = float(s.sum())
        new_hazard = 1.0 - new / survival if leaving is None else leaving / survival
        survival = new
        while targets and 1.0 - survival >= targets[0] / 100.0 - 1e-12:
            out[targets.pop(0)] = float(t)
        change = abs(new_hazard - hazard)
        if targets and t > 20 and change < 1e-11 and change <= 1e-6 * new_hazard and 0.0 < new_hazard < 1.0:
            for level in targets:  # geometric tail: survival * (1 - hazard)^j <= 1 - level / 100
                out[level] = float(t + np.ceil(np.log((1.0 - level / 100.0) / survival) / np.log1p(-new_hazard)))
            targets = []
        hazard = new_hazard
    for level in targets:
        out[level] = float("inf")
    return {level: out[level] for level in levels}


class MarkovChart:
    """Base class for a chart whose run length is an absorbing Markov chain.

    A subclass supplies `transient(shift, sigma_ratio) -> (Q, start)`; this class derives every
    run-length figure from it, the way scipy.stats' rv_continuous derives moments from a pdf.
    shift is the mean shift in standard errors of the plotted statistic, sigma_ratio the factor on sigma.
    """

    method = "Markov chain"

    def transient(self, shift: float, sigma_ratio: float) -> tuple[Matrix, np.ndarray]:
        """The transient transition matrix Q (dense or sparse) and the zero-state start vector."""
        raise NotImplementedError

    def in_control_chain(self) -> tuple[np.ndarray, np.ndarray]:
        """Q and start in control, whose quasi-stationary distribution starts the steady state."""
        return self.transient(0.0, 1.0)

    def steady_start(self) -> np.ndarray:
        """The conditional steady-state start vector (computed once per chart)."""
        if getattr(self, "_steady", None) is None:
            self._steady = quasi_stationary(self.in_control_chain()[0])
        return self._steady

    def exits(self, shift: float, sigma_ratio: float) -> np.ndarray | None:
        """The exact signal probability of each transient state (1 - row sums of Q without the cancellation),
        or None where the chart cannot give it; with it, near-singular chains are solved without subtraction."""
        return None

    def arl(self, shift: float, sigma_ratio: float = 1.0) -> float:
        """Zero-state ARL only."""
        return arl_only(*self.transient(shift, sigma_ratio), self.exits(shift, sigma_ratio))

    def run_length(self, shift: float, sigma_ratio: float = 1.0, percentiles: bool = True) -> RunLength:
        """Zero-state ARL, SDRL, percentiles and conditional steady-state ARL."""
        q, start = self.transient(shift, sigma_ratio)
        exits = self.exits(shift, sigma_ratio)
        arl, sdrl, mu = zero_state_moments(q, start, exits)
        steady = float(self.steady_start() @ mu)
        pct = run_length_percentiles(q, start, exits=exits) if percentiles and np.isfinite(arl) else None
        return RunLength(arl=arl, sdrl=sdrl, percentiles=pct, steady_state_arl=steady)


class WithCompanion(MarkovChart):
    """A chart plus an independent companion chart that signals on a point with probability p.

    The scheme signals when either does: Q is scaled by (1 - p) (independence of the subgroup
    mean and its range or standard deviation under normality).
    """

    def __init__(self, chart: MarkovChart, companion: Callable[[float, float], float], name: str) -> None:
        self.chart, self.companion, self.name = chart, companion, name
        self.method = chart.method

    def transient(self, shift: float, sigma_ratio: float) -> tuple[np.ndarray, np.ndarray]:
        """The chart's Q scaled by the probability that the companion does not signal."""
        q, start = self.chart.transient(shift, sigma_ratio)
        return q * (1.0 - self.companion(shift, sigma_ratio)), start

    def in_control_chain(self) -> tuple[np.ndarray, np.ndarray]:
        """The chart's in-control chain, scaled by the companion's in-control probability of no signal."""
        q, start = self.chart.in_control_chain()
        return q * (1.0 - self.companion(0.0, 1.0)), start

    def exits(self, shift: float, sigma_ratio: float) -> np.ndarray | None:
        """Either signals: the chart's exit e, or the companion's p where the chart does not, e + p (1 - e)."""
        e = self.chart.exits(shift, sigma_ratio)
        p = self.companion(shift, sigma_ratio)
        return None if e is None else e + p * (1.0 - e)
