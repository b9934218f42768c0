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

#: A piece closer to the floor than this, and approaching, is in contact:
#: 1 nm, some 0.5 ns of travel at drop speeds. [m]
CONTACT_GAP = 1e-9
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


def _ellipse(s, c, round_long, round_wide, rounded):
    """Support ``E`` of the ellipse part and ``dE/dtheta``.

    Where the two semi-axes are equal (``rounded`` False) ``E`` is exactly
    the radius; the chunk-wide shortcut gives the same bits as the general
    formula does for those drops, so results never depend on chunking.
    """
    if not np.any(rounded):
        return round_long, 0.0
    ellipse = np.sqrt((round_long * s) ** 2 + (round_wide * c) ** 2)
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = (round_long ** 2 - round_wide ** 2) * s * c / ellipse
    slope = np.where(rounded & (ellipse > 0), slope, 0.0)
    return np.where(rounded, ellipse, round_long), slope


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
    along, across : numpy.ndarray
        Mean corner signs of the touching pieces: ``(+-1, +-1)`` for one
        corner, 0 along the axis for a flat landing on both ends.
    """
    n = y.size
    four = bool(np.any(profile[1] > 0))
    corners = CORNERS if four else CORNERS[:2]
    out_t = np.full(n, np.nan)
    out_along = np.zeros(n)
    out_across = np.zeros(n)
    hl, hw, rl, rw = profile
    # exact far-field start: a centre above d_high cannot touch before it
    # falls back to d_high
    fall = (vy + np.sqrt(np.maximum(vy * vy + 2 * GRAVITY * (y - d_high), 0.0))) / GRAVITY
    t0 = np.where(y > d_high, fall, 0.0)
    # every per-body number in one array, so that dropping the bodies that
    # have found their contact is one gather
    rows = np.stack([y, vy, theta, omega, d_high, GRAVITY + omega * omega * d2, hl, hw, rl, rw,
                     (rl != rw).astype(float), np.arange(n, dtype=float), t0])
    for _ in range(max_iterations):
        if rows.shape[1] == 0:
            break
        yy, vv, th, om, dh, curv, hl, hw, rl, rw, rounded, idx, t = rows
        rounded = rounded > 0
        angle = th + om * t
        s, c = np.sin(angle), np.cos(angle)
        vt = vv - GRAVITY * t
        yt = yy + t * (vv - 0.5 * GRAVITY * t)
        ellipse, ellipse_slope = _ellipse(s, c, rl, rw, rounded)
        base_gap = yt - ellipse
        base_slope = vt - om * ellipse_slope
        a_gap, a_slope = hl * s, om * hl * c
        if four:
            b_gap, b_slope = hw * c, om * hw * s
        gaps, slopes = [], []
        for along, across in corners:
            gap = base_gap - a_gap if along > 0 else base_gap + a_gap
            slope = base_slope - a_slope if along > 0 else base_slope + a_slope
            if four:
                gap = gap - b_gap if across > 0 else gap + b_gap
                slope = slope + b_slope if across > 0 else slope - b_slope
            gaps.append(gap)
            slopes.append(slope)
        touching = [(g < CONTACT_GAP) & (v < 0) for g, v in zip(gaps, slopes)]
        hit = touching[0]
        steps = []
        for g, v, tk in zip(gaps, slopes, touching):
            if tk is not hit:
                hit = hit | tk
            # first root of g + v tau - curv tau^2 / 2: no piece can touch sooner
            steps.append((v + np.sqrt(v * v + 2 * curv * np.maximum(g, 0.0))) / curv)
        step, slope_min = steps[0], slopes[0]
        for tau, v in zip(steps[1:], slopes[1:]):
            shorter = tau < step
            step, slope_min = np.where(shorter, tau, step), np.where(shorter, v, slope_min)
        # The piece that sets the step is, at t + step, between 0 and
        # (curv - g) step^2 above the floor (its gap'' lies within
        # -curv .. curv - 2g): when that is below the contact gap and the
        # piece still approaches, the contact is at t + step without
        # another evaluation.
        spread = curv - GRAVITY
        sure = (spread * step * step < CONTACT_GAP) & (slope_min + spread * step < 0) & ~hit
        # exact far-field step: a centre above d_high cannot touch before it
        # falls back to d_high
        above = yt > dh
        if np.any(above):
            fall = (vt + np.sqrt(np.maximum(vt * vt + 2 * GRAVITY * (yt - dh), 0.0))) / GRAVITY
            step = np.where(above, np.maximum(step, fall), step)
            sure &= ~above
        ended = hit | sure
        if np.any(ended):
            lowest = gaps[0]
            for g in gaps[1:]:
                lowest = np.minimum(lowest, g)
            count = np.zeros(int(ended.sum()))
            sum_along = np.zeros_like(count)
            sum_across = np.zeros_like(count)
            for (along, across), g, v, tau, tk in zip(corners, gaps, slopes, steps, touching):
                # touching now within TIE_GAP of the lowest, or reaching the
                # floor within TIE_GAP of the first piece's arrival
                tied = np.where(hit, tk & (g <= lowest + TIE_GAP), (tau - step) * np.abs(v) <= TIE_GAP)[ended]
                count += tied
                sum_along += along * tied
                sum_across += across * tied
            done = idx[ended].astype(np.int64)
            out_t[done] = (t + np.where(hit, 0.0, step))[ended]
            out_along[done] = sum_along / count
            out_across[done] = sum_across / count
            keep = ~ended
            rows = rows[:, keep]
            step = step[keep]
            t = rows[12]
        t += step
    return out_t, out_along, out_across


TWO_PI = 2.0 * np.pi


def sincos_single(theta):
    """``sin`` and ``cos`` in single precision after a double-precision
    reduction to ``[-pi, pi]``: absolute error below 3e-7, some fifteen times
    faster than double precision here. Used only for flight peaks, where it
    moves a height by under 3e-7 times the body size (1e-8 m for a 2 cm
    capsule); never for the contact search.
    """
    reduced = (theta - TWO_PI * np.rint(theta * (1.0 / TWO_PI))).astype(np.float32)
    return np.sin(reduced), np.cos(reduced)


def depth_at(theta, profile):
    """Depth of the lowest point below the centre at ``theta`` (single
    precision trigonometry, see :func:`sincos_single`). [m]"""
    half_long, half_wide, round_long, round_wide = profile
    s, c = sincos_single(theta)
    ellipse, _ = _ellipse(s, c, round_long, round_wide, round_long != round_wide)
    return half_long * np.abs(s) + half_wide * np.abs(c) + ellipse


def _depth_derivatives(theta, profile, rounded):
    """``d``, ``d'`` and ``d''`` of the depth (one-sided mean at corners)."""
    half_long, half_wide, round_long, round_wide = profile
    s, c = sincos_single(theta)
    ellipse, e1 = _ellipse(s, c, round_long, round_wide, rounded)
    if np.any(rounded):
        stretch = round_long ** 2 - round_wide ** 2
        with np.errstate(invalid="ignore", divide="ignore"):
            e2 = np.where(rounded, (stretch * (c * c - s * s) - e1 * e1) / ellipse, 0.0)
    else:
        e2 = 0.0
    sa, ca = np.abs(s), np.abs(c)
    d = half_long * sa + half_wide * ca + ellipse
    d1 = half_long * np.sign(s) * c - half_wide * np.sign(c) * s + e1
    d2 = e2 - half_long * sa - half_wide * ca
    return d, d1, d2


