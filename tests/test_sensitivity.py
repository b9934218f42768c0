"""The sensitivity package's shared contract (explore.sensitivity): checks every method makes, the registry.

Checks written from the package's own rules (seeds >= 1 because SALib
reads 0 as no seed, names unique, distributions matching the plan); the
methods' numbers are checked against published values in
test_sensitivity_sobol.py and test_sensitivity_morris.py.
"""
import re
from types import SimpleNamespace as sens_settings  # the study's analyses.sensitivity, as the methods read it

import numpy as np
import pandas as pd
import pytest

from _ishigami import UNIFORM_PI, ishigami_outputs
from hopscape import sensitivity as sens
from hopscape.errors import InputError
from hopscape.sensitivity import SensitivityError
from hopscape.test_functions import ISHIGAMI_NAMES


def seed_message(seed):
    return re.escape(f"seed: must be an integer >= 1 (got {seed!r})") + ".*SALib treats a seed of 0"


@pytest.mark.parametrize("seed", [0, None, -3, 1.5, True])
def test_seed_must_be_a_positive_integer(seed):
    with pytest.raises(ValueError, match=seed_message(seed)):
        sens.sobol_plan(["a", "b"], 8, seed=seed)
    with pytest.raises(ValueError, match=seed_message(seed)):
        sens.morris_plan(["a", "b"], trajectories=4, seed=seed)


@pytest.mark.parametrize("seed", [0, -3, 1.5, True])
def test_bootstrap_seed_must_be_a_positive_integer(seed):
    # None is allowed here: it derives the bootstrap seed from the plan's
    plan = sens.sobol_plan(["a", "b"], 8, seed=2)
    with pytest.raises(ValueError, match=seed_message(seed)):
        sens.sobol_analyze(plan, np.arange(plan.rows, dtype=float), seed=seed)


def test_errors_are_value_errors_and_command_line_input_errors():
    with pytest.raises(SensitivityError) as caught:
        sens.sobol_plan(["a"], 6, seed=1)
    assert isinstance(caught.value, ValueError) and isinstance(caught.value, InputError)


def test_names_are_checked():
    with pytest.raises(ValueError, match=r"names: must be unique .*repeated a"):
        sens.sobol_plan(["a", "b", "a"], 8, seed=1)
    with pytest.raises(ValueError, match=r"names: must be a sequence of parameter names, not one string"):
        sens.sobol_plan("ab", 8, seed=1)
    with pytest.raises(ValueError, match=r"names: must be at least one parameter name"):
        sens.sobol_plan([], 8, seed=1)


def test_plan_values_needs_exactly_the_plan_names():
    plan = sens.sobol_plan(["a", "b", "c"], 8, seed=1)
    with pytest.raises(ValueError, match=r"exactly the plan's parameters a, b, c \(missing c; not in the plan d\)"):
        sens.plan_values(plan, {"a": UNIFORM_PI, "b": UNIFORM_PI, "d": UNIFORM_PI})
    with pytest.raises(ValueError, match=r"distributions\['b'\]: must be a Distribution \(got 'tuple'\)"):
        sens.plan_values(plan, {"a": UNIFORM_PI, "b": (0, 1), "c": UNIFORM_PI})


# --------------------------------------------------------------------------
# the registry: one declaration per method
# --------------------------------------------------------------------------

def test_registry_names_the_study_methods():
    from typing import get_args

    from hopscape.study import Sensitivity

    assert sens.METHOD_NAMES == tuple(sens.METHODS) == ("sobol", "morris")
    # the study file accepts exactly the registered methods
    assert get_args(Sensitivity.model_fields["method"].annotation) == sens.METHOD_NAMES
    for name, method in sens.METHODS.items():
        assert method.name == name and method.plan_type.method == name


@pytest.mark.parametrize("name", ["sobol", "morris"])
def test_each_declaration_matches_what_its_method_gives(name):
    method = sens.METHODS[name]
    settings = sens_settings(samples=16, second_order=True, levels=4)
    plan = method.make_plan(ISHIGAMI_NAMES, settings, 7)
    assert isinstance(plan, method.plan_type) and plan.method == name and plan.seed == 7
    assert plan.rows == method.count_rows(settings, len(ISHIGAMI_NAMES))
    found = method.analyse(plan, ishigami_outputs(plan))
    declared = {table.key: table for table in method.tables}
    assert set(found) <= {"ranking", *declared}
    ranking = found["ranking"]
    assert tuple(ranking.columns) == method.columns and method.ranking_column in method.columns
    # rank 1 is the largest value of the ranking column
    assert ranking.loc[ranking[method.ranking_column].idxmax(), "rank"] == 1
    for key, table in found.items():
        if key != "ranking" and table is not None:
            assert tuple(table.columns) == declared[key].columns
    for picture in method.pictures:
        assert picture.table == "ranking" or picture.table in declared
    assert method.title and method.words


def test_sobol_declaration_gives_the_functions_results():
    settings = sens_settings(samples=16, second_order=True, levels=4)
    plan = sens.METHODS["sobol"].make_plan(ISHIGAMI_NAMES, settings, 7)
    y = ishigami_outputs(plan)
    found = sens.METHODS["sobol"].analyse(plan, y)
    indices, pairs = sens.sobol_analyze(sens.sobol_plan(ISHIGAMI_NAMES, 16, second_order=True, seed=7), y)
    pd.testing.assert_frame_equal(found["ranking"], indices, check_exact=True)
    pd.testing.assert_frame_equal(found["second_order"], pairs, check_exact=True)
    assert sorted(found["convergence"]["base_samples"].unique()) == [4, 8, 16]


def test_output_files_are_every_declared_table_once():
    assert sens.output_files() == ("sensitivity.csv", "sensitivity-second-order.csv", "sensitivity-convergence.csv")
    declared = {table.file for method in sens.METHODS.values() for table in method.tables}
    assert set(sens.output_files()) == {sens.RANKING_FILE} | declared
