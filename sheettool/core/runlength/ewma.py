"""EWMA chart run length: the ARL integral equation solved by Gauss-Legendre quadrature.

Z_t = lambda X_t + (1 - lambda) Z_(t-1), Z_0 = 0, with asymptotic limits
+/- L sqrt(lambda / (2 - lambda)) in standard errors of X, as in the tables of Lucas and Saccucci
(1990). The ARL from Z = x solves L(x) = 1 + integral_{-h}^{h} L(y) f(y | x) dy (Crowder 1987);
replacing the integral by composite Gauss-Legendre quadrature (the Nystroem method) turns the
nodes into the states of an absorbing chain with Q_ij = w_j f(x_j | x_i), which plugs into the
general engine (zero state: an extra start state at Z_0 = 0). Unlike the midpoint Markov chain of
Lucas and Saccucci, whose error falls like 1/m^2, quadrature converges exponentially; the nodes
are doubled until the ARL no longer changes in the 5th significant figure.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from sheettool.core.distributions import normal_pdf
from sheettool.core.parameters import EwmaParameters
from sheettool.core.runlength.markov import MarkovChart, arl_only
from sheettool.core.runlength.results import Performance, ShiftArl
from sheettool.core.timing import ats_hours, false_alarms_per_month

_NODES_PER_PANEL = 8
_TOLERANCE = 2e-5  # relative change between two refinements: 4 significant figures with margin
_MAX_POINTS = 100_000  # the limits-as-drawn sum is carried this far at most before its geometric tail


_LEGENDRE = np.polynomial.legendre.leggauss(_NODES_PER_PANEL)


def _nodes(low: float, high: float, panels: int) -> tuple[np.ndarray, np.ndarray]:
    t, wt = _LEGENDRE
    edges = np.linspace(low, high, panels + 1)
    half = np.diff(edges) / 2.0
    mid = (edges[:-1] + edges[1:]) / 2.0
    return (mid[:, None] + half[:, None] * t).ravel(), (half[:, None] * wt).ravel()


class EwmaChart(MarkovChart):
    """EWMA (lambda, L) of a statistic in standard-error units; panels=None converges on its own."""

    method = "integral equation with Gauss-Legendre quadrature (Crowder 1987; tables of Lucas and Saccucci 1990)"

    def __init__(self, lam: float, L: float, panels: int | None = None,
                 check: tuple[tuple[float, float], ...] = ((0.0, 1.0), (1.0, 1.0))) -> None:
        if not 0.0 < lam <= 1.0:
            raise ValueError(f"EWMA lambda must be in (0, 1], got {lam}")
        if not L > 0.0:
            raise ValueError(f"EWMA L must be a positive number of standard errors, got {L}")
        self.lam, self.L = float(lam), float(L)
        self.h = self.L * np.sqrt(self.lam / (2.0 - self.lam))
        if panels is None:
            panels = self._converge(check)
        self.panels = panels
        self.x, self.w = _nodes(-self.h, self.h, panels)

    def _converge(self, check: tuple[tuple[float, float], ...]) -> int:
        # start with panels about one kernel width wide, then double until the ARLs settle
        panels = max(2, int(np.ceil(self.h / self.lam)))
        prev = None
        for _ in range(8):
            chart = EwmaChart(self.lam, self.L, panels=panels)
            now = np.array([arl_only(*chart.transient(s, r)) for s, r in check])
            if prev is not None and np.all(np.abs(now - prev) <= _TOLERANCE * np.abs(now)):
                return panels
            prev, panels = now, panels * 2
        raise ValueError("the EWMA ARL did not converge; check lambda and L")

    def transient(self, shift: float, sigma_ratio: float) -> tuple[np.ndarray, np.ndarray]:
        """Q and start of the integral equation discretized at the quadrature nodes, after a shift."""
        lam, x, w = self.lam, self.x, self.w
        scale = lam * sigma_ratio
        src = np.concatenate([[0.0], x])  # state 0 is the start, Z_0 = 0
        dens = normal_pdf((x[None, :] - (1.0 - lam) * src[:, None] - lam * shift) / scale) / scale
        q = np.zeros((len(src), len(src)))
        q[:, 1:] = dens * w[None, :]
        start = np.zeros(len(src))
        start[0] = 1.0
        return q, start


def drawn_limits_arl(chart: EwmaChart, shift: float, sigma_ratio: float = 1.0, tail: float = 1e-10) -> float:
    """Zero-state ARL of the EWMA with the exact limits the chart draws, which widen over the first points.

    The limit at point t is h_t = L sqrt(lambda / (2 - lambda) (1 - (1 - lambda)^(2t))). The mass of the
    unsignalled Z_t is carried point by point at Gauss-Legendre nodes on [-h_t, h_t] (a time-varying chain; from
    where h_t is within `tail` of h, the asymptotic chain's own nodes), ARL = sum_t P(N > t), until the hazard
    P(N = t + 1 | N > t) has settled to the asymptotic chain's; the rest of the sum is then geometric.
    """
    lam, scale = chart.lam, chart.lam * sigma_ratio
    spread, height = -0.5 / (scale * scale), 1.0 / (scale * np.sqrt(2.0 * np.pi))
    unit_x, unit_w = _nodes(-1.0, 1.0, chart.panels)  # the nodes on [-h_t, h_t] are these times h_t

    def step_of(to: np.ndarray, weights: np.ndarray, frm: np.ndarray) -> np.ndarray:
        """w_j f(to_j | frm_i), rows frm: the normal density, computed in place (the hot loop of a design)."""
        u = np.subtract.outer((1.0 - lam) * frm + lam * shift, to)
        u *= u
        u *= spread
        np.exp(u, out=u)
        u *= weights * height
        return u

    widening = int(np.ceil(np.log(tail) / (2.0 * np.log1p(-lam)))) if lam < 1.0 else 0
    arl, x, g, hazard = 1.0, np.zeros(1), np.ones(1), np.nan  # P(N > 0) = 1; Z_0 = 0 with mass 1
    settled: np.ndarray | None = None  # the asymptotic step, once the limits have stopped widening
    for t in range(1, _MAX_POINTS):
        if t <= widening:
            h_t = chart.L * np.sqrt(lam / (2.0 - lam) * -np.expm1(2.0 * t * np.log1p(-lam)))
            nodes = h_t * unit_x
            step = step_of(nodes, h_t * unit_w, x)
        else:  # the asymptotic chain's step (the first one from the last widening nodes)
            if settled is None and t > widening + 1:
                settled = step_of(chart.x, chart.w, chart.x)
            step = step_of(chart.x, chart.w, x) if settled is None else settled
            nodes = chart.x
        before, g, x = float(g.sum()), g @ step, nodes
        survival = float(g.sum())
        if not survival > 0.0:
            return arl
        new_hazard = 1.0 - survival / before
        if t > widening and abs(new_hazard - hazard) <= max(1e-10 * new_hazard, 1e-14):
            return arl + survival / new_hazard  # sum_j P(N > t) (1 - hazard)^j
        arl, hazard = arl + survival, new_hazard
    return arl + survival / hazard


def limits_as_drawn(performance: Performance, ewma: EwmaParameters, n: float,
                    hours_per_month: float | None) -> Performance:
    """The EWMA's performance with the zero-state ARL (and ATS, false alarms) for the exact limits the chart
    draws (`drawn_limits_arl`); SDRL, percentiles and steady state stay those of the asymptotic limits, as the
    method note then says. Shifts are in process standard deviations of subgroups of n."""
    chart = EwmaChart(ewma.lam, ewma.L)
    interval = performance.interval_hours

    def redrawn(row: ShiftArl) -> ShiftArl:
        arl = drawn_limits_arl(chart, row.shift * float(np.sqrt(n)))
        return replace(row, arl=arl, ats_hours=ats_hours(arl, interval))

    shifts, curve = [redrawn(r) for r in performance.shifts], [redrawn(r) for r in performance.curve]
    arl0 = drawn_limits_arl(chart, 0.0)
    method = performance.method.replace("; asymptotic limits", "") + (
        "; ARL and ATS for the limits as drawn, exact and widening over the first points (a time-varying chain "
        "joined to the asymptotic one); SDRL, percentiles and steady state for the asymptotic limits")
    return replace(performance, method=method, arl_in_control=arl0, shifts=shifts, curve=curve,
                   false_alarms_per_month=false_alarms_per_month(arl0, interval, hours_per_month))
