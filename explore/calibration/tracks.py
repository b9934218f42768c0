"""Tracks in: one row per frame of a filmed drop, read, checked and put in
the engine's conventions (docs/physics.md sections 1 and 10).

The track contract (CSV or Parquet):

- ``time`` [s], or ``frame`` with a frame rate (``fps``);
- the centre ``x``, ``y`` and the axis ``angle`` [deg, from +x to the
  axis, counter-clockwise], or the two ends of the axis ``x1``, ``y1``,
  ``x2``, ``y2`` (what clicking both ends in a video-tracking tool gives);
- optionally ``quality`` (read and ignored: every kept frame counts alike).

Positions are metres with y up and the floor at y = 0, unless ``scale``
[pixels per metre], ``y_down`` (image rows grow downwards; an ``angle``
column is then taken as measured in the image's own axes and mirrored)
and ``floor_y`` (the floor line, in the track's own units) say otherwise.
``columns`` maps the contract's names to a file's own. An empty cell is a
frame where tracking was lost: the frame is skipped. Every shape of the
family is end-symmetric, so a tracker sees the axis only within half a
turn; the angle is unwrapped by continuity from frame to frame.

Rows in messages are counted as a spreadsheet shows them: the header is
row 1, the first frame row 2.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError, shown
from ..files import read_table

#: The contract's column names and their units.
TRACK_COLUMNS = {"time": "s", "frame": "-", "x": "m", "y": "m", "angle": "deg",
                 "x1": "m", "y1": "m", "x2": "m", "y2": "m", "quality": "-"}
#: The first data row's number in messages (the header is row 1).
FIRST_ROW = 2


@dataclass(frozen=True)
class Track:
    """One filmed drop in engine units: the frames where the body was seen.

    Attributes
    ----------
    name : str
        Where it came from (the file), for messages.
    time : numpy.ndarray
        Frame times, strictly increasing. [s]
    x, y : numpy.ndarray
        Centre, y up, floor at y = 0. [m]
    angle : numpy.ndarray
        Axis angle, unwrapped (continuous). [rad]
    rows : numpy.ndarray
        Each frame's row in the file (header = row 1), for messages.
    lost : int
        Frames skipped because a cell was empty.
    length : numpy.ndarray or None
        Distance between the two clicked ends per frame when the track gave
        them (a free check of ``scale``). [m]
    """

    name: str
    time: np.ndarray
    x: np.ndarray
    y: np.ndarray
    angle: np.ndarray
    rows: np.ndarray
    lost: int = 0
    length: np.ndarray | None = None

    @property
    def frame_interval(self):
        """Median time between frames. [s]"""
        return float(np.median(np.diff(self.time))) if self.time.size > 1 else float("nan")


def parse_columns(text):
    """``--columns time=t,x=X`` -> ``{"time": "t", "x": "X"}``; InputError naming the bad part."""
    mapping = {}
    for part in filter(None, (p.strip() for p in (text or "").split(","))):
        ours, sep, theirs = part.partition("=")
        ours, theirs = ours.strip(), theirs.strip()
        if not sep or not ours or not theirs:
            raise InputError(f"--columns: each part must be OURS=THEIRS (e.g. time=t), got {shown(part)}")
        if ours not in TRACK_COLUMNS:
            raise InputError(f"--columns: {shown(ours)} is not a track column (known: {', '.join(TRACK_COLUMNS)})")
        mapping[ours] = theirs
    return mapping


def read_track(path, *, fps=None, scale=None, y_down=False, floor_y=None, columns=None):
    """Read a track file (CSV or Parquet); see :func:`track_from_table`."""
    return track_from_table(read_table(path, "track"), str(path), fps=fps, scale=scale, y_down=y_down,
                            floor_y=floor_y, columns=columns)


def _numbers(table, name, column, where):
    """A column as floats; empty cells NaN; InputError at the first cell that is not a number."""
    values = pd.to_numeric(table[column], errors="coerce").to_numpy(dtype=float)
    given = table[column].notna().to_numpy() & (table[column].astype(str).str.strip() != "").to_numpy()
    bad = np.flatnonzero(given & ~np.isfinite(values))
    if bad.size:
        i = bad[0]
        raise InputError(f"{where}: column {column!r} row {i + FIRST_ROW}: {name} is not a number, got "
                         f"{shown(table[column].iloc[i])}")
    return values


def track_from_table(table, name, *, fps=None, scale=None, y_down=False, floor_y=None, columns=None):
    """Check a track table and convert it to engine units.

    Parameters
    ----------
    table : pandas.DataFrame
        One row per frame (the contract in the module notes).
    name : str
        The file's name, for messages.
    fps : float, optional
        Frame rate when the track gives ``frame`` instead of ``time``. [1/s]
    scale : float, optional
        Pixels per metre when positions are pixels. [1/m]
    y_down : bool
        Image rows grow downwards (y and the angle are mirrored).
    floor_y : float, optional
        The floor line in the track's own units (pixels with ``scale``).
    columns : dict, optional
        Contract name -> the file's column name.

    Returns
    -------
    Track

    Raises
    ------
    InputError
        One line naming the file, the column and the row: a missing column,
        a cell that is not a number, time not increasing, too few frames.
    """
    mapping = {ours: ours for ours in TRACK_COLUMNS}
    mapping.update(columns or {})
    present = {ours: theirs for ours, theirs in mapping.items() if theirs in table.columns}
    for ours, theirs in (columns or {}).items():
        if theirs not in table.columns:
            raise InputError(f"{name}: --columns {ours}={theirs}: no column {theirs!r} in the track (columns: "
                             f"{', '.join(map(str, table.columns))})")
    found = ", ".join(map(str, table.columns)) or "none"
    if table.empty:
        raise InputError(f"{name}: the track holds no frames (only a header?)")
    if "time" in present:
        time = _numbers(table, "time", present["time"], name)
    elif "frame" in present and fps is not None:
        if not fps > 0:
            raise InputError(f"--fps must be > 0 frames per second, got {fps:g}")
        time = _numbers(table, "frame", present["frame"], name) / fps
    elif "frame" in present:
        raise InputError(f"{name}: the track gives 'frame' but no 'time'; give the frame rate with --fps")
    else:
        raise InputError(f"{name}: no column 'time' (nor 'frame' with --fps); columns found: {found}; map "
                         "other names with --columns time=NAME")
    if all(k in present for k in ("x", "y", "angle")):
        x, y = (_numbers(table, k, present[k], name) for k in ("x", "y"))
        angle = np.radians(_numbers(table, "angle", present["angle"], name)) * (-1 if y_down else 1)
        ends = None
    elif all(k in present for k in ("x1", "y1", "x2", "y2")):
        x1, y1, x2, y2 = (_numbers(table, k, present[k], name) for k in ("x1", "y1", "x2", "y2"))
        sign = -1 if y_down else 1
        x, y = (x1 + x2) / 2, (y1 + y2) / 2
        angle = np.arctan2(sign * (y2 - y1), x2 - x1)
        ends = np.hypot(x2 - x1, y2 - y1)
    else:
        raise InputError(f"{name}: no columns x, y, angle (nor x1, y1, x2, y2); columns found: {found}; map "
                         "other names with --columns x=NAME,...")
    if scale is not None:
        if not (np.isfinite(scale) and scale > 0):
            raise InputError(f"--scale must be > 0 pixels per metre, got {scale:g}")
        x, y = x / scale, y / scale
        ends = None if ends is None else ends / scale
    if y_down:
        y = -y
    if floor_y is not None:
        y = y - (-floor_y if y_down else floor_y) / (scale or 1.0)
    rows = np.arange(len(table)) + FIRST_ROW
    seen = np.isfinite(time) & np.isfinite(x) & np.isfinite(y) & np.isfinite(angle)
    t = time[seen]
    step = np.diff(t)
    if np.any(step <= 0):
        i = int(np.argmax(step <= 0))
        column = present.get("time", present.get("frame"))
        raise InputError(f"{name}: column {column!r} row {rows[seen][i + 1]}: time not increasing "
                         f"({t[i + 1]:.6g} s after {t[i]:.6g} s)")
    if t.size < 8:
        raise InputError(f"{name}: only {t.size} frame(s) where the body was seen; a fit needs at least 8")
    # an end-symmetric body: the axis is known within half a turn
    unwrapped = np.unwrap(angle[seen], period=np.pi)
    return Track(name=name, time=t, x=x[seen], y=y[seen], angle=unwrapped, rows=rows[seen],
                 lost=int(np.count_nonzero(~seen)), length=None if ends is None else ends[seen])
