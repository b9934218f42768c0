"""Global sensitivity analysis: which design parameters move the output.

One contract, two methods. A *plan* is made first (Sobol or Morris); it
stores the sampling settings together with the unit-interval design it
produced. The model is run on :func:`plan_values` of that plan, and the
analysis takes the plan back with the outputs. Because the plan carries its
own settings, the analysis never has to be told them a second time and a
mismatch (wrong row count, second order on at sampling but off at analysis,
other levels, ...) is an error instead of a silently wrong answer.

* Sobol' variance-based indices: :func:`sobol_plan`, :func:`sobol_analyze`,
  :func:`sobol_convergence`, :func:`ranking_chart`, :func:`convergence_chart`.
* Morris elementary-effects screening: :func:`morris_plan`,
  :func:`morris_analyze`.

Sampling works on the unit hypercube; each parameter's
:class:`Distribution` maps the unit samples to physical values through its
quantile function, so the same plan serves uniform, log-uniform and
(truncated) normal parameters.

The samplers and estimators are SALib's (function API,
``SALib.sample.sobol``, ``SALib.analyze.sobol``, ``SALib.sample.morris``,
``SALib.analyze.morris``). Where SALib is lenient this module is strict:

* the output length must equal the plan's row count exactly (SALib only
  checks divisibility, so outputs of a plan with twice the base samples, or
  with second order on, can pass unnoticed);
* outputs must be finite (SALib propagates NaN into every index);
* seeds are integers >= 1: SALib's Sobol analysis treats a seed of 0 as no
  seed at all (``if seed:``) and then draws from NumPy's global random
  state, and ``None`` means fresh operating-system entropy, so results would
  not repeat;
* input checks raise :class:`SensitivityError` (a ``ValueError``), never
  ``assert``.

References
----------
.. [1] Sobol', I. M. (2001). Global sensitivity indices for nonlinear
   mathematical models and their Monte Carlo estimates. Mathematics and
   Computers in Simulation 55(1-3), 271-280.
.. [2] Saltelli, A., Annoni, P., Azzini, I., Campolongo, F., Ratto, M.,
   Tarantola, S. (2010). Variance based sensitivity analysis of model
   output. Design and estimator for the total sensitivity index. Computer
   Physics Communications 181(2), 259-270.
.. [3] Morris, M. D. (1991). Factorial sampling plans for preliminary
   computational experiments. Technometrics 33(2), 161-174.
.. [4] Campolongo, F., Cariboni, J., Saltelli, A. (2007). An effective
   screening design for sensitivity analysis of large models. Environmental
   Modelling & Software 22(10), 1509-1518.
.. [5] Okabe, M., Ito, K. (2008). Color universal design (CUD): how to make
   figures and presentations that are friendly to colorblind people.
"""
from __future__ import annotations

import math
import numbers
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from scipy import stats

from SALib.analyze import morris as _morris_analyze
from SALib.analyze import sobol as _sobol_analyze
from SALib.sample import morris as _morris_sample
from SALib.sample import sobol as _sobol_sample

from .errors import InputError

__all__ = [
    "SensitivityError",
    "Distribution",
    "SobolPlan",
    "MorrisPlan",
    "sobol_plan",
    "morris_plan",
    "plan_values",
    "sobol_analyze",
    "sobol_convergence",
    "morris_analyze",
    "ranking_chart",
    "convergence_chart",
    "DEFAULT_SEED",
    "DEFAULT_RESAMPLES",
]

#: Seed used when a caller gives none. A study should set its own; this one
#: only makes a bare call repeatable.
DEFAULT_SEED = 1

#: Bootstrap resamples for confidence intervals. SALib's default is 100; 200
#: halves the Monte Carlo wobble of the interval width for little cost.
DEFAULT_RESAMPLES = 200

#: Okabe & Ito (2008) colours: blue for first order, orange for total.
S1_COLOUR = "#0072B2"
ST_COLOUR = "#E69F00"

