"""The outcome under the release tolerance, per grid cell (explore/under_tolerance.py).

Wilson's interval is checked against its closed form at the ends (Wilson,
E. B. 1927, J. Am. Stat. Assoc. 22:209) and against an independent
implementation (scipy.stats.binomtest(...).proportion_ci(method="wilson"));
the per-cell table against tables built by hand.
"""
import numpy as np
import pandas as pd
import pytest
from scipy.stats import binomtest

from conftest import PIN, PIN_ON_STEEL, changed, grid, study_yaml
from hopscape.study import parse_study
from hopscape.under_tolerance import goal_view, tolerance_effect, wilson_interval

Z95 = 1.959963984540054      # standard normal 97.5 % quantile (tables; from memory)


@pytest.mark.parametrize("trials", [1, 5, 12, 32, 100])
def test_wilson_interval_matches_scipy(trials):
    successes = np.arange(trials + 1)
    low, high = wilson_interval(successes, np.full(trials + 1, trials))
    for k in successes:
        ci = binomtest(int(k), trials).proportion_ci(confidence_level=0.95, method="wilson")
        # both evaluate the same closed form in double precision
        assert low[k] == pytest.approx(ci.low, abs=1e-12)
        assert high[k] == pytest.approx(ci.high, abs=1e-12)


def test_wilson_interval_ends_in_closed_form():
    # Wilson (1927): at 0 successes of n the interval is [0, z^2 / (n + z^2)];
    # at n of n it is [n / (n + z^2), 1]. For n = 10: [0, 0.27753], [0.72247, 1].
    low, high = wilson_interval([0, 10], [10, 10])
    z2 = Z95 ** 2
    np.testing.assert_allclose(low, [0.0, 10 / (10 + z2)], rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(high, [z2 / (10 + z2), 1.0], rtol=1e-12)
    assert high[0] == pytest.approx(0.27753, abs=5e-6)
    # a 90 % interval is narrower than the 95 % one
    low90, high90 = wilson_interval(3, 10, confidence=0.90)
    low95, high95 = wilson_interval(3, 10)
    assert low95 < low90 < 0.3 < high90 < high95


def hand_tables():
    """Two cells of two exact drops each; row i of grid is pair i."""
    grid_table = pd.DataFrame({"cell": [0, 0, 1, 1], "value": [1.0, 2.0, 3.0, 4.0],
                               "event": [False, True, True, True]})
    robust = pd.DataFrame({
        "cell": [0, 0, 0, 1, 1],
        "pair": [0, 1, 0, 2, 3],
        "value": [1.5, 1.0, 1.0, np.nan, 4.25],     # the nan: a body that would start inside the floor
        "event": [True, False, False, False, True],
    })
    return robust, grid_table


def test_tolerance_effect_by_hand():
    robust, grid_table = hand_tables()
    effect = tolerance_effect(robust, grid_table)
    assert list(effect.index) == [0, 1]
    assert list(effect["drops"]) == [3, 2]
    np.testing.assert_allclose(effect["event_probability"], [1 / 3, 1 / 2], rtol=1e-15)
    # outcomes against the partners: cell 0: True vs False (flip), False vs
    # True (flip), False vs False; cell 1: only the defined pair, True vs True
    np.testing.assert_allclose(effect["flip_rate"], [2 / 3, 0.0], rtol=1e-15)
    # |1.5 - 1| + |1 - 2| + |1 - 1| over 3; cell 1: only |4.25 - 4| is defined
    np.testing.assert_allclose(effect["mean_change"], [0.5, 0.25], rtol=1e-15)
    np.testing.assert_allclose(effect["mean_value"], [3.5 / 3, 4.25], rtol=1e-15)
    np.testing.assert_allclose(effect["inside_floor_fraction"], [0.0, 0.5], rtol=1e-15)
    ci = binomtest(1, 3).proportion_ci(method="wilson")
    assert (effect["event_low"].iloc[0], effect["event_high"].iloc[0]) == pytest.approx((ci.low, ci.high), abs=1e-12)


def test_a_ratio_that_moves_far_above_the_threshold_does_not_flip():
    # every drop beats the threshold, exact or toleranced: the value moves
    # by 0.5 but the outcome never changes
    grid_table = pd.DataFrame({"cell": [0], "value": [2.0], "event": [True]})
    robust = pd.DataFrame({"cell": [0] * 4, "pair": [0] * 4, "value": [1.5, 2.5, 1.5, 2.5], "event": [True] * 4})
    effect = tolerance_effect(robust, grid_table)
    assert effect["flip_rate"].iloc[0] == 0.0
    assert effect["mean_change"].iloc[0] == 0.5
    assert effect["event_probability"].iloc[0] == 1.0


GOAL_STUDY = {
    "name": "goal",
    "body": {**PIN, "aspect_ratio": 3.0},
    "contact": PIN_ON_STEEL,
    "release": {"height": 0.01, "angle": grid(0, 90, 2)},
    "metric": {"kind": "ratio", "reference": "centre"},
    "analyses": {"picks": {"target": 0.5}},
}


def test_goal_view_seek_and_avoid():
    robust, grid_table = hand_tables()
    effect = tolerance_effect(robust, grid_table)
    seek = goal_view(parse_study(study_yaml(GOAL_STUDY)), effect)
    np.testing.assert_allclose(seek["goal_probability"], [1 / 3, 1 / 2], rtol=1e-15)
    assert list(seek["meets_target"]) == [False, False]    # cell 1: half its drops inside the floor
    avoid = goal_view(parse_study(study_yaml(changed(GOAL_STUDY, metric={"goal": "avoid"}))), effect)
    # avoid: no event among drops that could be released: cell 0 2 of 3,
    # cell 1 none of 2 (one event, one inside the floor)
    np.testing.assert_allclose(avoid["goal_probability"], [2 / 3, 0.0], atol=1e-15)
    assert list(avoid["meets_target"]) == [True, False]
    ci = binomtest(2, 3).proportion_ci(method="wilson")
    assert (avoid["goal_low"].iloc[0], avoid["goal_high"].iloc[0]) == pytest.approx((ci.low, ci.high), abs=1e-12)
