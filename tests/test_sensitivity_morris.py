"""Morris screening (explore.sensitivity.morris) on Ishigami through hopscape's own pipeline.

Reference values: with 4 levels the elementary effects of Ishigami
(a = 7, b = 0.1, inputs uniform on [-pi, pi]; Ishigami & Homma, "An
importance quantification technique in uncertainty analysis for computer
models", Proc. ISUMA '90, 1990) are worked out by hand in
``test_morris_ishigami``; SALib's own Morris regression tests agree
(mu_star(x2) = 7.875; from memory of SALib's test suite, not re-read).
"""
import re

import numpy as np
import pytest
from numpy.testing import assert_allclose

from _ishigami import SEED, ishigami_outputs
from hopscape import sensitivity as sens
from hopscape.distributions import Distribution
from hopscape.test_functions import ISHIGAMI_NAMES


def test_morris_settings_are_checked():
    with pytest.raises(ValueError, match=r"levels: must be an even integer >= 2 \(got 5\)"):
        sens.morris_plan(["a", "b"], trajectories=10, levels=5, seed=1)
    with pytest.raises(ValueError, match=r"trajectories: must be an integer >= 2 \(got 1\)"):
        sens.morris_plan(["a", "b"], trajectories=1, seed=1)
    plan = sens.morris_plan(["a", "b"], trajectories=10, seed=1)
    with pytest.raises(ValueError, match=re.escape(
            "y has 29 values but the Morris plan has 30 rows (10 trajectories, 2 parameters, 4 levels)")):
        sens.morris_analyze(plan, np.ones(29))
    y = np.ones(30)
    y[3] = np.nan
    with pytest.raises(ValueError, match=r"y has 1 non-finite values of 30 \(1 NaN"):
        sens.morris_analyze(plan, y)


# --------------------------------------------------------------------------
# (d) Morris on Ishigami
# --------------------------------------------------------------------------

def test_morris_ishigami():
    # With 4 levels the unit grid is {0, 1/3, 2/3, 1}, i.e. x in
    # {-pi, -pi/3, pi/3, pi}, and the step is 2/3 of the range, so each
    # move goes -pi <-> pi/3 or -pi/3 <-> pi. By hand:
    # * x2: |7 (sin^2(pi/3) - sin^2(pi))| / (2/3) = 7.875 on every move;
    # * x3: |0.1 sin(x1) (pi^4 - (pi/3)^4)| / (2/3) = 12.50 when
    #   x1 = +-pi/3 and 0 when x1 = +-pi (sin = 0): mean about 6.25, so
    #   clearly non-zero although S1(x3) = 0 - the x1-x3 interaction;
    # * x1: 1.299 (1 + 0.1 x3^4), 13.95 or 1.457: mean about 7.70.
    plan = sens.morris_plan(ISHIGAMI_NAMES, trajectories=64, levels=4, seed=SEED)
    assert plan.rows == 64 * 4
    table = sens.morris_analyze(plan, ishigami_outputs(plan)).set_index("parameter")
    assert list(table.columns) == ["mu_star", "mu_star_conf", "sigma", "rank"]
    assert_allclose(table.loc["x2", "mu_star"], 7.875, rtol=1e-9)
    assert table.loc["x3", "mu_star"] > 3.0
    assert table.loc["x3", "sigma"] > 3.0
    # the sample means sit within two bootstrap half-widths of the hand values
    assert abs(table.loc["x3", "mu_star"] - 6.249) < 2 * table.loc["x3", "mu_star_conf"]
    assert abs(table.loc["x1", "mu_star"] - 7.704) < 2 * table.loc["x1", "mu_star_conf"]
    first = table.index[table["rank"] == 1][0]
    assert first in ("x1", "x2")
    assert sorted(table["rank"]) == [1, 2, 3]


def test_morris_grid_needs_bounded_distributions():
    plan = sens.morris_plan(["a"], trajectories=4, seed=1)
    grid = np.array([0.0, 1 / 3, 2 / 3, 1.0])
    assert (np.abs(plan.unit[:, :, None] - grid).min(axis=2) < 1e-12).all()
    with pytest.raises(ValueError, match=r"distributions\['a'\]: must be bounded for a Morris plan"):
        sens.plan_values(plan, {"a": Distribution("normal", mean=1.0, sd=0.2)})
    values = sens.plan_values(plan, {"a": Distribution("normal", mean=1.0, sd=0.2, low=0.5, high=1.5)})
    assert np.isfinite(values["a"]).all()
