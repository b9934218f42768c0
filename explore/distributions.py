"""Distributions of uncertain parameters, as quantile functions.

Every random draw of a study goes through these: the grid stage's draws of
distributed quantities and the sensitivity plans alike map unit-interval
samples to physical values with :meth:`Distribution.ppf`, so the same plan
serves uniform, log-uniform and (truncated) normal parameters. Plain NumPy
and SciPy: no plotting and no SALib.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._arguments import SensitivityError, fail, real

__all__ = ["Distribution", "DISTRIBUTION_FIELDS", "SensitivityError"]

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
            fail("kind", f"one of {', '.join(DISTRIBUTION_FIELDS)}", self.kind)
        fields = DISTRIBUTION_FIELDS[self.kind]
        for name in ("low", "high", "mean", "sd"):
            value = getattr(self, name)
            if name in fields["required"]:
                if value is None:
                    fail(f"{self.kind}.{name}", "given", None)
            elif name not in fields["optional"]:
                if value is not None:
                    fail(f"{self.kind}.{name}", f"None (a {self.kind} distribution does not use it)", value)
                continue
            if value is not None:
                object.__setattr__(self, name, real(f"{self.kind}.{name}", value))
        if self.low is not None and self.high is not None and not self.low < self.high:
            fail(f"{self.kind}.high", f"greater than low = {self.low!r}", self.high)
        if self.kind == "log_uniform" and not self.low > 0.0:
            fail("log_uniform.low", "> 0", self.low)
        if self.kind == "normal":
            if not self.sd > 0.0:
                fail("normal.sd", "> 0", self.sd)
            if self.low is not None or self.high is not None:
                # a truncation window far out in a tail holds no probability
                # in floating point and its quantiles are meaningless
                alpha, beta = self._standard_bounds()
                mass = _stats().norm.cdf(beta) - _stats().norm.cdf(alpha)
                if not mass > 1e-12:
                    fail("normal.low/high", "a window holding some of the normal's probability", (self.low, self.high),
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
            fail("u", "in [0, 1]", u[outside].ravel()[0], f" ({int(outside.sum())} of {u.size} values outside)")
        if self.kind == "uniform":
            return self.low + u * (self.high - self.low)
        if self.kind == "log_uniform":
            log_low, log_high = math.log(self.low), math.log(self.high)
            values = np.exp(log_low + u * (log_high - log_low))
            # exp(log(x)) can miss x by an ulp; keep the ends exact
            return np.where(u == 0.0, self.low, np.where(u == 1.0, self.high, values))
        if self.low is None and self.high is None:
            return _stats().norm.ppf(u, loc=self.mean, scale=self.sd)
        alpha, beta = self._standard_bounds()
        values = _stats().truncnorm.ppf(u, alpha, beta, loc=self.mean, scale=self.sd)
        return np.clip(values, -np.inf if self.low is None else self.low,
                       np.inf if self.high is None else self.high)

    def describe(self):
        """The distribution in words.

        Returns
        -------
        str
            Short text such as ``uniform [0.2, 0.9]`` or ``normal (mean
            1, sd 0.2) truncated to [0.5, inf]``.
        """
        if self.kind in ("uniform", "log_uniform"):
            return f"{self.kind} [{self.low:g}, {self.high:g}]"
        text = f"normal (mean {self.mean:g}, sd {self.sd:g})"
        if self.low is not None or self.high is not None:
            low = "-inf" if self.low is None else f"{self.low:g}"
            high = "inf" if self.high is None else f"{self.high:g}"
            text += f" truncated to [{low}, {high}]"
        return text


def _stats():
    """scipy.stats, imported when a normal is first evaluated (it takes most
    of a second; validating a study needs none of it)."""
    from scipy import stats
    return stats
