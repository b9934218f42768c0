"""Exact ballistic flights, the search for the next contact, flight peaks.

In flight the centre follows a parabola and the angle grows linearly, so a
flight is evaluated in closed form at any time; there is no time step.

Why the contact search cannot skip a contact
--------------------------------------------
The depth ``d(theta)`` of the lowest point is the maximum over the four
corners ``k`` of the rectangle part of a smooth function
``d_k(theta) = A s_k sin(theta) + B c_k cos(theta) + E(theta)`` (``E`` the
ellipse support), so the floor gap is the minimum of smooth pieces
``g_k(t) = y(t) - d_k(theta(t))``. Along a flight ``theta'' = 0``, hence
``g_k'' = -g - omega^2 d_k''`` and ``|d_k''| <= D2`` with
``D2 = sqrt(A^2 + B^2) + (max(a, b)^2 / min(a, b) - min(a, b))``
(corner part plus radius of curvature minus support of the ellipse), so
``g_k'' >= -G`` with ``G = g + omega^2 D2``. From any time ``t`` the piece
therefore stays above the quadratic ``g_k + g_k' tau - G tau^2 / 2``, which is
positive up to its first root: stepping by the smallest such root over the
pieces (conservative advancement, B. Mirtich, PhD thesis, UC Berkeley, 1996)
never passes a zero of any piece, grazing ones included. The step is also
never shorter than the time for the centre's parabola to drop to the height
``d_max`` that no part of the body can reach below, which is exact too. The
iterates approach the first root from above, quadratically near a
transversal crossing.
"""
from __future__ import annotations

import numpy as np

#: Standard acceleration of gravity (3rd CGPM, 1901; ISO 80000-3). [m/s^2]
GRAVITY = 9.80665

#: The four rectangle corners (along-axis sign, across-axis sign).
CORNERS = np.array([(1.0, 1.0), (-1.0, 1.0), (1.0, -1.0), (-1.0, -1.0)])

#: A piece closer to the floor than this, and approaching, is in contact. [m]
CONTACT_GAP = 1e-10
#: Pieces within this of the lowest one touch together (flat landing). [m]
TIE_GAP = 1e-12


def curvature_bound(half_long, half_wide, round_long, round_wide):
    """Bound ``D2 >= |d_k''(theta)|`` on every smooth piece of the depth. [m]"""
    big = np.maximum(round_long, round_wide)
    small = np.minimum(round_long, round_wide)
    with np.errstate(divide="ignore", invalid="ignore"):
        ellipse = np.where(small > 0, big ** 2 / small - small, 0.0)
    return np.hypot(half_long, half_wide) + ellipse


def depth_range(half_long, half_wide, round_long, round_wide):
    """Lower bound of the smallest and upper bound of the largest depth. [m]

    Exact for the capsule, sphere, spheroid and cylinder.
    """
    low = np.minimum(half_long, half_wide) + np.minimum(round_long, round_wide)
    high = np.hypot(half_long, half_wide) + np.maximum(round_long, round_wide)
    return low, high


def _pieces(theta, omega, profile, corners):
    """Depth and depth rate of each corner piece: arrays ``(n, pieces)``."""
    half_long, half_wide, round_long, round_wide = profile
    s, c = np.sin(theta), np.cos(theta)
    ellipse = np.sqrt((round_long * s) ** 2 + (round_wide * c) ** 2)
    with np.errstate(invalid="ignore", divide="ignore"):
        ellipse_slope = np.where(ellipse > 0, (round_long ** 2 - round_wide ** 2) * s * c / ellipse, 0.0)
    along, across = corners[:, 0], corners[:, 1]
    ls, lc = (half_long * s)[:, None], (half_long * c)[:, None]
    ws, wc = (half_wide * s)[:, None], (half_wide * c)[:, None]
    d = ls * along + wc * across + ellipse[:, None]
    slope = lc * along - ws * across + ellipse_slope[:, None]
    return d, slope * omega[:, None]


def piece_mask(half_wide, corners_used):
    """Which corner pieces exist: a rectangle with no width has two."""
    mask = np.ones((half_wide.size, corners_used), dtype=bool)
    if corners_used == 4:
        mask[:, 2:] = (half_wide > 0)[:, None]
    return mask


