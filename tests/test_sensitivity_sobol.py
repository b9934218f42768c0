"""Sobol' indices (explore.sensitivity.sobol) on Ishigami through hopscape's own pipeline.

Reference values and where they come from:

* Ishigami analytic indices, a = 7, b = 0.1, inputs uniform on [-pi, pi]:
  S1 = 0.3139, 0.4424, 0; ST = 0.5576, 0.4424, 0.2437 (Ishigami & Homma
  1990; Sobol' & Levitan 1999; S1 also in the docstring of SALib's
  ``test_functions/Ishigami.py``). The closed forms are also checked here
  against Gauss-Legendre quadrature, which uses none of them.
* Tolerance of the Sobol' estimates: SALib's own regression test,
  ``tests/test_regression.py::test_regression_sobol`` in the SALib
  repository (read at commit 6c4b21ffff36f8469555d3f6be1d79a7461efa15),
  checks Ishigami S1 and ST with
  ``assert_allclose(..., atol=5e-2, rtol=1e-1)``; the installed SALib 1.6
  wheel ships no tests, so the value was read from the repository source.
  We use the same tolerance, against the analytic values instead of
  SALib's two-decimal ones.
"""
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy.testing import assert_allclose
from SALib.analyze import sobol as salib_sobol

from _ishigami import BASE, SALIB_ATOL, SALIB_RTOL, SEED, ishigami_outputs
from conftest import run_text
from hopscape import sensitivity as sens
from hopscape.test_functions import (ISHIGAMI_NAMES, ISHIGAMI_S1, ISHIGAMI_S2, ISHIGAMI_ST, ishigami,
                                    ishigami_indices)


# --------------------------------------------------------------------------
# reference function
# --------------------------------------------------------------------------

def test_ishigami_closed_forms_round_to_published_values():
    computed = ishigami_indices()
    for name in ISHIGAMI_NAMES:
        assert round(computed["S1"][name], 4) == ISHIGAMI_S1[name]
        assert round(computed["ST"][name], 4) == ISHIGAMI_ST[name]
    for pair, value in ISHIGAMI_S2.items():
        assert round(computed["S2"][pair], 4) == value


def test_ishigami_closed_forms_match_quadrature():
    # tensor Gauss-Legendre on [-pi, pi]^3: f is a trigonometric-polynomial
    # mix, smooth, so 40 nodes a side are exact to rounding; the quadrature
    # knows nothing of the closed forms
    nodes, weights = np.polynomial.legendre.leggauss(40)
    x, w = np.pi * nodes, weights / 2.0  # weights of the uniform density
    f = ishigami(x[:, None, None], x[None, :, None], x[None, None, :])
    w1, w2, w3 = w[:, None, None], w[None, :, None], w[None, None, :]
    mean = np.sum(w1 * w2 * w3 * f)
    variance = np.sum(w1 * w2 * w3 * (f - mean) ** 2)
    given_x1 = np.sum(w2 * w3 * f, axis=(1, 2))  # E[f | x1]
    v1 = np.sum(w * (given_x1 - mean) ** 2)
    given_x2 = np.sum(w1 * w3 * f, axis=(0, 2))
    v2 = np.sum(w * (given_x2 - mean) ** 2)
    # total effect of x1: E over (x2, x3) of Var over x1
    spread_x1 = np.sum(w1 * (f - np.sum(w1 * f, axis=0, keepdims=True)) ** 2, axis=0)
    t1 = np.sum(w[:, None] * w[None, :] * spread_x1)
    spread_x3 = np.sum(w3 * (f - np.sum(w3 * f, axis=2, keepdims=True)) ** 2, axis=2)
    t3 = np.sum(w[:, None] * w[None, :] * spread_x3)
    computed = ishigami_indices()
    assert_allclose(variance, computed["variance"], rtol=1e-12)
    assert_allclose([v1 / variance, v2 / variance], [computed["S1"]["x1"], computed["S1"]["x2"]], rtol=1e-12)
    assert_allclose([t1 / variance, t3 / variance], [computed["ST"]["x1"], computed["ST"]["x3"]], rtol=1e-12)


