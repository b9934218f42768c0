"""Sobol' variance-based indices: plan, analysis, convergence, declaration.

The sampler is SALib's (function API, ``SALib.sample.sobol``) on the unit
hypercube. The estimators and bootstrap are those of
``SALib.analyze.sobol.analyze``, computed by :mod:`._saltelli` as weighted
sums in bounded memory: the same indices bit for bit and the same
resamples, so the same intervals to rounding (checked against SALib in
tests/test_sensitivity_sobol.py).

References
----------
.. [1] Sobol', I. M. (2001). Global sensitivity indices for nonlinear
   mathematical models and their Monte Carlo estimates. Mathematics and
   Computers in Simulation 55(1-3), 271-280.
.. [2] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M.,
   Tarantola, S. (2010). Variance based sensitivity analysis of model
   output. Design and estimator for the total sensitivity index. Computer
   Physics Communications 181(2), 259-270.
"""
from __future__ import annotations


from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np

from .._arguments import SensitivityError, fail, integer
from . import _checks, _saltelli
from ._checks import DEFAULT_RESAMPLES, DEFAULT_SEED
from ._method import Method, Picture, Table
from ._columns import CONVERGENCE_COLUMNS, SECOND_ORDER_COLUMNS, SOBOL_COLUMNS

__all__ = ["SobolPlan", "sobol_plan", "sobol_analyze", "sobol_convergence", "METHOD",
           "SOBOL_COLUMNS", "SECOND_ORDER_COLUMNS", "CONVERGENCE_COLUMNS"]



def _power_of_two(field_name, value, minimum=2):
    value = integer(field_name, value, minimum, f"a power of two >= {minimum}")
    if value & (value - 1):
        lower = 1 << (value.bit_length() - 1)
        fail(field_name, f"a power of two >= {minimum}", value,
             f": Sobol' nets are balanced only at powers of two; use {lower} or {2 * lower}")
    return value


# eq=False: the plan holds an array, and two plans are the same plan only if
# they are the same object (element-wise == would be ambiguous)
@dataclass(frozen=True, eq=False)
class SobolPlan(_checks.Plan):
    """A Sobol' sampling plan: its settings and the unit design they made.

    Parameters
    ----------
    names : tuple of str
        Parameter names, in column order of ``unit``.
    base_samples : int
        Base sample count N of the Saltelli scheme, a power of two. [-]
    second_order : bool
        Whether the design supports second-order indices.
    seed : int
        Seed of the scrambled Sobol' sequence, >= 1.
    unit : numpy.ndarray
        Design on the unit hypercube, shape (rows, len(names)), read-only.
        SALib's layout: each base sample gives ``len(names) + 2``
        consecutive rows (``2 len(names) + 2`` with second order): A, the
        A-with-one-column-of-B rows, (the B-with-one-column-of-A rows,) B.
        [-]
    """

    names: tuple
    base_samples: int
    second_order: bool
    seed: int
    unit: np.ndarray = field(repr=False)

    method: ClassVar[str] = "sobol"
    label: ClassVar[str] = "Sobol"
    # needs_bounded stays None: the scrambled net never reaches u = 0 or 1,
    # so unbounded normals are fine

    def _check_settings(self):
        _power_of_two("base_samples", self.base_samples)
        object.__setattr__(self, "second_order", bool(self.second_order))

    @staticmethod
    def rows_per_base(dimension, second_order):
        """Rows each base sample contributes in Saltelli's scheme.

        Parameters
        ----------
        dimension : int
            Parameter count D. [-]
        second_order : bool
            Whether the rows for second-order indices are included.

        Returns
        -------
        int
            D + 2, or 2 D + 2 with second order. [-]
        """
        return 2 * dimension + 2 if second_order else dimension + 2

    @property
    def rows_per_base_sample(self):
        """Rows each base sample of this plan contributes: D + 2, or 2 D + 2. [-]"""
        return self.rows_per_base(len(self.names), self.second_order)

    @property
    def rows(self):
        """Number of model runs the plan asks for. [-]"""
        return self.base_samples * self.rows_per_base_sample

    def describe(self):
        """The plan's settings in words, as used in error messages.

        Returns
        -------
        str
        """
        return (f"base {self.base_samples}, {len(self.names)} parameters, "
                f"second order {'on' if self.second_order else 'off'}")

    def explain_row_count(self, count):
        """As :meth:`Plan.explain_row_count`: a hint when ``count`` fits this plan with second order toggled."""
        other = self.base_samples * self.rows_per_base(len(self.names), not self.second_order)
        if count != other:
            return ""
        return (f"; {count} is the row count with second order "
                f"{'off' if self.second_order else 'on'}: was y made from another plan?")


