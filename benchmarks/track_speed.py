"""Frames per second of ``hopscape track`` at a few frame sizes.

Renders a film of the demo's pin drop (docs/demo/make_demo_video.py's
scenario, scaled to each frame size) as PNG frames and as an MJPG video in
a temporary folder, then times the whole tracking (background sample and
the pass over every frame, decoding included) on each, alternating:

    python benchmarks/track_speed.py [--frames 300] [--repeat 3]
"""
from __future__ import annotations

import argparse
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

from hopscape import sim
from hopscape.video.frames import open_frames
from hopscape.video.render import Camera, film, write_frames, write_video
from hopscape.video.track import track_pixels

SIZES = [(480, 360), (1024, 768), (1280, 1024)]


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--frames", type=int, default=300)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    shape = sim.make_shape("capsule", length=0.017, radius=0.0015, density=7850.0)
    result = sim.simulate(shape, sim.Release(height=0.060, angle=np.radians(30.0)), sim.Contact(0.6, 0.3),
                          impacts=40)
    with tempfile.TemporaryDirectory() as scratch:
        films = []
        for width, height in SIZES:
            # the same 96 x 72 mm view at every size
            camera = replace(Camera(width=480, height=360, px_per_m=5000.0, floor_row=340.0, left=0.035,
                                    fps=2000.0, exposure=5e-5), width=width, height=height,
                             px_per_m=5000.0 * width / 480, floor_row=340.0 * height / 360)
            duration = (args.frames - 1) / camera.fps
            folder = Path(scratch) / f"png{width}"
            write_frames(film(result, camera, duration)[1], folder)
            video = Path(scratch) / f"film{width}.avi"
            write_video(film(result, camera, duration)[1], video, camera.fps)
            films += [(f"{width}x{height} PNG", folder, camera.fps), (f"{width}x{height} MJPG", video, None)]
        best = {name: 0.0 for name, _, _ in films}
        for _ in range(args.repeat):
            for name, source, fps in films:
                start = time.perf_counter()
                frames = open_frames(source, fps)
                track_pixels(frames)
                best[name] = max(best[name], frames.count / (time.perf_counter() - start))
        for name, rate in best.items():
            print(f"{name:>16}: {rate:6.0f} frames/s (best of {args.repeat}, {args.frames} frames, one process)")


if __name__ == "__main__":
    main()
