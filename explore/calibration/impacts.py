"""Bounces from fitted flights: the state just before and just after each
one, at the contact time (docs/physics.md sections 4 and 10).

Between two fitted flights the body touched the floor once or more. The
flight before reaches the floor (its lowest point, the shape's depth,
docs/physics.md section 2) at ``t_before``; the flight after left it at
``t_after``. When the two agree within their uncertainty the bounce is one
resolved impact at one contact time; otherwise the body struck more than
once in between (the two ends of a pin a few milliseconds apart) and the
bounce is an observed, merged one: the model runs its own impacts across
it (:mod:`hopscape.calibration.estimate`).

Per bounce the contact point's velocity ``u_t = v_x - omega r_y``,
``u_n = v_y + omega r_x`` (docs/physics.md section 1) gives the apparent
restitution ``-u_n(after) / u_n(before)``, the definition experimenters use
for non-spherical bodies (docs/physics.md section 10), and the slip
before and after; the energy is split into translational, rotational and
potential parts.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from hopscape.sim.flight import GRAVITY

#: Time resolution of the search for the contact time, per frame interval. [-]
STEPS_PER_FRAME = 20
#: Two contact times closer than this many standard deviations (plus a
#: tenth of a frame) are one impact. [-]
SAME_IMPACT = 4.0
#: Chi-square (3 degrees of freedom) of the pose difference of two flights
#: at one contact time below which they meet there: its 99.9% point. [-]
POSE_CHI2 = 16.27
#: Tangential velocity after an impact within this many standard
#: deviations of zero counts as stuck. [-]
STUCK = 2.0


def _floor_time(flights, k, shape, start, stop, step, forward):
    """First (``forward``) or last time in [start, stop] where flight ``k``'s
    lowest point is at the floor; where it never gets there, the time it
    comes closest. [s]"""
    times = np.arange(start, stop + step, step)
    s = flights.state(k, times)
    gap = s["y"] - shape.depth(s["angle"])
    under = np.flatnonzero(gap <= 0)
    if under.size == 0:
        return float(times[np.argmin(gap)])
    i = under[0] if forward else under[-1]
    j = i - 1 if forward else i + 1
    if 0 <= j < times.size:  # linear interpolation to the crossing
        return float(times[j] + (times[i] - times[j]) * gap[j] / (gap[j] - gap[i]))
    return float(times[i])


def _contact_velocity(state, shape):
    """``(u_t, u_n, r_x, r_y)`` of the lowest point at ``state``'s angle. [m/s, m]"""
    r_x, r_y = shape.contact_offset(state["angle"])
    return state["vx"] - state["spin"] * r_y, state["vy"] + state["spin"] * r_x, r_x, r_y


def _time_sd(flights, k, t, shape, state):
    """Standard deviation of a contact time: the gap's over its rate. [s]"""
    var_pos, _, var_angle, _ = flights.variances(k, t)
    r_x, _ = shape.contact_offset(state["angle"])
    rate = abs(state["vy"] + state["spin"] * r_x) + 1e-9
    return float(np.sqrt(var_pos + r_x ** 2 * var_angle) / rate)


def _same_pose(flights, k, t, shape):
    """Whether flights ``k`` and ``k + 1`` hold the body in one pose at
    ``t``, struck at the same end: centre and angle within their
    uncertainty (chi-square of 3 degrees of freedom below its 99.9% point).
    Two impacts a few frames apart (both ends of a pin) fail this: the
    flights between them were not seen."""
    before, after = flights.state(k, t), flights.state(k + 1, t)
    var_b, var_a = flights.variances(k, t), flights.variances(k + 1, t)
    chi2 = ((before["x"] - after["x"]) ** 2 / (var_b[0] + var_a[0])
            + (before["y"] - after["y"]) ** 2 / (var_b[0] + var_a[0])
            + (before["angle"] - after["angle"]) ** 2 / (var_b[2] + var_a[2]))
    end_b, end_a = (np.sign(shape.contact_offset(s["angle"])[0]) for s in (before, after))
    return bool(chi2 < POSE_CHI2) and bool(end_b == end_a)


