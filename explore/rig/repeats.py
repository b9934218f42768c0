"""How many drops the rig must make: to estimate a probability, and to tell
two conditions apart (docs/physics.md section 12).

References
----------
.. [1] Wilson, E. B. (1927). Probable inference, the law of succession, and
   statistical inference. J. Am. Stat. Assoc. 22:209-212.
.. [2] Fleiss, J. L., Tytun, A. & Ury, H. K. (1980). A simple approximation
   for calculating sample sizes for comparing independent proportions.
   Biometrics 36:343-346; Fleiss, J. L. (1981). Statistical Methods for
   Rates and Proportions, 2nd ed., Wiley, section 3.2.
"""
from __future__ import annotations

import math

import numpy as np
from scipy.stats import norm

from ..under_tolerance import wilson_interval

#: Most drops a plan searches over; beyond it the answer is "more than this". [-]
MOST_DROPS = 1_000_000


def wilson_half_width(probability, drops, confidence=0.95):
    """Half the width of Wilson's interval [1] when a share ``probability``
    of ``drops`` drops show the event. [-]"""
    drops = np.asarray(drops, dtype=float)
    low, high = wilson_interval(probability * drops, drops, confidence)
    return (high - low) / 2


def drops_to_estimate(probability, half_width=0.05, confidence=0.95):
    """Fewest drops whose Wilson interval [1] is within ``+-half_width``.

    Parameters
    ----------
    probability : float
        The event's probability expected (planning value; 0.5 is the worst
        case). [-]
    half_width : float, optional
        Wanted half-width of the interval, e.g. 0.05 for +-5 percentage
        points. [-]
    confidence : float, optional
        Two-sided confidence level. [-]

    Returns
    -------
    int
        The smallest ``n`` whose half-width is at most ``half_width``;
        :data:`MOST_DROPS` + 1 when none up to it is. [-]

    Notes
    -----
    Every ``n`` up to :data:`MOST_DROPS` is tried at once (the half-width is
    not monotone in ``n`` at every probability near 0 or 1 once clipped to
    [0, 1], so the first ``n`` from which it stays within is returned). At
    ``probability = 0.5`` the answer has the closed form
    ``ceil((z / (2 h))^2 - z^2)``.
    """
    if not 0.0 <= probability <= 1.0:
        raise ValueError(f"probability must be in [0, 1], got {probability}")
    if not 0.0 < half_width < 0.5:
        raise ValueError(f"half_width must be in (0, 0.5), got {half_width}")
    n = np.arange(1, MOST_DROPS + 1)
    wide = wilson_half_width(probability, n, confidence) > half_width * (1 + 1e-12)
    still = np.flatnonzero(wide)
    return int(still[-1] + 2) if still.size else 1


def drops_to_tell_apart(p1, p2, alpha=0.05, power=0.8, continuity=True):
    """Drops per condition for a two-sided test of two proportions [2].

    Parameters
    ----------
    p1, p2 : float
        The two conditions' event probabilities. [-]
    alpha : float, optional
        Two-sided significance level. [-]
    power : float, optional
        Chance to find the difference when it is as stated. [-]
    continuity : bool, optional
        Fleiss, Tytun & Ury's continuity correction (the book's tables use
        it); without it the plain normal-approximation formula.

    Returns
    -------
    int or float
        Drops at each condition (``ceil``); ``inf`` when ``p1 == p2``. [-]

    Notes
    -----
    ``n' = (z_{1-alpha/2} sqrt(2 pbar qbar) + z_{power} sqrt(p1 q1 + p2 q2))^2 / (p1 - p2)^2``
    with ``pbar`` the mean of the two and ``q = 1 - p``; corrected,
    ``n = n'/4 (1 + sqrt(1 + 4 / (n' |p1 - p2|)))^2`` (Fleiss 1981, eqs.
    3.14 and 3.17 as recalled).
    """
    for name, p in (("p1", p1), ("p2", p2)):
        if not 0.0 <= p <= 1.0:
            raise ValueError(f"{name} must be in [0, 1], got {p}")
    delta = abs(p1 - p2)
    if delta == 0:
        return math.inf
    mean = (p1 + p2) / 2
    z_alpha, z_power = norm.ppf(1 - alpha / 2), norm.ppf(power)
    plain = (z_alpha * math.sqrt(2 * mean * (1 - mean))
             + z_power * math.sqrt(p1 * (1 - p1) + p2 * (1 - p2))) ** 2 / delta ** 2
    if not continuity:
        return math.ceil(plain)
    return math.ceil(plain / 4 * (1 + math.sqrt(1 + 4 / (plain * delta))) ** 2)
