"""Regime maps and curves (explore/maps.py).

Every figure is written beside a CSV of the numbers behind it; the tests
recompute those numbers by hand from the result table of a small real run
(the shared ``small_run``: 80 cells x 12 draws) or from a table built here,
so the expected values do not go through the code under test.
"""
from pathlib import Path

import matplotlib.axes
import numpy as np
import pandas as pd
import pytest
from scipy.stats import binomtest

from conftest import PIN, PIN_ON_STEEL, SMALL, changed, grid, read_parts, study_yaml, uniform
from hopscape.maps import energy_note, flat, metric_words, regime_map
from hopscape.sim.impact import LAW_TABLE
from hopscape.study import COLUMN, parse_study

ROOT = Path(__file__).resolve().parents[1]


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


def test_map_csv_has_wilson_intervals(small_run):
    cells = pd.read_csv(small_run / "maps" / "map-angle-aspect_ratio.csv")
    for _, row in cells.iloc[::9].iterrows():
        ci = binomtest(round(row["event_probability"] * 12), 12).proportion_ci(method="wilson")
        assert (row["event_low"], row["event_high"]) == pytest.approx((ci.low, ci.high), abs=1e-12)


def test_curve_probability_has_wilson_intervals(small_run):
    curve = pd.read_csv(small_run / "maps" / "curve-angle.csv")
    for _, row in curve.iterrows():
        k = round(row["event_probability"] * row["drops"])
        # an independent implementation of Wilson (1927, J. Am. Stat. Assoc. 22:209)
        ci = binomtest(k, int(row["drops"])).proportion_ci(confidence_level=0.95, method="wilson")
        assert (row["event_low"], row["event_high"]) == pytest.approx((ci.low, ci.high), abs=1e-12)


def contours_drawn(monkeypatch, study, table, folder):
    """How many contour sets ``regime_map`` draws for ``table``."""
    calls = []
    original = matplotlib.axes.Axes.contour

    def counting(self, *args, **kwargs):
        calls.append(kwargs.get("levels"))
        return original(self, *args, **kwargs)

    monkeypatch.setattr(matplotlib.axes.Axes, "contour", counting)
    regime_map(study, table, "angle", "aspect_ratio", folder)
    return len(calls)


def test_no_contours_over_a_flat_field(small_run, tmp_path, monkeypatch):
    study = parse_study(SMALL)
    table = read_parts(small_run)["grid"]
    assert contours_drawn(monkeypatch, study, table, tmp_path) > 0       # the real map has lines
    never = table.assign(event=False)
    assert contours_drawn(monkeypatch, study, never, tmp_path / "never") == 0
    assert flat([[0.0, 0.0], [0.0, np.nan]]) and not flat([[0.0, 0.1]])


# --------------------------------------------------------------------------
# the words beside every map
# --------------------------------------------------------------------------

