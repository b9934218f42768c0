"""Global sensitivity analysis: which design parameters move the output.

One contract for every method. A *plan* is made first; it stores the
sampling settings together with the unit-interval design it produced. The
model is run on :func:`plan_values` of that plan, and the analysis takes the
plan back with the outputs. Because the plan carries its own settings, the
analysis never has to be told them a second time and a mismatch (wrong row
count, second order on at sampling but off at analysis, other levels, ...)
is an error instead of a silently wrong answer.

One module per method, each ending in its :class:`Method` declaration
(``METHOD``), found here by looking through the package:

* :mod:`.sobol`: Sobol' variance-based indices (:func:`sobol_plan`,
  :func:`sobol_analyze`, :func:`sobol_convergence`);
* :mod:`.morris`: Morris elementary-effects screening
  (:func:`morris_plan`, :func:`morris_analyze`).

:data:`METHODS` maps each method's name to its declaration; the planner,
the analysis, the report and the command line work from it alone. The
charts are in :mod:`explore.charts` and the distributions in
:mod:`explore.distributions`; neither this package nor the planner imports
matplotlib.
"""
from __future__ import annotations

import importlib
import pkgutil

from .._arguments import SensitivityError, fail
from ..distributions import Distribution
from . import _checks
from ._checks import DEFAULT_RESAMPLES, DEFAULT_SEED
from ._method import Method, Picture, Table
from .morris import MORRIS_COLUMNS, MorrisPlan, morris_analyze, morris_plan
from .sobol import (CONVERGENCE_COLUMNS, SECOND_ORDER_COLUMNS, SOBOL_COLUMNS, SobolPlan, sobol_analyze,
                    sobol_convergence, sobol_plan)

__all__ = [
    "METHODS", "METHOD_NAMES", "RANKING_FILE", "output_files", "Method", "Table", "Picture",
    "SensitivityError", "Distribution", "plan_values",
    "SobolPlan", "sobol_plan", "sobol_analyze", "sobol_convergence",
    "MorrisPlan", "morris_plan", "morris_analyze",
    "SOBOL_COLUMNS", "SECOND_ORDER_COLUMNS", "CONVERGENCE_COLUMNS", "MORRIS_COLUMNS",
    "DEFAULT_SEED", "DEFAULT_RESAMPLES",
]



def _declarations():
    """The ``METHOD`` of every public module of this package, in the order of their streams."""
    found = [importlib.import_module(f"{__name__}.{module.name}").METHOD
             for module in pkgutil.iter_modules(__path__) if not module.name.startswith("_")]
    found.sort(key=lambda method: method.stream)
    for earlier, method in zip(found, found[1:]):
        if method.stream == earlier.stream or method.name == earlier.name:
            raise RuntimeError(f"sensitivity methods {earlier.name} and {method.name} share a stream or a name")
    if found and found[0].stream <= 2:
        raise RuntimeError(f"sensitivity method {found[0].name}: stream must be > 2 (1, 2: grid, robust)")
    return found


#: Every sensitivity method by name, in the order of their random streams.
METHODS = {method.name: method for method in _declarations()}

#: The method names, for the study file's ``analyses.sensitivity.method``.
METHOD_NAMES = tuple(METHODS)

#: The ranking table of whichever method ran, in the run folder.
RANKING_FILE = "sensitivity.csv"


def output_files():
    """Every CSV file any method's analysis writes in a run folder.

    Returns
    -------
    tuple of str
        :data:`RANKING_FILE` and each method's further tables, file names
        relative to the run folder, each once.
    """
    extra = (table.file for method in METHODS.values() for table in method.tables)
    return tuple(dict.fromkeys((RANKING_FILE, *extra)))


def plan_values(plan, distributions):
    """Physical parameter values of a plan's rows.

    Parameters
    ----------
    plan : SobolPlan or MorrisPlan
        The plan of any method in :data:`METHODS`.
    distributions : dict of str to Distribution
        One distribution per plan parameter, no more, no fewer.

    Returns
    -------
    dict of str to numpy.ndarray
        For each name, in plan order, the values of its column, shape
        (plan.rows,). [unit of each parameter]

    Raises
    ------
    SensitivityError
        When the names differ from the plan's (missing and unknown names
        are listed), a value is not a :class:`Distribution`, or a plan
        whose design reaches u = 0 and 1 (Morris) meets an unbounded normal
        (those ends map to infinite values).
    """
    _checks.check_plan(plan, tuple(method.plan_type for method in METHODS.values()), "plan_values")
    if not isinstance(distributions, dict):
        fail("distributions", "a dict of parameter name to Distribution", type(distributions).__name__)
    missing = [n for n in plan.names if n not in distributions]
    unknown = [n for n in distributions if n not in plan.names]
    if missing or unknown:
        parts = []
        if missing:
            parts.append(f"missing {', '.join(map(str, missing))}")
        if unknown:
            parts.append(f"not in the plan {', '.join(map(str, unknown))}")
        raise SensitivityError(f"distributions: must have exactly the plan's parameters "
                               f"{', '.join(plan.names)} ({'; '.join(parts)})")
    values = {}
    for column, name in enumerate(plan.names):
        distribution = distributions[name]
        if not isinstance(distribution, Distribution):
            fail(f"distributions[{name!r}]", "a Distribution", type(distribution).__name__)
        if plan.needs_bounded and not distribution.bounded:
            raise SensitivityError(
                f"distributions[{name!r}]: must be bounded for a {plan.label} plan (got {distribution.describe()}): "
                f"{plan.needs_bounded}; give low and high")
        values[name] = distribution.ppf(plan.unit[:, column])
    return values

