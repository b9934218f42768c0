"""Ishigami through the sensitivity pipeline: settings and outputs the tests share.

The tolerance is SALib's own regression tolerance for Ishigami Sobol'
indices: ``tests/test_regression.py::test_regression_sobol`` in the SALib
repository (read at commit 6c4b21ffff36f8469555d3f6be1d79a7461efa15)
checks S1 and ST with ``assert_allclose(..., atol=5e-2, rtol=1e-1)``.
"""
import numpy as np

from hopscape import sensitivity as sens
from hopscape.distributions import Distribution
from hopscape.test_functions import ISHIGAMI_NAMES, ishigami

# SALib's regression tolerance for Ishigami Sobol' indices (see module docstring)
SALIB_ATOL, SALIB_RTOL = 5e-2, 1e-1

BASE = 2 ** 12
SEED = 20240607
UNIFORM_PI = Distribution("uniform", low=-np.pi, high=np.pi)


def ishigami_outputs(plan):
    values = sens.plan_values(plan, {name: UNIFORM_PI for name in ISHIGAMI_NAMES})
    return ishigami(values["x1"], values["x2"], values["x3"])