def test_ishigami_scalar_and_array_agree():
    points = np.array([[0.3, -1.2, 2.5], [-3.0, 0.1, -0.7]])
    array = ishigami(points[:, 0], points[:, 1], points[:, 2])
    scalars = [float(ishigami(*row)) for row in points]
    assert_allclose(array, scalars, rtol=0, atol=0)
    # hand value at (pi/2, pi/2, 1): 1 + 7 + 0.1
    assert_allclose(ishigami(np.pi / 2, np.pi / 2, 1.0), 8.1, rtol=1e-15)


# --------------------------------------------------------------------------
# (a) Sobol' on Ishigami through our pipeline
# --------------------------------------------------------------------------

def test_sobol_ishigami_first_and_total(ishigami_run):
    plan, _, indices, pairs = ishigami_run
    assert list(indices.columns) == ["parameter", "S1", "S1_conf", "ST", "ST_conf", "rank"]
    assert list(indices["parameter"]) == list(ISHIGAMI_NAMES)
    assert pairs is None
    expected_s1 = [ISHIGAMI_S1[n] for n in ISHIGAMI_NAMES]
    expected_st = [ISHIGAMI_ST[n] for n in ISHIGAMI_NAMES]
    assert_allclose(indices["S1"], expected_s1, atol=SALIB_ATOL, rtol=SALIB_RTOL)
    assert_allclose(indices["ST"], expected_st, atol=SALIB_ATOL, rtol=SALIB_RTOL)
    # the 95 % intervals are positive and cover the analytic values
    assert (indices["S1_conf"] > 0).all() and (indices["ST_conf"] > 0).all()
    assert (np.abs(indices["S1"] - expected_s1) <= indices["S1_conf"]).all()
    assert (np.abs(indices["ST"] - expected_st) <= indices["ST_conf"]).all()
    # ST: x1 > x2 > x3
    assert list(indices["rank"]) == [1, 2, 3]
    assert indices.attrs == {"confidence_level": 0.95, "base_samples": BASE}
    assert plan.rows == BASE * (3 + 2)


def test_sobol_ishigami_second_order():
    plan = sens.sobol_plan(ISHIGAMI_NAMES, BASE, second_order=True, seed=SEED)
    assert plan.rows == BASE * (2 * 3 + 2)
    indices, pairs = sens.sobol_analyze(plan, ishigami_outputs(plan))
    assert_allclose(indices["ST"], [ISHIGAMI_ST[n] for n in ISHIGAMI_NAMES], atol=SALIB_ATOL, rtol=SALIB_RTOL)
    assert list(pairs.columns) == ["parameter_1", "parameter_2", "S2", "S2_conf"]
    assert list(zip(pairs["parameter_1"], pairs["parameter_2"])) == list(ISHIGAMI_S2)
    # same tolerance as SALib's regression check of S2
    assert_allclose(pairs["S2"], list(ISHIGAMI_S2.values()), atol=SALIB_ATOL, rtol=SALIB_RTOL)


def test_sobol_is_repeatable_and_seed_matters(ishigami_run):
    plan, y, indices, _ = ishigami_run
    again = sens.sobol_plan(ISHIGAMI_NAMES, BASE, seed=SEED)
    np.testing.assert_array_equal(again.unit, plan.unit)
    repeat, _ = sens.sobol_analyze(again, ishigami_outputs(again))
    pd.testing.assert_frame_equal(repeat, indices)
    other = sens.sobol_plan(ISHIGAMI_NAMES, BASE, seed=SEED + 1)
    assert not np.array_equal(other.unit, plan.unit)
    # another bootstrap seed moves the intervals, not the estimates
    reseeded, _ = sens.sobol_analyze(plan, y, seed=7)
    assert_allclose(reseeded["ST"], indices["ST"], rtol=0, atol=0)
    assert not np.allclose(reseeded["ST_conf"], indices["ST_conf"], rtol=0, atol=0)


