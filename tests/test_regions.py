"""Margins and safe regions on grids built by hand (explore/regions.py).

The grid: aspect ratio 2, 3, 4, 5 (rows) by release angle 0-50 deg in
10 deg steps; 1 = the cell meets the target:

    aspect 2:  0 1 1 1 0 0
    aspect 3:  0 1 1 1 1 0
    aspect 4:  0 1 1 1 1 0
    aspect 5:  0 0 0 0 0 1

so there are two regions, eleven cells and one lone cell. Margins are
checked against a brute-force Chebyshev distance written here.
"""
import itertools

import numpy as np
import pandas as pd

from hopscape.regions import as_array, margins, region_sentences, safe_regions
from hopscape.study import COLUMN

ASPECTS = [2.0, 3.0, 4.0, 5.0]
ANGLES = [0.0, 10.0, 20.0, 30.0, 40.0, 50.0]
OK = np.array([[0, 1, 1, 1, 0, 0],
               [0, 1, 1, 1, 1, 0],
               [0, 1, 1, 1, 1, 0],
               [0, 0, 0, 0, 0, 1]], bool)


def cells():
    """One row per cell, in the order the planner numbers them (angle fastest)."""
    a, t = np.meshgrid(ASPECTS, ANGLES, indexing="ij")
    return pd.DataFrame({COLUMN["aspect_ratio"]: a.ravel(), COLUMN["angle"]: t.ravel(),
                         "meets_target": OK.ravel()})


def brute_force_margin(ok):
    """Chebyshev distance to the nearest failing cell, the grid padded by a failing ring."""
    padded = np.pad(ok, 1, constant_values=False)
    fails = np.argwhere(~padded)
    out = np.zeros(ok.shape, int)
    for index in itertools.product(*map(range, ok.shape)):
        if ok[index]:
            out[index] = np.abs(fails - (np.array(index) + 1)).max(axis=1).min()
    return out


def test_margins_by_hand():
    steps, nearest = margins(OK)
    expected = np.array([[0, 1, 1, 1, 0, 0],
                         [0, 1, 2, 1, 1, 0],       # (3, 20 deg): its 8 neighbours all meet the target
                         [0, 1, 1, 1, 1, 0],
                         [0, 0, 0, 0, 0, 1]])      # the lone cell: the grid's edge is one step away
    np.testing.assert_array_equal(steps, expected)
    np.testing.assert_array_equal(steps, brute_force_margin(OK))
    # the straight distance is 0 where the cell fails, and at least the margin elsewhere
    assert (nearest[~OK] == 0).all() and (nearest[OK] >= steps[OK]).all()


def test_margins_agree_with_brute_force_on_random_grids():
    rng = np.random.default_rng(5)
    for shape in [(7, 9), (3, 4, 5), (12,)]:
        ok = rng.random(shape) < 0.8
        np.testing.assert_array_equal(margins(ok)[0], brute_force_margin(ok), err_msg=str(shape))


def test_as_array_places_cells_by_their_values():
    table = cells().sample(frac=1.0, random_state=3)      # row order must not matter
    ok, axes = as_array(table, ["aspect_ratio", "angle"], "meets_target")
    np.testing.assert_array_equal(ok, OK)
    np.testing.assert_array_equal(axes[0], ASPECTS)
    np.testing.assert_array_equal(axes[1], ANGLES)


def test_safe_regions_as_ranges():
    regions = safe_regions(cells(), ["aspect_ratio", "angle"], x="angle")
    one = regions[regions["region"] == 1]
    assert (one["cells"] == 11).all()
    assert one["share"].iloc[0] == 11 / 24
    assert list(one["kind"]) == ["largest block", "extent", "strip", "strip"]
    assert list(one["text"]) == [
        "angle 10-30 deg for aspect ratio 2-4",      # 9 cells; rows 3-4 x 10-40 deg hold only 8
        "angle 10-40 deg and aspect ratio 2-4",
        "angle 10-30 deg for aspect ratio 2",
        "angle 10-40 deg for aspect ratio 3-4",      # two rows with the same run: one strip
    ]
    strip = one.iloc[3]
    assert (strip["angle_deg_low"], strip["angle_deg_high"]) == (10.0, 40.0)
    assert (strip["aspect_ratio_low"], strip["aspect_ratio_high"]) == (3.0, 4.0)
    two = regions[regions["region"] == 2]
    assert list(two["text"]) == ["angle 50 deg for aspect ratio 5"] and list(two["cells"]) == [1]


def test_region_sentences():
    regions = safe_regions(cells(), ["aspect_ratio", "angle"], x="angle")
    assert region_sentences(regions) == [
        "Region 1 (11 cells, 46% of the grid): angle 10-30 deg for aspect ratio 2-4 as one block, "
        "within angle 10-40 deg and aspect ratio 2-4.",
        "1 other, smaller region(s) are listed in the CSV only.",
    ]
    assert region_sentences(regions, smallest=1)[1] == ("Region 2 (1 cell, 4% of the grid): "
                                                        "angle 50 deg for aspect ratio 5.")


def test_no_safe_region_and_one_quantity():
    table = cells()
    table["meets_target"] = False
    assert safe_regions(table, ["aspect_ratio", "angle"]).empty
    line = pd.DataFrame({COLUMN["angle"]: ANGLES, "meets_target": [0, 1, 1, 0, 1, 1]}).astype({"meets_target": bool})
    regions = safe_regions(line, ["angle"])
    assert list(regions["text"]) == ["angle 10-20 deg", "angle 40-50 deg"]
    assert list(regions["region"]) == [1, 2]