NOTE_STUDY = {
    "name": "notes",
    "body": {**PIN, "aspect_ratio": 3.0},
    "contact": PIN_ON_STEEL,
    "release": {"height": 0.01, "angle": grid(0, 90, 4)},
    "metric": {"kind": "ratio", "reference": "centre"},
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


@pytest.mark.parametrize("law", LAW_TABLE, ids=lambda law: law.name)
def test_energy_note_follows_each_laws_energy_flag(law):
    # the bound holds for laws that never create energy; Newton's law can
    # create energy (Stronge, J. Appl. Mech. 58:1049, 1991)
    text = note(contact={"law": law.name})
    if law.creates_energy:
        assert text.startswith(f"Energy bound: none here. The {law.name} law can create energy")
        assert "never rise" not in text
    else:
        assert "the centre can never rise above its release height" in text
        assert f"the {law.name} law never creates energy" in text


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


def test_no_energy_bound_is_claimed_on_an_inclined_floor():
    # on a slope the along-floor potential turns into motion normal to the
    # floor after an impact (docs/physics.md sections 1 and 6): no bound
    from hopscape.maps import energy_note
    text = (ROOT / "studies" / "pill-lip.yaml").read_text(encoding="utf-8")
    assert "Energy bound: none here. On an inclined floor" in energy_note(parse_study(text))
    level = text.replace("floor_angle: {grid: {low: 0, high: 40, steps: 21}}", "floor_angle: 0") \
                .replace("    - {x: angle, y: floor_angle}", "    - {x: angle, y: angle2}") \
                .replace("  maps:\n    - {x: angle, y: angle2}\n", "").replace("  curves:\n    - {x: floor_angle}\n", "")
    assert "On an inclined floor" not in energy_note(parse_study(level))


# --------------------------------------------------------------------------
# drops that would start inside the floor (released by the centre, low)
# --------------------------------------------------------------------------

#: Released by the centre from 4, 17 and 30 mm: a 6 mm pin of aspect ratio 6
#: standing upright reaches 18 mm below its centre, so two of its three
#: heights start inside the floor; lying flat (3 mm) none does.
LOW_STUDY = {
    "name": "low",
    "body": {**PIN, "aspect_ratio": grid(2.0, 6.0, 3)},
    "contact": PIN_ON_STEEL,
    "release": {"height": grid(0.004, 0.03, 3), "height_of": "centre", "angle": grid(0, 90, 4)},
    "metric": {"kind": "ratio", "reference": "centre", "goal": "avoid"},
    "analyses": {"draws": 2, "maps": [{"x": "angle", "y": "aspect_ratio"}], "curves": [{"x": "angle"}]},
    "run": {"jobs": 1, "seed": 5, "impacts": 3},
}


@pytest.fixture(scope="module")
def low_run(tmp_path_factory):
    from conftest import write_study
    from hopscape.cli import main
    base = tmp_path_factory.mktemp("low")
    path = write_study(base, study_yaml(LOW_STUDY), "low.yaml")
    assert main(["run", str(path), "--out", str(base / "run"), "--quiet", "--backend", "sequential"]) == 0
    return base / "run", parse_study(study_yaml(LOW_STUDY))


def _starts_inside(grid):
    """By hand (docs/physics.md section 2): a capsule's lowest point lies
    (L/2 - r)|sin angle| + r below its centre."""
    r = 0.003
    half = grid[COLUMN["aspect_ratio"]] * 0.006 / 2
    depth = (half - r) * np.abs(np.sin(np.radians(grid[COLUMN["angle"]]))) + r
    return (grid[COLUMN["height"]] <= depth).to_numpy()


def test_map_probabilities_count_only_the_drops_that_were_simulated(low_run):
    folder, _ = low_run
    grid = read_parts(folder)["grid"]
    inside = _starts_inside(grid)
    assert 0 < inside.mean() < 1
    np.testing.assert_array_equal(grid["status"].astype(str) == "inside floor", inside)
    cells = pd.read_csv(folder / "maps" / "map-angle-aspect_ratio.csv")
    keys = [COLUMN["angle"], COLUMN["aspect_ratio"]]
    for key, row in cells.set_index(keys).iterrows():
        mine = (grid[keys[0]] == key[0]).to_numpy() & (grid[keys[1]] == key[1]).to_numpy()
        simulated = mine & ~inside
        assert row["drops"] == mine.sum() == 6
        assert row["simulated"] == simulated.sum()
        assert row["inside_floor_fraction"] == pytest.approx(1 - simulated.sum() / 6, abs=1e-15)
        if simulated.any():
            assert row["event_probability"] == pytest.approx(grid.loc[simulated, "event"].mean(), abs=1e-15)
        else:
            assert np.isnan(row["event_probability"])


def test_cells_mostly_inside_the_floor_are_drawn_as_such(low_run, tmp_path, monkeypatch):
    import hopscape.maps as maps
    folder, study = low_run
    grid = read_parts(folder)["grid"]
    drawn = {}

    def keep(fig, base, formats):
        drawn["z"] = fig.axes[0].collections[0].get_array()
        drawn["legend"] = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
        return []

    monkeypatch.setattr(maps, "save_figure", keep)
    maps.regime_map(study, grid, "angle", "aspect_ratio", tmp_path)
    cells = pd.read_csv(tmp_path / "map-angle-aspect_ratio.csv").sort_values(
        [COLUMN["aspect_ratio"], COLUMN["angle"]])          # rows of the picture: aspect ratio
    mostly = (cells["inside_floor_fraction"] > 0.5).to_numpy()
    assert mostly.any() and (~mostly & (cells["inside_floor_fraction"] > 0)).any()
    z = np.ma.getmaskarray(drawn["z"]).ravel()
    np.testing.assert_array_equal(z, mostly | cells["event_probability"].isna().to_numpy())
    assert any("more than half the drops would start inside the floor" in t for t in drawn["legend"])


def test_report_says_where_drops_start_inside_the_floor(low_run):
    from hopscape.analysis import inside_floor_note
    folder, study = low_run
    grid = read_parts(folder)["grid"]
    inside = _starts_inside(grid)
    # inside: only at 4 and 17 mm, and never lying flat (3 mm < 4 mm)
    heights = grid[COLUMN["height"]].to_numpy()
    angles = grid[COLUMN["angle"]].to_numpy()
    assert set(heights[inside]) == {0.004, 0.017} and 0 not in set(angles[inside])
    box = (heights <= 0.017) & (angles >= 30)
    share = inside.sum() / box.sum()
    text = inside_floor_note(study, grid)
    assert text.startswith(f"{share:.0%} of the drops at ")
    assert "height 0.004-0.017 m" in text and "angle 30-90 deg" in text and "aspect ratio" not in text
    assert f"({inside.sum():,} of {box.sum():,})" in text
    report = (folder / "report.html").read_text(encoding="utf-8")
    assert f"({inside.sum():,} of {box.sum():,}) start inside the floor" in report


def test_an_avoid_studys_curve_shows_how_often_the_goal_is_met(low_run, tmp_path, monkeypatch):
    # as its map: for a study that avoids the event, the green line is
    # 1 - P(event) and says so, so up is good on both pictures of a report
    import hopscape.maps as maps
    folder, study = low_run
    assert study.metric.goal == "avoid"
    grid = read_parts(folder)["grid"]
    drawn = {}

    def keep(fig, base, formats):
        ax = fig.axes[0]
        drawn["labels"] = [t.get_text() for t in ax.get_legend().get_texts()]
        drawn["lines"] = [line.get_ydata() for axis in fig.axes for line in axis.get_lines() if len(line.get_ydata())]
        return []

    monkeypatch.setattr(maps, "save_figure", keep)
    maps.curve(study, grid, "angle", tmp_path)
    curve = pd.read_csv(tmp_path / "curve-angle.csv")
    assert any(t.startswith("probability it does not happen: ") for t in drawn["labels"])
    expected = 1 - curve["event_probability"].to_numpy()
    assert any(len(line) == len(expected) and np.allclose(line, expected, equal_nan=True) for line in drawn["lines"])


def test_neighbourhood_mean_by_hand():
    from hopscape.maps import neighbourhood_mean
    z = np.array([[0.0, 1.0, np.nan], [1.0, 1.0, 0.0]])
    got = neighbourhood_mean(z)
    # cell (0, 0): itself and its 3 neighbours (0, 1), (1, 0), (1, 1)
    assert got[0, 0] == pytest.approx((0 + 1 + 1 + 1) / 4)
    # cell (0, 2) is empty but its neighbours are not: (0, 1), (1, 1), (1, 2)
    assert got[0, 2] == pytest.approx((1 + 1 + 0) / 3)
    assert got[1, 1] == pytest.approx((0 + 1 + 1 + 1 + 0) / 5)
    assert np.isnan(neighbourhood_mean(np.full((2, 2), np.nan))).all()