def test_sobol_plan_layout_is_salib_cross_sampling():
    # each base sample: A, then A with column j from B (j = 0..D-1), then B
    plan = sens.sobol_plan(["a", "b"], 8, seed=3)
    block = plan.unit.reshape(8, 4, 2)
    a, ab0, ab1, b = block[:, 0], block[:, 1], block[:, 2], block[:, 3]
    np.testing.assert_array_equal(ab0[:, 1], a[:, 1])
    np.testing.assert_array_equal(ab0[:, 0], b[:, 0])
    np.testing.assert_array_equal(ab1[:, 0], a[:, 0])
    np.testing.assert_array_equal(ab1[:, 1], b[:, 1])
    assert ((plan.unit > 0) & (plan.unit < 1)).all()


def test_plan_is_frozen():
    plan = sens.sobol_plan(["a", "b"], 4, seed=3)
    with pytest.raises(ValueError, match="read-only"):
        plan.unit[0, 0] = 0.5
    with pytest.raises(AttributeError):
        plan.base_samples = 8


# --------------------------------------------------------------------------
# (b) settings checks
# --------------------------------------------------------------------------

def six_parameter_plan():
    return sens.sobol_plan([f"p{i}" for i in range(6)], 128, seed=5)


def test_wrong_length_y_names_both_counts_and_settings():
    plan = six_parameter_plan()
    message = "y has 1000 values but the Sobol plan has 1024 rows (base 128, 6 parameters, second order off)"
    with pytest.raises(ValueError, match=re.escape(message)):
        sens.sobol_analyze(plan, np.ones(1000))
    with pytest.raises(ValueError, match=re.escape(message)):
        sens.sobol_convergence(plan, np.ones(1000))


def test_y_from_second_order_plan_is_caught_and_explained():
    plan = six_parameter_plan()
    with pytest.raises(ValueError, match=r"y has 1792 values .* 1024 rows .*row count with second order on"):
        sens.sobol_analyze(plan, np.ones(128 * 14))


def test_y_of_a_bigger_plan_is_caught_where_salib_alone_is_silent():
    # outputs of a plan with twice the base samples: SALib only checks that
    # len(y) divides by D + 2 and returns indices without complaint
    small = sens.sobol_plan(ISHIGAMI_NAMES, 256, seed=SEED)
    big = sens.sobol_plan(ISHIGAMI_NAMES, 512, seed=SEED)
    y_big = ishigami_outputs(big)
    problem = {"num_vars": 3, "names": list(ISHIGAMI_NAMES), "bounds": [[0.0, 1.0]] * 3}
    salib_result = salib_sobol.analyze(problem, y_big, calc_second_order=False, seed=1)
    assert np.isfinite(salib_result["ST"]).all()
    with pytest.raises(ValueError, match=r"y has 2560 values but the Sobol plan has 1280 rows \(base 256"):
        sens.sobol_analyze(small, y_big)


def test_non_finite_y_is_counted():
    plan = six_parameter_plan()
    y = np.ones(plan.rows)
    y[[5, 17, 600]] = np.nan
    y[900] = np.inf
    with pytest.raises(ValueError, match=re.escape(
            "y has 4 non-finite values of 1024 (3 NaN, 1 infinite; first at row 5)")):
        sens.sobol_analyze(plan, y)


def test_constant_y_is_rejected():
    plan = six_parameter_plan()
    with pytest.raises(ValueError, match=r"y: must vary \(got 1024 runs all equal to 2.5\)"):
        sens.sobol_analyze(plan, np.full(plan.rows, 2.5))


def test_y_shape_is_checked():
    plan = six_parameter_plan()
    with pytest.raises(ValueError, match=r"a vector \(got shape \(512, 2\)\)"):
        sens.sobol_analyze(plan, np.ones((512, 2)))
    # a single column is accepted as a vector
    column = np.arange(plan.rows, dtype=float)[:, None] % 7
    first, _ = sens.sobol_analyze(plan, column)
    second, _ = sens.sobol_analyze(plan, column[:, 0])
    pd.testing.assert_frame_equal(first, second)


