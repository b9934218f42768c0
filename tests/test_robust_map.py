"""The robustness map (explore/robust_map.py) and the safe-region file of a run.

The numbers behind the map are recomputed here from the raw result tables
of the shared small run (80 cells x 8 toleranced drops, goal: seek, target
0.5), each toleranced drop against its exact partner, without going through
the code under test; Wilson's interval against scipy's (Wilson 1927,
J. Am. Stat. Assoc. 22:209).
"""
import numpy as np
import pandas as pd
import pytest
from scipy.stats import binomtest

from conftest import PIN, PIN_ON_STEEL, grid, read_parts, run_text, study_yaml
from hopscape.analysis import analyse
from hopscape.study import COLUMN

KEYS = [COLUMN["angle"], COLUMN["aspect_ratio"]]


@pytest.fixture(scope="module")
def by_hand(small_run):
    tables = read_parts(small_run)
    grid, robust = tables["grid"].sort_values(["cell", "draw"]), tables["robust"]
    partner = grid.iloc[robust["pair"].to_numpy()]
    # a toleranced drop belongs to the cell of its partner (its own angle moved)
    frame = pd.DataFrame({"event": robust["event"].to_numpy(),
                          "flip": robust["event"].to_numpy() != partner["event"].to_numpy(),
                          "change": np.abs(robust["value"].to_numpy() - partner["value"].to_numpy()),
                          **{k: partner[k].to_numpy() for k in KEYS}})
    return frame.groupby(KEYS).agg(drops=("event", "size"), goal_probability=("event", "mean"),
                                   flip_rate=("flip", "mean"), mean_change=("change", "mean"))


def test_robustness_csv_is_the_outcome_against_the_exact_partner(small_run, by_hand):
    got = pd.read_csv(small_run / "maps" / "robustness-angle-aspect_ratio.csv").set_index(KEYS).sort_index()
    assert len(got) == 80 and (got["drops"] == 8).all()
    pd.testing.assert_frame_equal(got[["drops", "goal_probability", "flip_rate", "mean_change"]],
                                  by_hand.sort_index(), check_dtype=False, rtol=1e-12)
    assert (got["meets_target"] == (got["goal_probability"] >= 0.5)).all()     # no drop starts inside the floor
    assert 0 < got["flip_rate"].max() and (got["mean_change"] > 0).any()       # release errors do act here
    for (_, row) in got.iloc[::7].iterrows():
        ci = binomtest(round(row["goal_probability"] * 8), 8).proportion_ci(method="wilson")
        assert (row["goal_low"], row["goal_high"]) == pytest.approx((ci.low, ci.high), abs=1e-12)


def test_safe_region_file_covers_exactly_the_cells_meeting_the_target(small_run, by_hand):
    regions = pd.read_csv(small_run / "safe-regions.csv")
    strips = regions[regions["kind"] == "strip"]
    angles = np.sort(by_hand.index.get_level_values(0).unique())
    covered = set()
    for _, s in strips.iterrows():
        for a in angles[(angles >= s[f"{KEYS[0]}_low"]) & (angles <= s[f"{KEYS[0]}_high"])]:
            for r in by_hand.xs(a, level=0).index:
                if s[f"{KEYS[1]}_low"] <= r <= s[f"{KEYS[1]}_high"]:
                    covered.add((a, r))
    meeting = set(by_hand.index[by_hand["goal_probability"] >= 0.5])
    assert covered == meeting and meeting
    # the region sizes add up to the cells meeting the target
    assert regions.groupby("region")["cells"].first().sum() == len(meeting)


def test_one_grid_quantity_draws_curves_and_a_csv(tmp_path):
    # one swept quantity: the robustness "map" is two curves over it
    text = study_yaml({
        "name": "line",
        "body": {**PIN, "aspect_ratio": 4.0},
        "contact": PIN_ON_STEEL,
        "release": {"height": 0.005, "height_of": "bottom", "angle": grid(10, 80, 8)},
        "metric": {"kind": "ratio", "reference": "bottom"},
        "tolerance": {"draws": 6},
        "analyses": {"draws": 3, "picks": {"count": 2, "target": 0.5}},
        "run": {"jobs": 1, "seed": 5, "impacts": 4},
    })
    outcome = run_text(text, tmp_path)
    art = analyse(outcome)
    (title, paths, csv), = art.robustness
    assert title == "robustness over angle" and paths[0].is_file()
    points = pd.read_csv(csv)
    robust = outcome.tables["robust"]
    # the angle of each cell, then the share of its 6 toleranced drops with the event
    expected = robust.groupby("cell")["event"].mean().to_numpy()
    np.testing.assert_allclose(points["goal_probability"], expected, rtol=1e-15)
    assert list(points[COLUMN["angle"]]) == [10, 20, 30, 40, 50, 60, 70, 80]
    regions = pd.read_csv(tmp_path / "safe-regions.csv")
    met = points[COLUMN["angle"]][points["goal_probability"] >= 0.5].tolist()
    covered = [a for _, r in regions.iterrows() for a in met if r["angle_deg_low"] <= a <= r["angle_deg_high"]]
    assert sorted(covered) == met
