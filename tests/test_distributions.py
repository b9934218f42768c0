"""Distributions (explore.distributions): quantile functions against SciPy and closed forms.

Sources: ``scipy.stats`` (uniform, loguniform, norm, truncnorm) as an
independent implementation; the truncated normal's quantile and mean in
closed form from the standard normal alone (standard results, written from
memory, see the comments beside each check).
"""
import re

import numpy as np
import pytest
from numpy.testing import assert_allclose
from scipy import special, stats

from hopscape.distributions import Distribution

U = np.linspace(0.0, 1.0, 201)


def test_uniform_matches_scipy():
    distribution = Distribution("uniform", low=0.2, high=0.9)
    assert_allclose(distribution.ppf(U), stats.uniform(loc=0.2, scale=0.7).ppf(U), rtol=1e-14, atol=0)
    assert distribution.ppf(0.0) == 0.2 and distribution.ppf(1.0) == pytest.approx(0.9, abs=1e-15)


def test_log_uniform_matches_scipy():
    distribution = Distribution("log_uniform", low=1e-3, high=10.0)
    assert_allclose(distribution.ppf(U), stats.loguniform(1e-3, 10.0).ppf(U), rtol=1e-12)
    values = distribution.ppf(U)
    assert values.min() == 1e-3 and values.max() == 10.0
    # equal steps in u are equal factors: the median is the geometric mean
    assert_allclose(distribution.ppf(0.5), np.sqrt(1e-3 * 10.0), rtol=1e-12)


def test_truncated_normal_quantiles():
    mean, sd, low, high = 0.4, 0.15, 0.2, 0.9
    distribution = Distribution("normal", low=low, high=high, mean=mean, sd=sd)
    values = distribution.ppf(U)
    alpha, beta = (low - mean) / sd, (high - mean) / sd
    assert_allclose(values, stats.truncnorm(alpha, beta, loc=mean, scale=sd).ppf(U), rtol=1e-12)
    # closed form of the truncated quantile, from the standard normal alone:
    # x = mean + sd * Phi^-1(Phi(alpha) + u (Phi(beta) - Phi(alpha)))
    inner = U[1:-1]
    by_hand = mean + sd * special.ndtri(special.ndtr(alpha) + inner * (special.ndtr(beta) - special.ndtr(alpha)))
    assert_allclose(values[1:-1], by_hand, rtol=1e-9)
    assert values[0] == low and values[-1] == high
    assert ((values >= low) & (values <= high)).all()
    # mean of a truncated normal, mean + sd (phi(alpha) - phi(beta)) / Z
    # (standard result, written from memory), against the midpoint rule on
    # the quantile function
    z = special.ndtr(beta) - special.ndtr(alpha)
    expected_mean = mean + sd * (stats.norm.pdf(alpha) - stats.norm.pdf(beta)) / z
    midpoints = (np.arange(100_000) + 0.5) / 100_000
    assert_allclose(distribution.ppf(midpoints).mean(), expected_mean, rtol=1e-6)


def test_one_sided_and_plain_normal():
    lower_only = Distribution("normal", mean=1.0, sd=0.5, low=0.0)
    values = lower_only.ppf(U[:-1])
    assert_allclose(values, stats.truncnorm(-2.0, np.inf, loc=1.0, scale=0.5).ppf(U[:-1]), rtol=1e-12)
    assert values.min() == 0.0 and not lower_only.bounded
    plain = Distribution("normal", mean=1.0, sd=0.5)
    assert_allclose(plain.ppf(U), stats.norm(1.0, 0.5).ppf(U), rtol=1e-14)
    assert plain.ppf(0.0) == -np.inf and plain.ppf(1.0) == np.inf


def test_ppf_keeps_shape_and_rejects_outside_unit_interval():
    distribution = Distribution("uniform", low=-1.0, high=1.0)
    assert distribution.ppf(np.full((3, 4), 0.5)).shape == (3, 4)
    with pytest.raises(ValueError, match=r"u: must be in \[0, 1\] \(got 1.5\) \(1 of 3 values outside\)"):
        distribution.ppf([0.2, 1.5, 0.3])
    with pytest.raises(ValueError, match=r"u: must be in \[0, 1\]"):
        distribution.ppf([np.nan])


@pytest.mark.parametrize("kwargs, message", [
    ({"kind": "gamma", "low": 0, "high": 1}, "kind: must be one of uniform, log_uniform, normal (got 'gamma')"),
    ({"kind": "uniform", "low": 1.0, "high": 1.0}, "uniform.high: must be greater than low = 1.0 (got 1.0)"),
    ({"kind": "uniform", "low": 0.0}, "uniform.high: must be given (got None)"),
    ({"kind": "uniform", "low": 0.0, "high": 1.0, "sd": 0.1},
     "uniform.sd: must be None (a uniform distribution does not use it) (got 0.1)"),
    ({"kind": "uniform", "low": 0.0, "high": np.inf}, "uniform.high: must be a finite number (got inf)"),
    ({"kind": "log_uniform", "low": 0.0, "high": 1.0}, "log_uniform.low: must be > 0 (got 0.0)"),
    ({"kind": "normal", "mean": 0.0, "sd": -1.0}, "normal.sd: must be > 0 (got -1.0)"),
    ({"kind": "normal", "mean": 0.0, "sd": 1.0, "low": 50.0, "high": 60.0},
     "normal.low/high: must be a window holding some of the normal's probability (got (50.0, 60.0))"),
])
def test_distribution_arguments_are_checked(kwargs, message):
    with pytest.raises(ValueError, match=re.escape(message)):
        Distribution(**kwargs)