#: Chart display range of an index: estimates can stray a little outside
#: [0, 1] from sampling error; the chart clips them, the tables do not.
INDEX_DISPLAY_RANGE = (0.0, 1.05)

CHART_SUFFIXES = (".png", ".svg", ".pdf")

SOBOL_COLUMNS = ("parameter", "S1", "S1_conf", "ST", "ST_conf", "rank")
SECOND_ORDER_COLUMNS = ("parameter_1", "parameter_2", "S2", "S2_conf")
CONVERGENCE_COLUMNS = ("base_samples", "parameter", "S1", "S1_conf", "ST", "ST_conf")
MORRIS_COLUMNS = ("parameter", "mu_star", "mu_star_conf", "sigma", "rank")


class SensitivityError(InputError, ValueError):
    """A sensitivity setting or input a user can fix.

    A ``ValueError`` for Python callers and an
    :class:`explore.errors.InputError` for the command line, which reports
    it as bad input.
    """


# --------------------------------------------------------------------------
# argument checks: one message shape everywhere,
# "<field>: must be <allowed> (got <value>)"
# --------------------------------------------------------------------------

def _fail(field, allowed, value, why=""):
    if isinstance(value, np.generic):
        value = value.item()  # 2.5, not np.float64(2.5)
    raise SensitivityError(f"{field}: must be {allowed} (got {value!r}){why}")


def _real(field, value, allowed="a finite number"):
    if isinstance(value, bool) or not isinstance(value, numbers.Real) or not math.isfinite(value):
        _fail(field, allowed, value)
    return float(value)


def _integer(field, value, minimum, allowed=None):
    allowed = allowed or f"an integer >= {minimum}"
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or value < minimum:
        _fail(field, allowed, value)
    return int(value)


def _seed(field, value):
    why = (": SALib treats a seed of 0 as 'no seed' and None as fresh entropy, "
           "so results would not repeat; give a positive integer")
    if value is None or isinstance(value, bool) or not isinstance(value, numbers.Integral) or value < 1:
        _fail(field, "an integer >= 1", value, why)
    return int(value)


def _power_of_two(field, value, minimum=2):
    value = _integer(field, value, minimum, f"a power of two >= {minimum}")
    if value & (value - 1):
        lower = 1 << (value.bit_length() - 1)
        _fail(field, f"a power of two >= {minimum}", value,
              f": Sobol' nets are balanced only at powers of two; use {lower} or {2 * lower}")
    return value


def _confidence(value):
    allowed = "a number strictly between 0 and 1"
    if not 0.0 < _real("confidence_level", value, allowed) < 1.0:
        _fail("confidence_level", allowed, value)
    return float(value)


def _names(names):
    if isinstance(names, str):
        _fail("names", "a sequence of parameter names, not one string", names)
    names = tuple(names)
    if not names:
        _fail("names", "at least one parameter name", names)
    for name in names:
        if not isinstance(name, str) or not name.strip():
            _fail("names", "non-empty strings", name)
    repeated = sorted({n for n in names if names.count(n) > 1})
    if repeated:
        _fail("names", "unique", names, f": repeated {', '.join(repeated)}")
    return names


def _unit_problem(names):
    """SALib problem on the unit hypercube; distributions are applied later."""
    return {"num_vars": len(names), "names": list(names), "bounds": [[0.0, 1.0]] * len(names)}


def _bootstrap_seed(plan_seed):
    """Seed for the bootstrap resampling, derived from the plan's seed.

    A separate stream from the one that scrambled the design, and never 0
    (SALib's Sobol analysis would read 0 as 'no seed').
    """
    state = int(np.random.SeedSequence([plan_seed, 0x5EED]).generate_state(1, dtype=np.uint32)[0])
    return state or 1


# --------------------------------------------------------------------------
# distributions
# --------------------------------------------------------------------------