def _breakpoints(profile):
    """Angles in [0, pi) where the depth has its corners and turning points,
    and the exact depth there: flat (0), the rectangle's diagonal (theta*),
    upright (pi/2), the other diagonal (pi - theta*). Between two
    consecutive breakpoints both parts of the depth are monotone."""
    half_long, half_wide, round_long, round_wide = profile
    hyp = np.hypot(half_long, half_wide)
    diagonal = np.arctan2(half_long, half_wide)  # where A|sin| + B|cos| peaks
    with np.errstate(invalid="ignore", divide="ignore"):
        d_diag = np.where(hyp > 0, hyp + np.hypot(round_long * half_long, round_wide * half_wide) / hyp,
                          half_wide + round_wide)
    angles = np.stack([np.zeros_like(diagonal), diagonal, np.full_like(diagonal, 0.5 * np.pi), np.pi - diagonal])
    depths = np.stack([half_wide + round_wide, d_diag, half_long + round_long, d_diag])
    return angles, depths


def flight_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps=6, intervals=7):
    """Highest centre, lowest-point and top-point heights over a flight.

    The heights are those actually reached in ``[0, duration]``, not the
    ballistic apex: a flight that strikes again on the way up peaks at its
    end.

    The centre peak is exact. For the lowest point ``y - d(theta)`` and the
    top point ``y + d(theta)``: the flight is cut at the breakpoints of the
    depth (axis flat, upright, or along the rectangle's diagonal), where the
    depth is known exactly and between which it is monotone. On each piece
    ``max y`` (exact, the centre is a parabola) plus the larger (top) or
    minus the smaller (bottom) end depth bounds the height from above. Pieces
    of one kind share their depth bounds, so only the pieces nearest the
    apex can hold the peak: the one holding the apex and the three on either
    side (four kinds of piece) bound every other. They are polished in order of their bound, by Newton steps on
    ``h' = 0`` kept inside a bracket that always moves uphill, until no
    unpolished piece's bound exceeds the best height found. Checked against
    dense sampling in ``tests/test_flight.py``.

    Returns
    -------
    centre, bottom, top : numpy.ndarray
        Peak heights above the floor. [m]
    """
    half_long, half_wide, round_long, round_wide = profile
    rounded = round_long != round_wide
    t_apex = np.clip(vy / GRAVITY, 0.0, duration)
    centre = y + vy * t_apex - 0.5 * GRAVITY * t_apex ** 2
    spread = d_high - d_low
    disc = np.sqrt(np.maximum(vy * vy - 2 * GRAVITY * (centre - spread - y), 0.0))
    t_lo = np.clip((vy - disc) / GRAVITY, 0.0, duration)
    t_hi = np.clip((vy + disc) / GRAVITY, 0.0, duration)

    def centre_at(t):
        return y + t * (vy - 0.5 * GRAVITY * t)

    angles, depths = _breakpoints(profile)
    # below 1e-9 rad/s the depth moves by under 1e-9 of the body size over a
    # second of flight: count it as not spinning (the apex is the peak)
    spinning = np.abs(omega) > 1e-9
    safe_omega = np.where(spinning, omega, 1.0)
    # breakpoint index k (4 per half turn) at or below the angle at the apex
    phase = theta + omega * t_apex
    period = np.floor(phase / np.pi)
    within = phase - period * np.pi
    j = (within[None, :] >= angles).sum(axis=0) - 1
    base = 4 * period + j

    def breakpoint(k):
        q = np.floor(k / 4)
        r = (k - 4 * q).astype(np.int64)
        return (q * np.pi + np.take_along_axis(angles, r[None, :], 0)[0],
                np.take_along_axis(depths, r[None, :], 0)[0])

    half = intervals // 2
    marks = [breakpoint(base + i) for i in range(-half, half + 2)]
    times = [(ang - theta) / safe_omega for ang, _ in marks]
    pieces = []  # (lo, hi, d_a, d_b) per piece, clipped to the window
    for i in range(intervals):
        (t_a, (_, d_a)), (t_b, (_, d_b)) = (times[i], marks[i]), (times[i + 1], marks[i + 1])
        lo = np.maximum(np.minimum(t_a, t_b), t_lo)
        hi = np.minimum(np.maximum(t_a, t_b), t_hi)
        pieces.append((lo, hi, d_a, d_b))
    # breakpoints inside the window are exact candidates, free of trigonometry
    exact = [(t, d, spinning & (t >= t_lo) & (t <= t_hi)) for t, (_, d) in zip(times, marks)]

    d_ends = [depth_at(theta + omega * t, profile) for t in (t_lo, t_apex, t_hi)]
    peaks = []
    for sign in (-1.0, 1.0):
        best = np.maximum.reduce([centre_at(t) + sign * d for t, d in zip((t_lo, t_apex, t_hi), d_ends)])
        for t, d, inside in exact:
            best = np.where(inside, np.maximum(best, centre_at(t) + sign * d), best)
        bounds = []
        for lo, hi, d_a, d_b in pieces:
            exists = spinning & (hi > lo)
            y_top = centre_at(np.clip(t_apex, lo, hi))
            bound = y_top + (np.maximum(d_a, d_b) if sign > 0 else -np.minimum(d_a, d_b))
            bounds.append(np.where(exists, bound, -np.inf))
        bounds = np.stack(bounds)
        los = np.stack([p[0] for p in pieces])
        his = np.stack([p[1] for p in pieces])
        # a body that does not spin keeps its depth: the apex is the peak
        for _ in range(intervals):
            pick = np.argmax(bounds, axis=0)
            cols = np.arange(y.size)
            open_ = bounds[pick, cols] > best + 1e-12
            if not open_.any():
                break
            sel = np.flatnonzero(open_)
            p_sel = pick[sel]
            bounds[p_sel, sel] = -np.inf
            found = _polish(y[sel], vy[sel], theta[sel], omega[sel], tuple(p[sel] for p in profile),
                            rounded[sel] if np.ndim(rounded) else rounded,
                            los[p_sel, sel], his[p_sel, sel], sign, polish_steps)
            best[sel] = np.maximum(best[sel], found)
        peaks.append(best)
    return centre, peaks[0], peaks[1]


