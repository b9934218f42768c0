"""How precise the release must be: the largest angle, height and spin
tolerances that keep the goal's probability at or above a target at one
drop condition (docs/physics.md section 12).

The probability is the robustness stage's own Monte Carlo
(:func:`explore.plan.grid_frame`, :func:`explore.plan.robust_frame`,
:func:`explore.metrics.simulate_frame`, :func:`explore.under_tolerance.goal_view`)
on the study fixed at the condition, with ``drops`` draws. Its uniform
errors are ``half * (2 u - 1)`` with the same ``u`` at every tolerance
(common random numbers: the same seed every time), so between two
tolerances only the tolerance changes, and a bisection over it converges
on one sample instead of chasing noise.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hopscape.sim import GRAVITY

from ..metrics import simulate_frame
from ..plan import grid_frame, robust_frame
from ..study import COLUMN, Study
from ..under_tolerance import goal_view, tolerance_effect

#: Bisection steps: the tolerance is bracketed within 1/65536 of its search range
#: (the range is wide, so that an answer near its bottom is still resolved).
STEPS = 16

QUANTITIES_TOLERATED = ("angle", "height", "spin")


class GoalAt:
    """The goal's probability at one condition as a function of the release tolerance.

    Parameters
    ----------
    study : Study
        The study fixed at the condition (:func:`explore.rig.conditions.at_condition`).
    drops : int
        Monte Carlo drops per evaluation (the part-to-part scatter of the
        distributed quantities is drawn once, then re-dropped with errors).
    """

    def __init__(self, study: Study, drops: int):
        self.study = study.model_copy(update={"analyses": study.analyses.model_copy(update={"draws": drops})})
        self.drops = drops
        self.grid = simulate_frame(self.study, grid_frame(self.study))
        self.evaluations = 0

    def probability(self, angle=0.0, height=0.0, spin=0.0):
        """The goal's probability with uniform release errors of these half-widths.

        Parameters
        ----------
        angle, height, spin : float
            Half-widths [deg], [m], [rad/s].

        Returns
        -------
        float
            Share of the drops that do what the study wants (the event to
            seek it, its absence to avoid it). [-]
        """
        tolerance = self.study.tolerance.model_copy(update={"angle": angle, "height": height, "spin": spin,
                                                           "draws": self.drops})
        study = self.study.model_copy(update={"tolerance": tolerance})
        robust = simulate_frame(study, robust_frame(study, self.grid))
        self.evaluations += 1
        return float(goal_view(study, tolerance_effect(robust, self.grid))["goal_probability"].iloc[0])

    def mean(self, name):
        """Mean of a quantity over the condition's drops (its study unit)."""
        return float(self.grid[COLUMN[name]].mean())


@dataclass(frozen=True)
class Bracket:
    """The tolerance search's answer for one quantity (or a common factor)."""

    name: str
    low: float          # largest tolerance found that meets the target [unit of the quantity]
    high: float         # smallest tried that misses it (NaN: none within the range)
    p_low: float        # the goal's probability at low [-]
    p_high: float       # ... at high [-] (NaN with high)
    limit: float        # the top of the search range [unit]

    def words(self, scale=1.0, unit=""):
        """What a bracket at an end of the range means, or '' (values x ``scale``, in ``unit``)."""
        if self.low == 0 and self.p_low != self.p_low:
            return "not met even with an exact release"
        if self.high != self.high:
            return f"met up to the whole range searched ({self.limit * scale:.3g} {unit})".replace(" )", ")")
        return ""


def largest_tolerance(goal_at, target, name, limit, steps=STEPS):
    """Bisection for the largest tolerance that keeps the goal at ``target``.

    Parameters
    ----------
    goal_at : callable
        ``goal_at(x) -> probability`` for the searched variable ``x``.
    target : float
        The goal's probability to keep. [-]
    name : str
        What is searched (``angle``, ``height``, ``spin``, ``together``).
    limit : float
        Top of the search range (bottom: 0).
    steps : int, optional

    Returns
    -------
    Bracket
        ``p(low) >= target > p(high)`` on the sample, ``high - low =
        limit / 2^steps``; when the exact release misses the target, low
        is 0 and ``p_low`` NaN; when the top of the range still meets it,
        ``high`` is NaN.

    Notes
    -----
    A bisection assumes the probability falls as the tolerance widens; a
    condition where it rises again (a wider scatter reaching a better
    region) can have larger tolerances that also meet the target.
    """
    p0 = goal_at(0.0)
    if p0 < target:
        return Bracket(name, 0.0, 0.0, np.nan, p0, limit)
    p_top = goal_at(limit)
    if p_top >= target:
        return Bracket(name, limit, np.nan, p_top, np.nan, limit)
    low, high, p_low, p_high = 0.0, limit, p0, p_top
    for _ in range(steps):
        middle = (low + high) / 2
        p = goal_at(middle)
        if p >= target:
            low, p_low = middle, p
        else:
            high, p_high = middle, p
    return Bracket(name, low, high, p_low, p_high, limit)


def search_limits(goal: GoalAt, reach):
    """Top of each quantity's search range at a condition.

    Angle: 45 deg (a release jig that bad is no jig). Height: the mean
    release height itself. Spin: twice the spin whose end speed equals the
    impact speed of a fall from the mean height, ``2 sqrt(2 g h) / reach``.
    """
    height = goal.mean("height")
    return {"angle": 45.0, "height": height, "spin": 2 * np.sqrt(2 * GRAVITY * height) / reach}


def release_tolerances(goal: GoalAt, target, reach):
    """Each quantity alone (the others exact), then all three together.

    Together: the largest common fraction ``k`` of the three alone answers
    (``low``) that still meets the target with all three applied at once.

    Returns
    -------
    list of Bracket
        ``angle`` [deg], ``height`` [m], ``spin`` [rad/s] and ``together``
        (the fraction ``k`` [-]).
    """
    limits = search_limits(goal, reach)
    alone = [largest_tolerance(lambda x, n=name: goal.probability(**{n: x}), target, name, limits[name])
             for name in QUANTITIES_TOLERATED]
    each = {b.name: b.low for b in alone}
    together = largest_tolerance(lambda k: goal.probability(**{n: k * v for n, v in each.items()}), target,
                                 "together", 1.0)
    return alone + [together]
