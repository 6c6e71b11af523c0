"""Data-shape figures for the whole scheme: the fitted family's own moments, the zone chain under the fitted shape,
and the rules in use under AR(1)."""

import math

import numpy as np
import pytest
from scipy import stats

from sheettool.core.data_shape import shape_check
from sheettool.core.rules import parse_rules
from sheettool.core.runlength.zones import ZoneChain
from sheettool.core.shape_scheme import ShapeScheme, ar1_scheme_arl, family_moments, scheme_normal_arl

ZONES = tuple(parse_rules("zones"))


@pytest.mark.parametrize(("name", "family", "params"), [
    ("Johnson SU", stats.johnsonsu, (0.8, 1.7, 0.0, 1.0)), ("Johnson SU", stats.johnsonsu, (-0.3, 3.0, 2.0, 0.5)),
    ("Johnson SB", stats.johnsonsb, (0.5, 1.2, 0.0, 1.0)), ("Johnson SB", stats.johnsonsb, (-1.0, 0.8, 1.0, 3.0))])
def test_family_moments_agree_with_scipy_where_scipy_is_sound(name, family, params):
    # scipy.stats' own skewness and excess kurtosis of the same distribution (an independent computation)
    skew, kurt = family_moments(name, params)
    want = family(*params).stats(moments="sk")
    assert skew == pytest.approx(float(want[0]), rel=1e-6, abs=1e-9)
    assert kurt == pytest.approx(float(want[1]), rel=1e-6, abs=1e-9)


def test_a_near_normal_johnson_su_has_a_small_finite_skewness():
    # b large: the SU is almost normal, so its skewness tends to 0 (Johnson 1949); the closed form keeps that
    skew, kurt = family_moments("Johnson SU", (5.0, 2000.0, 0.0, 2000.0))
    assert skew is not None and abs(skew) < 0.01 and abs(kurt) < 0.01


def test_zone_chain_under_a_skewed_shape_matches_a_simulation():
    # Individuals from a lognormal (sigma 0.5), zones rules: the exact chain with the fitted cdf's cells against a
    # seeded simulation of the rules on draws from the fitted distribution itself (an independent computation).
    rng = np.random.default_rng(4)
    check = shape_check(np.exp(rng.normal(0.0, 0.5, 4000)), 1,
                        scheme=ShapeScheme(rules=ZONES, words="individuals chart with rules zones"))
    assert check.family != "normal"
    assert check.arl_normal == pytest.approx(ZoneChain(list(ZONES)).arl(0.0), rel=1e-12)
    family = {"Johnson SU": stats.johnsonsu, "Johnson SB": stats.johnsonsb}[check.family]
    dist = family(*check.parameters)
    mean, sd = dist.mean(), dist.std()
    runs = 4000
    z = (dist.rvs(size=(runs, 600), random_state=np.random.default_rng(5)) - mean) / sd
    hit = np.abs(z) > 3
    for sign in (1, -1):
        for k, w, level in ((2, 3, 2.0), (4, 5, 1.0), (8, 8, 0.0)):
            c = np.cumsum(sign * z > level, axis=1)
            count = c - np.concatenate([np.zeros((runs, w)), c[:, :-w]], axis=1)
            hit |= count >= k
    assert hit.any(axis=1).all()
    lengths = np.argmax(hit, axis=1) + 1
    se = lengths.std(ddof=1) / math.sqrt(runs)
    assert check.arl_shape == pytest.approx(lengths.mean(), abs=4 * se)
    assert "zones" in check.method


def test_ar1_with_the_rules_in_use_reduces_to_the_chain_at_phi_zero():
    # phi = 0: independent points, so the simulated ARL of the zones rules with the R chart (n = 5) must match the
    # exact chain (Champ and Woodall 1987) within its interval
    scheme = ShapeScheme(rules=ZONES, companion="range", n=5)
    arl, se, censored = ar1_scheme_arl(0.0, 3.0, 3.0, scheme, paths=4000)
    assert not censored
    assert arl == pytest.approx(scheme_normal_arl(scheme), abs=4 * se)
    # positive dependence makes the same-side rules signal far sooner (common practice)
    assert ar1_scheme_arl(0.5, 3.0, 3.0, scheme, paths=2000)[0] < 0.7 * arl
