"""Synthetic tracks: an engine drop sampled as a camera would film it.

The drop is simulated exactly (:func:`sim.drop.simulate`), evaluated at
the frame times (:func:`sim.history.history`) and written in the track
contract (:mod:`hopscape.calibration.tracks`): ``frame``, ``time`` [s],
``x``, ``y`` [m, floor at y = 0], ``angle`` [deg] and ``quality``, with
Gaussian noise of a given size added to the positions and the angle. The
angle is reported within (-90, 90] deg, as a tracker that sees an
end-symmetric body must; the reader unwraps it. The fit's checks, the
coverage benchmark and the demo track are made here.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from hopscape import sim


@dataclass(frozen=True)
class SyntheticDrop:
    """A synthetic track and the engine drop it was sampled from.

    Attributes
    ----------
    track : pandas.DataFrame
        The track, one row per frame (columns of the track contract).
    result : sim.DropResult
        The simulated drop (one drop): the truth the fit should recover.
    """

    track: pd.DataFrame
    result: object


def synthetic_track(shape, release, contact, *, fps, impacts=10, position_noise=1e-4, angle_noise=0.5,
                    seed=0, phase=None, lost=0.0):
    """Film one simulated drop at ``fps`` frames per second.

    Parameters
    ----------
    shape : sim.Shape
        One body.
    release : sim.Release
        Its release (floor level: ``floor_angle`` 0).
    contact : sim.Contact
        The truth: restitution, friction and law.
    fps : float
        Frame rate. [1/s]
    impacts : int
        Impacts simulated; the track ends just before the contact that
        would follow the last of them.
    position_noise : float
        Standard deviation of the Gaussian noise added to ``x`` and ``y``. [m]
    angle_noise : float
        Standard deviation of the Gaussian noise added to the angle. [deg]
    seed : int
        Seed of the noise (and of the first frame's time).
    phase : float, optional
        Time of the first frame after release, as a share of one frame
        interval [-]; drawn from the seed when None.
    lost : float
        Share of frames whose cells are left empty (tracking lost). [-]

    Returns
    -------
    SyntheticDrop
    """
    if not fps > 0:
        raise ValueError(f"fps must be > 0, got {fps}")
    rng = np.random.default_rng(seed)
    result = sim.simulate(shape, release, contact, impacts=impacts, peaks=("centre",))
    count = int(result.count[0])
    if count == 0:
        raise ValueError("the simulated drop made no impact")
    last = count - 1
    flight_after = float(result.impacts["flight"][0, last])
    end = float(result.impacts["time"][0, last]) + (flight_after if np.isfinite(flight_after) else 0.0)
    start = (rng.uniform() if phase is None else phase) / fps
    times = start + np.arange(int(np.floor((end - start) * fps)) + 1) / fps
    times = times[times < end]
    state = sim.history(result, 0, times)
    n = times.size
    angle = np.degrees(state["theta"]) + rng.normal(0.0, angle_noise, n)
    track = pd.DataFrame({
        "frame": np.arange(n),
        "time": times,
        "x": state["x"] + rng.normal(0.0, position_noise, n),
        "y": state["y"] + rng.normal(0.0, position_noise, n),
        # an end-symmetric body's axis is seen within half a turn
        "angle": 90.0 - np.mod(90.0 - angle, 180.0),
        "quality": np.ones(n),
    })
    if lost > 0:
        gone = rng.uniform(size=n) < lost
        track.loc[gone, ["x", "y", "angle", "quality"]] = np.nan
    return SyntheticDrop(track, result)