#: Fields each kind uses; the others must be left as None so that a value
#: given for the wrong kind is reported instead of ignored.
DISTRIBUTION_FIELDS = {
    "uniform": {"required": ("low", "high"), "optional": ()},
    "log_uniform": {"required": ("low", "high"), "optional": ()},
    "normal": {"required": ("mean", "sd"), "optional": ("low", "high")},
}


@dataclass(frozen=True)
class Distribution:
    """Distribution of one uncertain parameter, as a quantile function.

    Parameters
    ----------
    kind : {"uniform", "log_uniform", "normal"}
        ``uniform``: constant density on [low, high].
        ``log_uniform``: log of the value uniform on [log low, log high];
        needs 0 < low < high.
        ``normal``: mean and standard deviation; truncated to [low, high]
        when either bound is given (one-sided truncation allowed).
    low, high : float or None
        Bounds, in the parameter's own unit. [unit of the parameter]
    mean : float or None
        Mean of the (untruncated) normal. [unit of the parameter]
    sd : float or None
        Standard deviation of the (untruncated) normal, > 0.
        [unit of the parameter]

    Raises
    ------
    SensitivityError
        (a ``ValueError``) naming the field, the allowed range and the
        value, for an unknown kind, a missing or non-finite field, a field
        the kind does not use, ``low >= high``, ``low <= 0`` for log_uniform
        or ``sd <= 0``.

    Examples
    --------
    >>> Distribution("uniform", low=0.2, high=0.9).ppf(np.array([0.5]))
    array([0.55])
    """

    kind: str
    low: float | None = None
    high: float | None = None
    mean: float | None = None
    sd: float | None = None

    def __post_init__(self):
        if self.kind not in DISTRIBUTION_FIELDS:
            _fail("kind", f"one of {', '.join(DISTRIBUTION_FIELDS)}", self.kind)
        fields = DISTRIBUTION_FIELDS[self.kind]
        for name in ("low", "high", "mean", "sd"):
            value = getattr(self, name)
            if name in fields["required"]:
                if value is None:
                    _fail(f"{self.kind}.{name}", "given", None)
            elif name not in fields["optional"]:
                if value is not None:
                    _fail(f"{self.kind}.{name}", f"None (a {self.kind} distribution does not use it)", value)
                continue
            if value is not None:
                object.__setattr__(self, name, _real(f"{self.kind}.{name}", value))
        if self.low is not None and self.high is not None and not self.low < self.high:
            _fail(f"{self.kind}.high", f"greater than low = {self.low!r}", self.high)
        if self.kind == "log_uniform" and not self.low > 0.0:
            _fail("log_uniform.low", "> 0", self.low)
        if self.kind == "normal":
            if not self.sd > 0.0:
                _fail("normal.sd", "> 0", self.sd)
            if self.low is not None or self.high is not None:
                # a truncation window far out in a tail holds no probability
                # in floating point and its quantiles are meaningless
                alpha, beta = self._standard_bounds()
                mass = stats.norm.cdf(beta) - stats.norm.cdf(alpha)
                if not mass > 1e-12:
                    _fail("normal.low/high", "a window holding some of the normal's probability", (self.low, self.high),
                          f": it holds {mass:.1e} of it (mean {self.mean!r}, sd {self.sd!r})")

    @property
    def bounded(self):
        """True when every value lies in a finite interval."""
        return self.kind != "normal" or (self.low is not None and self.high is not None)

    def _standard_bounds(self):
        alpha = -np.inf if self.low is None else (self.low - self.mean) / self.sd
        beta = np.inf if self.high is None else (self.high - self.mean) / self.sd
        return alpha, beta

    def ppf(self, u):
        """Quantile function: unit-interval samples to parameter values.

        Parameters
        ----------
        u : array_like
            Probabilities in [0, 1]. [-]

        Returns
        -------
        numpy.ndarray
            Parameter values with the shape of ``u``. [unit of the parameter]
            An untruncated normal maps 0 and 1 to -inf and +inf.

        Raises
        ------
        SensitivityError
            When ``u`` holds values outside [0, 1] or NaN.
        """
        u = np.asarray(u, dtype=float)
        outside = ~((u >= 0.0) & (u <= 1.0))
        if outside.any():
            _fail("u", "in [0, 1]", u[outside].ravel()[0], f" ({int(outside.sum())} of {u.size} values outside)")
        if self.kind == "uniform":
            return self.low + u * (self.high - self.low)
        if self.kind == "log_uniform":
            log_low, log_high = math.log(self.low), math.log(self.high)
            values = np.exp(log_low + u * (log_high - log_low))
            # exp(log(x)) can miss x by an ulp; keep the ends exact
            return np.where(u == 0.0, self.low, np.where(u == 1.0, self.high, values))
        if self.low is None and self.high is None:
            return stats.norm.ppf(u, loc=self.mean, scale=self.sd)
        alpha, beta = self._standard_bounds()
        values = stats.truncnorm.ppf(u, alpha, beta, loc=self.mean, scale=self.sd)
        return np.clip(values, -np.inf if self.low is None else self.low,
                       np.inf if self.high is None else self.high)

    def describe(self):
        """Short text such as ``uniform [0.2, 0.9]``."""
        if self.kind in ("uniform", "log_uniform"):
            return f"{self.kind} [{self.low:g}, {self.high:g}]"
        text = f"normal (mean {self.mean:g}, sd {self.sd:g})"
        if self.low is not None or self.high is not None:
            low = "-inf" if self.low is None else f"{self.low:g}"
            high = "inf" if self.high is None else f"{self.high:g}"
            text += f" truncated to [{low}, {high}]"
        return text


