"""From a study to the tables of drops (explore/plan.py).

Sizes and grid values are worked out by hand from the study below; random
draws are checked against their distributions with the Kolmogorov-Smirnov
test of scipy.stats (an independent implementation of each distribution).
The KS threshold p > 1e-3 fails a correct sampler once in a thousand seeds;
the seed is fixed, so the outcome is repeatable.
"""
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from conftest import PIN, changed, grid, study_yaml, uniform
from hopscape.plan import _STREAM, STAGES, build_stages, cell_coordinates, count_drops, grid_frame, robust_frame
from hopscape.sensitivity import METHODS
from hopscape.study import COLUMN, QUANTITIES, parse_study

# 3 aspect ratios x 4 angles = 12 cells; restitution uniform, friction a
# normal (truncated to the allowed [0, 5]), height log-uniform.
PLAN = {
    "name": "plan",
    "body": {**PIN, "aspect_ratio": grid(2.0, 6.0, 3)},
    "contact": {"restitution": uniform(0.6, 0.9), "friction": {"normal": {"mean": 0.2, "sd": 0.5}}},
    "release": {"height": {"log_uniform": {"low": 0.01, "high": 0.1}}, "angle": grid(0, 90, 4)},
    "metric": {"kind": "ratio", "reference": "centre"},
    "tolerance": {"angle": 2.0, "height": 0.001, "spin": 3.0, "draws": 5},
    "analyses": {"draws": 6, "sensitivity": {"method": "sobol", "samples": 64}},
    "run": {"seed": 7},
}
CELLS = 12


def study(sections=PLAN, **updates):
    return parse_study(study_yaml(changed(sections, **updates)))


# --------------------------------------------------------------------------
# grid cells
# --------------------------------------------------------------------------

def test_cell_coordinates_are_the_grid_values_first_quantity_slowest():
    cells = cell_coordinates(study())
    assert list(cells["cell"]) == list(range(CELLS))
    # np.linspace(2, 6, 3) and np.linspace(0, 90, 4); aspect ratio comes
    # first in the study's quantity order, so it changes slowest
    np.testing.assert_array_equal(cells[COLUMN["aspect_ratio"]], np.repeat([2.0, 4.0, 6.0], 4))
    np.testing.assert_array_equal(cells[COLUMN["angle"]], np.tile([0.0, 30.0, 60.0, 90.0], 3))


def test_grid_frame_has_every_cell_times_every_draw():
    s = study()
    frame = grid_frame(s)
    assert len(frame) == CELLS * 6 == count_drops(s)["grid"]
    np.testing.assert_array_equal(frame["cell"], np.repeat(np.arange(CELLS), 6))
    np.testing.assert_array_equal(frame["draw"], np.tile(np.arange(6), CELLS))
    # each row carries its cell's grid values
    cells = cell_coordinates(s).set_index("cell")
    for name in ("aspect_ratio", "angle"):
        np.testing.assert_array_equal(frame[COLUMN[name]], cells.loc[frame["cell"], COLUMN[name]])
    # fixed quantities: the study's values and the defaults (density 1200
    # kg/m^3, no spin, no throw)
    assert (frame[COLUMN["diameter"]] == 0.006).all()
    assert (frame[COLUMN["density"]] == 1200.0).all()
    for name in ("spin", "vx", "vy"):
        assert (frame[COLUMN[name]] == 0.0).all()


def test_grid_draws_follow_their_distributions():
    s = study(analyses={"draws": 512})
    one_cell = grid_frame(s).query("cell == 5")
    assert len(one_cell) == 512
    restitution = one_cell[COLUMN["restitution"]]
    assert restitution.between(0.6, 0.9).all()
    assert stats.kstest(restitution, stats.uniform(0.6, 0.3).cdf).pvalue > 1e-3
    height = one_cell[COLUMN["height"]]
    assert height.between(0.01, 0.1).all()
    assert stats.kstest(height, stats.loguniform(0.01, 0.1).cdf).pvalue > 1e-3
    # the normal is kept within the allowed range of friction, [0, 5]
    friction = one_cell[COLUMN["friction"]]
    low, high = QUANTITIES["friction"].allowed.low, QUANTITIES["friction"].allowed.high
    assert friction.between(low, high).all() and (friction < 0.2).any()
    truncated = stats.truncnorm((low - 0.2) / 0.5, (high - 0.2) / 0.5, loc=0.2, scale=0.5)
    assert stats.kstest(friction, truncated.cdf).pvalue > 1e-3


