"""Checks every sensitivity method shares: names, seeds, plans and outputs.

Where SALib is lenient these are strict:

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
"""
from __future__ import annotations

import numbers
from typing import ClassVar

import numpy as np

from .._arguments import SensitivityError, fail, integer, real

#: Seed used when a caller gives none. A study should set its own; this one
#: only makes a bare call repeatable.
DEFAULT_SEED = 1

#: Bootstrap resamples for confidence intervals. SALib's default is 100; 200
#: halves the Monte Carlo wobble of the interval width for little cost.
DEFAULT_RESAMPLES = 200


def seed(field, value):
    """A seed: an integer >= 1, as an int; else a :class:`SensitivityError` saying why 0 and None would not repeat."""
    why = (": SALib treats a seed of 0 as 'no seed' and None as fresh entropy, "
           "so results would not repeat; give a positive integer")
    if value is None or isinstance(value, bool) or not isinstance(value, numbers.Integral) or value < 1:
        fail(field, "an integer >= 1", value, why)
    return int(value)


def names(given):
    """Parameter names, checked.

    Parameters
    ----------
    given : sequence of str
        The names (one string alone is refused).

    Returns
    -------
    tuple of str
        The names, at least one, each non-empty, none repeated.
    """
    if isinstance(given, str):
        fail("names", "a sequence of parameter names, not one string", given)
    given = tuple(given)
    if not given:
        fail("names", "at least one parameter name", given)
    for name in given:
        if not isinstance(name, str) or not name.strip():
            fail("names", "non-empty strings", name)
    repeated = sorted({n for n in given if given.count(n) > 1})
    if repeated:
        fail("names", "unique", given, f": repeated {', '.join(repeated)}")
    return given


def unit_problem(parameter_names):
    """SALib problem on the unit hypercube; distributions are applied later.

    Parameters
    ----------
    parameter_names : tuple of str

    Returns
    -------
    dict
        SALib's ``num_vars``, ``names`` and ``bounds`` (all [0, 1]).
    """
    return {"num_vars": len(parameter_names), "names": list(parameter_names),
            "bounds": [[0.0, 1.0]] * len(parameter_names)}


def freeze(unit, rows, columns, what):
    """A read-only copy of a unit design, checked for shape and range.

    Parameters
    ----------
    unit : array_like
        The design, one row per model run, one column per parameter. [-]
    rows, columns : int
        The shape the plan's settings call for. [-]
    what : str
        The plan in words (``this Sobol plan``), for the message.

    Returns
    -------
    numpy.ndarray
        A read-only float copy. [-]
    """
    unit = np.array(unit, dtype=float)
    if unit.shape != (rows, columns):
        raise SensitivityError(f"unit: {what} needs shape ({rows}, {columns}) (got {unit.shape})")
    if not np.all((unit >= 0.0) & (unit <= 1.0)):
        raise SensitivityError("unit: samples must lie in [0, 1]")
    unit.flags.writeable = False
    return unit


class Plan:
    """What every method's plan shares; each method's plan is a frozen dataclass of its own.

    A subclass has the fields ``names``, its settings, ``seed`` and
    ``unit``, a ``rows`` property, ``describe()``, and the class attributes
    below. On construction the names are checked, then the method's
    settings (:meth:`_check_settings`), the seed and the design's shape.
    """

    #: the method's key in explore.sensitivity.METHODS
    method: ClassVar[str]
    #: its name in messages
    label: ClassVar[str]
    #: why every distribution must be bounded, or None when unbounded ones are fine
    needs_bounded: ClassVar[str | None] = None

    def __post_init__(self):
        object.__setattr__(self, "names", names(self.names))
        self._check_settings()
        seed("seed", self.seed)
        object.__setattr__(self, "unit", freeze(self.unit, self.rows, len(self.names), f"this {self.label} plan"))

    def _check_settings(self):
        raise NotImplementedError

    def explain_row_count(self, count):
        """Why ``count`` outputs might not fit: a hint for the row-count message.

        Parameters
        ----------
        count : int
            Outputs given. [-]

        Returns
        -------
        str
            ``""`` here; a method whose other settings change the row count
            names them.
        """
        return ""


def check_plan(plan, kinds, function):
    """Refuse a plan of another class (a programming error, not bad input).

    Parameters
    ----------
    plan : object
    kinds : tuple of type
        The plan classes allowed.
    function : str
        The caller's name, for the message.

    Raises
    ------
    TypeError
        Unless ``plan`` is an instance of one of ``kinds``.
    """
    if not isinstance(plan, kinds):
        expected = " or ".join(k.__name__ for k in kinds)
        raise TypeError(f"{function}: plan must be a {expected} (got {type(plan).__name__})")


def _outputs(plan, y):
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
        raise SensitivityError(f"y has {y.size} values but the {plan.label} plan has {plan.rows} rows "
                               f"({plan.describe()}){plan.explain_row_count(y.size)}")
    bad = ~np.isfinite(y)
    if bad.any():
        nan = int(np.isnan(y).sum())
        first = int(np.flatnonzero(bad)[0])
        raise SensitivityError(
            f"y has {int(bad.sum())} non-finite values of {y.size} ({nan} NaN, {int(bad.sum()) - nan} infinite; "
            f"first at row {first}): every run of the plan is needed; rerun or repair those runs")
    return np.array(y)


def _bootstrap_seed(plan_seed):
    """Seed for the bootstrap resampling, derived from the plan's seed.

    A separate stream from the one that scrambled the design, and never 0
    (SALib's Sobol analysis would read 0 as 'no seed').
    """
    state = int(np.random.SeedSequence([plan_seed, 0x5EED]).generate_state(1, dtype=np.uint32)[0])
    return state or 1


def analysis_inputs(plan, kind, function, y, confidence_level, num_resamples, bootstrap_seed):
    """Check what every analysis takes, in one order, before any estimation.

    Parameters
    ----------
    plan : object
        The plan ``y`` was computed on.
    kind : type
        The plan class the analysis needs.
    function : str
        The analysis's name, for a wrong plan's ``TypeError``.
    y : array_like
        One model output per plan row. [unit of the output]
    confidence_level : float
        In (0, 1). [-]
    num_resamples : int
        Bootstrap resamples, >= 2. [-]
    bootstrap_seed : int or None
        >= 1; None derives one from ``plan.seed``.

    Returns
    -------
    tuple
        ``(y, confidence_level, num_resamples, bootstrap_seed)``: y a float
        vector of ``plan.rows`` finite values, the rest as plain numbers.
    """
    check_plan(plan, (kind,), function)
    y = _outputs(plan, y)
    allowed = "a number strictly between 0 and 1"
    if not 0.0 < real("confidence_level", confidence_level, allowed) < 1.0:
        fail("confidence_level", allowed, confidence_level)
    num_resamples = integer("num_resamples", num_resamples, 2)
    bootstrap_seed = _bootstrap_seed(plan.seed) if bootstrap_seed is None else seed("seed", bootstrap_seed)
    return y, float(confidence_level), num_resamples, bootstrap_seed


def rank(values):
    """1-based rank, largest first; ties keep plan order.

    Parameters
    ----------
    values : array_like
        One value per parameter, in plan order. [any unit]

    Returns
    -------
    numpy.ndarray of int
        The rank of each value, 1 for the largest.
    """
    order = np.argsort(-np.asarray(values, dtype=float), kind="stable")
    ranks = np.empty(len(order), dtype=int)
    ranks[order] = np.arange(1, len(order) + 1)
    return ranks
