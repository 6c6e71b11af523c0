"""Exact zone-rule chain and the general engine against published and closed-form values."""

import math

import numpy as np
import pytest
from scipy import stats

from sheettool.core.rules import parse_rules
from sheettool.core.runlength.montecarlo import _block_hits, normal_sampler, simulate_run_lengths, summarize
from sheettool.core.runlength.zones import ZoneChain


def test_champ_woodall_limits_alone():
    # Champ and Woodall (1987), Technometrics 29(4), in-control ARL 370.40 (recalled from memory).
    assert ZoneChain(parse_rules("beyond-limits")).arl(0.0) == pytest.approx(370.40, abs=0.005)


def test_champ_woodall_zone_rules():
    # Champ and Woodall (1987): 1/1>3, 2/3>2, 4/5>1, 8/8>0 together, in-control ARL 91.75
    # (recalled from memory; printed to two decimals).
    assert ZoneChain(parse_rules("zones")).arl(0.0) == pytest.approx(91.75, abs=0.005)


def test_eight_in_a_row_is_the_fair_coin_run():
    # Waiting time for a run of 8 equal outcomes of a fair coin is 2^8 - 1 = 255 (Feller 1968, ch. XIII).
    assert ZoneChain(parse_rules("8/8>0")).arl(0.0) == pytest.approx(255.0, rel=1e-10)


@pytest.mark.parametrize("shift, ratio", [(0.0, 1.0), (0.5, 1.0), (1.0, 1.0), (2.0, 1.0), (0.0, 1.5)])
def test_limits_alone_are_geometric(shift, ratio):
    # Limits alone: geometric run length, ARL = 1/q, SDRL = sqrt(1 - q)/q, percentile
    # ceil(log(1 - p)/log(1 - q)) (common practice; q from scipy.stats).
    q = stats.norm.sf((3 - shift) / ratio) + stats.norm.cdf((-3 - shift) / ratio)
    rl = ZoneChain(parse_rules("1/1>3")).run_length(shift, ratio)
    assert rl.arl == pytest.approx(1 / q, rel=1e-10)
    assert rl.sdrl == pytest.approx(math.sqrt(1 - q) / q, rel=1e-8)
    for p in (5, 50, 95):
        assert rl.percentiles[p] == math.ceil(math.log(1 - p / 100) / math.log(1 - q) - 1e-9)
    assert rl.steady_state_arl == pytest.approx(1 / q, rel=1e-8)  # no memory: steady state = zero state


def test_chain_is_minimal_and_small():
    # Merging equivalent states must keep the chain far below the raw history space (2^7 per side per rule).
    chain = ZoneChain(parse_rules("zones"))
    assert chain.states < 300
    assert ZoneChain(parse_rules("1/1>3,2/3>2")).states == 7  # empty, and one/two sides with one recent point


@pytest.mark.parametrize("shift, ratio", [(0.0, 1.0), (1.0, 1.0), (0.0, 1.5)])
def test_monte_carlo_agrees_with_the_chain(shift, ratio):
    # Independent check: vectorized simulation of the same rules (numpy, seeded), within 3.5 standard errors.
    rules = parse_rules("zones,15/15<1,8/8>>1")
    exact = ZoneChain(rules).run_length(shift, ratio)
    sim = simulate_run_lengths(rules, normal_sampler(shift, ratio), 8_000, seed=5)
    mc = summarize(sim)
    se = mc.sdrl / np.sqrt(len(sim))
    assert abs(mc.arl - exact.arl) < 3.5 * se
    assert mc.sdrl == pytest.approx(exact.sdrl, rel=0.05)
    assert mc.percentiles[50] == pytest.approx(exact.percentiles[50], abs=max(2, 0.05 * exact.percentiles[50]))


def test_steady_state_against_simulation():
    # Conditional steady state: runs that survived 100 in-control points, then a 1-sigma shift
    # (numpy simulation, seeded, within 3.5 standard errors).
    rules = parse_rules("zones")
    exact = ZoneChain(rules).run_length(1.0).steady_state_arl
    rng = np.random.default_rng(3)
    runs, before, after = 20_000, 100, 120
    points = rng.standard_normal((runs, before + after))
    points[:, before:] += 1.0
    full = np.concatenate([np.full((runs, 8), np.nan), points], axis=1)
    hit = _block_hits(full, rules, 8)
    shifted = hit[~hit[:, :before].any(axis=1), before:]
    assert shifted.any(axis=1).all()
    lengths = np.argmax(shifted, axis=1) + 1
    assert np.mean(lengths) == pytest.approx(exact, abs=3.5 * np.std(lengths) / np.sqrt(len(lengths)))


def test_too_many_states_is_refused():
    with pytest.raises(ValueError, match="chain states"):
        ZoneChain(parse_rules("9/60>1,9/60>0.5"))


def test_trend_rules_have_no_exact_chain():
    with pytest.raises(ValueError, match="simulated"):
        ZoneChain(parse_rules("all"))
