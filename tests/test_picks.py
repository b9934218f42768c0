"""Recommended release conditions (explore/picks.py).

Picks are checked on result tables built by hand, where the right answer is
known: a 2 x 10 grid (aspect ratio 2 and 4, angles 0 to 90 deg in 10 deg
steps), one exact drop per cell and four toleranced re-drops of it. Each
cell's event probability is set by how many of its four re-drops have the
event, its mean value under tolerance by a base value, and its spread by
how far the re-drops' values stray from the exact drop's (0.02: calm; 0.3:
chaotic, above the default ``chaotic_spread`` of 0.1).
"""
import numpy as np
import pandas as pd
import pytest

from conftest import PIN, PIN_ON_STEEL, changed, grid, study_yaml
from hopscape.picks import picks
from hopscape.plan import cell_coordinates
from hopscape.study import COLUMN, parse_study

ANGLES = [0, 10, 20, 30, 40, 50, 60, 70, 80, 90]
#: event probability per (aspect ratio, angle)
PROBABILITY = {
    2.0: [0, .25, .5, .75, 1, 1, .75, .25, 0, 0],
    4.0: [0, 0, 0, .25, .5, .75, .75, .75, .5, 0],
}
#: mean value under tolerance where it is not 1.0 (it breaks ties)
BASE = {(2.0, 50): 1.2, (2.0, 40): 1.1, (4.0, 60): 1.3, (2.0, 30): 1.05, (2.0, 80): 0.9, (4.0, 0): 0.8}
CHAOTIC = {(4.0, 60)}
#: three of four re-drops would start inside the floor
INSIDE = {(4.0, 90)}

PICK_STUDY = {
    "name": "picks",
    "body": {**PIN, "aspect_ratio": grid(2.0, 4.0, 2)},
    "contact": PIN_ON_STEEL,
    "release": {"height": 0.01, "angle": grid(0, 90, 10)},
    "tolerance": {"draws": 4},
    "analyses": {"picks": {"count": 4, "target": 0.75}},
}


def tables(study):
    """(robust, grid) tables of the cells described above."""
    cells = cell_coordinates(study)
    grid_rows, robust_rows = [], []
    for cell, aspect, angle in zip(cells["cell"], cells[COLUMN["aspect_ratio"]], cells[COLUMN["angle"]]):
        key = (aspect, int(angle))
        base = BASE.get(key, 1.0)
        grid_rows.append({"cell": cell, "draw": 0, "value": base})
        spread = 0.3 if key in CHAOTIC else 0.02
        events = round(4 * PROBABILITY[aspect][ANGLES.index(key[1])])
        for j in range(4):
            inside = key in INSIDE and j > 0
            robust_rows.append({"cell": cell, "draw": j, "pair": cell,
                                "value": np.nan if inside else base + (spread if j % 2 == 0 else -spread),
                                "event": j < events})
    return pd.DataFrame(robust_rows), pd.DataFrame(grid_rows)


def pick(goal="seek", **updates):
    study = parse_study(study_yaml(changed(PICK_STUDY, metric={"goal": goal}, **updates)))
    robust, grid_table = tables(study)
    return picks(study, robust, grid_table)


def rows(table):
    return [(row[COLUMN["aspect_ratio"]], row[COLUMN["angle"]]) for _, row in table.iterrows()]


def test_seek_ranks_by_probability_then_mean_value():
    table = pick()
    assert list(table["rank"]) == [1, 2, 3, 4]
    # p = 1 twice (mean value 1.2 before 1.1), then p = 0.75 with the
    # highest mean values (1.3, 1.05) of the five cells at 0.75
    assert rows(table) == [(2.0, 50), (2.0, 40), (4.0, 60), (2.0, 30)]
    np.testing.assert_allclose(table["event_probability"], [1, 1, 0.75, 0.75])
    np.testing.assert_allclose(table["mean_value_under_tolerance"], [1.2, 1.1, 1.3, 1.05], rtol=1e-15)
    np.testing.assert_allclose(table["mean_change_under_tolerance"], [0.02, 0.02, 0.3, 0.02], rtol=1e-12)
    np.testing.assert_allclose(table["nominal_value"], [1.2, 1.1, 1.3, 1.05], rtol=1e-15)


def test_angle_window_is_the_run_of_neighbours_meeting_the_target():
    table = pick()
    # aspect 2: 30-60 deg reach 0.75; aspect 4: 50-70 deg
    assert list(table["angle_window_low_deg"]) == [30, 30, 50, 30]
    assert list(table["angle_window_high_deg"]) == [60, 60, 70, 60]


def test_chaotic_pick_is_flagged_and_explained():
    table = pick()
    assert list(table["chaotic"]) == [False, False, True, False]
    assert table["note"].iloc[2].startswith("chaotic: release errors move the outcome a lot")
    assert list(table["note"].iloc[[0, 1, 3]]) == ["", "", ""]


def test_picks_below_the_target_have_no_window_and_say_so():
    table = pick(analyses={"picks": {"count": 4, "target": 0.9}})
    assert rows(table) == [(2.0, 50), (2.0, 40), (4.0, 60), (2.0, 30)]
    assert list(table["angle_window_low_deg"].iloc[:2]) == [40, 40]
    assert list(table["angle_window_high_deg"].iloc[:2]) == [50, 50]
    assert table["angle_window_low_deg"].iloc[2:].isna().all()
    assert table["note"].iloc[2].startswith("no angle here reaches the target 90%; chaotic")
    assert table["note"].iloc[3] == ("no angle here reaches the target 90%; "
                                     "below the target 90% under the stated tolerance")


def test_avoid_ranks_lowest_first_and_skips_cells_inside_the_floor():
    table = pick("avoid")
    # p = 0 at eight cells; (4, 90) is mostly inside the floor and left out;
    # then the lowest mean values (0.8, 0.9), then cell order
    assert rows(table) == [(4.0, 0), (2.0, 80), (2.0, 0), (2.0, 90)]
    assert (table["event_probability"] == 0).all()
    assert (4.0, 90) not in rows(pick("avoid", analyses={"picks": {"count": 7}}))
    # the avoid target: probability at most 1 - 0.75
    assert list(table["angle_window_low_deg"]) == [0, 70, 0, 70]
    assert list(table["angle_window_high_deg"]) == [30, 90, 10, 90]


def test_columns_rank_coordinates_first_cell_last():
    table = pick()
    assert list(table.columns[:3]) == ["rank", COLUMN["aspect_ratio"], COLUMN["angle"]]
    assert table.columns[-1] == "cell"
    # the cell index and the coordinates agree with the study's grid
    coords = cell_coordinates(parse_study(study_yaml(PICK_STUDY))).set_index("cell")
    for _, row in table.iterrows():
        assert coords.loc[row["cell"], COLUMN["angle"]] == row[COLUMN["angle"]]


def test_picks_csv(small_run):
    picks_csv = pd.read_csv(small_run / "picks.csv")
    assert list(picks_csv["rank"]) == [1, 2, 3]
    assert {"event_probability", COLUMN["angle"], COLUMN["aspect_ratio"], "chaotic", "note"} <= set(picks_csv.columns)
    assert picks_csv["event_probability"].is_monotonic_decreasing      # goal: seek
