"""What the rig's release errors do to each grid cell, judged on the event.

Every grid cell is re-dropped ``tolerance.draws`` times with uniform errors
in release angle, height and spin (the ``robust`` stage), each toleranced
drop paired with the same drop released exactly (same restitution,
friction, ...). Per cell this module gives the probability of the event
under tolerance with its Wilson interval, and the flip rate: how often the
toleranced drop's outcome (event or not) differs from its exact partner's.
The mean change of the metric's value is kept as a secondary column; a
ratio that stays far above the threshold may move a lot while the outcome
never changes, so it does not decide anything.

References
----------
.. [1] Wilson, E. B. (1927). Probable inference, the law of succession, and
   statistical inference. J. Am. Stat. Assoc. 22:209-212.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.stats import norm

from .study import Study


def wilson_interval(successes, trials, confidence=0.95):
    """Wilson's score interval for a binomial proportion [1].

    Parameters
    ----------
    successes, trials : array_like of int
        Drops with the outcome, and drops in all (``trials`` > 0).
    confidence : float, optional
        Two-sided confidence level. [-]

    Returns
    -------
    low, high : numpy.ndarray
        Interval ends. [-] Unlike the normal approximation it stays inside
        [0, 1] and is not empty at 0 or ``trials`` successes.
    """
    k = np.asarray(successes, dtype=float)
    n = np.asarray(trials, dtype=float)
    z = norm.ppf(0.5 + confidence / 2)
    p = k / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z / (1 + z * z / n) * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n))
    return np.clip(centre - half, 0.0, 1.0), np.clip(centre + half, 0.0, 1.0)


def tolerance_effect(robust: pd.DataFrame, grid: pd.DataFrame) -> pd.DataFrame:
    """Per grid cell: the event under tolerance, its flip rate and the value's spread.

    Parameters
    ----------
    robust : pandas.DataFrame
        The ``robust`` stage's result table: columns ``cell``, ``pair``
        (row of the exact partner in ``grid``), ``value`` and ``event``.
    grid : pandas.DataFrame
        The ``grid`` stage's result table, in stage order (``value``,
        ``event``).

    Returns
    -------
    pandas.DataFrame
        Indexed by ``cell``: ``drops``; ``event_probability`` under
        tolerance [-] with its 95 % Wilson interval ``event_low``,
        ``event_high`` [-]; ``flip_rate`` [-], the share of toleranced
        drops whose outcome differs from their exact partner's (pairs where
        either would start inside the floor left out; NaN when none is
        left); ``mean_change``, the mean |value - partner's value| over the
        same pairs (the metric's unit, [-]); ``mean_value`` under
        tolerance; ``inside_floor_fraction`` [-].
    """
    partner_value = grid["value"].to_numpy()[robust["pair"].to_numpy()]
    partner_event = grid["event"].to_numpy(bool)[robust["pair"].to_numpy()]
    value = robust["value"].to_numpy(dtype=float)
    event = robust["event"].to_numpy(bool)
    both = ~np.isnan(value) & ~np.isnan(partner_value)
    frame = pd.DataFrame({"cell": robust["cell"].to_numpy(), "event": event, "value": value,
                          "inside": np.isnan(value),
                          "change": np.abs(value - partner_value),
                          "flip": np.where(both, event != partner_event, np.nan)})
    g = frame.groupby("cell", sort=True)
    drops = g.size()
    events = g["event"].sum()
    low, high = wilson_interval(events.to_numpy(), drops.to_numpy())
    return pd.DataFrame({"drops": drops, "event_probability": events / drops, "event_low": low,
                         "event_high": high, "flip_rate": g["flip"].mean(), "mean_change": g["change"].mean(),
                         "mean_value": g["value"].mean(), "inside_floor_fraction": g["inside"].mean()})


def goal_view(study: Study, effect: pd.DataFrame) -> pd.DataFrame:
    """The probability that a toleranced drop does what the study wants.

    Parameters
    ----------
    study : Study
        Its ``metric.goal`` (``seek``: the event; ``avoid``: its absence)
        and ``analyses.picks.target``.
    effect : pandas.DataFrame
        :func:`tolerance_effect`'s table.

    Returns
    -------
    pandas.DataFrame
        ``effect`` plus ``goal_probability`` [-], its Wilson interval
        ``goal_low``, ``goal_high`` [-] and ``meets_target``: the goal's
        probability reaches the target and fewer than half the drops would
        start inside the floor.
    """
    out = effect.copy()
    # drops that would start inside the floor are no drops: they count for
    # neither the event nor its absence
    out["goal_probability"] = (effect["event_probability"] if study.metric.goal == "seek"
                               else 1.0 - effect["inside_floor_fraction"] - effect["event_probability"])
    successes = np.rint(out["goal_probability"].to_numpy() * effect["drops"].to_numpy())
    out["goal_low"], out["goal_high"] = wilson_interval(successes, effect["drops"].to_numpy())
    out["meets_target"] = (out["goal_probability"] >= study.picks_settings.target) & (effect["inside_floor_fraction"] < 0.5)
    return out


def goal_words(study: Study, event_words: str) -> str:
    """What the goal's probability counts, in plain words, e.g. ``it happens:
    a later bounce rises above the first`` or, for avoid, ``it does not
    happen: ...`` (so a bright "goal met" colour never reads as the event)."""
    return f"{'it happens' if study.metric.goal == 'seek' else 'it does not happen'}: {event_words}"