# --------------------------------------------------------------------------
# plans
# --------------------------------------------------------------------------

def _freeze(unit, rows, columns, what):
    unit = np.array(unit, dtype=float)
    if unit.shape != (rows, columns):
        raise SensitivityError(f"unit: {what} needs shape ({rows}, {columns}) (got {unit.shape})")
    if not np.all((unit >= 0.0) & (unit <= 1.0)):
        raise SensitivityError("unit: samples must lie in [0, 1]")
    unit.flags.writeable = False
    return unit


# eq=False: the plan holds an array, and two plans are the same plan only if
# they are the same object (element-wise == would be ambiguous)
@dataclass(frozen=True, eq=False)
class SobolPlan:
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

    def __post_init__(self):
        object.__setattr__(self, "names", _names(self.names))
        _power_of_two("base_samples", self.base_samples)
        _seed("seed", self.seed)
        object.__setattr__(self, "second_order", bool(self.second_order))
        object.__setattr__(self, "unit", _freeze(self.unit, self.rows, len(self.names), "this Sobol plan"))

    @property
    def rows_per_base_sample(self):
        """Rows each base sample contributes: D + 2, or 2 D + 2. [-]"""
        dimension = len(self.names)
        return 2 * dimension + 2 if self.second_order else dimension + 2

    @property
    def rows(self):
        """Number of model runs the plan asks for. [-]"""
        return self.base_samples * self.rows_per_base_sample

    def describe(self):
        """Settings in words, as used in error messages."""
        return (f"base {self.base_samples}, {len(self.names)} parameters, "
                f"second order {'on' if self.second_order else 'off'}")


@dataclass(frozen=True, eq=False)
class MorrisPlan:
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

    def __post_init__(self):
        object.__setattr__(self, "names", _names(self.names))
        _integer("trajectories", self.trajectories, 2)
        _levels(self.levels)
        _seed("seed", self.seed)
        object.__setattr__(self, "unit", _freeze(self.unit, self.rows, len(self.names), "this Morris plan"))

    @property
    def rows(self):
        """Number of model runs the plan asks for. [-]"""
        return self.trajectories * (len(self.names) + 1)

    def describe(self):
        """Settings in words, as used in error messages."""
        return f"{self.trajectories} trajectories, {len(self.names)} parameters, {self.levels} levels"


