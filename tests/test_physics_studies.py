"""Whole studies checked against physics a study must respect.

(a) Uniform density cancels out of rigid-body impact dynamics: mass and
    moment of inertia both scale with density, so every impulse scales with
    it and every velocity change does not (standard rigid-body result; see
    docs/physics.md section 3, and W. J. Stronge, *Impact Mechanics*,
    Cambridge University Press 2000, where the impulse equations involve
    only 1/m and r^2/I). A Sobol study must rank density at zero.
(b) Released from rest, impacts only dissipate under the energetic law
    (Stronge, J. Appl. Mech. 58:1049, 1991), so the centre can never rise
    above its release height; the lowest point can, because at release it
    hangs (L/2) sin(theta0) below the centre (docs/physics.md section 6;
    standard energy-conservation argument).
(c) The robustness stage pairs each toleranced drop with a grid drop
    released exactly: with zero tolerance the pairs are identical drops.
(d) Picks rank cells by the event probability under tolerance.
"""
import numpy as np
import pandas as pd
import pytest

from conftest import PIN, changed, grid, run_text, study_yaml, uniform
from hopscape.analysis import analyse
from hopscape.under_tolerance import tolerance_effect
from hopscape.study import COLUMN

def ratios(table):
    return table[[c for c in table.columns if c.startswith("ratio_")]].to_numpy()


# --------------------------------------------------------------------------
# (a) density cancels
# --------------------------------------------------------------------------

DENSITY = study_yaml({
    "name": "density",
    "body": {**PIN, "aspect_ratio": 3.0, "density": uniform(500, 3000)},
    "contact": {"restitution": uniform(0.5, 0.95), "friction": 0.2},
    "release": {"height": 0.02, "angle": uniform(0, 90)},
    "metric": {"kind": "ratio", "reference": "centre", "bounce": "later"},
    "analyses": {"robustness": False, "sensitivity": {"method": "sobol", "samples": 512}},
    # the rigid impulse model, whose dynamics density leaves exactly alone;
    # the default two-ends model's near-flat pairs last a Hertz duration
    # that grows with the mass (Johnson 1985), a real but tiny dependence
    "run": {"jobs": 1, "seed": 5, "impacts": 4, "model": "impulse"},
})


@pytest.fixture(scope="module")
def density_study(tmp_path_factory):
    outcome = run_text(DENSITY, tmp_path_factory.mktemp("density"))
    return outcome, analyse(outcome)


def test_density_ranks_at_zero_and_angle_matters(density_study):
    outcome, art = density_study
    ranking = art.ranking.set_index("parameter")
    assert sorted(ranking.index) == ["angle", "density", "restitution"]
    # Density cancels exactly from the dynamics, so each Saltelli term
    # f(A) - f(A with B's density) is a rounding difference (~1e-15) and the
    # total index is of order 1e-30; 1e-6 leaves room for rounding only,
    # while any density dependence (an absolute threshold in joules or
    # newton-seconds somewhere in the kernel, say) would give a visible ST.
    assert abs(ranking.loc["density", "ST"]) < 1e-6
    assert abs(ranking.loc["density", "S1"]) < 1e-6
    assert ranking["ST"].idxmin() == "density"
    # the angle clearly matters: ST well above zero, its interval excludes 0
    angle = ranking.loc["angle"]
    assert angle["ST"] > 0.2
    assert angle["ST"] - angle["ST_conf"] > 0.1
    assert angle["ST"] > 1000 * max(abs(ranking.loc["density", "ST"]), 1e-9)


def test_drops_that_differ_only_in_density_have_the_same_outcome(density_study):
    outcome, _ = density_study
    table = outcome.tables["sobol"]
    keys = [COLUMN["restitution"], COLUMN["angle"]]
    groups = table.groupby(keys)
    sizes = groups.size()
    assert (sizes > 1).sum() >= 500, "the Sobol design re-drops each point with another density"
    for col in ("value", "ratio_1", "ratio_2", "ratio_3", "ratio_4"):
        spread = groups[col].max() - groups[col].min()
        # rounding only: 1e-12 is ~1000x the spreads seen (2e-15)
        assert spread.max() < 1e-12, col
    # and the densities really differed within those groups
    dens = groups[COLUMN["density"]].agg(lambda d: d.max() - d.min())
    assert (dens[sizes > 1] > 0).all()


# --------------------------------------------------------------------------
# (b) energy bound of the centre, and what the lowest point can do
# --------------------------------------------------------------------------

