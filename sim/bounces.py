"""Group impacts into the bounces a camera sees, and rate each bounce.

An elongated body often strikes with one end and then, a few milliseconds
later, with the other. Filmed at ordinary frame rates that is one landing.

The rule
--------
Impact ``j + 1`` belongs to the same bounce as impact ``j`` when the flight
between them is shorter than ``merge_within`` (default 10 ms, one frame at
100 frames/s). The height of a bounce is the peak of its reference point in
the flight after the bounce's last impact. A drop's last bounce is
``complete`` only if that flight is at least ``merge_within`` long or the
drop has ended (otherwise a further impact could still join it).

The rebound ratio of a bounce is its height over the release height of the
same reference point (centre, lowest point ``bottom`` or ``top`` point).

An impact after which the body never leaves the floor (sustained contact:
a flight of length 0) ends no visible bounce; the impacts of such a last
group belong to no bounce (index 0), since nothing rose that a camera would
see.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .drop import CONTACT, COULD_VAULT, RAN_ALL, REFERENCES, DropResult

MERGE_WITHIN = 0.010  # [s]


@dataclass
class Bounces:
    """Bounces of each drop; per-bounce arrays have shape (drops, impacts).

    Attributes
    ----------
    index : ndarray of int
        Per impact: the 1-based bounce it belongs to (0 after the last impact).
    count : ndarray of int
        Complete bounces per drop.
    height : dict of ndarray
        Per reference point, the height of each bounce [m]; NaN past ``count``.
    ratio : dict of ndarray
        Per reference point, height / release height of that point [-].
    release_height : dict of ndarray
        Per reference point, its release height [m].
    merge_within : float
        The grouping threshold used. [s]
    """

    index: np.ndarray
    count: np.ndarray
    height: dict
    ratio: dict
    release_height: dict
    merge_within: float

    def best_later(self, reference="centre"):
        """Largest rebound ratio among bounces 2 and later; NaN if none. [-]"""
        later = self.ratio[reference][:, 1:]
        with np.errstate(invalid="ignore"):
            best = np.where(np.isnan(later).all(axis=1), np.nan, np.nanmax(np.where(np.isnan(later), -np.inf, later), axis=1)) if later.shape[1] else np.full(later.shape[0], np.nan)
        return best

    def later_beats_first(self, reference="centre"):
        """True where some later bounce rises higher than the first."""
        ratio = self.ratio[reference]
        return self.best_later(reference) > ratio[:, 0]

    def beats_release(self, reference="centre"):
        """True where some bounce rises above the release height of the point."""
        return np.nanmax(np.where(np.isnan(self.ratio[reference]), -np.inf, self.ratio[reference]), axis=1) > 1.0


def group_bounces(result: DropResult, merge_within: float = MERGE_WITHIN) -> Bounces:
    """Group each drop's impacts into visible bounces (see the module notes)."""
    if not merge_within >= 0:
        raise ValueError(f"merge_within must be >= 0 s, got {merge_within}")
    flight = result.impacts["flight"]
    n, k = flight.shape
    exists = np.arange(k)[None, :] < result.count[:, None]
    ended = result.status != RAN_ALL
    # impact j closes a bounce when the flight after it is long, or it is the
    # last impact of a drop that has ended
    last = exists & ((flight >= merge_within) | ((np.arange(k)[None, :] == result.count[:, None] - 1) & ended[:, None]))
    # sustained contact (the kernel's status) can only begin at a drop's last
    # impact, and no flight follows it
    in_contact = np.isin(result.status, (CONTACT, COULD_VAULT))
    grounded = in_contact[:, None] & (np.arange(k)[None, :] == result.count[:, None] - 1)
    closes = last & ~np.isnan(flight) & ~grounded
    opens = np.concatenate([exists[:, :1], exists[:, 1:] & closes[:, :-1]], axis=1)
    index = np.where(exists, np.cumsum(opens, axis=1), 0)
    count = closes.sum(axis=1)
    # the last group of a drop that ended in sustained contact is no bounce
    index = np.where(in_contact[:, None] & (index > count[:, None]), 0, index)
    # scatter the peaks of closing impacts into bounce slots
    slot = np.where(closes, np.cumsum(closes, axis=1) - 1, k)
    rows = np.broadcast_to(np.arange(n)[:, None], (n, k))
    height, ratio, release = {}, {}, {}
    for ref in REFERENCES:
        h = np.full((n, k + 1), np.nan)
        h[rows[closes], slot[closes]] = result.peak(ref)[closes]
        height[ref] = h[:, :k]
        release[ref] = result.release_height(ref)
        ratio[ref] = height[ref] / release[ref][:, None]
    return Bounces(index, count, height, ratio, release, merge_within)