def _levels(levels):
    levels = _integer("levels", levels, 2, "an even integer >= 2")
    if levels % 2:
        _fail("levels", "an even integer >= 2", levels,
              ": with an odd count the Morris step does not pair the levels evenly and the sample is biased")
    return levels


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
    Uses ``SALib.sample.sobol.sample`` with ``scramble=True`` (Owen-type
    scrambling, so no points need skipping) and the given seed.
    """
    names = _names(names)
    base_samples = _power_of_two("base_samples", base_samples)
    seed = _seed("seed", seed)
    unit = _sobol_sample.sample(_unit_problem(names), base_samples, calc_second_order=bool(second_order),
                                scramble=True, seed=seed)
    return SobolPlan(names, base_samples, bool(second_order), seed, unit)


def morris_plan(names, trajectories=64, levels=4, seed=DEFAULT_SEED):
    """Make a Morris elementary-effects plan on the unit grid.

    Parameters
    ----------
    names : sequence of str
        Parameter names, unique.
    trajectories : int, optional
        Number of trajectories r, >= 2; the plan has ``r (D + 1)`` rows.
        Ten to fifty is the usual range for screening [4]; the default
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
    names = _names(names)
    trajectories = _integer("trajectories", trajectories, 2)
    levels = _levels(levels)
    seed = _seed("seed", seed)
    unit = _morris_sample.sample(_unit_problem(names), trajectories, num_levels=levels,
                                 optimal_trajectories=None, seed=seed)
    return MorrisPlan(names, trajectories, levels, seed, unit)


def _check_plan(plan, kinds, function):
    if not isinstance(plan, kinds):
        expected = " or ".join(k.__name__ for k in kinds)
        raise TypeError(f"{function}: plan must be a {expected} (got {type(plan).__name__})")


def plan_values(plan, distributions):
    """Physical parameter values of a plan's rows.

    Parameters
    ----------
    plan : SobolPlan or MorrisPlan
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
        are listed), a value is not a :class:`Distribution`, or a Morris
        plan meets an unbounded normal (its grid reaches u = 0 and 1,
        which map to infinite values).
    """
    _check_plan(plan, (SobolPlan, MorrisPlan), "plan_values")
    if not isinstance(distributions, dict):
        _fail("distributions", "a dict of parameter name to Distribution", type(distributions).__name__)
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
            _fail(f"distributions[{name!r}]", "a Distribution", type(distribution).__name__)
        if isinstance(plan, MorrisPlan) and not distribution.bounded:
            raise SensitivityError(
                f"distributions[{name!r}]: must be bounded for a Morris plan (got {distribution.describe()}): "
                "the Morris grid reaches u = 0 and 1, which map to -inf and +inf; give low and high")
        values[name] = distribution.ppf(plan.unit[:, column])
    return values


# --------------------------------------------------------------------------
# analysis
# --------------------------------------------------------------------------

def _outputs(plan, y, kind):
    """y as a float vector of exactly plan.rows finite values."""
    try:
        y = np.asarray(y, dtype=float)
    except (TypeError, ValueError) as exc:
        raise SensitivityError(f"y: must be numbers (got {type(y).__name__}: {exc})") from None
    if y.ndim == 2 and y.shape[1] == 1:
        y = y[:, 0]
    if y.ndim != 1:
        raise SensitivityError(f"y: must be one value per plan row, a vector (got shape {y.shape})")
    if y.size != plan.rows:
        message = f"y has {y.size} values but the {kind} plan has {plan.rows} rows ({plan.describe()})"
        if isinstance(plan, SobolPlan):
            other = plan.base_samples * (plan.rows_per_base_sample + len(plan.names) * (-1 if plan.second_order else 1))
            if y.size == other:
                message += (f"; {y.size} is the row count with second order "
                            f"{'off' if plan.second_order else 'on'}: was y made from another plan?")
        raise SensitivityError(message)
    bad = ~np.isfinite(y)
    if bad.any():
        nan = int(np.isnan(y).sum())
        first = int(np.flatnonzero(bad)[0])
        raise SensitivityError(
            f"y has {int(bad.sum())} non-finite values of {y.size} ({nan} NaN, {int(bad.sum()) - nan} infinite; "
            f"first at row {first}): every run of the plan is needed; rerun or repair those runs")
    return np.array(y)


