"""Time history of one drop, for plots: positions, angle and energies."""
from __future__ import annotations

import numpy as np

from .drop import DropResult
from .geometry import depth


def history(result: DropResult, drop: int, times) -> dict:
    """State of drop ``drop`` at the requested ``times`` [s since release].

    Between impacts the flight is evaluated exactly from the state just
    after the last impact before each time (or the release state), in
    floor coordinates (x along the floor, y normal to it; gravity's
    components from the drop's floor angle, :func:`sim.flight.floor_gravity`).

    Returns
    -------
    dict of numpy.ndarray
        ``time`` [s], ``x``, ``y`` (centre) [m], ``theta`` [rad], ``vx``,
        ``vy`` [m/s], ``spin`` [rad/s], ``bottom`` and ``top`` heights [m],
        ``translational``, ``rotational``, ``potential`` and ``total``
        energy [J] (the potential ``m g_n y - m g_t x``, as
        :meth:`sim.DropResult.energy_before`).
    """
    times = np.asarray(times, dtype=float)
    if not 0 <= drop < result.size:
        raise ValueError(f"drop must be in [0, {result.size - 1}], got {drop}")
    imp = result.impacts
    count = int(result.count[drop])
    rel = result.release
    start_t = np.concatenate([[0.0], imp["time"][drop, :count]])
    start = {
        "x": np.concatenate([[0.0], imp["x"][drop, :count]]),
        "y": np.concatenate([[rel["y"][drop]], imp["y"][drop, :count]]),
        "theta": np.concatenate([[rel["theta"][drop]], imp["theta"][drop, :count]]),
        "vx": np.concatenate([[rel["vx"][drop]], imp["vx"][drop, :count]]),
        "vy": np.concatenate([[rel["vy"][drop]], imp["vy"][drop, :count]]),
        "spin": np.concatenate([[rel["spin"][drop]], imp["spin"][drop, :count]]),
    }
    seg = np.clip(np.searchsorted(start_t, times, side="right") - 1, 0, count)
    dt = times - start_t[seg]
    g_n, g_t = float(result.gravity_normal[drop]), float(result.gravity_along[drop])
    x = start["x"][seg] + start["vx"][seg] * dt + 0.5 * g_t * dt ** 2
    y = start["y"][seg] + start["vy"][seg] * dt - 0.5 * g_n * dt ** 2
    vy = start["vy"][seg] - g_n * dt
    vx = start["vx"][seg] + g_t * dt
    spin = start["spin"][seg]
    theta = start["theta"][seg] + spin * dt
    profile = tuple(p[drop] for p in result.profile)
    d = depth(theta, *profile)
    m, inertia = result.mass[drop], result.inertia[drop]
    trans = 0.5 * m * (vx ** 2 + vy ** 2)
    rot = 0.5 * inertia * spin ** 2
    pot = m * g_n * y - m * g_t * x
    return {"time": times, "x": x, "y": y, "theta": theta, "vx": vx, "vy": vy, "spin": spin,
            "bottom": y - d, "top": y + d, "translational": trans, "rotational": rot,
            "potential": pot, "total": trans + rot + pot}
