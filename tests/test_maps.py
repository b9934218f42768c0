"""Regime maps, curves and the robustness map (explore/maps.py).

Every figure is written beside a CSV of the numbers behind it; the tests
recompute those numbers by hand from the result table of a small real run
(the shared ``small_run``: 80 cells x 12 draws) or from a table built here,
so the expected values do not go through the code under test.
"""
import numpy as np
import pandas as pd
import pytest

from conftest import PIN, PIN_ON_STEEL, changed, grid, read_parts, study_yaml, uniform
from hopscape.maps import energy_note, metric_words, tolerance_effect
from hopscape.study import COLUMN, parse_study


def test_map_csv_holds_the_numbers_behind_the_map(small_run):
    cells = pd.read_csv(small_run / "maps" / "map-angle-aspect_ratio.csv")
    grid = read_parts(small_run)["grid"]
    assert len(cells) == 80 and (cells["drops"] == 12).all()
    expected = grid.groupby([COLUMN["angle"], COLUMN["aspect_ratio"]])["event"].mean()
    got = cells.set_index([COLUMN["angle"], COLUMN["aspect_ratio"]])["event_probability"]
    pd.testing.assert_series_equal(got.sort_index(), expected.sort_index(), check_names=False, rtol=1e-12)
    assert 0 < cells["event_probability"].mean() < 1      # a map with something to show


def test_map_csv_other_columns_by_hand(small_run):
    cells = pd.read_csv(small_run / "maps" / "map-angle-aspect_ratio.csv")
    grid = read_parts(small_run)["grid"]
    keys = [COLUMN["angle"], COLUMN["aspect_ratio"]]
    got = cells.set_index(keys).sort_index()
    by_cell = {key: rows for key, rows in grid.groupby(keys)}
    for key, row in got.iterrows():
        drops = by_cell[key]
        assert row["drops"] == len(drops) == 12
        # means of 12 numbers, summed in another order: 1e-12
        assert row["mean_value"] == pytest.approx(np.mean(drops["value"]), rel=1e-12, abs=1e-15)
        assert row["mean_best_later_ratio"] == pytest.approx(np.mean(drops["best_later_ratio"]), rel=1e-12,
                                                             abs=1e-15)
        assert row["beats_first_probability"] == np.count_nonzero(drops["beats_first"]) / 12
        assert row["beats_release_probability"] == np.count_nonzero(drops["beats_release"]) / 12
        assert row["inside_floor_fraction"] == 0.0      # released by the lowest point: never inside


def test_curve_csv_holds_median_band_and_probability_per_angle(small_run):
    curve = pd.read_csv(small_run / "maps" / "curve-angle.csv")
    grid = read_parts(small_run)["grid"]
    angle = COLUMN["angle"]
    assert list(curve[angle]) == list(np.linspace(0, 90, 16))
    for _, row in curve.iterrows():
        values = grid.loc[grid[angle] == row[angle], "value"].to_numpy()
        events = grid.loc[grid[angle] == row[angle], "event"].to_numpy()
        assert row["drops"] == values.size == 5 * 12          # 5 aspect ratios x 12 draws
        # numpy's linear-interpolation quantiles, computed independently
        np.testing.assert_allclose(row[["median_value", "p10_value", "p90_value"]].to_numpy(float),
                                   np.quantile(values, [0.5, 0.1, 0.9]), rtol=1e-12, atol=1e-15)
        assert row["event_probability"] == np.count_nonzero(events) / values.size
        assert row["p10_value"] <= row["median_value"] <= row["p90_value"]


