"""The kinds of metric a study can judge its drops by, declared once.

A metric kind turns what happened in each drop (the rebound ratios of its
visible bounces, for the study's reference point) into the study's
``value`` per drop, and says when that value counts as the event the study
seeks or avoids. The study schema, the result columns, the maps' wording and
the report are all built from these declarations: a new kind is one entry
here and its tests in ``tests/test_metric_kinds.py``.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

#: Words for each reference point.
POINT_WORDS = {"centre": "centre", "bottom": "lowest point", "top": "top point"}


@dataclass(frozen=True)
class Outcome:
    """What the metric kinds read, for a set of drops.

    Parameters
    ----------
    ratios : numpy.ndarray
        Rebound ratio of each visible bounce of the reference point (peak
        height / its release height), shape (drops, bounces); 0 where a drop
        had fewer bounces. [-]
    heights : numpy.ndarray, optional
        Peak height of each visible bounce of the reference point above the
        floor, same shape; 0 where a drop had fewer bounces. [m]
    contact : dict, optional
        Per drop, from the contact model (:func:`explore.metrics.drop_loads`):
        ``peak_force`` (largest over its impacts) [N] and
        ``breakage_probability`` (that some impact breaks it) [-].
    """

    ratios: np.ndarray
    heights: np.ndarray = None
    contact: dict = None

    @property
    def best_later(self):
        """The largest ratio of bounce 2 and later (0 with one bounce). [-]"""
        if self.ratios.shape[1] < 2:
            return np.zeros(self.ratios.shape[0])
        return self.ratios[:, 1:].max(axis=1)

    def of_bounce(self, bounce):
        """Ratio of ``bounce``: ``"later"`` (best later), ``"first"`` or a number. [-]"""
        if bounce == "later":
            return self.best_later
        if bounce == "first":
            return self.ratios[:, 0]
        return self.ratios[:, int(bounce) - 1]

    def height_of(self, bounce):
        """Peak height of ``bounce`` (``"later"``: the highest later one) [m]."""
        if bounce == "later":
            return self.heights[:, 1:].max(axis=1) if self.heights.shape[1] > 1 else np.zeros(len(self.heights))
        if bounce == "first":
            return self.heights[:, 0]
        return self.heights[:, int(bounce) - 1]

    @property
    def beats_release(self):
        """Some bounce rises above the release height of the reference point."""
        return self.ratios.max(axis=1) > 1.0

    @property
    def beats_first(self):
        """A later bounce rises above the first."""
        return self.best_later > self.ratios[:, 0]


def _bounce_words(bounce):
    return {"later": "best later bounce", "first": "first bounce"}.get(bounce, f"bounce {bounce}")


@dataclass(frozen=True)
class MetricKind:
    """One kind of metric.

    Parameters
    ----------
    name : str
        Value of ``metric.kind`` in study files.
    summary : str
        One line for help texts and the study template.
    is_flag : bool
        True when the value is 0 or 1 (the event itself); maps then show
        probabilities, never medians.
    value : callable
        ``value(outcome, metric) -> ndarray``: the study's value per drop.
    words : callable
        ``words(metric) -> (what the value is, what the event is)``.
    uses_threshold : bool
        Whether ``metric.threshold`` decides the event.
    uses_bounce : bool
        Whether ``metric.bounce`` chooses what is measured.
    uses_limit : bool
        Whether ``metric.limit`` (a height [m]) decides the event; the study
        file then requires it, and refuses it for the other kinds.
    uses_force_limit : bool
        Whether ``metric.force_limit`` (a force [N]) decides the event
        (required then, refused otherwise).
    needs : tuple of str
        Settings of the contact model the kind reads (``"materials"``,
        ``"breakage"``); the study file requires them.
    """

    name: str
    summary: str
    is_flag: bool
    value: Callable
    words: Callable
    uses_threshold: bool = False
    uses_bounce: bool = False
    uses_limit: bool = False
    uses_force_limit: bool = False
    needs: tuple = ()

    def event(self, value, metric):
        """The event per drop from its value: above the threshold or the
        limit, or the flag."""
        value = np.asarray(value, dtype=float)
        level = (metric.threshold if self.uses_threshold else metric.limit if self.uses_limit
                 else metric.force_limit if self.uses_force_limit else 0.5)
        with np.errstate(invalid="ignore"):
            return value > level


def _ratio_words(metric):
    point, which = POINT_WORDS[metric.reference], _bounce_words(metric.bounce)
    return (f"rebound ratio of the {which} ({point} height / its release height)",
            f"{which} above {metric.threshold:g} x the release height of the {point}")


#: Every metric kind, by name.
METRIC_KINDS = {kind.name: kind for kind in (
    MetricKind(
        "ratio", "rebound ratio of a bounce (peak height / release height of the reference point)",
        is_flag=False, uses_threshold=True, uses_bounce=True,
        value=lambda outcome, metric: outcome.of_bounce(metric.bounce),
        words=_ratio_words),
    MetricKind(
        "beats_release", "some bounce rises above the release height of the reference point",
        is_flag=True,
        value=lambda outcome, metric: outcome.beats_release.astype(float),
        words=lambda metric: (f"a bounce beats the release height of the {POINT_WORDS[metric.reference]}",
                              f"a bounce rises above the release height of the {POINT_WORDS[metric.reference]}")),
    MetricKind(
        "later_over_first", "height of the best later bounce / height of the first bounce",
        is_flag=False, uses_threshold=True,
        value=lambda outcome, metric: np.divide(outcome.best_later, outcome.ratios[:, 0],
                                                out=np.zeros(len(outcome.ratios)), where=outcome.ratios[:, 0] > 0),
        words=lambda metric: (f"best later bounce / first bounce ({POINT_WORDS[metric.reference]} heights)",
                              f"a later bounce rises above {metric.threshold:g} x the first "
                              f"({POINT_WORDS[metric.reference]})")),
    MetricKind(
        "clears", "a bounce's peak height above the floor [m] against a limit (a chute lip, a guard)",
        is_flag=False, uses_bounce=True, uses_limit=True,
        value=lambda outcome, metric: outcome.height_of(metric.bounce),
        words=lambda metric: (f"peak height of the {POINT_WORDS[metric.reference]} in the "
                              f"{_bounce_words(metric.bounce)} [m]",
                              f"the {POINT_WORDS[metric.reference]} clears {metric.limit * 1e3:g} mm in the "
                              f"{_bounce_words(metric.bounce)}")),
    MetricKind(
        "beats_first", "a later bounce rises above the first",
        is_flag=True,
        value=lambda outcome, metric: outcome.beats_first.astype(float),
        words=lambda metric: (f"a later bounce beats the first ({POINT_WORDS[metric.reference]})",
                              f"a later bounce rises above the first ({POINT_WORDS[metric.reference]})")),
    MetricKind(
        "peak_force", "largest normal contact force of the drop's impacts [N] against force_limit (Hertz contact "
        "with calibrated damping; needs the body and floor materials)",
        is_flag=False, uses_force_limit=True, needs=("materials",),
        value=lambda outcome, metric: outcome.contact["peak_force"],
        words=lambda metric: ("largest contact force of the drop's impacts [N]",
                              f"an impact's contact force exceeds {metric.force_limit:g} N")),
    MetricKind(
        "breakage", "probability that some impact of the drop breaks the body (Vogel & Peukert master curve; needs "
        "the materials and the body's breakage_f_mat and breakage_w_min)",
        is_flag=False, uses_threshold=True, needs=("materials", "breakage"),
        value=lambda outcome, metric: outcome.contact["breakage_probability"],
        words=lambda metric: ("probability that an impact breaks the body [-]",
                              f"the breakage probability is above {metric.threshold:g}")),
)}
