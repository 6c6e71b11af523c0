"""The data-shape figures for the whole scheme in use: its zone rules and spread chart under the fitted shape and
under AR(1) dependence, and the fitted family's own skewness and kurtosis (used by core/data_shape.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import expit

from sheettool.core.constants import constants
from sheettool.core.johnson import Family
from sheettool.core.rules import Rule, parse_rules
from sheettool.core.runlength.montecarlo import _block_hits
from sheettool.core.runlength.shewhart import range_beyond_probability, sd_beyond_probability
from sheettool.core.runlength.zones import ZoneChain, normal_cell_probabilities

DEFAULT_SEED = 20_261_202

def family_moments(name: str, params: tuple[float, ...]) -> tuple[float | None, float | None]:
    """Skewness and excess kurtosis of the fitted distribution itself, or None where they cannot be computed finitely.

    Johnson SU: closed forms in omega = exp(1 / b^2) and Omega = a / b (Johnson 1949), written with expm1 so that a
    near-normal fit loses no digits. Johnson SB: the moments of loc + scale expit((z - a) / b) by Gauss-Hermite
    quadrature over z (200 nodes; the variable is bounded, so the quadrature converges). Normal: 0 and 0.
    """
    if name == "normal":
        return 0.0, 0.0
    a, b = params[0], params[1]
    with np.errstate(all="ignore"):
        if name == "Johnson SU":
            e1 = math.expm1(1.0 / (b * b))  # omega - 1
            om, big = e1 + 1.0, a / b
            var = 0.5 * e1 * (om * math.cosh(2.0 * big) + 1.0)
            skew = -(math.sqrt(om) * e1 ** 2 * (om * (om + 2.0) * math.sinh(3.0 * big) + 3.0 * math.sinh(big))
                     / (4.0 * var ** 1.5))
            kurt = (e1 ** 2 * (om ** 2 * (om ** 4 + 2.0 * om ** 3 + 3.0 * om ** 2 - 3.0) * math.cosh(4.0 * big)
                               + 4.0 * om ** 2 * (om + 2.0) * math.cosh(2.0 * big) + 3.0 * (2.0 * om + 1.0))
                    / (8.0 * var ** 2)) - 3.0
        else:
            z, w = np.polynomial.hermite_e.hermegauss(200)
            y = expit((z - a) / b)
            w = w / w.sum()
            d = y - float(w @ y)
            var = float(w @ d ** 2)
            skew = float(w @ d ** 3) / var ** 1.5
            kurt = float(w @ d ** 4) / var ** 2 - 3.0
    finite = [v if v is not None and math.isfinite(v) and abs(v) < 1e6 else None for v in (skew, kurt)]
    return finite[0], finite[1]


def johnson_draws(name: str, params: tuple[float, ...], z: np.ndarray) -> np.ndarray:
    """Johnson (1949) transforms of standard normal z: SU x = sinh((z - a)/b), SB x = 1/(1 + exp(-(z - a)/b))."""
    a, b, loc, scale = params
    u = (z - a) / b
    return loc + scale * (np.sinh(u) if name == "Johnson SU" else expit(u))


@dataclass(frozen=True)
class ShapeScheme:
    """The scheme the shape and dependence figures judge: the rules on the plotted points and the spread chart whose
    limits also signal ("range", "sd" or None), with its words."""

    rules: tuple[Rule, ...] = tuple(parse_rules("beyond-limits"))
    companion: str | None = None
    words: str = "3-sigma limits"
    n: int = 1  # subgroup size, for the spread chart's signal probability

    @property
    def plain(self) -> bool:
        """3-sigma limits alone: the closed forms apply."""
        return self.companion is None and [r.text for r in self.rules] == ["1/1>3"]


def ar1_block(e: np.ndarray, phi: float, start: np.ndarray) -> np.ndarray:
    """The next block of each path of X_t = phi X_t-1 + e_t: e is (paths, steps), start the last X of each path.

    A step at a time over all paths at once: the same additions as a first-order recursive filter
    (scipy.signal.lfilter), whose module would load scipy.stats, a second of start-up.
    """
    out = np.empty((e.shape[1], e.shape[0]))
    last = start
    for t, row in enumerate(e.T):
        last = np.add(row, phi * last, out=out[t])
    return out.T


def _fixed_chain_arl(rules: list[Rule], cells: np.ndarray) -> float:
    """In-control ARL of the exact zone chain (Champ and Woodall 1987) whose points fall in each cell with the given
    probabilities; the missing mass (a spread-chart signal) ends the run too."""
    try:
        return ZoneChain(rules, cell_probabilities=lambda _cuts, _s, _r: cells).arl(0.0, 1.0)
    except RuntimeError:  # the sparse factor is singular: no cell ever signals under this shape
        return math.inf


def _spread_inside(kind: str, n: int, sigma: float, draws: np.ndarray) -> np.ndarray:
    """Whether each simulated subgroup's range or standard deviation lies within the spread chart's 3-sigma limits."""
    c = constants(n)
    if kind == "range":
        stat, lo, hi = np.ptp(draws, axis=1), c.D3 * c.d2, c.D4 * c.d2
    else:
        stat, lo, hi = np.std(draws, axis=1, ddof=1), c.B3 * c.c4, c.B4 * c.c4
    return (stat >= lo * sigma) & (stat <= hi * sigma)


def scheme_normal_arl(scheme: ShapeScheme) -> float:
    """The scheme's in-control ARL for normal, independent points (its zone rules and spread chart)."""
    zone = [r for r in scheme.rules if r.is_zone]
    spread = 0.0
    if scheme.companion:
        spread = (range_beyond_probability if scheme.companion == "range" else sd_beyond_probability)(scheme.n)
    return _fixed_chain_arl(zone, normal_cell_probabilities(ZoneChain(zone).cuts, 0.0, 1.0) * (1.0 - spread))


