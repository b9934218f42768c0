"""The fitted model against the measurement (docs/physics.md sections 6, 10).

Later impacts are chaotic (docs/physics.md section 6: a twentieth of a
degree moves the second rebound by tens of millimetres), so the model is
compared two ways: each flight predicted from the measured flight before
it (one bounce of prediction), and the whole drop simulated from the
first fitted flight for as long as it follows the measurement.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hopscape import sim

#: Impacts the whole-drop simulation follows. [-]
WHOLE_DROP_IMPACTS = 40
#: The simulated drop follows the measurement while its centre height is
#: within this many frame-noise deviations (or 2 mm, whichever is more) and
#: its angle within as many (or 5 deg). [-]
FOLLOWS = 5.0


@dataclass
class Comparison:
    """Model and measurement of one track, at the track's frame times.

    Attributes
    ----------
    time : numpy.ndarray
        Frame times. [s]
    next_y, next_angle : numpy.ndarray
        Centre height [m] and angle [rad] each flight's frames get from the
        model started at the flight before (NaN where there is none).
    whole_y, whole_angle : numpy.ndarray
        The same from one simulation of the whole drop from the first fitted
        flight (NaN before it).
    follows_until : float
        Last frame time up to which the whole-drop simulation follows. [s]
    flight_rms_y, flight_rms_angle : numpy.ndarray
        Per fitted flight after the first, the root-mean-square difference
        of the one-bounce prediction. [m], [rad]
    """

    time: np.ndarray
    next_y: np.ndarray
    next_angle: np.ndarray
    whole_y: np.ndarray
    whole_angle: np.ndarray
    follows_until: float
    flight_rms_y: np.ndarray
    flight_rms_angle: np.ndarray


def _run_from(shape, flights, k, t_start, contact, impacts, times):
    """Centre height and angle at ``times`` of the model started from flight
    ``k``'s fitted state at ``t_start``. [m], [rad]"""
    s = flights.state(k, t_start)
    # the engine takes the angle within one turn: the turns are added back
    angle = float(s["angle"])
    within = float(np.fmod(angle, 2 * np.pi))
    release = sim.Release(height=float(s["y"]), angle=within, spin=float(s["spin"]), vx=float(s["vx"]),
                          vy=float(s["vy"]))
    result = sim.simulate(shape, release, contact, impacts=impacts, peaks=("centre",))
    h = sim.history(result, 0, np.maximum(times - t_start, 0.0))
    # past the last impact the history would fly through the floor
    count = int(result.count[0])
    end = result.impacts["time"][0, count - 1] + result.impacts["flight"][0, count - 1] if count else np.inf
    gone = (times - t_start > end) if np.isfinite(end) else np.zeros(times.size, bool)
    return np.where(gone, np.nan, h["y"]), np.where(gone, np.nan, h["theta"] + (angle - within))


def compare(calibration, number):
    """Compare track ``number`` of a :class:`~.fit.Calibration` with the model at the fitted values."""
    track, flights = calibration.tracks[number], calibration.flights[number]
    est = calibration.estimate
    mu = est.friction if est.friction is not None else est.friction_best
    contact = sim.Contact(est.restitution, mu, calibration.law)
    t = track.time
    next_y, next_angle = np.full(t.size, np.nan), np.full(t.size, np.nan)
    rms_y, rms_angle = [], []
    for k in range(1, flights.count):
        frames = slice(flights.first[k], flights.last[k] + 1)
        start = t[flights.first[k - 1]:flights.last[k - 1] + 1]
        t_start = float(start[np.argmax(flights.state(k - 1, start)["y"] - calibration.shape.depth(
            flights.state(k - 1, start)["angle"]))])
        y, angle = _run_from(calibration.shape, flights, k - 1, t_start, contact, 6, t[frames])
        next_y[frames], next_angle[frames] = y, angle
        rms_y.append(float(np.sqrt(np.nanmean((y - track.y[frames]) ** 2))))
        rms_angle.append(float(np.sqrt(np.nanmean((angle - track.angle[frames]) ** 2))))
    begin = t[flights.first[0]]
    later = t >= begin
    whole_y, whole_angle = np.full(t.size, np.nan), np.full(t.size, np.nan)
    whole_y[later], whole_angle[later] = _run_from(calibration.shape, flights, 0, begin, contact,
                                                   WHOLE_DROP_IMPACTS, t[later])
    off = later & ~((np.abs(whole_y - track.y) <= max(FOLLOWS * flights.position_noise, 2e-3))
                    & (np.abs(whole_angle - track.angle) <= max(FOLLOWS * flights.angle_noise, np.radians(5))))
    follows_until = float(t[max(int(np.argmax(off)) - 1, 0)]) if off.any() else float(t[-1])
    return Comparison(time=t, next_y=next_y, next_angle=next_angle, whole_y=whole_y, whole_angle=whole_angle,
                      follows_until=follows_until, flight_rms_y=np.array(rms_y), flight_rms_angle=np.array(rms_angle))
