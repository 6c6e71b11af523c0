"""The rule grammar and pattern detection on hand-made sequences of standardized points."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sheettool.core.rules import PRESETS, Rule, find_hits, parse_rules
from sheettool.core.runlength.zones import ZoneChain, cell_of


def hits(z, text):
    return [(h.rule.text, h.point, h.points) for h in find_hits(np.asarray(z, dtype=float), parse_rules(text))]


def test_presets_expand_in_order_without_repeats():
    rules = parse_rules("all")
    assert [r.text for r in rules] == [r.strip() for r in PRESETS["all"].split(",")]
    assert parse_rules("zones, limits") == parse_rules("zones")  # 1/1>3 is already in zones


def test_spelling_round_trips():
    for text in ("1/1>3", "2/3>2", "4/5>1", "8/8>0", "15/15<1", "8/8>>1", "trend 6", "alternate 14", "3/7>2.5",
                 "2/3>0.00001"):
        (rule,) = parse_rules(text)
        assert rule.text == text
        assert parse_rules(rule.text) == [rule]
    assert parse_rules(" 2 / 3 > 2 , TREND 6") == [Rule("same_side", 2, 3, 2.0), Rule("trend", 6, 6)]


@pytest.mark.parametrize("bad, words", [
    ("7/3>2", "K must be"), ("0/3>2", "K must be"), ("2/3<0", "positive"), ("2/3>>0", "positive"),
    ("trend 2", "from 3"), ("run 6", "not understood"), ("", "no rules"), ("1/1>3,", "not understood"),
])
def test_bad_rules_are_named(bad, words):
    with pytest.raises(ValueError, match=words):
        parse_rules(bad)


def test_plain_words():
    assert parse_rules("1/1>3")[0].words == "a point more than 3 standard errors from the center line"
    assert parse_rules("8/8>0")[0].words == "8 points in a row on the same side of the center line"
    assert "2 of the last 3 points" in parse_rules("2/3>2")[0].words


def test_beyond_limits_is_strict():
    assert hits([0, 3.5, -3.2, 3.0, -3.0], "1/1>3") == [("1/1>3", 1, (1,)), ("1/1>3", 2, (2,))]


def test_two_of_three_same_side_only():
    assert hits([2.5, 0.0, 2.1], "2/3>2") == [("2/3>2", 2, (0, 2))]
    assert hits([2.5, -2.5, 0.0, 2.1], "2/3>2") == []  # opposite sides do not add up
    assert hits([2.5, 2.5], "2/3>2") == [("2/3>2", 1, (0, 1))]  # the window is what there is at the start


def test_four_of_five_and_eight_in_a_row():
    assert hits([1.5, 1.5, 0.0, 1.5, 1.5], "4/5>1") == [("4/5>1", 4, (0, 1, 3, 4))]
    assert hits([0.1] * 8, "8/8>0") == [("8/8>0", 7, tuple(range(8)))]
    assert hits([0.1] * 7 + [0.0], "8/8>0") == []  # a point on the center line breaks the run
    assert hits([-0.1] * 9, "8/8>0")[-1][1] == 8  # the pattern goes on being reported


def test_within_and_either_side():
    assert hits([0.5, -0.5] * 7 + [0.9], "15/15<1") == [("15/15<1", 14, tuple(range(15)))]
    assert hits([0.5] * 14 + [1.0], "15/15<1") == []
    assert hits([1.5, -1.5] * 4, "8/8>>1") == [("8/8>>1", 7, tuple(range(8)))]
    assert hits([1.5, -1.5] * 4, "8/8>0") == []


def test_trend_and_alternate():
    assert hits([0, 1, 2, 3, 4, 5], "trend 6") == [("trend 6", 5, tuple(range(6)))]
    assert hits([5, 4, 3, 2, 1, 0], "trend 6") == [("trend 6", 5, tuple(range(6)))]
    assert hits([0, 1, 1, 2, 3, 4], "trend 6") == []  # a tie breaks the trend
    up_down = [0.0, 1.0] * 7
    assert hits(up_down, "alternate 14") == [("alternate 14", 13, tuple(range(14)))]
    assert hits(up_down[:13], "alternate 14") == []


def test_missing_points_are_skipped():
    z = [3.5, np.nan, 2.5, np.nan, 2.5]
    # every flagged point of the window is reported
    assert hits(z, "1/1>3,2/3>2") == [("1/1>3", 0, (0,)), ("2/3>2", 2, (0, 2)), ("2/3>2", 4, (0, 2, 4))]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.sampled_from([-3.5, -3.0, -2.5, -1.5, -1.0, -0.5, 0.0, 0.5, 1.5, 2.0, 2.5, 3.5]),
                min_size=1, max_size=60),
       st.sampled_from(["zones", "2/3>2,15/15<1", "8/8>>1,3/4>1", "3/5>2"]))
def test_zone_chain_signals_where_the_data_rule_first_does(points, text):
    # The minimal chain (pruned and merged states) must signal at the first point find_hits reports.
    rules = parse_rules(text)
    chain = ZoneChain(rules)
    state, first = chain.start_state, None
    for t, cell in enumerate(cell_of(chain.cuts, np.array(points))):
        state = int(chain.next[state, cell])
        if state < 0:
            first = t
            break
    found = find_hits(np.array(points), rules)
    assert first == (found[0].point if found else None)


def test_the_single_point_preset_and_its_earlier_name():
    # 1/1>3: one point beyond a 3-sigma limit (Shewhart 1931; common practice)
    assert parse_rules("beyond-limits") == parse_rules("1/1>3") == parse_rules("limits")
    with pytest.raises(ValueError, match="beyond-limits, zones, all"):
        parse_rules("nonsense")
