"""Recommended release conditions (explore/picks.py)."""
import pandas as pd

from explore.study import COLUMN


def test_picks_csv(small_run):
    picks = pd.read_csv(small_run / "picks.csv")
    assert list(picks["rank"]) == [1, 2, 3]
    assert {"event_probability", COLUMN["angle"], COLUMN["aspect_ratio"], "chaotic", "note"} <= set(picks.columns)
    assert picks["event_probability"].is_monotonic_decreasing      # goal: seek
