"""Write the demo tracks of the README's "Calibrate from a filmed drop".

Scenario of our own, numbers invented for the demo: a 20 mm steel pin
(a capsule: 16 mm between the cap centres, 2 mm cap radius) falls from a
release jig, its centre 150 mm above a lab bench, its axis at 30 deg, and
is filmed side on. The engine drops it with restitution 0.55 and friction
0.25 (the values the fit should find) and the frames get Gaussian noise
of 0.1 mm and 0.5 deg, as a careful tracking of a sharp video gives.

- ``pin-bench-2000fps.csv``: metres, y up, floor at 0 (time, x, y, angle).
- ``pin-bench-pixels.csv``: what clicking both ends in a tracking tool
  gives: frame numbers (``--fps 2000``), the two ends in pixels with rows
  growing downwards (``--y-down``), 5,000 pixels per metre (``--scale``),
  the bench top on row 1,000 (``--floor-y``), and 3% of frames lost.

    python docs/demo/make_demo_tracks.py
"""
from __future__ import annotations

from pathlib import Path

import numpy as np

from hopscape import sim
from hopscape.calibration.synthetic import synthetic_track

HERE = Path(__file__).resolve().parent
PIN = sim.Capsule(length=0.016, radius=0.002, density=7850)
RELEASE = sim.Release(height=0.15, angle=np.radians(30))
CONTACT = sim.Contact(restitution=0.55, friction=0.25)
FPS = 2000.0
SCALE, FLOOR_ROW = 5000.0, 1000.0  # [pixels per metre], [pixel row of the bench top]


def main():
    drop = synthetic_track(PIN, RELEASE, CONTACT, fps=FPS, impacts=8, seed=7)
    drop.track.round(7).to_csv(HERE / "pin-bench-2000fps.csv", index=False)
    clicked = synthetic_track(PIN, RELEASE, CONTACT, fps=FPS, impacts=8, seed=8, lost=0.03).track
    half = (PIN.overall_length / 2) * np.column_stack([np.cos(np.radians(clicked["angle"])),
                                                        np.sin(np.radians(clicked["angle"]))])
    ends = {"frame": clicked["frame"],
            "x1": (clicked["x"] - half[:, 0]) * SCALE + 200, "y1": FLOOR_ROW - (clicked["y"] - half[:, 1]) * SCALE,
            "x2": (clicked["x"] + half[:, 0]) * SCALE + 200, "y2": FLOOR_ROW - (clicked["y"] + half[:, 1]) * SCALE}
    import pandas as pd
    pd.DataFrame(ends).round(2).to_csv(HERE / "pin-bench-pixels.csv", index=False)
    print(f"wrote {HERE / 'pin-bench-2000fps.csv'} and {HERE / 'pin-bench-pixels.csv'}")


if __name__ == "__main__":
    main()
