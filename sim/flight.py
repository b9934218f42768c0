"""Exact ballistic flights: between impacts the centre follows a parabola
and the angle grows linearly, so a flight is evaluated in closed form at
any time; there is no time step. The contact search (:mod:`sim.search`)
and the flight peaks (:mod:`sim.peaks`) build on these.
"""
from __future__ import annotations

import numpy as np

#: Standard acceleration of gravity (3rd CGPM, 1901; ISO 80000-3). [m/s^2]
GRAVITY = 9.80665


def floor_gravity(floor_angle):
    """Gravity in floor coordinates on a floor inclined by ``floor_angle``
    [rad] (positive: the floor falls towards +x): the component into the
    floor ``g cos(alpha)`` and the along-floor component ``g sin(alpha)``,
    pointing to +x. A level floor gives exactly ``(g, 0)``. [m/s^2]"""
    floor_angle = np.asarray(floor_angle, dtype=float)
    return GRAVITY * np.cos(floor_angle), GRAVITY * np.sin(floor_angle)


def centre_at(y, vy, t):
    """Height of the centre ``t`` into a flight that starts at height ``y``
    rising at ``vy``: ``y + vy t - g t^2 / 2``. [m]"""
    return y + t * (vy - 0.5 * GRAVITY * t)


def fall_time(speed_up, height):
    """Time for a point ``height`` above a level, rising at ``speed_up``, to
    fall back to it under gravity: the positive root of
    ``height + speed_up t - g t^2 / 2``. [s]

    Written without the cancellation of ``speed_up + sqrt(...)`` for a
    falling point close to the level (that form loses ~1e-11 of the time at
    1e-7 m and 3 m/s); ``height`` below 0 counts as 0.
    """
    drop = np.maximum(height, 0.0)
    speed = np.abs(speed_up)
    total = speed + np.sqrt(speed * speed + (2 * GRAVITY) * drop)
    # rising: up and back down, (|v| + sqrt) / g; falling: the same root as
    # 2 h / (|v| + sqrt); a point at rest on the level gives 0 / tiny = 0
    return np.where(speed_up >= 0, total * (1.0 / GRAVITY), (2.0 * drop) / np.maximum(total, 1e-300))