def sobol_plan(names, base_samples, second_order=False, seed=DEFAULT_SEED):
    """Make a Sobol' plan with Saltelli's cross-sampling on the unit cube.

    Parameters
    ----------
    names : sequence of str
        Parameter names, unique.
    base_samples : int
        Base sample count N, a power of two >= 2. The plan has
        ``N (D + 2)`` rows, or ``N (2 D + 2)`` with second order, for D
        parameters. [-]
    second_order : bool, optional
        Also prepare the rows needed for second-order (pair) indices.
    seed : int, optional
        Seed of the scrambled Sobol' sequence, an integer >= 1.

    Returns
    -------
    SobolPlan

    Raises
    ------
    SensitivityError
        For a non-power-of-two ``base_samples``, a seed that is not an
        integer >= 1, or bad names.

    Notes
    -----
    The plan of ``SALib.sample.sobol.sample`` with ``scramble=True``
    (Owen-type scrambling, so no points need skipping) and the given seed,
    bit for bit, laid out with whole-array copies
    (:func:`explore.sensitivity._saltelli.cross_sample`).
    """
    names = _checks.names(names)
    base_samples = _power_of_two("base_samples", base_samples)
    seed = _checks.seed("seed", seed)
    unit = _saltelli.cross_sample(len(names), base_samples, bool(second_order), seed)
    return SobolPlan(names, base_samples, bool(second_order), seed, unit)



def _sobol_indices(names, y, second_order, confidence_level, num_resamples, seed):
    """SALib's Sobol' estimators on checked outputs."""
    if np.ptp(y) == 0.0:
        raise SensitivityError(f"y: must vary (got {y.size} runs all equal to {y[0].item()!r}): "
                               "the variance shares are undefined for a constant output")
    return _saltelli.analyse(y, len(names), second_order, confidence_level, num_resamples, seed)


def sobol_analyze(plan, y, confidence_level=0.95, seed=None, num_resamples=DEFAULT_RESAMPLES):
    """First-order, total and (when planned) second-order Sobol' indices.

    Parameters
    ----------
    plan : SobolPlan
        The plan ``y`` was computed on; its settings drive the analysis.
    y : array_like
        One model output per plan row, in plan row order, all finite.
        [unit of the output]
    confidence_level : float, optional
        Level of the bootstrap confidence intervals, in (0, 1). [-]
    seed : int or None, optional
        Seed of the bootstrap, >= 1; None derives one from ``plan.seed``
        so the intervals repeat.
    num_resamples : int, optional
        Bootstrap resamples, >= 2. [-]

    Returns
    -------
    indices : pandas.DataFrame
        One row per parameter in plan order, columns ``parameter, S1,
        S1_conf, ST, ST_conf, rank``. ``S1`` is the share of output variance
        due to the parameter alone, ``ST`` the share including all its
        interactions; ``*_conf`` is the half-width of the confidence
        interval; ``rank`` is 1 for the largest ST. [-]
        ``indices.attrs`` holds ``confidence_level`` and ``base_samples``.
    pairs : pandas.DataFrame or None
        With ``plan.second_order``: one row per parameter pair (i < j in
        plan order), columns ``parameter_1, parameter_2, S2, S2_conf``
        (share of variance from the pair's interaction alone). [-]
        Otherwise None. The tuple shape is the same either way.

    Raises
    ------
    SensitivityError
        Before any estimation, when ``y`` does not have exactly
        ``plan.rows`` values (the message gives both counts and the plan's
        settings), holds NaN or infinite values (counted), or is constant;
        or for a bad confidence level, seed or resample count.

    Notes
    -----
    Estimators of Saltelli et al. (2010) [2] for S1, Jansen (1999) for ST
    (as given in [2]) and Saltelli (2002) for S2, with SALib's arithmetic
    and bootstrap resamples (:mod:`._saltelli`): the indices are
    ``SALib.analyze.sobol.analyze``'s bit for bit, the intervals to about
    1e-14 relative.
    Estimates carry sampling error: small indices can come out slightly
    negative and ST slightly above 1.
    """
    import pandas as pd   # imported on use: validating a study needs no pandas
    y, confidence_level, num_resamples, seed = _checks.analysis_inputs(
        plan, SobolPlan, "sobol_analyze", y, confidence_level, num_resamples, seed)
    result = _sobol_indices(plan.names, y, plan.second_order, confidence_level, num_resamples, seed)
    indices = pd.DataFrame({
        "parameter": list(plan.names),
        "S1": result["S1"], "S1_conf": result["S1_conf"],
        "ST": result["ST"], "ST_conf": result["ST_conf"],
    })
    indices["rank"] = _checks.rank(indices["ST"])
    indices.attrs.update(confidence_level=confidence_level, base_samples=plan.base_samples)
    pairs = None
    if plan.second_order:
        rows = [(plan.names[i], plan.names[j], result["S2"][i, j], result["S2_conf"][i, j])
                for i in range(len(plan.names)) for j in range(i + 1, len(plan.names))]
        pairs = pd.DataFrame(rows, columns=list(SECOND_ORDER_COLUMNS))
        pairs.attrs.update(confidence_level=confidence_level, base_samples=plan.base_samples)
    return indices, pairs


