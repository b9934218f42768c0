"""What the rig's camera must do for a set of simulated drops: frame rates,
exposure and field of view (docs/physics.md section 12).

- Contact: at least :data:`FRAMES_IN_CONTACT` frames within the shortest
  contact, ``fps >= 5 / t_c``. A rule of thumb of high-speed imaging of
  impacts (common practice, not a published standard): fewer frames than
  about five give no shape of the force's rise and fall.
- Flight: at least :data:`FRAMES_IN_FLIGHT` frames within the shortest
  flight between visible bounces, so that a parabola fitted to the centre's
  track in that flight (the rebound height or speed) has several more
  points than its three parameters. Our choice, documented here: ten.
- Which flights are visible depends on the camera: impacts closer than one
  frame interval make one visible bounce (:func:`sim.group_bounces`); the
  plan groups bounces by the camera's frame interval (:func:`camera_rate`).
- Motion blur under one pixel: ``exposure <= pixel / v_max``, with the
  pixel's size in the object plane ``fov_width / sensor_pixels`` and
  ``v_max`` the fastest speed of any point of the body.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hopscape import sim

#: Frames within the shortest contact (a rule of thumb of the trade). [-]
FRAMES_IN_CONTACT = 5

#: Frames within the shortest visible flight: enough for a parabola fit
#: with redundancy (our choice; three points would only just fix it). [-]
FRAMES_IN_FLIGHT = 10

#: Default sensor width: a common high-speed camera's width in pixels at
#: moderate frame rates (common practice, from memory; many cameras crop
#: the sensor at their highest rates, so check yours). [px]
SENSOR_PIXELS = 1024

#: Margin of the default field of view over the drop's extent: keeps the
#: body off the frame's edges, where lenses distort most (common practice). [-]
FIELD_MARGIN = 1.2


def frames_rate(duration, frames):
    """Frame rate that puts ``frames`` frames within ``duration``.

    Parameters
    ----------
    duration : float or array_like
        Shortest time to resolve. [s]
    frames : int
        Frames wanted within it. [-]

    Returns
    -------
    float or numpy.ndarray
        ``frames / duration``; NaN where ``duration`` is not a positive
        number. [1/s]
    """
    duration = np.asarray(duration, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(duration > 0, frames / duration, np.nan)


def longest_exposure(fov_width, sensor_pixels, fastest_speed):
    """Exposure that keeps motion blur under one pixel.

    Parameters
    ----------
    fov_width : float
        Width of the field of view in the object plane. [m]
    sensor_pixels : int
        Pixels across the sensor's width. [px]
    fastest_speed : float
        Fastest speed of any point of the body. [m/s]

    Returns
    -------
    float
        ``(fov_width / sensor_pixels) / fastest_speed``: in that time no
        point of the body moves more than one pixel. [s]
    """
    return (fov_width / sensor_pixels) / fastest_speed


def body_reach(profile):
    """Farthest any point of the body lies from its centre of mass.

    Parameters
    ----------
    profile : tuple of array_like
        ``(A, B, a, b)``: the rectangle's half-extents and the ellipse's
        semi-axes (docs/physics.md section 2). [m]

    Returns
    -------
    numpy.ndarray
        ``sqrt(A^2 + B^2) + max(a, b)``: exact for capsules, rods and
        spheres (``B = 0``, ``a = b``), an upper bound for the rest. [m]
    """
    half_long, half_wide, round_long, round_wide = (np.asarray(p, dtype=float) for p in profile)
    return np.hypot(half_long, half_wide) + np.maximum(round_long, round_wide)


def fastest_point_speed(result):
    """Fastest speed of any point of each drop's body, over its release and impacts.

    The speed of a point is ``|v + omega x r| <= |v| + |omega| reach``. In a
    flight on a level floor the centre is fastest at its ends (lowest
    centre), which are the release and the impacts, and the spin is
    constant; so the largest bound over release, just-before and just-after
    states bounds the whole drop (on an inclined floor the drop may speed
    up along the floor between impacts too; the states before impacts
    include that).

    Parameters
    ----------
    result : sim.DropResult

    Returns
    -------
    numpy.ndarray
        Per drop. [m/s]
    """
    reach = body_reach(result.profile)
    reach = np.broadcast_to(reach, result.status.shape)[:, None]
    r = result.release
    states = [(np.broadcast_to(r["vx"], result.status.shape)[:, None],
               np.broadcast_to(r["vy"], result.status.shape)[:, None],
               np.broadcast_to(r["spin"], result.status.shape)[:, None]),
              (result.vx, result.vy, result.spin), (result.vx_before, result.vy_before, result.spin_before)]
    speeds = [np.hypot(vx, vy) + np.abs(spin) * reach for vx, vy, spin in states]
    return np.nanmax(np.concatenate(speeds, axis=1), axis=1)


def drop_extent(result):
    """Width and height of the region each drop's body sweeps.

    Parameters
    ----------
    result : sim.DropResult
        Simulated with the top point's peaks.

    Returns
    -------
    width, height : numpy.ndarray
        Per drop: the centre's travel along the floor between release and
        its last impact (on a level floor the extremes are at those ends)
        plus the body's reach on each side; the highest top point over the
        release and every flight after an impact. [m]
    """
    reach = np.broadcast_to(body_reach(result.profile), result.status.shape)
    x = np.concatenate([np.zeros((result.status.size, 1)), result.x], axis=1)
    width = np.nanmax(x, axis=1) - np.nanmin(x, axis=1) + 2 * reach
    top = np.concatenate([result.release_height("top")[:, None], result.peak("top")], axis=1)
    return width, np.nanmax(top, axis=1)


def visible_flights(result, window):
    """Flights between visible bounces, for a bounce-grouping window.

    Parameters
    ----------
    result : sim.DropResult
    window : float
        Impacts closer than this make one visible bounce. [s]

    Returns
    -------
    numpy.ndarray
        Every flight at least ``window`` long (those close a visible bounce,
        :func:`sim.group_bounces`), flattened. [s]
    """
    flight = result.flight
    return flight[np.isfinite(flight) & (flight >= window) & (flight > 0)]


@dataclass(frozen=True)
class CameraRate:
    """The camera's frame rate and what decided it."""

    contact_rate: float      # [1/s] FRAMES_IN_CONTACT in the shortest contact (NaN: no materials)
    flight_rate: float       # [1/s] FRAMES_IN_FLIGHT in the shortest flight the study counts
    rate: float              # [1/s] the larger: the camera the plan asks for
    window: float            # [s] its frame interval: the bounce-grouping window
    shortest_flight: float   # [s] shortest flight between the bounces the study counts
    mean_bounces: float      # [-] bounces per drop that camera sees (grouped by its frame interval)
    short_flights: float     # [-] share of the flights it sees that get fewer than FRAMES_IN_FLIGHT frames