def _polish(y, vy, theta, omega, profile, rounded, lo, hi, sign, steps):
    """Highest ``y +- d`` on ``[lo, hi]``: Newton on ``h' = 0`` where ``h`` is
    concave, otherwise halving towards the uphill side; the bracket only
    ever shrinks towards where ``h`` rises, so it ends at a local maximum
    or an end. Returns the best height seen inside (the caller has the
    ends: breakpoints or window edges)."""
    best = -np.inf
    t = 0.5 * (lo + hi)
    for _ in range(steps):
        d, d1, d2 = _depth_derivatives(theta + omega * t, profile, rounded)
        h = y + t * (vy - 0.5 * GRAVITY * t) + sign * d
        best = np.maximum(best, h)
        slope = vy - GRAVITY * t + sign * omega * d1
        curve = sign * omega * omega * d2 - GRAVITY
        lo = np.where(slope > 0, t, lo)
        hi = np.where(slope > 0, hi, t)
        newton = t - slope / np.where(curve < 0, curve, -1.0)
        inside = (curve < 0) & (newton > lo) & (newton < hi)
        t = np.where(inside, newton, 0.5 * (lo + hi))
    d = depth_at(theta + omega * t, profile)
    return np.maximum(best, y + t * (vy - 0.5 * GRAVITY * t) + sign * d)
