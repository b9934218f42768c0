"""Regime maps, curves and the robustness map (explore/maps.py).

Every figure is written beside a CSV of the numbers behind it; the tests
recompute those numbers by hand from the result table of a small real run
(the shared ``small_run``: 80 cells x 12 draws) or from a table built here,
so the expected values do not go through the code under test.
"""
import pandas as pd

from conftest import read_parts
from explore.study import COLUMN


def test_map_csv_holds_the_numbers_behind_the_map(small_run):
    cells = pd.read_csv(small_run / "maps" / "map-angle-aspect_ratio.csv")
    grid = read_parts(small_run)["grid"]
    assert len(cells) == 80 and (cells["drops"] == 12).all()
    expected = grid.groupby([COLUMN["angle"], COLUMN["aspect_ratio"]])["event"].mean()
    got = cells.set_index([COLUMN["angle"], COLUMN["aspect_ratio"]])["event_probability"]
    pd.testing.assert_series_equal(got.sort_index(), expected.sort_index(), check_names=False, rtol=1e-12)
    assert 0 < cells["event_probability"].mean() < 1      # a map with something to show