@pytest.mark.parametrize("base, suggestion", [(1000, "use 512 or 1024"), (3, "use 2 or 4"), (100, "use 64 or 128")])
def test_base_samples_must_be_a_power_of_two(base, suggestion):
    with pytest.raises(ValueError, match=rf"base_samples: must be a power of two >= 2 \(got {base}\).*{suggestion}"):
        sens.sobol_plan(["a", "b"], base, seed=1)


@pytest.mark.parametrize("base", [0, 1, -4, 2.0, True])
def test_base_samples_out_of_range(base):
    with pytest.raises(ValueError, match=r"base_samples: must be a power of two >= 2"):
        sens.sobol_plan(["a", "b"], base, seed=1)

def test_analysis_settings_are_checked():
    plan = six_parameter_plan()
    y = np.arange(plan.rows, dtype=float) % 11
    with pytest.raises(ValueError, match=r"confidence_level: must be a number strictly between 0 and 1 \(got 95\)"):
        sens.sobol_analyze(plan, y, confidence_level=95)
    with pytest.raises(ValueError, match=r"num_resamples: must be an integer >= 2 \(got 1\)"):
        sens.sobol_analyze(plan, y, num_resamples=1)
    with pytest.raises(TypeError, match="sobol_analyze: plan must be a SobolPlan"):
        sens.sobol_analyze(sens.morris_plan(["a", "b"], trajectories=4, seed=1), y)


def test_hand_made_plan_must_be_consistent():
    with pytest.raises(ValueError, match=r"unit: this Sobol plan needs shape \(32, 2\) \(got \(30, 2\)\)"):
        sens.SobolPlan(("a", "b"), 8, False, 1, np.full((30, 2), 0.5))


# --------------------------------------------------------------------------
# (c) convergence
# --------------------------------------------------------------------------

