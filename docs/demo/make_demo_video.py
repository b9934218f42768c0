"""Film a simulated drop, track it with ``hopscape track``, compare with the truth.

The scenario (invented numbers): a 20 mm steel pin (a capsule, 17 mm between
1.5 mm caps) released at 30 deg with its centre 60 mm above a bench,
restitution 0.6 and friction 0.3 (energetic law), filmed side on at 2,000
frames per second with a 1/20,000 s shutter, 5 pixels per mm, 480 x 360
pixels. Writes into docs/demo/:

- ``pin_drop.mp4``: the film (MPEG-4, lossy, as a camera's export would be);
- ``pin_drop_truth.csv``: the true track (frame, time [s], x, y [m],
  angle [deg]), the state at the middle of each exposure;
- ``pin_drop_track.csv``: what ``hopscape track`` makes of the film;
- ``pin_drop_track.png``: one frame with the tracked axis, and the tracked
  height and angle against the truth over time.

Run from the repository root (about 10 s):

    python docs/demo/make_demo_video.py [--frames FOLDER]

``--frames`` also writes the film as numbered PNG frames (lossless).
"""
from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
import pandas as pd

from hopscape import sim
from hopscape.cli import main as hopscape
from hopscape.video.render import Camera, film, write_frames, write_video

HERE = Path(__file__).resolve().parent
PIN = dict(length=0.017, radius=0.0015, density=7850.0)
RELEASE = sim.Release(height=0.060, angle=np.radians(30.0))
CONTACT = sim.Contact(restitution=0.6, friction=0.3)
CAMERA = Camera(width=480, height=360, px_per_m=5000.0, floor_row=340.0, left=0.035, fps=2000.0,
                exposure=5e-5, noise=2.0, seed=7)
DURATION = 0.30          # [s]: 601 frames, until the pin lies still
#: The command a reader runs on the film (the README gives it).
TRACK = ["track", str(HERE / "pin_drop.mp4"), "--out", str(HERE / "pin_drop_track.csv"), "--scale", "5000",
         "--floor-y", "340"]


def simulate():
    shape = sim.make_shape("capsule", **PIN)
    return sim.simulate(shape, RELEASE, CONTACT, impacts=40)


def picture(truth, track, path):
    """One frame with the tracked axis; height and angle over time, tracked against true."""
    import cv2
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from hopscape.figures import OKABE_ITO, save_figure

    fig, axes = plt.subplot_mosaic([["frame", "height"], ["frame", "angle"], ["frame", "error"]],
                                   figsize=(11, 6.4), constrained_layout=True, width_ratios=[1.05, 1])
    shown = 214
    capture = cv2.VideoCapture(str(HERE / "pin_drop.mp4"))
    capture.set(cv2.CAP_PROP_POS_FRAMES, shown)
    image = cv2.cvtColor(capture.read()[1], cv2.COLOR_BGR2GRAY)
    capture.release()
    mm = 1e3 / CAMERA.px_per_m
    ax = axes["frame"]
    ax.imshow(image, cmap="gray", vmin=0, vmax=255, extent=(0, CAMERA.width * mm, CAMERA.height * mm, 0))
    row = track.loc[shown]
    half = 10.0                                              # [mm] half the pin's length
    a = np.radians(row["angle"])
    cx, cy = row["x"] * 1e3, (CAMERA.floor_row / CAMERA.px_per_m - row["y"]) * 1e3
    ax.plot([cx - half * np.cos(a), cx + half * np.cos(a)], [cy + half * np.sin(a), cy - half * np.sin(a)],
            color=OKABE_ITO["orange"], lw=1.5, label="tracked axis")
    ax.plot(cx, cy, "+", color=OKABE_ITO["orange"], ms=10)
    ax.axhline(CAMERA.floor_row * mm, color=OKABE_ITO["sky"], lw=1, ls="--", label="floor line (--floor-y 340)")
    ax.set_title(f"frame {shown} ({shown / CAMERA.fps * 1e3:.0f} ms), between the pin's first two impacts")
    ax.set_xlabel("from the frame's left edge [mm]")
    ax.set_ylabel("from the frame's top edge [mm]")
    ax.legend(loc="upper right", fontsize=8)
    ms = truth["time"] * 1e3
    ax = axes["height"]
    ax.plot(ms, track["y"] * 1e3, ".", color=OKABE_ITO["blue"], ms=3, label="tracked")
    ax.plot(ms, truth["y"] * 1e3, color="k", lw=0.8, ls="--", label="true (simulated)")
    ax.set_ylabel("centre height [mm]")
    ax.legend(fontsize=8)
    ax.set_title("tracked against the truth the film was made from")
    ax = axes["angle"]
    ax.plot(ms, track["angle"], ".", color=OKABE_ITO["red"], ms=3, label="tracked")
    ax.plot(ms, truth["angle"], color="k", lw=0.8, ls="--", label="true")
    ax.set_ylabel("axis angle [deg]")
    ax.legend(fontsize=8)
    ax = axes["error"]
    centre = np.hypot(track["x"] - truth["x"], track["y"] - truth["y"]) * 1e3
    angle = ((track["angle"] - truth["angle"] + 90) % 180 - 90).abs()
    ax.plot(ms, centre, color=OKABE_ITO["blue"], lw=0.8, label="centre [mm]")
    ax.plot(ms, angle, color=OKABE_ITO["red"], lw=0.8, label="angle [deg]")
    ax.axhline(0.2, color="0.5", lw=0.8, ls=":", label="0.2 (mm or deg)")
    ax.set_ylabel("tracking error")
    ax.set_xlabel("time since release [ms]")
    ax.legend(fontsize=8, ncol=3, loc="upper left")
    fig.suptitle("Demo film: a 20 mm steel pin at 2,000 frames/s, 5 pixels/mm, tracked by hopscape track.\n"
                 "Is the track close enough to fit restitution and friction from?")
    save_figure(fig, path)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--frames", type=Path, default=None, help="also write the film as PNG frames here")
    args = parser.parse_args()
    result = simulate()
    truth, frames = film(result, CAMERA, DURATION)
    start = time.perf_counter()
    count = write_video(frames, HERE / "pin_drop.mp4", CAMERA.fps)
    print(f"{count} frames rendered and written in {time.perf_counter() - start:.1f} s")
    if args.frames is not None:
        write_frames(film(result, CAMERA, DURATION)[1], args.frames, stem="pin")
    truth.round({"time": 6, "x": 7, "y": 7, "angle": 3}).to_csv(HERE / "pin_drop_truth.csv", index=False)
    if hopscape(TRACK + ["--quiet"]) != 0:
        raise SystemExit("hopscape track failed")
    track = pd.read_csv(HERE / "pin_drop_track.csv")
    found = track["x"].notna()
    centre = np.hypot(track["x"] - truth["x"], track["y"] - truth["y"])[found] * 1e3
    angle = ((track["angle"] - truth["angle"] + 90) % 180 - 90)[track["angle"].notna()].abs()
    print(f"tracked {int(found.sum())} of {len(track)} frames; centre error median {centre.median():.3f} mm, "
          f"largest {centre.max():.3f} mm; angle error median {angle.median():.2f} deg, largest {angle.max():.2f} deg")
    picture(truth, track, HERE / "pin_drop_track.png")


if __name__ == "__main__":
    main()
