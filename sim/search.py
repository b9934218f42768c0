"""The search for the next contact of a body in flight with the floor.

Why the search cannot skip a contact
------------------------------------
The depth ``d(theta)`` of the lowest point is the maximum over the four
corners ``k`` of the rectangle part of a smooth function
``d_k(theta) = A s_k sin(theta) + B c_k cos(theta) + E(theta)`` (``E`` the
ellipse support; :mod:`sim.geometry`), so the floor gap is the minimum of
smooth pieces ``g_k(t) = y(t) - d_k(theta(t))``. Along a flight
``theta'' = 0``, hence ``g_k'' = -g - omega^2 d_k''`` and ``|d_k''| <= D2``
with ``D2 = sqrt(A^2 + B^2) + (max(a, b)^2 / min(a, b) - min(a, b))``
(corner part plus radius of curvature minus support of the ellipse,
:func:`sim.geometry.curvature_bound`), so ``g_k'' >= -G`` with
``G = g + omega^2 D2`` (the "sag"). From any time ``t`` the piece
therefore stays above the quadratic ``g_k + g_k' tau - G tau^2 / 2``, which
is positive up to its first root: stepping by the smallest such root over
the pieces (conservative advancement, B. Mirtich, PhD thesis, UC Berkeley,
1996) never passes a zero of any piece, grazing ones included. The step is
also never shorter than the time for the centre's parabola to drop to the
height ``d_max`` that no part of the body can reach below, which is exact
too. The iterates approach the first root from above, quadratically near a
transversal crossing.

On an inclined floor the search runs in floor coordinates (y normal to the
floor) on the level-floor flight that has the same path: normal gravity
``g_n = g cos(alpha)`` over time ``t`` is ``g`` over ``s = t sqrt(g_n / g)``
with the normal speed and the spin scaled by ``sqrt(g / g_n)``
(:func:`sim.drop._run_chunk`). The gap as a function of ``s`` is then
exactly the gap above, so ``g`` in the bound is the right constant and the
argument holds as written; ``CONTACT_GAP`` is a distance and needs no
scaling.
"""
from __future__ import annotations

import numpy as np

from ._vector import pick, sincos_of_tan_half
from .flight import GRAVITY, fall_time
from .geometry import CORNERS, round_support

#: A piece closer to the floor than this, and approaching, is in contact:
#: 1 nm, some 0.5 ns of travel at drop speeds. [m]
CONTACT_GAP = 1e-9
#: Pieces within this of the lowest one touch together (flat landing). [m]
TIE_GAP = 1e-12


class _Row:
    """Rows of the search's per-body stack (one array, so that dropping the
    bodies that have found their contact is one gather)."""

    Y, VY = 0, 1  # centre height and rate at the search's start [m], [m/s]
    # theta / 2 and omega / 2, for the tangent half-angle (exact halvings,
    # so the angle is bit for bit (theta + omega t) / 2) [rad], [rad/s]
    HALF_THETA, HALF_OMEGA = 2, 3
    D_HIGH = 4  # largest depth (sim.geometry.depth_range) [m]
    # 2 G, 1 / G and G - g for the sag G = g + omega^2 D2 [m/s^2], [s^2/m], [m/s^2]
    TWICE_SAG, INV_SAG, SPIN_SAG = 5, 6, 7
    HALF_LONG, SPIN_HALF_LONG = 8, 9  # A [m], omega A [m/s]
    ROUND_LONG = 10  # a [m]
    INDEX = 11  # place in the caller's arrays
    TIME = 12  # time reached [s]
    COMMON = 13  # rows every batch has
    HALF_WIDE, SPIN_HALF_WIDE = 13, 14  # B [m], omega B [m/s]: batches with a flat face
    ROUND_WIDE, ROUNDED = -2, -1  # b [m], a != b: batches with an ellipse