def test_convergence_levels_and_shrinking_intervals(ishigami_run):
    plan, y, indices, _ = ishigami_run
    table = sens.sobol_convergence(plan, y)
    assert list(table.columns) == ["base_samples", "parameter", "S1", "S1_conf", "ST", "ST_conf"]
    assert sorted(table["base_samples"].unique()) == [BASE // 4, BASE // 2, BASE]
    by_level = {n: part.set_index("parameter") for n, part in table.groupby("base_samples")}
    # the full level is the full analysis, to the last bit
    full = by_level[BASE]
    assert_allclose(full["ST"], indices.set_index("parameter")["ST"], rtol=0, atol=0)
    assert_allclose(full["ST_conf"], indices.set_index("parameter")["ST_conf"], rtol=0, atol=0)
    quarter = by_level[BASE // 4]
    # a bootstrap standard error scales as 1/sqrt(N): a quarter of the
    # samples should give about twice the width; 0.7 leaves room for the
    # wobble of a 200-resample bootstrap
    assert (full["ST_conf"] < 0.7 * quarter["ST_conf"]).all()
    assert (full["S1_conf"] < 0.7 * quarter["S1_conf"]).all()
    # every level's interval covers the analytic ST, and so does N/4 already
    for level in by_level.values():
        expected = np.array([ISHIGAMI_ST[n] for n in level.index])
        assert (np.abs(level["ST"] - expected) <= level["ST_conf"]).all()


def test_convergence_skips_levels_below_two_base_samples():
    for base, levels in ((4, [2, 4]), (2, [2]), (8, [2, 4, 8])):
        plan = sens.sobol_plan(ISHIGAMI_NAMES, base, seed=SEED)
        table = sens.sobol_convergence(plan, ishigami_outputs(plan))
        assert sorted(table["base_samples"].unique()) == levels


def test_convergence_with_second_order_uses_the_longer_blocks():
    plan = sens.sobol_plan(ISHIGAMI_NAMES, 1024, second_order=True, seed=SEED)
    y = ishigami_outputs(plan)
    table = sens.sobol_convergence(plan, y)
    quarter = table[table["base_samples"] == 256].set_index("parameter")
    # the first 256 blocks of 2D + 2 rows are a complete second-order study
    sub_plan = sens.SobolPlan(plan.names, 256, True, plan.seed, plan.unit[: 256 * 8])
    direct, _ = sens.sobol_analyze(sub_plan, y[: 256 * 8])
    assert_allclose(quarter["ST"], direct.set_index("parameter")["ST"], rtol=0, atol=0)


# --------------------------------------------------------------------------
# (d) our estimators against SALib's own analysis
# --------------------------------------------------------------------------
# explore.sensitivity._saltelli computes SALib's estimators with SALib's
# resamples as weighted sums instead of gathering (N, R) matrices. The
# reference is SALib's function API itself, ``SALib.analyze.sobol.analyze``
# (first order of Saltelli et al. 2010, total order of Jansen 1999, second
# order of Saltelli 2002), given the same outputs and bootstrap seed.
#
# Tolerances:
# * S1, ST, S2: exactly equal (atol = rtol = 0): the point estimates take
#   the same operations in the same order as SALib's first_order,
#   total_order and second_order.
# * *_conf: rtol = 1e-10. The resamples are SALib's own (its seed, its
#   stream of row numbers), so the intervals agree up to the order of the
#   sums (a counts-times-products matrix product instead of a mean over the
#   gathered rows, the variance as E[y^2] - E[y]^2 of centred outputs):
#   3e-14 relative measured. 1e-10 sits far above that and far below any
#   Monte Carlo difference: an interval from other resamples would differ
#   by about 1 / sqrt(2 (R - 1)) = 5 % for R = 200 (the relative standard
#   error of a standard deviation estimated from R values).

CONF_RTOL = 1e-10


def salib_analysis(names, y, second_order, seed, num_resamples=sens.DEFAULT_RESAMPLES):
    problem = {"num_vars": len(names), "names": list(names), "bounds": [[0.0, 1.0]] * len(names)}
    return salib_sobol.analyze(problem, np.asarray(y, dtype=float), calc_second_order=second_order,
                               num_resamples=num_resamples, conf_level=0.95, seed=seed)


def assert_same_as_salib(indices, pairs, reference):
    assert_allclose(indices["S1"], reference["S1"], rtol=0, atol=0)
    assert_allclose(indices["ST"], reference["ST"], rtol=0, atol=0)
    assert_allclose(indices["S1_conf"], reference["S1_conf"], rtol=CONF_RTOL, atol=0)
    assert_allclose(indices["ST_conf"], reference["ST_conf"], rtol=CONF_RTOL, atol=0)
    if pairs is not None:
        upper = np.triu_indices(len(indices), 1)
        assert_allclose(pairs["S2"], reference["S2"][upper], rtol=0, atol=0)
        assert_allclose(pairs["S2_conf"], reference["S2_conf"][upper], rtol=CONF_RTOL, atol=0)


@pytest.mark.parametrize("base, second_order", [(2 ** 8, False), (BASE, False), (2 ** 10, True)])
def test_indices_and_intervals_are_salibs_on_ishigami(base, second_order):
    plan = sens.sobol_plan(ISHIGAMI_NAMES, base, second_order=second_order, seed=SEED)
    y = ishigami_outputs(plan)
    indices, pairs = sens.sobol_analyze(plan, y, seed=11)
    assert_same_as_salib(indices, pairs, salib_analysis(ISHIGAMI_NAMES, y, second_order, 11))
    # the intervals are real bootstrap widths, not zeros: about 1/sqrt(N)
    assert (indices["ST_conf"] > 0.1 / np.sqrt(base)).all()


def test_convergence_levels_are_salibs_analysis_of_the_first_base_samples(ishigami_run):
    plan, y, _, _ = ishigami_run
    table = sens.sobol_convergence(plan, y, seed=5)
    rows = plan.rows_per_base_sample
    for level, part in table.groupby("base_samples"):
        reference = salib_analysis(ISHIGAMI_NAMES, y[: level * rows], False, 5)
        assert_same_as_salib(part.reset_index(drop=True), None, reference)


def test_first_base_samples_of_a_plan_are_the_smaller_plan():
    # what the convergence levels rest on: the first N/4 base samples of a
    # plan are the plan of N/4 base samples with the same seed (a prefix of
    # one scrambled Sobol' sequence; SALib's layout keeps each base
    # sample's rows together), with and without second order
    for second_order in (False, True):
        plan = sens.sobol_plan(ISHIGAMI_NAMES, 64, second_order=second_order, seed=SEED)
        for level in (16, 32):
            smaller = sens.sobol_plan(ISHIGAMI_NAMES, level, second_order=second_order, seed=SEED)
            np.testing.assert_array_equal(plan.unit[: smaller.rows], smaller.unit)


@pytest.mark.parametrize("base, workers", [(64, 1), (64, 2), (64, 3), (100, 2)])
def test_resample_sums_are_sums_over_salibs_resamples(monkeypatch, base, workers):
    from hopscape.sensitivity import _saltelli

    # tiny memory budgets: several groups of resamples (the stream drawn
    # again for each), several blocks of drawn rows and of counts
    monkeypatch.setattr(_saltelli, "INDEX_BYTES", 4 * base * 7)
    monkeypatch.setattr(_saltelli, "DRAW_BYTES", 4 * 30 * 6)
    monkeypatch.setattr(_saltelli, "COUNT_BYTES", 8 * base * 3)
    resamples, seed = 30, 9
    products = np.random.default_rng(1).normal(size=(base, 4))
    found = _saltelli.resample_sums(products, resamples, seed, workers=workers)
    # SALib's resamples: column b of default_rng(seed).integers(N, size=(N, R))
    chosen = np.random.default_rng(seed).integers(base, size=(base, resamples))
    expected = products[chosen].sum(axis=0)
    assert_allclose(found, expected, rtol=1e-12, atol=1e-12)


def study_text(base):
    """studies/rod-glass.yaml with `base` base samples and one job."""
    text = (Path(__file__).parents[1] / "studies" / "rod-glass.yaml").read_text(encoding="utf-8")
    text, samples = re.subn(r"samples: \d+", f"samples: {base}", text)
    text, jobs = re.subn(r"jobs: \d+", "jobs: 1", text)
    assert samples == 1 and jobs == 1
    return text


def test_indices_and_intervals_are_salibs_on_a_real_study(tmp_path):
    outcome = run_text(study_text(256), tmp_path / "run")
    plan = outcome.plan
    assert plan.base_samples == 256 and len(plan.names) == 6
    y = outcome.tables["sobol"].sort_values("sample")["value"].to_numpy(dtype=float)
    y = np.nan_to_num(y, nan=0.0)  # as the analysis does with drops that start inside the floor
    assert np.ptp(y) > 0
    indices, pairs = sens.sobol_analyze(plan, y, seed=3)
    assert pairs is None
    assert_same_as_salib(indices, None, salib_analysis(plan.names, y, False, 3))
    table = sens.sobol_convergence(plan, y, seed=3)
    for level in (64, 128):
        part = table[table["base_samples"] == level].reset_index(drop=True)
        reference = salib_analysis(plan.names, y[: level * plan.rows_per_base_sample], False, 3)
        assert_same_as_salib(part, None, reference)


@pytest.mark.parametrize("dimension, base, second_order, seed",
                         [(3, 16, False, 1), (3, 16, True, 7), (6, 1024, False, 3), (6, 256, True, 12345),
                          (1, 8, False, 2), (12, 64, True, 99)])
def test_plan_is_salib_samplers_plan_bit_for_bit(dimension, base, second_order, seed):
    # the outside reference: SALib's own sampler (Saltelli 2002 layout,
    # scrambled Sobol' base from scipy), which the plan replaces for speed
    from SALib.sample import sobol as salib_sample
    names = [f"p{i}" for i in range(dimension)]
    problem = {"num_vars": dimension, "names": names, "bounds": [[0.0, 1.0]] * dimension}
    expected = salib_sample.sample(problem, base, calc_second_order=second_order, scramble=True, seed=seed)
    plan = sens.sobol_plan(names, base, second_order=second_order, seed=seed)
    assert plan.unit.shape == expected.shape
    np.testing.assert_array_equal(plan.unit, expected)