def test_draws_repeat_with_the_seed_and_change_with_it():
    s = study()
    pd.testing.assert_frame_equal(grid_frame(s), grid_frame(study()), check_exact=True)
    other = grid_frame(study(run={"seed": 8}))
    assert not np.array_equal(other[COLUMN["restitution"]], grid_frame(s)[COLUMN["restitution"]])
    # the grid values themselves do not depend on the seed
    np.testing.assert_array_equal(other[COLUMN["angle"]], grid_frame(s)[COLUMN["angle"]])


# --------------------------------------------------------------------------
# toleranced re-drops
# --------------------------------------------------------------------------

def test_robust_frame_moves_only_the_release_within_the_tolerance():
    s = study()
    g = grid_frame(s)
    robust = robust_frame(s, g)
    assert len(robust) == CELLS * 5 == count_drops(s)["robust"]
    np.testing.assert_array_equal(robust["draw"], np.tile(np.arange(5), CELLS))
    partner = g.iloc[robust["pair"].to_numpy()].reset_index(drop=True)
    np.testing.assert_array_equal(partner["cell"], robust["cell"])
    # everything but the release angle, height and spin is the partner's
    for name in ("aspect_ratio", "diameter", "density", "restitution", "friction", "vx", "vy"):
        np.testing.assert_array_equal(robust[COLUMN[name]], partner[COLUMN[name]])
    for name, half in (("angle", 2.0), ("height", 0.001), ("spin", 3.0)):
        error = robust[COLUMN[name]] - partner[COLUMN[name]]
        # 1e-15: the sum rounds in the last bit of the value
        assert error.abs().max() <= half * (1 + 1e-12) + 1e-15, name
        assert error.abs().max() > half / 2, name      # the errors use the width (60 draws)
        assert stats.kstest(error / half, stats.uniform(-1, 2).cdf).pvalue > 1e-3, name


def test_robust_heights_stay_above_the_allowed_minimum():
    # a tolerance wider than the release height would put bodies below the
    # smallest height a study allows (1e-5 m); they are held there
    s = study(release={"height": 0.0005, "height_of": "bottom"}, tolerance={"height": 0.001})
    robust = robust_frame(s, grid_frame(s))
    low = QUANTITIES["height"].allowed.low
    assert (robust[COLUMN["height"]] >= low).all()
    assert (robust[COLUMN["height"]] == low).any()


def test_zero_tolerance_copies_the_partners():
    s = study(tolerance={"angle": 0, "height": 0, "spin": 0})
    g = grid_frame(s)
    robust = robust_frame(s, g)
    partner = g.iloc[robust["pair"].to_numpy()].reset_index(drop=True)
    columns = [COLUMN[n] for n in ("aspect_ratio", "restitution", "friction", "height", "angle", "spin")]
    pd.testing.assert_frame_equal(robust[columns], partner[columns], check_exact=True)


# --------------------------------------------------------------------------
# stages and their sizes
# --------------------------------------------------------------------------

# 5 quantities vary (aspect ratio, restitution, friction, height, angle)
@pytest.mark.parametrize("updates, expected", [
    ({}, {"grid": 72, "robust": 60, "sobol": 64 * (5 + 2)}),
    ({"analyses": {"sensitivity": {"method": "sobol", "samples": 64, "second_order": True}}},
     {"grid": 72, "robust": 60, "sobol": 64 * (2 * 5 + 2)}),
    ({"analyses": {"sensitivity": {"method": "morris", "samples": 10}}}, {"grid": 72, "robust": 60, "morris": 10 * 6}),
    ({"analyses": {"sensitivity": None, "robustness": False}}, {"grid": 72}),
    # picks need the toleranced re-drops even without the robustness map
    ({"analyses": {"sensitivity": None, "robustness": False, "picks": {"count": 2}}}, {"grid": 72, "robust": 60}),
    # nothing gridded and no sensitivity: one drop per draw
    ({"body": {"aspect_ratio": 3.0}, "release": {"angle": 30},
      "analyses": {"sensitivity": None, "robustness": False}}, {"grid": 6}),
    # nothing random either: a single drop
    ({"body": {"aspect_ratio": 3.0}, "release": {"angle": 30, "height": 0.05},
      "contact": {"restitution": 0.8, "friction": 0.2}, "analyses": {"sensitivity": None, "robustness": False}},
     {"grid": 1}),
])
def test_stage_sizes_by_hand_and_as_built(updates, expected):
    s = study(**updates)
    assert count_drops(s) == expected
    stages, plan = build_stages(s)
    assert {stage: len(table) for stage, table in stages.items()} == expected
    assert (plan is None) == (s.analyses.sensitivity is None)