def next_contact(y, vy, theta, omega, profile, curvature_bound, d_high, max_iterations=400, strikes=True):
    """Time to the first contact of each body with the floor ``y = 0``.

    Parameters
    ----------
    y, vy : numpy.ndarray
        Height and vertical velocity of the centre now. [m], [m/s]
    theta, omega : numpy.ndarray
        Angle and spin now. [rad], [rad/s]
    profile : tuple of numpy.ndarray
        ``(half_long, half_wide, round_long, round_wide)``. [m]
    curvature_bound, d_high : numpy.ndarray
        :func:`sim.geometry.curvature_bound` and the upper bound of
        :func:`sim.geometry.depth_range`. [m]
    max_iterations : int
        Conservative-advancement steps before a body is given up as failed.
    strikes : bool
        Also say which pieces strike (False: only the time is wanted, as
        for the flight after a drop's last impact).

    Returns
    -------
    time : numpy.ndarray
        Time to contact [s]; NaN where the search failed.
    along, across : numpy.ndarray or None
        Mean corner signs of the touching pieces: ``(+-1, +-1)`` for one
        corner, 0 along the axis for a flat landing on both ends (None
        without ``strikes``).
    """
    n = y.size
    half_long, half_wide, round_long, round_wide = profile
    four = bool(np.any(half_wide > 0))
    out_t = np.full(n, np.nan)
    rounded_any = bool(np.any(round_long != round_wide))
    sag = GRAVITY + omega * omega * curvature_bound
    # every per-body number in one array (_Row), so that dropping the bodies
    # that have found their contact is one gather; the flat-face and
    # ellipse rows only where the batch has such bodies (each row written
    # in place: no stacking copy)
    rows = np.empty((_Row.COMMON + 2 * four + 2 * rounded_any, n))
    rows[_Row.Y], rows[_Row.VY] = y, vy
    np.multiply(0.5, theta, out=rows[_Row.HALF_THETA])
    np.multiply(0.5, omega, out=rows[_Row.HALF_OMEGA])
    rows[_Row.D_HIGH] = d_high
    np.multiply(2.0, sag, out=rows[_Row.TWICE_SAG])
    np.divide(1.0, sag, out=rows[_Row.INV_SAG])
    np.subtract(sag, GRAVITY, out=rows[_Row.SPIN_SAG])
    rows[_Row.HALF_LONG] = half_long
    np.multiply(omega, half_long, out=rows[_Row.SPIN_HALF_LONG])
    rows[_Row.ROUND_LONG] = round_long
    rows[_Row.INDEX] = np.arange(n)
    if four:
        rows[_Row.HALF_WIDE] = half_wide
        np.multiply(omega, half_wide, out=rows[_Row.SPIN_HALF_WIDE])
    if rounded_any:
        rows[_Row.ROUND_WIDE] = round_wide
        np.not_equal(round_long, round_wide, out=rows[_Row.ROUNDED])
    del sag
    # exact far-field start: a centre above d_high cannot touch before it
    # falls back to d_high (worked out only for such bodies: after an
    # impact there are none)
    high = np.flatnonzero(y > d_high)
    rows[_Row.TIME] = 0.0
    rows[_Row.TIME, high] = fall_time(vy[high], y[high] - d_high[high])
    # Bodies that have found their contact stay in ``rows`` (frozen: their
    # step is zeroed) until they are an eighth of it: a gather of all rows
    # costs as much as some thirty array operations, and most steps end
    # only a few bodies.
    alive = np.ones(n, bool)
    finished = 0  # bodies in rows whose contact is recorded
    t = rows[_Row.TIME]
    for _ in range(max_iterations):
        if rows.shape[1] == finished:
            break
        y_0, vy_0, d_top = rows[_Row.Y], rows[_Row.VY], rows[_Row.D_HIGH]
        half_omega = rows[_Row.HALF_OMEGA]
        s, c = sincos_of_tan_half(np.tan(rows[_Row.HALF_THETA] + half_omega * t))
        gt = GRAVITY * t
        vt = vy_0 - gt
        yt = y_0 + t * (vy_0 - 0.5 * gt)
        if rounded_any:
            ellipse, ellipse_slope = round_support(s, c, rows[_Row.ROUND_LONG], rows[_Row.ROUND_WIDE],
                                                   rows[_Row.ROUNDED] > 0)
            base_gap = yt - ellipse
            base_slope = vt - (half_omega + half_omega) * ellipse_slope
        else:
            base_gap, base_slope = yt - rows[_Row.ROUND_LONG], vt
        flat = (rows[_Row.HALF_WIDE] * c, rows[_Row.SPIN_HALF_WIDE] * s) if four else None
        gaps, slopes = _corner_pieces(base_gap, base_slope, rows[_Row.HALF_LONG] * s,
                                      rows[_Row.SPIN_HALF_LONG] * c, flat)
        touching = [(g < CONTACT_GAP) & (v < 0) for g, v in zip(gaps, slopes)]
        hit = touching[0]
        for tk in touching[1:]:
            hit = hit | tk
        # first root of g + v tau - sag tau^2 / 2: no piece can touch sooner
        # (times sag: the common factor 1 / sag is applied once, to the
        # shortest; scaling by a positive number keeps the order)
        twice_sag = rows[_Row.TWICE_SAG]
        reach = [v + np.sqrt(v * v + twice_sag * np.maximum(g, 0.0)) for g, v in zip(gaps, slopes)]
        step, slope_min = reach[0], slopes[0]
        for tau, v in zip(reach[1:], slopes[1:]):
            shorter = tau < step
            step, slope_min = np.minimum(tau, step), pick(shorter, v, slope_min)
        step = step * rows[_Row.INV_SAG]
        # The piece that sets the step is, at t + step, between 0 and
        # (sag - g) step^2 above the floor (its gap'' lies within
        # -sag .. sag - 2g): when that is below the contact gap and the
        # piece still approaches, the contact is at t + step without
        # another evaluation.
        spread_step = rows[_Row.SPIN_SAG] * step
        sure = (spread_step * step < CONTACT_GAP) & (slope_min + spread_step < 0) & ~hit
        # exact far-field extension: where the centre is above d_high at the
        # end of the step, no part of the body can touch before the centre
        # falls back to d_high, so the step goes on to then (one evaluation
        # fewer for a fifth of the steps in the benchmark population)
        t_end = t + step
        y_end = y_0 + t_end * (vy_0 - 0.5 * GRAVITY * t_end)
        above = y_end > d_top
        high = np.flatnonzero(above)
        if 4 * high.size > above.size:
            step = step + fall_time(vy_0 - GRAVITY * t_end, y_end - d_top) * above
            sure &= ~above
        elif high.size:
            # few bodies up there: work on them alone
            step[high] += fall_time(vy_0[high] - GRAVITY * t_end[high], y_end[high] - d_top[high])
            sure[high] = False
        ended = hit | sure
        if finished:
            ended &= alive
        if ended.any():
            done = np.flatnonzero(ended)
            out_t[rows[_Row.INDEX, done].astype(np.int64)] = t[done] + step[done] * ~hit[done]
            alive[done] = False
            finished += done.size
            if 8 * finished > rows.shape[1]:
                keep = np.flatnonzero(alive)
                rows = rows.take(keep, axis=1)
                step = step.take(keep)
                alive = np.ones(keep.size, bool)
                finished = 0
                t = rows[_Row.TIME]
        if finished:
            step = step * alive
        t += step
    if not strikes:
        return out_t, None, None
    along, across = _touching(y, vy, theta, omega, profile, out_t, four, rounded_any)
    return out_t, along, across


