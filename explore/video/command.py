"""``hopscape track``: a filmed drop -> a track table the calibration reads."""
from __future__ import annotations

import sys
import time
from pathlib import Path

from ..cli_text import STRICT_HELP, report_warnings
from ..errors import InputError
from ..files import atomic_write, refuse_overwriting_input

#: Fewest frames for which a progress bar is shown.
PROGRESS_FROM = 100
#: Above this share of frames without a body (lost or partly hidden) the
#: command warns: a still body hides in the median background.
MOSTLY_FOUND = 0.2


def register(sub, handlers):
    """Add the ``track`` command to the command line's sub-parsers and its
    handler to ``handlers`` (command name -> function)."""
    from ..options import number
    from hopscape.sim.limits import Interval

    positive = number(float, Interval(0.0, float("inf"), closed="neither"))
    t = sub.add_parser("track", help="track a filmed drop (video file or PNG frames) into a track table",
                       description="Finds the body in every frame (median background, threshold at half its "
                       "contrast, largest blob, image moments) and writes one row per frame: frame, time [s], "
                       "x, y, angle [deg], quality [0-1]. Frames where the body is lost or touches the edge "
                       "are left empty.")
    t.add_argument("video", type=Path, help="video file, or a folder of numbered PNG frames (needs --fps)")
    t.add_argument("--out", type=Path, required=True, help="track table to write (.csv or .parquet)")
    scale = t.add_mutually_exclusive_group()
    scale.add_argument("--scale", type=positive, default=None, metavar="PX_PER_M",
                       help="[pixels/m] image scale (from a ruler in the picture): write metres, y up")
    scale.add_argument("--body-length", type=positive, default=None, metavar="M",
                       help="[m] the body's overall length: the scale from its median length in the frames "
                       "(its ends found to a fraction of a pixel); write metres, y up")
    t.add_argument("--floor-y", type=number(float), default=None, metavar="PX",
                   help="[pixels] row of the floor line; with a scale, y = 0 there (default: the frame's "
                   "bottom edge)")
    t.add_argument("--fps", type=positive, default=None,
                   help="[1/s] recording rate: required for PNG frames; overrides a video file's own rate")
    t.add_argument("--roi", default=None, metavar="X,Y,W,H",
                   help="[pixels] track only this part of each frame (top-left corner, width, height)")
    t.add_argument("--quiet", action="store_true", help="no progress bar")
    t.add_argument("--strict", action="store_true", help=STRICT_HELP)
    handlers.update(track=cmd_track)


def cmd_track(args):
    """``hopscape track``: track the body, write the table, say what to pass to the fit."""
    from ..safety import SAFETY
    from .frames import open_frames
    from .track import COLUMNS, Region, to_metres, track_pixels

    refuse_overwriting_input(args.out, args.video)
    frames = open_frames(args.video, args.fps)
    region = None if args.roi is None else Region.parse(args.roi, frames.width, frames.height)
    warnings = list(frames.notes)
    if args.floor_y is not None and not 0 <= args.floor_y <= frames.height:
        warnings.append(f"--floor-y {args.floor_y:g} is outside the frame (rows 0 to {frames.height}); "
                        "is it the floor line's pixel row?")
    report_warnings(warnings, args.strict)

    start = time.perf_counter()
    table = track_pixels(frames, region, progress=None if args.quiet or frames.count < PROGRESS_FROM else _bar)
    elapsed = time.perf_counter() - start
    tracked = int(table["x"].notna().sum())
    if tracked == 0:
        raise InputError(f"{args.video}: the body was not found whole in any of {frames.count} frames (nothing "
                         "differs from the median background, or it always touches the edge); check --roi")
    why = table["why"].value_counts()
    print(f"{frames.count} frames in {elapsed:.1f} s ({frames.count / elapsed:,.0f} frames/s): body found in "
          f"{tracked}; left empty: {why.get('lost', 0)} lost, {why.get('edge', 0)} touching the edge, "
          f"{why.get('quality', 0)} unlike the body's usual size (quality < 0.5)")
    if why.get("lost", 0) + why.get("quality", 0) > MOSTLY_FOUND * frames.count:
        report_warnings([f"{why.get('lost', 0) + why.get('quality', 0)} of {frames.count} frames lost the body or "
                         "saw only part of it: a body that stands still for much of the film becomes part of the "
                         "median background (start filming at the release, stop once it rests)"], args.strict)

    scale = args.scale
    if args.body_length is not None:
        lengths = table["length"].dropna()
        if lengths.empty:
            raise InputError(f"--body-length: the body's length along its axis could not be measured in any frame "
                             f"of {args.video} (a hollow or round silhouette?); give --scale instead")
        length_px = float(lengths.median())
        scale = length_px / args.body_length
        print(f"scale from the body's median length of {length_px:.1f} pixels over {tracked} frames: "
              f"{scale:,.1f} pixels/m (one pixel of length is {100 / length_px:.1f}% of it)")
    if scale is not None:
        floor_row = frames.height - 0.5 if args.floor_y is None else args.floor_y
        table = to_metres(table, scale, floor_row)
        where = "the floor line" if args.floor_y is not None else "the frame's bottom edge"
        units = (f"metres: x from the frame's left edge, y up from {where}; angle [deg] counter-clockwise "
                 "from +x")
    else:
        floor = "ROW (the floor line's pixel row)" if args.floor_y is None else f"{args.floor_y:g}"
        units = ("pixels: x = column, y = row (growing downwards), angle [deg] from +x towards +y (clockwise "
                 f"as seen on screen); for the fit pass --scale PX_PER_M --y-down --floor-y {floor}")
    _write(table[list(COLUMNS)], args.out)
    print(f"track written to {args.out} in {units}")
    print("\nSafety: " + SAFETY)


def _bar(iterable, total, words):
    from tqdm import tqdm
    return tqdm(iterable, total=total, desc=words, unit="frame", file=sys.stderr, leave=False)


def _write(table, path):
    """Write the track atomically, as CSV or Parquet by the file ending."""
    path.parent.mkdir(parents=True, exist_ok=True)
    with atomic_write(path) as tmp:
        if path.suffix.lower() == ".csv":
            table.to_csv(tmp, index=False)
        else:
            table.to_parquet(tmp, index=False)