def find_bounces(track, flights, shape):
    """One row per bounce between consecutive fitted flights.

    Returns
    -------
    pandas.DataFrame
        ``flight`` (the index of the flight before), ``resolved`` (one
        impact), ``touches`` (runs of frames at the floor in between),
        ``time`` and ``time_after`` [s] (equal when resolved) and the
        contact time's variance ``var_time`` [s^2] (resolved only), the states
        before (``*_before``) and after (``*_after``): ``vx``, ``vy``
        [m/s], ``spin`` [rad/s], ``angle`` [rad], each with its variance
        (``var_*``); the same at ``t_start`` (``*_start``: the before
        flight's frame farthest from the floor, where the model starts across
        a merged bounce) and at the after flight's middle ``t_ref_after``
        (``*_ref_after``) [s].
    """
    dt = track.frame_interval
    longest = float(np.max(np.diff(flights.t_ref))) if flights.count > 1 else 0.0
    # a twentieth of a frame, but no more than 10^5 steps between two flights' middles
    step = max(dt / STEPS_PER_FRAME, longest / 1e5)
    rows = []
    for k in range(flights.count - 1):
        start, stop = flights.t_ref[k], flights.t_ref[k + 1]
        t_b = _floor_time(flights, k, shape, start, stop, step, True)
        t_a = _floor_time(flights, k + 1, shape, start, stop, step, False)
        s_b, s_a = flights.state(k, t_b), flights.state(k + 1, t_a)
        sd = np.hypot(_time_sd(flights, k, t_b, shape, s_b), _time_sd(flights, k + 1, t_a, shape, s_a))
        resolved = abs(t_b - t_a) <= SAME_IMPACT * sd + 0.1 * dt and _same_pose(flights, k, (t_b + t_a) / 2, shape)
        if resolved:
            t_b = t_a = (t_b + t_a) / 2
        t_last, t_first = track.time[flights.last[k]], track.time[flights.first[k + 1]]
        between = flights.touching[flights.last[k] + 1:flights.first[k + 1]]
        touches = int(np.count_nonzero(np.diff(np.concatenate([[0], between.astype(np.int8)])) == 1))
        # a resolved contact time is the mean of two estimates, each with sd / sqrt(2) of the pair's
        var_time = (sd / 2) ** 2 if resolved else np.nan
        row = {"flight": k, "resolved": bool(resolved), "touches": touches, "time": t_b, "time_after": t_a,
               "var_time": var_time,
               "t_ref_before": flights.t_ref[k]}
        # where the model starts across a merged bounce: the before
        # flight's frame farthest from the floor (a release must not touch it)
        frames = track.time[flights.first[k]:flights.last[k] + 1]
        lifted = flights.state(k, frames)
        t_start = float(frames[np.argmax(lifted["y"] - shape.depth(lifted["angle"]))])
        row.update(t_start=t_start, t_ref_after=flights.t_ref[k + 1])
        for side, j, t in (("before", k, t_b), ("after", k + 1, t_a), ("start", k, t_start),
                           ("ref_after", k + 1, flights.t_ref[k + 1])):
            s = flights.state(j, t)
            var_pos, var_vel, var_angle, var_spin = flights.variances(j, t)
            row.update({f"x_{side}": float(s["x"]), f"y_{side}": float(s["y"]), f"vx_{side}": float(s["vx"]),
                        f"vy_{side}": float(s["vy"]), f"spin_{side}": float(s["spin"]),
                        f"angle_{side}": float(s["angle"]), f"var_pos_{side}": float(var_pos),
                        f"var_v_{side}": float(var_vel), f"var_angle_{side}": float(var_angle),
                        f"var_spin_{side}": float(var_spin)})
        rows.append(row)
    return pd.DataFrame(rows)


def describe_bounces(bounces, shape):
    """Per-bounce measured quantities added to ``bounces`` (a copy).

    Added columns: ``impact_angle`` [deg, the axis' inclination to the
    floor, 0-90], ``u_t_before``, ``u_n_before``, ``u_t_after``, ``u_n_after``
    [m/s], ``restitution_apparent`` [-] with ``restitution_apparent_sd``,
    ``slip`` (``slip``, ``stick`` or ``reversed``, from the tangential
    velocity after), and the energies ``translational_*``, ``rotational_*``,
    ``potential_*`` [J] before and after (potential ``m g y``, floor at 0).
    """
    out = bounces.copy()
    for side in ("before", "after"):
        s = {name: out[f"{name}_{side}"].to_numpy() for name in ("vx", "vy", "spin", "angle")}
        u_t, u_n, r_x, r_y = _contact_velocity(s, shape)
        out[f"u_t_{side}"], out[f"u_n_{side}"] = u_t, u_n
        # variances of u (the fits of x, y and the angle are independent)
        out[f"var_u_n_{side}"] = out[f"var_v_{side}"] + r_x ** 2 * out[f"var_spin_{side}"]
        out[f"var_u_t_{side}"] = out[f"var_v_{side}"] + r_y ** 2 * out[f"var_spin_{side}"]
        m, inertia = float(shape.mass), float(shape.inertia)
        out[f"translational_{side}"] = 0.5 * m * (s["vx"] ** 2 + s["vy"] ** 2)
        out[f"rotational_{side}"] = 0.5 * inertia * s["spin"] ** 2
        out[f"potential_{side}"] = m * GRAVITY * out[f"y_{side}"].to_numpy()
    ratio = -out["u_n_after"] / out["u_n_before"]
    out["restitution_apparent"] = ratio
    out["restitution_apparent_sd"] = np.abs(ratio) * np.sqrt(out["var_u_n_after"] / out["u_n_after"] ** 2
                                                            + out["var_u_n_before"] / out["u_n_before"] ** 2)
    inclination = np.degrees(np.mod(out["angle_before"].to_numpy(), np.pi))
    out["impact_angle"] = np.minimum(inclination, 180 - inclination)
    u_t_b, u_t_a = out["u_t_before"].to_numpy(), out["u_t_after"].to_numpy()
    stuck = np.abs(u_t_a) <= STUCK * np.sqrt(out["var_u_t_after"].to_numpy())
    out["slip"] = np.where(stuck, "stick", np.where(np.sign(u_t_a) == np.sign(u_t_b), "slip", "reversed"))
    return out