def test_sensitivity_stage_spans_each_quantity_and_repeats_with_the_seed():
    s = study()
    stages, _ = build_stages(s)
    sobol = stages["sobol"]
    np.testing.assert_array_equal(sobol["sample"], np.arange(len(sobol)))
    # grid quantities count as uniform over their range
    for name, low, high in (("aspect_ratio", 2.0, 6.0), ("angle", 0.0, 90.0), ("restitution", 0.6, 0.9),
                            ("height", 0.01, 0.1)):
        values = sobol[COLUMN[name]]
        assert values.between(low, high).all(), name
        assert values.max() - values.min() > 0.8 * (high - low), name     # spread over the range
    again, _ = build_stages(study())
    for stage in stages:
        pd.testing.assert_frame_equal(stages[stage], again[stage], check_exact=True)


# --- the planner and the sensitivity methods ---------------------------------

ROOT = Path(__file__).resolve().parents[1]

# 3 x 4 grid cells x 2 draws = 24 grid drops; four quantities vary
STUDY = """\
name: plan
body: {shape: capsule, diameter: 0.006, density: 1150, aspect_ratio: {grid: {low: 2.0, high: 6.0, steps: 3}}}
contact: {restitution: {uniform: {low: 0.8, high: 0.95}}, friction: 0.2}
release: {height: {normal: {mean: 0.05, sd: 0.01}}, angle: {grid: {low: 0, high: 90, steps: 4}}}
metric: {kind: ratio, reference: centre}
analyses: {draws: 2, robustness: false, sensitivity: SETTINGS}
run: {seed: 3}
"""


def loaded_modules(module):
    """Top-level packages loaded by importing ``module`` in a fresh interpreter."""
    code = (f"import sys, {module}; "
            "print(' '.join(sorted({name.split('.')[0] for name in sys.modules})))")
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True)
    return set(done.stdout.split())


def test_planning_imports_no_plotting_and_nothing_heavy_until_it_samples():
    # `hopscape check` plans and counts: it needs no plotting, and neither
    # pandas, SciPy nor SALib until a table is built or a plan sampled
    loaded = loaded_modules("hopscape.plan")
    assert "hopscape" in loaded and "numpy" in loaded     # the check sees what was imported
    assert not {"matplotlib", "SALib", "pandas", "scipy"} & loaded
    used = loaded_modules("hopscape.plan; from hopscape.sensitivity import sobol_plan; "
                          "sobol_plan(['a', 'b'], 8)")
    assert "scipy" in used and "matplotlib" not in used     # the sampler: scipy.stats.qmc


def test_distributions_import_neither_plotting_nor_salib():
    loaded = loaded_modules("hopscape.distributions")
    assert not {"matplotlib", "SALib", "scipy"} & loaded


@pytest.mark.parametrize("settings, rows", [
    # Saltelli: N (D + 2) rows, N (2 D + 2) with second order; Morris: r (D + 1);
    # D = 4 varying quantities (aspect_ratio, restitution, height, angle)
    ("{method: sobol, samples: 16}", 16 * 6),
    ("{method: sobol, samples: 16, second_order: true}", 16 * 10),
    ("{method: morris, samples: 6, levels: 4}", 6 * 5),
])
def test_counts_agree_with_the_stage_tables(settings, rows):
    study = parse_study(STUDY.replace("SETTINGS", settings))
    stages, plan = build_stages(study)
    method = study.analyses.sensitivity.method
    assert plan.method == method and plan.rows == rows
    assert {stage: len(table) for stage, table in stages.items()} == count_drops(study) == {"grid": 24, method: rows}
    table = stages[method]
    assert list(table["sample"]) == list(range(rows))
    # the study's normal height is truncated to the allowed range of heights
    # (1e-5 to 100 m), so even the Morris grid's ends u = 0 and 1 give finite values
    assert table[COLUMN["height"]].between(1e-5, 100.0).all()


def test_stage_streams_keep_their_numbers():
    # the numbers every earlier study's draws were made with
    assert _STREAM == {"grid": 1, "robust": 2, "sobol": 3, "morris": 4}
    assert STAGES == ("grid", "robust", *METHODS) and len(set(_STREAM.values())) == len(STAGES)


def test_the_command_line_parser_loads_no_heavy_package():
    # every command's options are built for every call (`hopscape check`
    # included): registering fit, track and plan must not load SciPy,
    # pandas, OpenCV or matplotlib (the calibration package once cost 1 s here)
    loaded = loaded_modules("hopscape.cli; hopscape.cli.build_parser()")
    assert "hopscape" in loaded and "argparse" in loaded
    assert not {"scipy", "pandas", "cv2", "matplotlib", "SALib", "pyarrow"} & loaded