def next_contact(y, vy, theta, omega, profile, d2, d_high, max_iterations=400):
    """Time to the first contact of each body with the floor ``y = 0``.

    Parameters
    ----------
    y, vy : numpy.ndarray
        Height and vertical velocity of the centre now. [m], [m/s]
    theta, omega : numpy.ndarray
        Angle and spin now. [rad], [rad/s]
    profile : tuple of numpy.ndarray
        ``(half_long, half_wide, round_long, round_wide)``. [m]
    d2, d_high : numpy.ndarray
        :func:`curvature_bound` and the upper bound of :func:`depth_range`.
    max_iterations : int
        Conservative-advancement steps before a body is given up as failed.

    Returns
    -------
    time : numpy.ndarray
        Time to contact [s]; NaN where the search failed.
    weights : numpy.ndarray, shape (n, pieces)
        1 for each corner piece that touches at that time (two for a flat
        landing), else 0.
    corners : numpy.ndarray
        The corner table the weights refer to.
    """
    n = y.size
    corners_used = 4 if np.any(profile[1] > 0) else 2
    corners = CORNERS[:corners_used]
    mask = piece_mask(profile[1], corners_used)
    t = np.zeros(n)
    out_t = np.full(n, np.nan)
    out_w = np.zeros((n, corners_used))
    idx = np.arange(n)
    # local copies that shrink as bodies finish
    yy, vv, th, om, dd, dh, mk = y, vy, theta, omega, d2, d_high, mask
    prof = profile
    curv = GRAVITY + om ** 2 * dd
    for _ in range(max_iterations):
        if idx.size == 0:
            break
        yt = yy + vv * t - 0.5 * GRAVITY * t * t
        vt = vv - GRAVITY * t
        d, rate = _pieces(th + om * t, om, prof, corners)
        gap = np.where(mk, yt[:, None] - d, np.inf)
        slope = vt[:, None] - rate
        lowest = gap.min(axis=1)
        touching = (gap < CONTACT_GAP) & (slope < 0)
        hit = touching.any(axis=1)
        if np.any(hit):
            tied = (gap <= lowest[:, None] + TIE_GAP) & touching
            out_t[idx[hit]] = t[hit]
            out_w[idx[hit]] = tied[hit]
        # conservative step: first root of gap + slope*tau - curv*tau^2/2
        steps = (slope + np.sqrt(slope * slope + 2 * curv[:, None] * np.maximum(gap, 0.0))) / curv[:, None]
        step = np.where(mk, steps, np.inf).min(axis=1)
        # exact far-field step: the centre above d_high cannot touch before it
        # falls back to d_high
        above = yt > dh
        disc = np.sqrt(np.maximum(vt * vt + 2 * GRAVITY * (yt - dh), 0.0))
        step = np.where(above, np.maximum(step, (vt + disc) / GRAVITY), step)
        keep = ~hit
        if not keep.all():
            idx, t, step = idx[keep], t[keep], step[keep]
            yy, vv, th, om, dd, dh, mk, curv = (a[keep] for a in (yy, vv, th, om, dd, dh, mk, curv))
            prof = tuple(p[keep] for p in prof)
        t = t + step
    return out_t, out_w, corners


def _depth_derivatives(theta, profile):
    """``d``, ``d'`` and ``d''`` of the depth on its smooth parts."""
    half_long, half_wide, round_long, round_wide = profile
    s, c = np.sin(theta), np.cos(theta)
    ellipse = np.sqrt((round_long * s) ** 2 + (round_wide * c) ** 2)
    stretch = round_long ** 2 - round_wide ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        safe = np.where(ellipse > 0, ellipse, 1.0)
        e1 = np.where(ellipse > 0, stretch * s * c / safe, 0.0)
        e2 = np.where(ellipse > 0, (stretch * (c * c - s * s) - e1 * e1) / safe, 0.0)
    sa, ca = np.abs(s), np.abs(c)
    d = half_long * sa + half_wide * ca + ellipse
    d1 = half_long * np.sign(s) * c - half_wide * np.sign(c) * s + e1
    d2 = -half_long * sa - half_wide * ca + e2
    return d, d1, d2