def test_robustness_csv_is_the_mean_change_against_the_exact_partner(small_run):
    cells = pd.read_csv(small_run / "maps" / "robustness-angle-aspect_ratio.csv")
    tables = read_parts(small_run)
    grid, robust = tables["grid"].sort_values(["cell", "draw"]), tables["robust"]
    partner = grid.iloc[robust["pair"].to_numpy()]
    keys = [COLUMN["angle"], COLUMN["aspect_ratio"]]
    # a toleranced drop belongs to the cell of its partner (its own angle moved)
    robust = pd.DataFrame({"change": np.abs(robust["value"].to_numpy() - partner["value"].to_numpy()),
                           "event": robust["event"].to_numpy(),
                           **{k: partner[k].to_numpy() for k in keys}})
    expected = robust.groupby(keys).agg(drops=("change", "size"), mean_change=("change", "mean"),
                                        event_probability=("event", "mean"))
    got = cells.set_index(keys).sort_index()
    assert len(got) == 80 and (got["drops"] == 8).all()
    pd.testing.assert_frame_equal(got[["drops", "mean_change", "event_probability"]], expected.sort_index(),
                                  check_dtype=False, rtol=1e-12)
    assert (got["mean_change"] > 0).any()          # release errors do move the metric here


# --------------------------------------------------------------------------
# tolerance_effect on a table built by hand
# --------------------------------------------------------------------------

def test_tolerance_effect_by_hand():
    # two cells of two grid drops each; row i of grid is pair i
    grid = pd.DataFrame({"cell": [0, 0, 1, 1], "value": [1.0, 2.0, 3.0, 4.0]})
    robust = pd.DataFrame({
        "cell": [0, 0, 0, 1, 1],
        "pair": [0, 1, 0, 2, 3],
        "value": [1.5, 1.0, 1.0, np.nan, 4.25],     # the nan: a body that would start inside the floor
        "event": [True, False, False, False, True],
    })
    effect = tolerance_effect(robust, grid)
    assert list(effect.index) == [0, 1]
    assert list(effect["drops"]) == [3, 2]
    # |1.5 - 1| + |1 - 2| + |1 - 1| over 3; cell 1: only |4.25 - 4| is defined
    np.testing.assert_allclose(effect["mean_change"], [0.5, 0.25], rtol=1e-15)
    np.testing.assert_allclose(effect["event_probability"], [1 / 3, 1 / 2], rtol=1e-15)
    np.testing.assert_allclose(effect["mean_value"], [3.5 / 3, 4.25], rtol=1e-15)
    np.testing.assert_allclose(effect["inside_floor_fraction"], [0.0, 0.5], rtol=1e-15)


# --------------------------------------------------------------------------
# the words beside every map
# --------------------------------------------------------------------------

NOTE_STUDY = {
    "name": "notes",
    "body": {**PIN, "aspect_ratio": 3.0},
    "contact": PIN_ON_STEEL,
    "release": {"height": 0.01, "angle": grid(0, 90, 4)},
    "metric": {"reference": "centre"},
}


def note(**updates):
    return energy_note(parse_study(study_yaml(changed(NOTE_STUDY, **updates))))


def test_energy_note_follows_the_energy_bound():
    # docs/physics.md section 6: from rest the centre can never rise above
    # its release height (impacts only dissipate); spin or a throw raises
    # the bound; the lowest and top points can beat their own start.
    assert note().endswith("with no spin or throw here, a centre ratio above 1 is impossible.")
    for release in ({"spin": 20}, {"spin": uniform(-5, 5)}, {"vx": 0.5}):
        assert note(release=release).endswith("so the bound is higher and the centre can beat it."), release
    assert "the lowest point can still beat its own release height" in note(metric={"reference": "bottom"})
    assert "the top point can still beat its own release height" in note(metric={"reference": "top"})
    assert note().startswith("Energy bound: released from rest, the centre can never rise above its release height")


@pytest.mark.parametrize("metric, value_words, event_words", [
    ({"reference": "bottom"},
     "rebound ratio of the best later bounce (lowest point height / its release height)",
     "best later bounce above 1 x the release height of the lowest point"),
    ({"bounce": 2, "threshold": 0.5},
     "rebound ratio of the bounce 2 (centre height / its release height)",
     "bounce 2 above 0.5 x the release height of the centre"),
    ({"kind": "beats_release", "reference": "top"},
     "a bounce beats the release height of the top point", "a bounce rises above the release height of the top point"),
    ({"kind": "beats_first"},
     "a later bounce beats the first (centre)", "a later bounce rises above the first (centre)"),
])
def test_metric_words(metric, value_words, event_words):
    study = parse_study(study_yaml(changed(NOTE_STUDY, metric=metric)))
    assert metric_words(study) == (value_words, event_words)
