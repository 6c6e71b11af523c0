"""The distributions computed without scipy.stats (core/distributions.py, core/johnson.py), held to scipy.stats itself:
the same special functions in the same order, so the values agree bit for bit, and the Johnson fits give the
parameters (and so the family chosen) of scipy.stats's maximum likelihood fits."""

import warnings

import numpy as np
import pytest
from scipy import stats

from sheettool.core import johnson
from sheettool.core.distributions import Counts, beta_ppf, chi2_logpdf, chi2_ppf, normal_pdf
from sheettool.core.shape_scheme import ar1_block

RNG = np.random.default_rng(1602)
SAMPLES = {
    "normal": RNG.normal(25.0, 0.02, 125),
    "lognormal": np.exp(RNG.normal(0.0, 0.5, 300)),
    "left-skewed": -np.exp(RNG.normal(0.0, 0.3, 150)),
    "uniform": RNG.uniform(0.0, 1.0, 200),
    "beta": RNG.beta(2.0, 5.0, 100),
    "heavy tails": RNG.standard_t(5, 400),
}


def test_normal_chi2_and_beta_agree_with_scipy_stats_bit_for_bit():
    # reference: scipy.stats.norm, chi2 and beta themselves (an independent code path through their machinery)
    x = np.concatenate([RNG.normal(0.0, 4.0, 500), [0.0, 40.0, -40.0, np.inf]])
    assert np.array_equal(normal_pdf(x), stats.norm.pdf(x))
    t = np.concatenate([RNG.uniform(0.0, 200.0, 500), [0.0, -1.0]])
    q = np.concatenate([RNG.uniform(0.0, 1.0, 50), 10.0 ** -RNG.uniform(1.0, 15.0, 20), [0.0, 1.0]])
    for nu in (1.0, 4.0, 24.0, 3.5, 1000.0):
        assert np.array_equal(chi2_logpdf(t, nu), stats.chi2.logpdf(t, nu))
        assert [chi2_ppf(v, nu) for v in q] == [float(stats.chi2.ppf(v, nu)) for v in q]
    for a, b in ((1.0, 20.0), (3.0, 97.0), (12.0, 1.0), (0.5, 0.5)):
        assert [beta_ppf(v, a, b) for v in q] == [float(stats.beta.ppf(v, a, b)) for v in q]


@pytest.mark.parametrize(("family", "n", "p"), [("binomial", 50, 0.04), ("binomial", 1e6, 2e-4),
                                                ("poisson", 1.0, 3.2), ("poisson", 1e8, 1e-6)])
def test_counts_agree_with_scipy_stats_bit_for_bit(family, n, p):
    # reference: scipy.stats.binom and poisson, including counts off the support, fractional and infinite counts
    ref = stats.binom(n, p) if family == "binomial" else stats.poisson(n * p)
    mine = Counts(family, n, p)
    k = np.concatenate([np.arange(-2.0, 40.0), [120.0, 199.5, 1e9, np.inf]])
    with np.errstate(invalid="ignore"):
        for what in ("pmf", "cdf", "sf"):
            assert np.array_equal(getattr(mine, what)(k), getattr(ref, what)(k), equal_nan=True)


@pytest.mark.parametrize("sample", list(SAMPLES))
@pytest.mark.parametrize(("name", "family"), [("Johnson SU", stats.johnsonsu), ("Johnson SB", stats.johnsonsb)])
def test_johnson_fits_are_those_of_scipy_stats(sample, name, family):
    # scipy.stats's maximum likelihood fit of the same family (the reference the data-shape check used before)
    x = SAMPLES[sample]
    with warnings.catch_warnings(), np.errstate(all="ignore"):
        warnings.simplefilter("ignore")
        want = family.fit(x)
        got = johnson.fit(name, x)
    assert got.parameters == tuple(float(v) for v in want)
    dist = family(*want)
    mean, sd = got.mean_sd()
    assert (mean, sd) == (float(dist.mean()), float(dist.std()))
    points = mean + sd * np.linspace(-4.0, 4.0, 17)
    assert np.array_equal(got.cdf(points), dist.cdf(points))
    assert np.array_equal(got.sf(points), dist.sf(points))
    assert np.array_equal(got.logpdf(x), dist.logpdf(x))


def test_start_moments_are_scipy_stats_own():
    # reference: scipy.stats's moments of SB(1, 1) (numerical integration) and SU(1, 1) (closed form)
    for name, family in (("Johnson SB", stats.johnsonsb), ("Johnson SU", stats.johnsonsu)):
        assert johnson._START_MOMENTS[name] == tuple(float(v) for v in family.stats(1.0, 1.0, moments="mv"))


def test_normal_family_logpdf_is_scipy_stats_own():
    # reference: scipy.stats.norm.logpdf at the maximum likelihood mean and standard deviation
    x = SAMPLES["normal"]
    fit = johnson.fit("normal", x)
    assert np.array_equal(fit.logpdf(x), stats.norm.logpdf(x, np.mean(x), np.std(x)))


@pytest.mark.parametrize("phi", [0.0, 0.45, -0.8, 0.99])
def test_ar1_blocks_are_the_recursive_filter(phi):
    # scipy.signal.lfilter with the AR(1) coefficients and the previous value as its state: the same sums exactly
    from scipy import signal

    e = RNG.standard_normal((300, 64))
    start = RNG.standard_normal(300)
    want, _ = signal.lfilter([1.0], [1.0, -phi], e, axis=1, zi=(phi * start)[:, None])
    assert np.array_equal(ar1_block(e, phi, start), want)