def flight_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, newton_steps=4):
    """Highest centre, lowest-point and top-point heights over a flight.

    The heights are those actually reached in ``[0, duration]``, not the
    ballistic apex: a flight that strikes again on the way up peaks at its
    end.

    The centre peak is exact. The lowest point ``y - d(theta)`` and the top
    point ``y + d(theta)`` can only peak where the centre is within
    ``d_high - d_low`` of its own peak. In that window the candidates are its
    ends, the centre's apex and every quarter turn (axis flat or upright,
    where the depth is known exactly: ``B + b`` or ``A + a``; the corners of
    the depth sit there). The best candidate is then polished by safeguarded
    Newton steps on ``h' = 0`` towards its better neighbour, and only kept if
    higher. Checked against dense sampling in ``tests/test_flight.py``.

    Returns
    -------
    centre, bottom, top : numpy.ndarray
        Peak heights above the floor. [m]
    """
    half_long, half_wide, round_long, round_wide = profile
    t_apex = np.clip(vy / GRAVITY, 0.0, duration)
    centre = y + vy * t_apex - 0.5 * GRAVITY * t_apex ** 2
    spread = d_high - d_low
    disc = np.sqrt(np.maximum(vy ** 2 - 2 * GRAVITY * (centre - spread - y), 0.0))
    t_lo = np.clip((vy - disc) / GRAVITY, 0.0, duration)
    t_hi = np.clip((vy + disc) / GRAVITY, 0.0, duration)

    # quarter turns in the window
    quarter = 0.5 * np.pi
    th_a, th_b = theta + omega * t_lo, theta + omega * t_hi
    k_first = np.ceil(np.minimum(th_a, th_b) / quarter)
    k_last = np.floor(np.maximum(th_a, th_b) / quarter)
    turns = np.where(omega != 0, np.maximum(k_last - k_first + 1, 0), 0).astype(np.int64)
    columns = int(turns.max()) if turns.size else 0
    k = k_first[:, None] + np.arange(columns)[None, :]
    valid = np.arange(columns)[None, :] < turns[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        t_q = np.where(valid, (k * quarter - theta[:, None]) / omega[:, None], t_apex[:, None])
    t_q = np.clip(t_q, t_lo[:, None], t_hi[:, None])
    upright = np.mod(k, 2) == 1
    d_q = np.where(upright, (half_long + round_long)[:, None], (half_wide + round_wide)[:, None])

    ends = np.stack([t_lo, t_apex, t_hi], axis=1)
    d_ends = depth_at(theta[:, None] + omega[:, None] * ends, profile, column=True)
    times = np.concatenate([ends, t_q], axis=1)
    depths = np.concatenate([d_ends, d_q], axis=1)
    centre_y = y[:, None] + vy[:, None] * times - 0.5 * GRAVITY * times * times
    rows = np.arange(y.size)
    peaks = []
    for sign in (-1.0, 1.0):
        h = centre_y + sign * depths
        best = np.argmax(h, axis=1)
        t_best, h_best = times[rows, best], h[rows, best]
        below = np.where(times < t_best[:, None], times, -np.inf).max(axis=1)
        above = np.where(times > t_best[:, None], times, np.inf).min(axis=1)
        below = np.where(np.isfinite(below), below, t_best)
        above = np.where(np.isfinite(above), above, t_best)
        # the neighbour side where h rises more steeply out of t_best
        h_below = _height(y, vy, theta, omega, profile, below, sign)
        h_above = _height(y, vy, theta, omega, profile, above, sign)
        lo = np.where(h_above > h_below, t_best, below)
        hi = np.where(h_above > h_below, above, t_best)
        t = 0.5 * (lo + hi)
        for _ in range(newton_steps):
            d, d1, d2 = _depth_derivatives(theta + omega * t, profile)
            slope = vy - GRAVITY * t + sign * omega * d1
            curve = -GRAVITY + sign * omega * omega * d2
            step = np.where(curve < 0, -slope / np.where(curve < 0, curve, -1.0),
                            np.where(slope > 0, hi - t, lo - t))
            t = np.clip(t + step, lo, hi)
        h_new = _height(y, vy, theta, omega, profile, t, sign)
        peaks.append(np.maximum(h_best, np.maximum(h_new, np.maximum(h_below, h_above))))
    return centre, peaks[0], peaks[1]


def depth_at(theta, profile, column=False):
    """Depth at ``theta``; ``column`` broadcasts per-drop numbers along axis 1."""
    half_long, half_wide, round_long, round_wide = (p[:, None] for p in profile) if column else profile
    s, c = np.sin(theta), np.cos(theta)
    return (half_long * np.abs(s) + half_wide * np.abs(c)
            + np.sqrt((round_long * s) ** 2 + (round_wide * c) ** 2))


def _height(y, vy, theta, omega, profile, t, sign):
    return y + vy * t - 0.5 * GRAVITY * t * t + sign * depth_at(theta + omega * t, profile)