def scheme_shape_arl(name: str, params: tuple[float, ...], dist: Family, n: int,
                      scheme: ShapeScheme, simulations: int, seed: int) -> tuple[float, float, float, str]:
    """In-control ARL of the scheme under the normal model and under the fitted shape, its standard error and how.

    Zone boundaries and limits at the fitted mean +/- z standard deviations of the plotted point; the chain's cell
    probabilities come from the fitted cdf (individuals, exact) or from seeded subgroups drawn from the fitted
    distribution (means), jointly with whether the spread chart stays inside its limits, so that a skewed shape's
    dependence between mean and range is kept. Ten batches of the subgroups give the standard error.
    """
    zone = [r for r in scheme.rules if r.is_zone]
    cuts = ZoneChain(zone).cuts
    arl_normal = scheme_normal_arl(scheme)
    if name == "normal":
        return arl_normal, arl_normal, 0.0, "the normal distribution fits best, so the normal figure stands"
    mean, sd = dist.mean_sd()
    if n == 1:
        inner = np.diff(np.concatenate([[0.0], dist.cdf(mean + cuts * sd), [1.0]]))
        cells = np.zeros(2 * len(cuts) + 1)
        cells[0::2] = inner
        return arl_normal, _fixed_chain_arl(zone, cells), 0.0, "individuals: cell probabilities from the fitted cdf"
    rng = np.random.default_rng(seed)
    batches, per = 10, max(1, simulations // 10)
    arls = []
    for _ in range(batches):
        counts, done, chunk = np.zeros(2 * len(cuts) + 1), 0, max(1, 200_000 // n)
        while done < per:
            size = min(chunk, per - done)
            draws = johnson_draws(name, params, rng.standard_normal((size, n)))
            u = (draws.mean(axis=1) - mean) / (sd / math.sqrt(n))
            keep = _spread_inside(scheme.companion, n, sd, draws) if scheme.companion else np.ones(size, bool)
            counts += np.bincount(2 * np.searchsorted(cuts, u[keep]), minlength=counts.size)
            done += size
        arls.append(_fixed_chain_arl(zone, counts / per))
    arl = float(np.mean(arls))
    se = float(np.std(arls, ddof=1) / math.sqrt(batches)) if math.isfinite(arl) else math.inf
    return arl_normal, arl, se, (f"subgroups of {n}: {batches * per:,} seeded simulated subgroups from the fitted "
                                 "distribution give the zone chain's cell probabilities, jointly with the spread chart")


def ar1_scheme_arl(phi: float, half_width: float, k: float, scheme: ShapeScheme, paths: int = 5_000,
                   max_steps: int = 40_000, seed: int = DEFAULT_SEED, block: int = 256) -> tuple[float, float, bool]:
    """Mean run length of the scheme's rules on a stationary AR(1) with unit marginal variance, by simulation.

    The limits sit at +/- half_width and every zone boundary with them (points standardized by half_width / k); the
    rules are the engine's own predicates on each block; the spread chart, whose readings the AR(1) of the plotted
    points leaves alone, signals independently with its normal probability. Returns (ARL, standard error, censored).
    """
    if not -1 < phi < 1:
        raise ValueError(f"phi must lie strictly between -1 and 1, got {phi}")
    rules = list(scheme.rules)
    context = max(2, max(r.m for r in rules))
    rng = np.random.default_rng(seed)
    state = rng.standard_normal(paths)
    last = np.full((paths, context), np.nan)  # no points yet: the window is what there is
    run = np.zeros(paths)
    alive = np.arange(paths)
    steps = 0
    innov = math.sqrt(1.0 - phi * phi)
    scale = k / half_width
    extra = 0.0
    if scheme.companion:
        extra = (range_beyond_probability if scheme.companion == "range" else sd_beyond_probability)(int(scheme.n))
    while alive.size and steps < max_steps:
        e = innov * rng.standard_normal((alive.size, block))
        x = ar1_block(e, phi, state[alive])
        full = np.concatenate([last[alive], scale * x], axis=1)
        out = _block_hits(full, rules, context)
        if extra > 0.0:
            out |= rng.random(out.shape) < extra
        hit = out.any(axis=1)
        first = np.argmax(out, axis=1)
        run[alive[hit]] = steps + first[hit] + 1
        state[alive] = x[:, -1]
        last[alive] = full[:, -context:]
        alive = alive[~hit]
        steps += block
    censored = bool(alive.size)
    run[alive] = steps
    return float(run.mean()), float(run.std(ddof=1) / math.sqrt(paths)), censored
