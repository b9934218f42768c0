"""A filmed drop -> one row per frame: centre, axis angle, quality.

The output is the track contract the calibration reads: columns
:data:`COLUMNS`. Frames where the body is lost, touches the edge of the
tracked region or looks unlike itself (:data:`LEAST_QUALITY`) keep their
``frame`` and ``time`` and leave ``x``, ``y``, ``angle`` empty: a gap is
honest, a guess is not.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError
from .silhouette import BACKGROUND_FRAMES, background, measure

#: The track's columns, in order (the calibration reads them by name).
COLUMNS = ("frame", "time", "x", "y", "angle", "quality")
#: Below this quality a frame's centre and angle are left empty: a blob of
#: under half (or over twice) the body's usual area is part of it hidden,
#: or merged with a shadow or a second object.
LEAST_QUALITY = 0.5
#: Below this ratio of the blob's standard deviations along and across its
#: axis the axis is not defined well enough to give an angle (a body seen
#: end on, a sphere); the centre is still given.
LEAST_ELONGATION = 1.1


@dataclass(frozen=True)
class Region:
    """The part of each frame that is tracked: ``x``, ``y`` of its top-left
    pixel, ``width``, ``height`` [pixels]."""

    x: int
    y: int
    width: int
    height: int

    @classmethod
    def parse(cls, text, frame_width, frame_height):
        """From ``--roi X,Y,W,H``, checked against the frame's size."""
        parts = text.split(",")
        try:
            x, y, w, h = (int(p) for p in parts)
        except ValueError:
            raise InputError(f"--roi must be X,Y,W,H in whole pixels (top-left corner, width, height), "
                             f"got {text!r}") from None
        if x < 0 or y < 0 or w < 8 or h < 8 or x + w > frame_width or y + h > frame_height:
            raise InputError(f"--roi {text} must lie inside the {frame_width}x{frame_height} frame and be at least "
                             f"8x8 pixels (X >= 0, Y >= 0, X+W <= {frame_width}, Y+H <= {frame_height})")
        return cls(x, y, w, h)

    def cut(self, image):
        return image[self.y:self.y + self.height, self.x:self.x + self.width]


def track_pixels(frames, region=None, progress=None):
    """Track the body through every frame, in pixels.

    Parameters
    ----------
    frames : hopscape.video.frames.Frames
    region : Region, optional
        The tracked part of each frame (default: the whole frame).
    progress : callable, optional
        ``progress(iterable, total, words)`` wrapping each pass over the
        frames (a progress bar): the background sample, then the tracking.

    Returns
    -------
    pandas.DataFrame
        :data:`COLUMNS` plus ``length`` [pixels] and ``why`` (empty, or why
        the frame has no position: ``lost``, ``edge``, ``quality``); ``x``,
        ``y`` in the full frame's pixels (row downwards) and ``angle`` [deg]
        in the image's own frame (from +x towards +y, clockwise on screen).
    """
    region = region or Region(0, 0, frames.width, frames.height)
    sample = np.unique(np.linspace(0, frames.count - 1, min(BACKGROUND_FRAMES, frames.count)).round().astype(int))
    progress = progress or (lambda iterable, total, words: iterable)
    scene = background([region.cut(image) for _, image in
                        progress(frames.read(sample), sample.size, "background")])
    rows, positions = [], []
    for position, image in progress(frames.read(), frames.count, "tracking"):
        rows.append(measure(region.cut(image), scene))
        positions.append(position)
    numbers = frames.numbers_at(positions)
    table = pd.DataFrame({"frame": numbers, "time": frames.times(numbers)})
    found = [r is not None for r in rows]
    for name in ("x", "y", "orientation", "area", "length", "along", "across"):
        table[name] = [r[name] if r is not None else np.nan for r in rows]
    edge = np.array([r is not None and r["edge"] for r in rows])
    table["x"] += region.x
    table["y"] += region.y
    whole = np.array(found) & ~edge
    usual = float(np.median(table.loc[whole, "area"])) if whole.any() else np.nan
    ratio = table["area"] / usual
    table["quality"] = np.minimum(ratio, 1 / ratio).where(whole, np.nan)
    table["why"] = np.where(~np.array(found), "lost", np.where(edge, "edge", np.where(
        table["quality"] < LEAST_QUALITY, "quality", "")))
    blank = table["why"] != ""
    table.loc[blank, ["x", "y", "orientation", "length"]] = np.nan
    table["angle"] = np.degrees(table["orientation"])
    round_blob = table["along"] < LEAST_ELONGATION * table["across"]
    table.loc[round_blob, "angle"] = np.nan
    return table[list(COLUMNS) + ["length", "why"]]


def to_metres(table, px_per_m, floor_row):
    """A pixel track in metres, y up, angle counter-clockwise (docs/physics.md section 1).

    Parameters
    ----------
    table : pandas.DataFrame
        From :func:`track_pixels`.
    px_per_m : float
        Image scale [pixels/m].
    floor_row : float
        The floor line's pixel row; y = 0 there [pixels].

    Returns
    -------
    pandas.DataFrame
        ``x`` from the frame's left edge [m], ``y`` up from the floor row [m],
        ``angle`` [deg] in (-90, 90], counter-clockwise with y up.
    """
    out = table.copy()
    out["x"] = (table["x"] + 0.5) / px_per_m          # from the left edge of the frame, not pixel 0's centre
    out["y"] = (floor_row - table["y"]) / px_per_m
    out["angle"] = _half_turn(-table["angle"])      # rows grow downwards: a mirror flips the angle
    return out


def _half_turn(angle):
    """Angles [deg] into (-90, 90]: the axis has no head or tail."""
    return 90.0 - np.mod(90.0 - angle, 180.0)
