"""Chart constants computed by integration against the published table."""

import math

import pytest

from sheettool.core.constants import c4, constants, d2, d3, range_cdf

# ASTM E2587, Table of control chart factors (values recalled from memory, as listed in
# tests/reference/published-values.md); printed to 3-4 decimals, so compared within 1e-3.
ASTM_E2587 = {
    # n: (d2, d3, c4, A2, A3, B3, B4, D3, D4)
    2: (1.128, 0.853, 0.7979, 1.880, 2.659, 0, 3.267, 0, 3.267),
    3: (1.693, 0.888, 0.8862, 1.023, 1.954, 0, 2.568, 0, 2.574),
    4: (2.059, 0.880, 0.9213, 0.729, 1.628, 0, 2.266, 0, 2.282),
    5: (2.326, 0.864, 0.9400, 0.577, 1.427, 0, 2.089, 0, 2.114),
    6: (2.534, 0.848, 0.9515, 0.483, 1.287, 0.030, 1.970, 0, 2.004),
    7: (2.704, 0.833, 0.9594, 0.419, 1.182, 0.118, 1.882, 0.076, 1.924),
    8: (2.847, 0.820, 0.9650, 0.373, 1.099, 0.185, 1.815, 0.136, 1.864),
    9: (2.970, 0.808, 0.9693, 0.337, 1.032, 0.239, 1.761, 0.184, 1.816),
    10: (3.078, 0.797, 0.9727, 0.308, 0.975, 0.284, 1.716, 0.223, 1.777),
    15: (3.472, 0.756, 0.9823, 0.223, 0.789, 0.428, 1.572, 0.347, 1.653),
    20: (3.735, 0.729, 0.9869, 0.180, 0.680, 0.510, 1.490, 0.415, 1.585),
    25: (3.931, 0.708, 0.9896, 0.153, 0.606, 0.565, 1.435, 0.459, 1.541),
}


@pytest.mark.parametrize("n", sorted(ASTM_E2587))
def test_constants_match_astm_e2587(n):
    got = constants(n)
    names = ("d2", "d3", "c4", "A2", "A3", "B3", "B4", "D3", "D4")
    for name, published in zip(names, ASTM_E2587[n], strict=True):
        assert getattr(got, name) == pytest.approx(published, abs=1.1e-3), name


def test_exact_values_for_two_readings():
    # For n = 2 the range is |X1 - X2| with X1 - X2 ~ N(0, 2): d2 = 2/sqrt(pi), d3 = sqrt(2 - 4/pi)
    # (closed form, common practice).
    assert d2(2) == pytest.approx(2 / math.sqrt(math.pi), abs=1e-10)
    assert d3(2) == pytest.approx(math.sqrt(2 - 4 / math.pi), abs=1e-8)
    assert c4(2) == pytest.approx(math.sqrt(2 / math.pi), abs=1e-12)


def test_range_cdf_against_simulation():
    # Cross-check of the integral against a large simulation of normal ranges (scipy/numpy reference).
    import numpy as np

    rng = np.random.default_rng(7)
    sample = np.ptp(rng.standard_normal((400_000, 5)), axis=1)
    for w in (1.0, 2.326, 4.0):
        assert range_cdf(w, 5)[0] == pytest.approx(np.mean(sample <= w), abs=3e-3)


def test_individuals_factor():
    # E2 = 3 / d2(2) = 2.660 (ASTM E2587, recalled from memory).
    assert pytest.approx(2.660, abs=1.5e-3) == constants(2).E2  # printed 3/1.128, rounded


@pytest.mark.parametrize("bad", [1, 0, 101, 2.5])
def test_bad_subgroup_size(bad):
    with pytest.raises(ValueError):
        d2(bad)


def test_c4_beyond_the_table_for_the_pooled_sd():
    # c4(n) = sqrt(2/(n-1)) Gamma(n/2) / Gamma((n-1)/2) tends to 1 - 1/(4n) (common practice:
    # the series c4 ~ 1 - 1/(4n) - 7/(32 n^2)); the pooled sd needs c4 of hundreds of readings.
    for n in (150, 500, 2000):
        assert c4(n) == pytest.approx(1 - 1 / (4 * n) - 7 / (32 * n * n), abs=1e-7)
    with pytest.raises(ValueError):
        c4(1)