def _analysis_seed(plan, seed):
    return _bootstrap_seed(plan.seed) if seed is None else _seed("seed", seed)


def _rank(values):
    """1-based rank, largest first; ties keep plan order."""
    order = np.argsort(-np.asarray(values, dtype=float), kind="stable")
    rank = np.empty(len(order), dtype=int)
    rank[order] = np.arange(1, len(order) + 1)
    return rank


def _sobol_indices(names, y, second_order, confidence_level, num_resamples, seed):
    """SALib's Sobol' estimators on checked outputs."""
    if np.ptp(y) == 0.0:
        raise SensitivityError(f"y: must vary (got {y.size} runs all equal to {y[0].item()!r}): "
                               "the variance shares are undefined for a constant output")
    return _sobol_analyze.analyze(_unit_problem(names), y, calc_second_order=second_order,
                                  num_resamples=num_resamples, conf_level=confidence_level,
                                  print_to_console=False, parallel=False, seed=seed)


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
    Estimators of Saltelli et al. (2010) [2] for S1 and ST and of
    Saltelli (2002) for S2, as implemented by ``SALib.analyze.sobol``.
    Estimates carry sampling error: small indices can come out slightly
    negative and ST slightly above 1.
    """
    _check_plan(plan, (SobolPlan,), "sobol_analyze")
    y = _outputs(plan, y, "Sobol")
    confidence_level = _confidence(confidence_level)
    num_resamples = _integer("num_resamples", num_resamples, 2)
    seed = _analysis_seed(plan, seed)
    result = _sobol_indices(plan.names, y, plan.second_order, confidence_level, num_resamples, seed)
    indices = pd.DataFrame({
        "parameter": list(plan.names),
        "S1": result["S1"], "S1_conf": result["S1_conf"],
        "ST": result["ST"], "ST_conf": result["ST_conf"],
    })
    indices["rank"] = _rank(indices["ST"])
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
    balanced design, so each level is a valid smaller study. Indices that
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
    _check_plan(plan, (SobolPlan,), "sobol_convergence")
    y = _outputs(plan, y, "Sobol")
    confidence_level = _confidence(confidence_level)
    num_resamples = _integer("num_resamples", num_resamples, 2)
    seed = _analysis_seed(plan, seed)
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
    _check_plan(plan, (MorrisPlan,), "morris_analyze")
    y = _outputs(plan, y, "Morris")
    confidence_level = _confidence(confidence_level)
    num_resamples = _integer("num_resamples", num_resamples, 2)
    seed = _analysis_seed(plan, seed)
    result = _morris_analyze.analyze(_unit_problem(plan.names), np.array(plan.unit), y,
                                     num_resamples=num_resamples, conf_level=confidence_level,
                                     print_to_console=False, num_levels=plan.levels, seed=seed)
    table = pd.DataFrame({
        "parameter": list(plan.names),
        "mu_star": np.asarray(result["mu_star"], dtype=float),
        "mu_star_conf": np.asarray(result["mu_star_conf"], dtype=float),
        "sigma": np.asarray(result["sigma"], dtype=float),
    })
    table["rank"] = _rank(table["mu_star"])
    table.attrs.update(confidence_level=confidence_level, trajectories=plan.trajectories, levels=plan.levels)
    return table


# --------------------------------------------------------------------------
# charts
# --------------------------------------------------------------------------

def _chart_path(path):
    path = Path(path)
    if path.suffix.lower() not in CHART_SUFFIXES:
        _fail("path", f"a file ending in {', '.join(CHART_SUFFIXES)}", str(path))
    return path


def _need_columns(table, columns, what):
    if not isinstance(table, pd.DataFrame):
        _fail(what, "a pandas DataFrame", type(table).__name__)
    missing = [c for c in columns if c not in table.columns]
    if missing:
        raise SensitivityError(f"{what}: lacks the column(s) {', '.join(missing)} "
                               f"(has {', '.join(map(str, table.columns))})")


def _clipped_interval(value, half_width):
    """Displayed value and asymmetric error-bar lengths, all within the display range."""
    low, high = INDEX_DISPLAY_RANGE
    value = np.asarray(value, dtype=float)
    half_width = np.nan_to_num(np.asarray(half_width, dtype=float))
    shown = np.clip(value, low, high)
    lower = np.clip(value - half_width, low, high)
    upper = np.clip(value + half_width, low, high)
    clipped = bool(np.any((value - half_width < low) | (value + half_width > high)))
    return shown, np.vstack([shown - lower, upper - shown]), clipped


def _level_text(table):
    level = table.attrs.get("confidence_level")
    return f"{100 * level:g} % confidence intervals" if level else "confidence intervals"


def _save(fig, path):
    path.parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(path, dpi=150)


def ranking_chart(table, path, title="Sensitivity ranking"):
    """Horizontal bars of S1 and ST with confidence intervals, by ST.

    Parameters
    ----------
    table : pandas.DataFrame
        The ``indices`` frame of :func:`sobol_analyze` (columns
        ``parameter, S1, S1_conf, ST, ST_conf``).
    path : str or pathlib.Path
        Output file; the format follows the suffix (.png, .svg or .pdf).
    title : str, optional
        Chart title.

    Returns
    -------
    matplotlib.figure.Figure
        The figure (not registered with pyplot, so nothing stays open).
        Its axes' y tick labels list the parameters from the top bar down,
        largest ST first.

    Notes
    -----
    Bars and interval whiskers are clipped to [0, 1.05] for display only;
    a note says so when it happened, and the unclipped estimates are
    printed in a column right of the plot. Colours: Okabe-Ito blue (S1)
    and orange (ST) [5].
    """
    _need_columns(table, SOBOL_COLUMNS[:5], "table")
    path = _chart_path(path)
    ordered = table.sort_values("ST", ascending=False, kind="stable").reset_index(drop=True)
    count = len(ordered)
    positions = np.arange(count)
    thickness = 0.38
    series = (("ST", ST_COLOUR, -thickness / 2, "ST, total (with interactions)"),
              ("S1", S1_COLOUR, thickness / 2, "S1, first order (alone)"))

    fig = Figure(figsize=(8.0, 1.7 + 0.5 * count), layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    whisker = {"ecolor": "#333333", "capsize": 3, "elinewidth": 1.0}
    clipped = False
    # the numbers go in a column right of the axes, where no bar can reach
    column = ax.get_yaxis_transform()
    for name, colour, offset, label in series:
        values, errors = ordered[name], ordered[f"{name}_conf"]
        shown, bars, cut = _clipped_interval(values, errors)
        clipped |= cut
        ax.barh(positions + offset, shown, height=thickness, color=colour, xerr=bars, error_kw=whisker, label=label)
        for y, value, error in zip(positions + offset, values, errors):
            # + 0.0 turns a rounded -0.00 into 0.00
            ax.text(1.015, y, f"{name} {round(value, 2) + 0.0:.2f} ± {error:.2f}", transform=column,
                    va="center", ha="left", fontsize=7.5, color="#333333")
    ax.set_yticks(positions, labels=list(ordered["parameter"]))
    ax.invert_yaxis()
    ax.set_xlim(*INDEX_DISPLAY_RANGE)
    ax.set_xlabel("Sobol index [-]")
    ax.grid(axis="x", color="#dddddd", linewidth=0.6)
    ax.set_axisbelow(True)
    fig.legend(loc="outside lower center", ncols=2, fontsize=8.5, frameon=False)
    fig.suptitle(title, fontsize=12)
    subtitle = ("S1 = share of output variance from the parameter alone; "
                f"ST = including its interactions.\nWhiskers: {_level_text(table)}")
    if "base_samples" in table.attrs:
        subtitle += f", {table.attrs['base_samples']} base samples"
    if clipped:
        subtitle += "; display clipped to [0, 1.05]"
    ax.set_title(subtitle, fontsize=8.5, color="#333333")
    _save(fig, path)
    return fig


def convergence_chart(conv_table, path, title="Convergence of Sobol indices"):
    """S1 and ST of each parameter against the base sample count.

    Parameters
    ----------
    conv_table : pandas.DataFrame
        The frame of :func:`sobol_convergence`.
    path : str or pathlib.Path
        Output file; the format follows the suffix (.png, .svg or .pdf).
    title : str, optional
        Chart title.

    Returns
    -------
    matplotlib.figure.Figure
        One panel per parameter (in the table's order), x axis log2 of the
        base sample count, whiskers the confidence intervals. Each panel
        has its own y range, from at most 0 to at least 0.1, so that small
        indices still show whether their intervals narrow.
    """
    _need_columns(conv_table, CONVERGENCE_COLUMNS, "conv_table")
    path = _chart_path(path)
    names = list(dict.fromkeys(conv_table["parameter"]))
    levels = np.sort(conv_table["base_samples"].unique())
    columns = min(len(names), 4)
    rows = math.ceil(len(names) / columns)
    fig = Figure(figsize=(2.9 * columns + 0.6, 2.5 * rows + 1.1), layout="constrained")
    FigureCanvasAgg(fig)
    axes = fig.subplots(rows, columns, squeeze=False).ravel()
    for index, (ax, name) in enumerate(zip(axes, names)):
        part = conv_table[conv_table["parameter"] == name].sort_values("base_samples")
        x = part["base_samples"].to_numpy(dtype=float)
        # nudge the two series apart on the log axis so the whiskers do not overlap
        for column, colour, marker, nudge, label in (("S1", S1_COLOUR, "o", 2 ** -0.06, "S1, first order"),
                                                     ("ST", ST_COLOUR, "s", 2 ** 0.06, "ST, total")):
            ax.errorbar(x * nudge, part[column], yerr=part[f"{column}_conf"], color=colour, marker=marker,
                        markersize=4.5, capsize=3, linewidth=1.3, label=label)
        ends = np.r_[part["S1"] - part["S1_conf"], part["ST"] - part["ST_conf"],
                     part["S1"] + part["S1_conf"], part["ST"] + part["ST_conf"]]
        low, high = min(0.0, float(np.nanmin(ends))), max(0.1, float(np.nanmax(ends)))
        margin = 0.08 * (high - low)
        ax.set_ylim(low - (margin if low < 0 else 0.3 * margin), high + margin)
        ax.axhline(0.0, color="#999999", linewidth=0.6)
        ax.set_title(name, fontsize=10)
        ax.set_xscale("log", base=2)
        ax.set_xticks(levels, labels=[str(int(n)) for n in levels])
        ax.minorticks_off()
        ax.grid(color="#eeeeee", linewidth=0.6)
        if index % columns == 0:
            ax.set_ylabel("Sobol index [-]")
        if index + columns >= len(names):
            ax.set_xlabel("base samples N [-]")
    for ax in axes[len(names):]:
        ax.set_visible(False)
    fig.legend(*axes[0].get_legend_handles_labels(), loc="outside lower center", ncols=2, fontsize=8.5,
               frameon=False)
    fig.suptitle(f"{title}\nflat lines and narrowing whiskers ({_level_text(conv_table)}) mean N was enough",
                 fontsize=10.5)
    _save(fig, path)
    return fig