def _corner_pieces(base_gap, base_slope, a_gap, a_slope, flat=None):
    """Floor gap and its rate of each smooth piece of the depth, in the
    order of :data:`CORNERS`: ``base - along A sin - across B cos`` and its
    derivative, from the round part's ``base_gap``, ``base_slope`` and the
    axis terms ``a_gap = A sin``, ``a_slope = omega A cos``; ``flat`` is
    ``(B cos, omega B sin)`` where the batch has a flat face, else None
    (two pieces)."""
    if flat is None:
        return [base_gap - a_gap, base_gap + a_gap], [base_slope - a_slope, base_slope + a_slope]
    b_gap, b_slope = flat
    lo_gap, hi_gap = base_gap - a_gap, base_gap + a_gap
    lo_slope, hi_slope = base_slope - a_slope, base_slope + a_slope
    return ([lo_gap - b_gap, hi_gap - b_gap, lo_gap + b_gap, hi_gap + b_gap],
            [lo_slope + b_slope, hi_slope + b_slope, lo_slope - b_slope, hi_slope - b_slope])


def _touching(y, vy, theta, omega, profile, time, four, rounded_any):
    """Mean corner signs ``(along, across)`` of the pieces that strike at
    ``time`` (:func:`next_contact`; 0, 0 where ``time`` is NaN).

    The pieces are evaluated at the contact, in the search's own
    arithmetic: the lowest of those touching (gap below
    :data:`CONTACT_GAP` and approaching; a deeper piece moving away does
    not strike) and any within :data:`TIE_GAP` of it (a flat landing).
    Done once for all bodies after the search instead of as each body
    finds its contact: the search's tail steps then carry no bookkeeping.
    """
    hl, hw, rl, rw = profile
    found = ~np.isnan(time)
    t = np.where(found, time, 0.0)
    s, c = sincos_of_tan_half(np.tan(0.5 * theta + (0.5 * omega) * t))
    gt = GRAVITY * t
    yt = y + t * (vy - 0.5 * gt)
    if rounded_any:
        ellipse, ellipse_slope = round_support(s, c, rl, rw, rl != rw)
        base_gap, base_slope = yt - ellipse, (vy - gt) - omega * ellipse_slope
    else:
        base_gap, base_slope = yt - rl, vy - gt
    gaps, slopes = _corner_pieces(base_gap, base_slope, hl * s, (omega * hl) * c,
                                  (hw * c, (omega * hw) * s) if four else None)
    # a piece that does not touch ranks a kilometre lower: the lowest
    # touching piece wins, and without one (rounding at a sure step's end)
    # the lowest piece
    ranks = [gap + 1e3 * ((gap >= CONTACT_GAP) | (slope >= 0)) for gap, slope in zip(gaps, slopes)]
    if not four:
        # the two ends (across +1 both): one strikes (along +-1) or both (0)
        lowest = np.minimum(*ranks) + TIE_GAP
        along = np.subtract(ranks[0] <= lowest, ranks[1] <= lowest, dtype=float)
        return found * along, found * 1.0
    lowest = np.minimum.reduce(ranks) + TIE_GAP
    count = np.zeros(t.size)
    sum_along = np.zeros(t.size)
    sum_across = np.zeros(t.size)
    for (along, across), rank in zip(CORNERS, ranks):
        tied = rank <= lowest
        count += tied
        sum_along += along * tied
        sum_across += across * tied
    return found * (sum_along / count), found * (sum_across / count)