def camera_rate(result, shortest_contact, study_window):
    """The frame rate that resolves the contacts and the flights the study counts.

    The flight rule applies to the flights between the bounces the study's
    metric counts (its grouping window, ``run.merge_window``): those are
    the rebounds to measure. A camera that fast also sees shorter flights
    as bounces of their own (an end striking microseconds after the other,
    in near-flat landings); their share with fewer than
    :data:`FRAMES_IN_FLIGHT` frames is returned, since a rebound cannot be
    fitted in them. Setting the camera's rate by those instead would not
    end: each faster camera sees shorter flights still.

    Parameters
    ----------
    result : sim.DropResult
    shortest_contact : float
        Shortest contact duration, NaN without materials. [s]
    study_window : float
        The study's bounce-grouping window. [s]

    Returns
    -------
    CameraRate
        Its ``window`` (one frame interval) groups the impacts into the
        bounces that camera sees.
    """
    contact = float(frames_rate(shortest_contact, FRAMES_IN_CONTACT))
    counted = visible_flights(result, study_window)
    shortest = float(counted.min()) if counted.size else np.nan
    flight = float(frames_rate(shortest, FRAMES_IN_FLIGHT))
    rate = float(np.nanmax([contact, flight, 1.0 / study_window]))
    window = 1.0 / rate
    seen = visible_flights(result, window)
    short = float(np.mean(seen < FRAMES_IN_FLIGHT * window)) if seen.size else 0.0
    return CameraRate(contact, flight, rate, window, shortest, float(np.mean(sim.group_bounces(result, window).count)),
                      short)