# Long capsules (aspect 4-8) tipped off 4 mm (lowest point), restitution
# 0.95, released from rest.
LOW_DROP = {
    "name": "lowdrop",
    "body": {**PIN, "aspect_ratio": grid(4.0, 8.0, 5)},
    "contact": {"restitution": 0.95, "friction": uniform(0.05, 0.3)},
    "release": {"height": 0.004, "height_of": "bottom", "angle": grid(0, 90, 31)},
    "metric": {"kind": "ratio", "reference": "centre", "bounce": "later"},
    "tolerance": {"angle": 1.0, "height": 0.0005, "draws": 8},
    "analyses": {"draws": 8},
    "run": {"jobs": 1, "seed": 11, "impacts": 4},
}


@pytest.fixture(scope="module")
def low_drop(tmp_path_factory):
    return {ref: run_text(study_yaml(changed(LOW_DROP, metric={"reference": ref})), tmp_path_factory.mktemp(ref))
            for ref in ("centre", "bottom")}


def test_centre_never_rises_above_its_release_height_from_rest(low_drop):
    outcome = low_drop["centre"]
    for stage, table in outcome.tables.items():
        assert len(table) == 1240
        assert (table["status"] == "impacts").all()
        r = ratios(table)
        # 1e-12: rounding of peak height / release height; a real energy
        # gain would exceed 1 by far more
        assert r.max() <= 1 + 1e-12, stage
        assert r.max() > 0.5            # the drops do bounce
        assert not table["beats_release"].any()
        assert not table["event"].any()
        # from rest the energy bound is the release height itself
        np.testing.assert_allclose(table["energy_bound_ratio"], 1.0, rtol=0, atol=1e-12)
        assert not table["energy_gain"].any()


def test_lowest_point_can_beat_its_release_height_in_the_same_drops(low_drop):
    centre, bottom = low_drop["centre"], low_drop["bottom"]
    for stage in ("grid", "robust"):
        c, b = centre.tables[stage], bottom.tables[stage]
        # the same drops: identical inputs, only the reference point differs
        pd.testing.assert_series_equal(c[COLUMN["friction"]], b[COLUMN["friction"]], check_exact=True)
        pd.testing.assert_series_equal(c[COLUMN["angle"]], b[COLUMN["angle"]], check_exact=True)
        r = ratios(b)
        assert (r > 1).any(axis=1).mean() > 0.1, stage
        assert b["beats_release"].mean() > 0.1
    # not at lying flat: at theta0 = 0 the lowest point starts only R below
    # the centre, and no bounce of the lowest point can beat it then
    grid = bottom.tables["grid"]
    flat = grid[grid[COLUMN["angle"]] == 0.0]
    assert len(flat) == 5 * 8
    assert ratios(flat).max() <= 1 + 1e-12


# --------------------------------------------------------------------------
# (c) robustness pairs
# --------------------------------------------------------------------------

# 3 x 7 cells, 4 grid draws over the random restitution and friction, 8
# toleranced draws per cell (each grid draw is paired twice).
PAIRS = {
    "name": "pairs",
    "body": {**PIN, "aspect_ratio": grid(2.0, 6.0, 3)},
    "contact": {"restitution": uniform(0.6, 0.95), "friction": uniform(0.05, 0.5)},
    "release": {"height": 0.03, "angle": grid(5, 85, 7)},
    "metric": {"kind": "ratio", "reference": "bottom"},
    "analyses": {"draws": 4, "maps": [{"x": "angle", "y": "aspect_ratio"}]},
    "run": {"jobs": 1, "seed": 2, "impacts": 4},
}


def pairs_study(angle, height, spin):
    return study_yaml(changed(PAIRS, tolerance={"angle": angle, "height": height, "spin": spin, "draws": 8}))


def test_zero_tolerance_gives_exactly_zero_change(tmp_path):
    outcome = run_text(pairs_study(0, 0, 0), tmp_path)
    grid, robust = outcome.tables["grid"], outcome.tables["robust"]
    assert len(grid) == 21 * 4 and len(robust) == 21 * 8
    assert grid["value"].notna().all()           # no body starts inside the floor
    partner = grid.iloc[robust["pair"].to_numpy()].reset_index(drop=True)
    # the partner is in the same cell; draw j pairs with grid draw j mod 4
    np.testing.assert_array_equal(partner["cell"], robust["cell"])
    np.testing.assert_array_equal(partner["draw"], robust["draw"] % 4)
    inputs = [COLUMN[n] for n in ("aspect_ratio", "restitution", "friction", "height", "angle", "spin")]
    pd.testing.assert_frame_equal(robust[inputs], partner[inputs], check_exact=True)
    results = ["value", "ratio_1", "ratio_2", "ratio_3", "ratio_4", "event"]
    pd.testing.assert_frame_equal(robust[results], partner[results], check_exact=True)
    effect = tolerance_effect(robust, grid)
    assert (effect["mean_change"] == 0.0).all() and (effect["flip_rate"] == 0.0).all()
    analyse(outcome)
    csv = pd.read_csv(tmp_path / "maps" / "robustness-angle-aspect_ratio.csv")
    assert len(csv) == 21
    assert (csv["mean_change"] == 0.0).all() and (csv["flip_rate"] == 0.0).all()


