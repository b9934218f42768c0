"""Argument checks with one message shape: ``<field>: must be <allowed> (got <value>)``.

Shared by :mod:`explore.distributions` and :mod:`explore.sensitivity`, whose
errors a user can fix from the message alone.
"""
from __future__ import annotations

import math
import numbers

import numpy as np

from .errors import InputError


class SensitivityError(InputError, ValueError):
    """A sensitivity setting or input a user can fix.

    A ``ValueError`` for Python callers and an
    :class:`explore.errors.InputError` for the command line, which reports
    it as bad input.
    """


def fail(field, allowed, value, why=""):
    """Raise :class:`SensitivityError` as ``field: must be allowed (got value)why``.

    Parameters
    ----------
    field : str
        Name of the argument or setting, as the user wrote it.
    allowed : str
        The allowed values in words.
    value : object
        The value given (NumPy scalars are shown as plain Python numbers).
    why : str, optional
        Further explanation appended to the message.
    """
    if isinstance(value, np.generic):
        value = value.item()  # 2.5, not np.float64(2.5)
    raise SensitivityError(f"{field}: must be {allowed} (got {value!r}){why}")


def real(field, value, allowed="a finite number"):
    """A finite real number (not a bool), as a float; else :func:`fail` (NaN and infinities too)."""
    if isinstance(value, bool) or not isinstance(value, numbers.Real) or not math.isfinite(value):
        fail(field, allowed, value)
    return float(value)


def integer(field, value, minimum, allowed=None):
    """An integer (not a bool, not ``2.0``) of at least ``minimum``, as an int; else :func:`fail`.

    ``allowed`` words the allowed values (default ``an integer >= minimum``).
    """
    allowed = allowed or f"an integer >= {minimum}"
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or value < minimum:
        fail(field, allowed, value)
    return int(value)
