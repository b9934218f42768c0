"""Words the commands share: warnings and the ``--strict`` switch."""
from __future__ import annotations

import sys

from .errors import InputError

STRICT_HELP = "treat warnings about implausible values (units mixed up?) as errors (exit 2)"


def report_warnings(lines, strict):
    """Print each warning as ``hopscape: warning: ...`` on stderr.

    Parameters
    ----------
    lines : iterable of str
        One warning each (``file:line:col: field: message`` for study files).
    strict : bool
        Refuse them as bad input instead (:class:`InputError`, exit 2).
    """
    lines = list(lines)
    if strict and lines:
        raise InputError([f"{line} (--strict)" for line in lines])
    for line in lines:
        print(f"hopscape: warning: {line}", file=sys.stderr)
