"""Morris elementary-effects screening: plan, analysis, declaration.

The sampler and estimator are SALib's (function API,
``SALib.sample.morris``, ``SALib.analyze.morris``) on the unit grid.

References
----------
.. [1] Morris, M. D. (1991). Factorial sampling plans for preliminary
   computational experiments. Technometrics 33(2), 161-174.
.. [2] Campolongo, F., Cariboni, J., Saltelli, A. (2007). An effective
   screening design for sensitivity analysis of large models. Environmental
   Modelling & Software 22(10), 1509-1518.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np

from .._arguments import fail, integer
from . import _checks
from ._checks import DEFAULT_RESAMPLES, DEFAULT_SEED
from ._method import Method

__all__ = ["MorrisPlan", "morris_plan", "morris_analyze", "METHOD", "MORRIS_COLUMNS"]

MORRIS_COLUMNS = ("parameter", "mu_star", "mu_star_conf", "sigma", "rank")


@dataclass(frozen=True, eq=False)
class MorrisPlan(_checks.Plan):
    """A Morris screening plan: its settings and the unit design they made.

    Parameters
    ----------
    names : tuple of str
        Parameter names, in column order of ``unit``.
    trajectories : int
        Number of one-at-a-time trajectories, >= 2. [-]
    levels : int
        Grid levels per parameter, even and >= 2. [-]
    seed : int
        Seed of the trajectory sampler, >= 1.
    unit : numpy.ndarray
        Design on the unit grid, shape (trajectories (D + 1), D), read-only;
        each trajectory is D + 1 consecutive rows. [-]
    """

    names: tuple
    trajectories: int
    levels: int
    seed: int
    unit: np.ndarray = field(repr=False)

    method: ClassVar[str] = "morris"
    label: ClassVar[str] = "Morris"
    needs_bounded: ClassVar[str | None] = "the Morris grid reaches u = 0 and 1, which map to -inf and +inf"

    def _check_settings(self):
        integer("trajectories", self.trajectories, 2)
        _levels(self.levels)

    @staticmethod
    def row_count(trajectories, dimension):
        """Rows of a Morris plan.

        Parameters
        ----------
        trajectories : int
            Trajectory count r. [-]
        dimension : int
            Parameter count D. [-]

        Returns
        -------
        int
            r (D + 1): each trajectory is a start and one step per parameter. [-]
        """
        return trajectories * (dimension + 1)

    @property
    def rows(self):
        """Number of model runs the plan asks for. [-]"""
        return self.row_count(self.trajectories, len(self.names))

    def describe(self):
        """The plan's settings in words, as used in error messages.

        Returns
        -------
        str
        """
        return f"{self.trajectories} trajectories, {len(self.names)} parameters, {self.levels} levels"


def _levels(levels):
    levels = integer("levels", levels, 2, "an even integer >= 2")
    if levels % 2:
        fail("levels", "an even integer >= 2", levels,
              ": with an odd count the Morris step does not pair the levels evenly and the sample is biased")
    return levels


def morris_plan(names, trajectories=64, levels=4, seed=DEFAULT_SEED):
    """Make a Morris elementary-effects plan on the unit grid.

    Parameters
    ----------
    names : sequence of str
        Parameter names, unique.
    trajectories : int, optional
        Number of trajectories r, >= 2; the plan has ``r (D + 1)`` rows.
        Ten to fifty is the usual range for screening [2]; the default
        gives steadier confidence intervals. [-]
    levels : int, optional
        Grid levels p per parameter, even and >= 2. The step is
        ``p / (2 (p - 1))`` of the unit range. [-]
    seed : int, optional
        Seed of the trajectory sampler, an integer >= 1.

    Returns
    -------
    MorrisPlan

    Notes
    -----
    Uses ``SALib.sample.morris.sample`` without trajectory optimisation.
    The grid includes the ends 0 and 1 of the unit range, so every
    parameter needs a bounded distribution (see :func:`plan_values`).
    """
    names = _checks.names(names)
    trajectories = integer("trajectories", trajectories, 2)
    levels = _levels(levels)
    seed = _checks.seed("seed", seed)
    from SALib.sample import morris as _morris_sample   # imported on use: validating a study needs no SALib
    unit = _morris_sample.sample(_checks.unit_problem(names), trajectories, num_levels=levels,
                                 optimal_trajectories=None, seed=seed)
    return MorrisPlan(names, trajectories, levels, seed, unit)



def morris_analyze(plan, y, confidence_level=0.95, seed=None, num_resamples=DEFAULT_RESAMPLES):
    """Morris screening measures from a Morris plan's outputs.

    Parameters
    ----------
    plan : MorrisPlan
        The plan ``y`` was computed on; its unit design and level count are
        passed to the estimator.
    y : array_like
        One model output per plan row, all finite. [unit of the output]
    confidence_level : float, optional
        Level of the bootstrap interval of ``mu_star``, in (0, 1). [-]
    seed : int or None, optional
        Seed of the bootstrap, >= 1; None derives one from ``plan.seed``.
    num_resamples : int, optional
        Bootstrap resamples, >= 2. [-]

    Returns
    -------
    pandas.DataFrame
        One row per parameter in plan order, columns ``parameter, mu_star,
        mu_star_conf, sigma, rank``. ``mu_star`` is the mean absolute
        elementary effect and ``sigma`` the standard deviation of the
        elementary effects (large: non-linear or interacting). Effects are
        changes of y per unit of the *unit-interval* coordinate, i.e. per
        full range (uniform) or per unit of probability (other
        distributions), so parameters compare on one scale.
        [unit of the output]
        ``rank`` is 1 for the largest ``mu_star``.

    Raises
    ------
    SensitivityError
        When ``y`` has not exactly ``plan.rows`` values or holds NaN or
        infinite values, or for a bad confidence level, seed or resample
        count.
    """
    y, confidence_level, num_resamples, seed = _checks.analysis_inputs(
        plan, MorrisPlan, "morris_analyze", y, confidence_level, num_resamples, seed)
    import pandas as pd
    from SALib.analyze import morris as _morris_analyze
    result = _morris_analyze.analyze(_checks.unit_problem(plan.names), np.array(plan.unit), y,
                                     num_resamples=num_resamples, conf_level=confidence_level,
                                     print_to_console=False, num_levels=plan.levels, seed=seed)
    table = pd.DataFrame({
        "parameter": list(plan.names),
        "mu_star": np.asarray(result["mu_star"], dtype=float),
        "mu_star_conf": np.asarray(result["mu_star_conf"], dtype=float),
        "sigma": np.asarray(result["sigma"], dtype=float),
    })
    table["rank"] = _checks.rank(table["mu_star"])
    table.attrs.update(confidence_level=confidence_level, trajectories=plan.trajectories, levels=plan.levels)
    return table



# --------------------------------------------------------------------------
# the declaration the pipeline works from (explore.sensitivity.METHODS)
# --------------------------------------------------------------------------

def _plan_for_study(names, settings, seed):
    return morris_plan(names, trajectories=settings.samples, levels=settings.levels, seed=seed)


def _rows_for_study(settings, dimension):
    return MorrisPlan.row_count(settings.samples, dimension)


def _analyse_for_study(plan, y):
    return {"ranking": morris_analyze(plan, y)}


METHOD = Method(
    name="morris",
    stream=4,
    title="Morris screening",
    plan_type=MorrisPlan,
    make_plan=_plan_for_study,
    count_rows=_rows_for_study,
    analyse=_analyse_for_study,
    ranking_column="mu_star",
    columns=MORRIS_COLUMNS,
    words=("mu_star: mean absolute elementary effect, the change of the metric when the quantity alone moves "
           "one grid step, per whole range of the quantity (per unit of probability when it is not uniform), so "
           "quantities compare on one scale; sigma: spread of those effects, large when the quantity acts "
           "non-linearly or through others; mu_star_conf: half-width of the 95 % bootstrap interval of mu_star. "
           "A quantity with mu_star near 0 can be fixed anywhere in its range."),
)
