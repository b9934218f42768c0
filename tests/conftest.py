"""Fixtures shared by the sensitivity and chart tests."""
import pytest

from _ishigami import BASE, ISHIGAMI_NAMES, SEED, ishigami_outputs
from explore import sensitivity as sens


@pytest.fixture(scope="session")
def ishigami_run():
    """A Sobol' run on Ishigami at 2^12 base samples: (plan, y, indices, pairs)."""
    plan = sens.sobol_plan(ISHIGAMI_NAMES, BASE, second_order=False, seed=SEED)
    y = ishigami_outputs(plan)
    indices, pairs = sens.sobol_analyze(plan, y)
    return plan, y, indices, pairs