def sobol_convergence(plan, y, confidence_level=0.95, seed=None, num_resamples=DEFAULT_RESAMPLES, full=None):
    """S1 and ST recomputed on the first N/4, N/2 and all N base samples.

    A prefix of 2^k points of a scrambled Sobol' sequence is itself a
    balanced design, so each level is a valid smaller study (the first
    N/4 base samples of a plan are the N/4 plan of the same seed). Each
    level is SALib's analysis of those outputs; its cost is proportional
    to its base samples, so the N/4 and N/2 levels add 3/4 of one
    analysis. Indices that
    stay put and intervals that narrow (roughly by 1/sqrt(2) per doubling)
    mean N was enough.

    Parameters
    ----------
    plan : SobolPlan
    y : array_like
        One model output per plan row (checked as in
        :func:`sobol_analyze`). [unit of the output]
    confidence_level, seed, num_resamples
        As in :func:`sobol_analyze`; every level uses the same bootstrap
        seed.
    full : pandas.DataFrame, optional
        The table :func:`sobol_analyze` already gave for all N with the same
        settings; reused for the last level instead of a second bootstrap.

    Returns
    -------
    pandas.DataFrame
        Columns ``base_samples, parameter, S1, S1_conf, ST, ST_conf``, one
        row per level and parameter, levels ascending. Levels below 2 base
        samples are left out, so a plan with N = 2 or 4 gives fewer than
        three levels. [-]
    """
    import pandas as pd   # imported on use: validating a study needs no pandas
    y, confidence_level, num_resamples, seed = _checks.analysis_inputs(
        plan, SobolPlan, "sobol_convergence", y, confidence_level, num_resamples, seed)
    n_full = plan.base_samples
    levels = [n for n in (n_full // 4, n_full // 2, n_full) if n >= 2]
    frames = []
    for base in levels:
        if base == plan.base_samples and full is not None:
            frames.append(pd.DataFrame({"base_samples": base, "parameter": list(full["parameter"]),
                                        **{c: full[c].to_numpy() for c in ("S1", "S1_conf", "ST", "ST_conf")}}))
            continue
        part = y[: base * plan.rows_per_base_sample]
        result = _sobol_indices(plan.names, part, plan.second_order, confidence_level, num_resamples, seed)
        frames.append(pd.DataFrame({
            "base_samples": base, "parameter": list(plan.names),
            "S1": result["S1"], "S1_conf": result["S1_conf"],
            "ST": result["ST"], "ST_conf": result["ST_conf"],
        }))
    table = pd.concat(frames, ignore_index=True)
    table.attrs.update(confidence_level=confidence_level)
    return table



# --------------------------------------------------------------------------
# the declaration the pipeline works from (explore.sensitivity.METHODS)
# --------------------------------------------------------------------------

SECOND_ORDER_FILE = "sensitivity-second-order.csv"
CONVERGENCE_FILE = "sensitivity-convergence.csv"


def _plan_for_study(names, settings, seed):
    return sobol_plan(names, settings.samples, second_order=settings.second_order, seed=seed)


def _rows_for_study(settings, dimension):
    return settings.samples * SobolPlan.rows_per_base(dimension, settings.second_order)


def _analyse_for_study(plan, y):
    indices, pairs = sobol_analyze(plan, y)
    return {"ranking": indices, "second_order": pairs, "convergence": sobol_convergence(plan, y, full=indices)}


def _draw_ranking(table, path, study_name):
    from ..charts import ranking_chart  # plotting only when a chart is drawn

    return ranking_chart(table, path, title=f"{study_name}: which quantities matter")


def _draw_convergence(table, path, study_name):
    from ..charts import convergence_chart

    return convergence_chart(table, path)


def _settings_problem(settings):
    """Sobol sampling needs a power-of-two number of base samples (the
    plan's own check, :func:`_power_of_two`, worded for the study file)."""
    try:
        _power_of_two("samples", settings.samples)
    except SensitivityError as exc:
        return str(exc)
    return None


METHOD = Method(
    name="sobol",
    stream=3,
    title="Sobol indices",
    plan_type=SobolPlan,
    make_plan=_plan_for_study,
    count_rows=_rows_for_study,
    analyse=_analyse_for_study,
    ranking_column="ST",
    columns=SOBOL_COLUMNS,
    words=("S1: share of the metric's variance due to the quantity alone; ST: including all its "
           "interactions; *_conf: half-width of the 95 % bootstrap interval. A quantity with ST near 0 "
           "can be fixed anywhere in its range."),
    tables=(
        Table("second_order", SECOND_ORDER_FILE, SECOND_ORDER_COLUMNS,
              f"Pairs: S2 is the share of the metric's variance due to the interaction of two quantities "
              f"alone ({SECOND_ORDER_FILE})."),
        Table("convergence", CONVERGENCE_FILE, CONVERGENCE_COLUMNS,
              f"Convergence: indices recomputed on a quarter, a half and all of the base samples "
              f"({CONVERGENCE_FILE}). If they still move, raise analyses.sensitivity.samples."),
    ),
    pictures=(Picture("ranking.png", "ranking", _draw_ranking),
              Picture("ranking-convergence.png", "convergence", _draw_convergence)),
    settings_problem=_settings_problem,
)