def test_nonzero_tolerance_moves_only_release_and_changes_the_metric(tmp_path):
    # the control for the test above: it would pass trivially if the
    # metric never moved at all
    outcome = run_text(pairs_study(2.0, 0.001, 0), tmp_path)
    grid, robust = outcome.tables["grid"], outcome.tables["robust"]
    partner = grid.iloc[robust["pair"].to_numpy()].reset_index(drop=True)
    for name in ("aspect_ratio", "restitution", "friction", "spin"):
        np.testing.assert_array_equal(robust[COLUMN[name]], partner[COLUMN[name]])
    d_angle = robust[COLUMN["angle"]] - partner[COLUMN["angle"]]
    d_height = robust[COLUMN["height"]] - partner[COLUMN["height"]]
    assert d_angle.abs().max() <= 2.0 and d_height.abs().max() <= 0.001 + 1e-15
    assert (d_angle != 0).all() and (d_height != 0).all()
    effect = tolerance_effect(robust, grid)
    assert effect["mean_change"].notna().all()
    assert (effect["mean_change"] > 0).sum() >= 15


# --------------------------------------------------------------------------
# (d) picks follow the goal
# --------------------------------------------------------------------------

# The low drop of (b), angles from 3 deg (at 0 deg the lowest point can
# never beat its start), 16 toleranced drops per cell. Thresholds chosen so
# the extreme cell is rare: for seek (event: best later ratio of the lowest
# point above 2) one cell of 150 has the highest probability, for avoid
# (above 0.3) three cells share the lowest.
PICKS = changed(LOW_DROP, name="picks", release={"angle": grid(3, 90, 30)}, metric={"reference": "bottom"},
                tolerance={"draws": 16}, analyses={"picks": {"count": 6, "target": 0.8}})
GOALS = {"seek": 2.0, "avoid": 0.3}


@pytest.fixture(scope="module", params=["seek", "avoid"])
def picked(request, tmp_path_factory):
    folder = tmp_path_factory.mktemp(request.param)
    text = study_yaml(changed(PICKS, metric={"threshold": GOALS[request.param], "goal": request.param}))
    outcome = run_text(text, folder)
    art = analyse(outcome)
    return request.param, outcome, art, folder


def test_picks_follow_the_goal_under_tolerance(picked):
    goal, outcome, art, folder = picked
    robust = outcome.tables["robust"]
    # computed here from the raw table, independently of the picks code
    per_cell = robust.groupby("cell")["event"].mean()
    assert per_cell.max() > per_cell.min(), "a study where the cells differ"
    achieved = per_cell if goal == "seek" else 1 - per_cell          # no drop starts inside the floor here
    picks = art.picks
    assert len(picks) == 6
    np.testing.assert_allclose(picks["goal_probability"], achieved[picks["cell"]].to_numpy(), rtol=1e-15)
    met = achieved >= 0.8
    assert list(picks["meets_target"]) == sorted(picks["meets_target"], reverse=True)   # cells meeting it first
    assert picks["meets_target"].sum() == min(6, met.sum())
    inside = picks[picks["meets_target"]]
    assert inside["margin_steps"].is_monotonic_decreasing and (inside["margin_steps"] >= 1).all()
    outside = picks[~picks["meets_target"]]
    # below the target there is no margin: the closest to it come first
    assert outside["goal_probability"].is_monotonic_decreasing and (outside["margin_steps"] == 0).all()
    if len(outside):
        assert outside["goal_probability"].iloc[0] == achieved[~met].max()
    first = picks.iloc[0]["event_probability"]
    # the pick's coordinates are its cell's grid values
    cell = robust[robust["cell"] == picks.iloc[0]["cell"]].iloc[0]
    partner = outcome.tables["grid"].iloc[int(cell["pair"])]
    assert picks.iloc[0][COLUMN["aspect_ratio"]] == partner[COLUMN["aspect_ratio"]]
    assert picks.iloc[0][COLUMN["angle"]] == partner[COLUMN["angle"]]
    # and the file says the same
    on_disk = pd.read_csv(folder / "picks.csv")
    assert on_disk.iloc[0]["event_probability"] == pytest.approx(first, rel=1e-15)
    assert list(on_disk["cell"]) == list(picks["cell"])
