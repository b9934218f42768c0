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
#: Flight peaks are settled once no bound beats the best height found by
#: more than this: a tenth of CONTACT_GAP, the precision to which the
#: flight's end (the next contact) is found. [m]
PEAK_SLACK = 1e-10


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


def sincos(angle):
    """``sin`` and ``cos`` from one ``tan`` of the half angle.

    ``s = 2q / (1 + q^2)``, ``c = (1 - q^2) / (1 + q^2)`` with
    ``q = tan(angle / 2)`` (the tangent half-angle substitution). NumPy's
    double-precision ``tan`` is vectorised (SIMD) while its ``sin`` and
    ``cos`` are not: this is some five times faster here, with errors of a
    few units in the last place (below 4e-15 absolute, checked in
    ``tests/test_flight.py`` against ``np.sin``/``np.cos``). ``q`` never
    overflows: no double is closer to a pole of ``tan`` than about 1e-16,
    so ``|q| < 1e17`` and ``q^2 < 1e34``.
    """
    return sincos_of_tan_half(np.tan(0.5 * angle))


def sincos_of_tan_half(q):
    """``sin`` and ``cos`` of an angle from ``q = tan(angle / 2)``
    (:func:`sincos`)."""
    q2 = q * q
    inv = 1.0 / (1.0 + q2)
    return (q + q) * inv, (1.0 - q2) * inv


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


def _pick(mask, a, b):
    """``np.where(mask, a, b)`` for finite ``a`` and ``b``, exactly, without
    branches (``np.where`` costs ~7 ns per element on an unpredictable mask
    here; this ~2)."""
    return a * mask + b * ~mask


def _clip(a, lo, hi, out=None):
    """``np.clip(a, lo, hi)``, bit for bit (it is ``minimum(maximum(a,
    lo), hi)``, NaN included), at half the cost: ``np.clip`` takes ~1.5 ns
    per element here, the two calls ~0.7."""
    return np.minimum(np.maximum(a, lo), hi, out=out)


def next_contact(y, vy, theta, omega, profile, d2, d_high, max_iterations=400, strikes=True):
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
    four = bool(np.any(profile[1] > 0))
    out_t = np.full(n, np.nan)
    hl, hw, rl, rw = profile
    rounded_any = bool(np.any(rl != rw))
    curv = GRAVITY + omega * omega * d2
    # every per-body number in one array, so that dropping the bodies that
    # have found their contact is one gather; theta / 2 and omega / 2 for
    # the tangent half-angle (exact halvings, so the angle is bit for bit
    # (theta + omega t) / 2); the flat-face and ellipse rows only where
    # the batch has such bodies (each row written in place: no stacking
    # copy)
    rows = np.empty((13 + 2 * four + 2 * rounded_any, n))
    rows[0], rows[1] = y, vy
    np.multiply(0.5, theta, out=rows[2])
    np.multiply(0.5, omega, out=rows[3])
    rows[4] = d_high
    np.multiply(2.0, curv, out=rows[5])
    np.divide(1.0, curv, out=rows[6])
    np.subtract(curv, GRAVITY, out=rows[7])
    rows[8] = hl
    np.multiply(omega, hl, out=rows[9])
    rows[10] = rl
    rows[11] = np.arange(n)
    if four:
        rows[13] = hw
        np.multiply(omega, hw, out=rows[14])
    if rounded_any:
        rows[-2] = rw
        np.not_equal(rl, rw, out=rows[-1])
    # exact far-field start: a centre above d_high cannot touch before it
    # falls back to d_high (worked out only for such bodies: after an
    # impact there are none)
    high = np.flatnonzero(y > d_high)
    rows[12] = 0.0
    rows[12, high] = fall_time(vy[high], y[high] - d_high[high])
    T = 12  # the row holding the time
    # Bodies that have found their contact stay in ``rows`` (frozen: their
    # step is zeroed) until they are an eighth of it: a gather of all rows
    # costs as much as some thirty array operations, and most steps end
    # only a few bodies.
    alive = np.ones(n, bool)
    finished = 0  # bodies in rows whose contact is recorded
    for _ in range(max_iterations):
        if rows.shape[1] == finished:
            break
        yy, vv, half_th, half_om, dh, curv2, inv_curv, spread, hl, om_hl, rl, idx, t = rows[:13]
        if four:
            hw, om_hw = rows[13:15]
        if rounded_any:
            rw, rounded = rows[-2:]
        s, c = sincos_of_tan_half(np.tan(half_th + half_om * t))
        gt = GRAVITY * t
        vt = vv - gt
        yt = yy + t * (vv - 0.5 * gt)
        if rounded_any:
            ellipse, ellipse_slope = _ellipse(s, c, rl, rw, rounded > 0)
            base_gap = yt - ellipse
            base_slope = vt - (half_om + half_om) * ellipse_slope
        else:
            base_gap, base_slope = yt - rl, vt
        gaps, slopes = _corner_pieces(base_gap, base_slope, hl * s, om_hl * c,
                                      (hw * c, om_hw * s) if four else None)
        touching = [(g < CONTACT_GAP) & (v < 0) for g, v in zip(gaps, slopes)]
        hit = touching[0]
        for tk in touching[1:]:
            hit = hit | tk
        # first root of g + v tau - curv tau^2 / 2: no piece can touch sooner
        # (times curv: the common factor 1 / curv is applied once, to the
        # shortest; scaling by a positive number keeps the order)
        reach = [v + np.sqrt(v * v + curv2 * np.maximum(g, 0.0)) for g, v in zip(gaps, slopes)]
        step, slope_min = reach[0], slopes[0]
        for tau, v in zip(reach[1:], slopes[1:]):
            shorter = tau < step
            step, slope_min = np.minimum(tau, step), _pick(shorter, v, slope_min)
        step = step * inv_curv
        # The piece that sets the step is, at t + step, between 0 and
        # (curv - g) step^2 above the floor (its gap'' lies within
        # -curv .. curv - 2g): when that is below the contact gap and the
        # piece still approaches, the contact is at t + step without
        # another evaluation.
        spread_step = spread * step
        sure = (spread_step * step < CONTACT_GAP) & (slope_min + spread_step < 0) & ~hit
        # exact far-field extension: where the centre is above d_high at the
        # end of the step, no part of the body can touch before the centre
        # falls back to d_high, so the step goes on to then (one evaluation
        # fewer for a fifth of the steps in the benchmark population)
        t_end = t + step
        y_end = yy + t_end * (vv - 0.5 * GRAVITY * t_end)
        above = y_end > dh
        high = np.flatnonzero(above)
        if 4 * high.size > above.size:
            step = step + fall_time(vv - GRAVITY * t_end, y_end - dh) * above
            sure &= ~above
        elif high.size:
            # few bodies up there: work on them alone
            step[high] += fall_time(vv[high] - GRAVITY * t_end[high], y_end[high] - dh[high])
            sure[high] = False
        ended = hit | sure
        if finished:
            ended &= alive
        if ended.any():
            done = np.flatnonzero(ended)
            out_t[idx[done].astype(np.int64)] = t[done] + step[done] * ~hit[done]
            alive[done] = False
            finished += done.size
            if 8 * finished > rows.shape[1]:
                keep = np.flatnonzero(alive)
                rows = rows.take(keep, axis=1)
                step = step.take(keep)
                alive = np.ones(keep.size, bool)
                finished = 0
                t = rows[T]
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
        ellipse, ellipse_slope = _ellipse(s, c, rl, rw, rl != rw)
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


def _depth_terms(angle, profile, rounded, rounded_any, four, derivatives=True, sin_cos=None):
    """Depth ``d`` of the lowest point and, with ``derivatives``, ``d'`` and
    ``d''`` (one-sided mean at the corners) at ``angle``, or at the angle
    whose :func:`sincos` is ``sin_cos``. [m]"""
    half_long, half_wide, round_long, round_wide = profile
    s, c = sincos(angle) if sin_cos is None else sin_cos
    sa = np.abs(s)
    if rounded_any:
        ellipse, e1 = _ellipse(s, c, round_long, round_wide, rounded)
    else:
        ellipse, e1 = round_long, 0.0
    rect = half_long * sa + half_wide * np.abs(c) if four else half_long * sa
    d = rect + ellipse
    if not derivatives:
        return d
    d1 = half_long * np.sign(s) * c + e1
    if four:
        d1 = d1 - half_wide * np.sign(c) * s
    d2 = -rect
    if rounded_any:
        stretch = round_long ** 2 - round_wide ** 2
        with np.errstate(invalid="ignore", divide="ignore"):
            e2 = (stretch * (c * c - s * s) - e1 * e1) / ellipse
        d2 = d2 + _pick(rounded & (ellipse > 0), np.nan_to_num(e2), 0.0)
    return d, d1, d2


def depth_at(theta, profile):
    """Depth of the lowest point below the centre at ``theta`` [m]: the
    same value as :func:`sim.shapes.depth`, with :func:`sincos`."""
    hl, hw, rl, rw = profile
    rounded = rl != rw
    return _depth_terms(theta, profile, rounded, bool(np.any(rounded)), bool(np.any(hw > 0)), False)


def _breakpoints(profile, four):
    """Angles in [0, pi) where the depth has its corners and turning points,
    and the exact depth there: flat (0), the rectangle's diagonal (theta*),
    upright (pi/2), the other diagonal (pi - theta*); without a flat face
    (``half_wide`` 0 in the whole batch) the diagonals are upright, so only
    flat and upright remain. Between two consecutive breakpoints both parts
    of the depth are monotone."""
    half_long, half_wide, round_long, round_wide = profile
    flat, upright = half_wide + round_wide, half_long + round_long
    if not four:
        return [0.0, 0.5 * np.pi], [flat, upright]
    hyp = np.hypot(half_long, half_wide)
    diagonal = np.arctan2(half_long, half_wide)  # where A|sin| + B|cos| peaks
    with np.errstate(invalid="ignore", divide="ignore"):
        d_diag = hyp + np.hypot(round_long * half_long, round_wide * half_wide) / np.where(hyp > 0, hyp, 1.0)
    d_diag = np.where(hyp > 0, d_diag, flat)
    return [0.0, diagonal, 0.5 * np.pi, np.pi - diagonal], [flat, d_diag, upright, d_diag]


def _largest(rows):
    """Row index and value of the largest entry of each column of a short
    stack (``np.argmax(axis=0)`` costs ~40 ns per column here, this ~14)."""
    top = rows[0].copy()
    which = np.zeros(top.size, dtype=np.intp)
    for i in range(1, rows.shape[0]):
        larger = rows[i] > top
        np.maximum(top, rows[i], out=top)
        which += larger * (i - which)
    return which, top


def _piece_slopes(profile, four):
    """Per kind of piece (as :func:`_breakpoints` orders them): the depth's
    slope ``d'`` at the piece's first and last angle, from inside the piece,
    and the piece's angular span. Exact: the ellipse part has no slope flat
    or upright, and its slope on the diagonal is added."""
    half_long, half_wide, round_long, round_wide = profile
    if not four:
        half = 0.5 * np.pi
        return [(half_long, 0.0, half), (0.0, -half_long, half)]
    diagonal = np.arctan2(half_long, half_wide)
    rest = 0.5 * np.pi - diagonal
    # E'(theta*) = (a^2 - b^2) sin cos / E with sin, cos = A, B over hypot(A, B)
    hyp2 = half_long ** 2 + half_wide ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        e1 = ((round_long ** 2 - round_wide ** 2) * half_long * half_wide
              / (hyp2 * np.hypot(round_long * half_long, round_wide * half_wide) / np.sqrt(hyp2)))
    e1 = np.nan_to_num(e1, nan=0.0, posinf=0.0, neginf=0.0)
    return [(half_long, e1, diagonal), (e1, -half_wide, rest), (half_wide, -e1, rest),
            (-e1, -half_long, diagonal)]


def _best_on(t_lo, t_hi, y, vy, slope, t0, d0):
    """Largest ``y + vy t - g t^2/2 + d0 + slope (t - t0)`` on ``[t_lo, t_hi]``
    and where it is: a parabola, so the vertex clipped to the piece."""
    t = _clip((vy + slope) * (1.0 / GRAVITY), t_lo, t_hi)
    return y + t * (vy - 0.5 * GRAVITY * t) + d0 + slope * (t - t0), t


#: Stands for "no such piece" in the piece bounds (finite, so that masks can
#: be applied by arithmetic). [m]
NO_PIECE = -1e30


def flight_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps=((6, 10), (4, 6))):
    """Highest centre, lowest-point and top-point heights over a flight.

    The heights are those actually reached in ``[0, duration]``, not the
    ballistic apex: a flight that strikes again on the way up peaks at its
    end.

    The centre peak is exact. For the lowest point ``y - d(theta)`` and the
    top point ``y + d(theta)``: only the window where the centre is within
    ``d_high - d_low`` of its highest can hold a peak. The window is cut at
    the breakpoints of the depth (axis flat, upright, or along the
    rectangle's diagonal; :func:`_breakpoints`), where the depth and its
    one-sided slopes are known exactly and between which it is monotone.
    Breakpoints and window ends are exact candidates. Each piece gets an
    upper bound:

    - in general, ``max y`` on the piece (exact, the centre is a parabola)
      plus the larger (top) or minus the smaller (bottom) end depth;
    - where the round part is a circle (capsule, cylinder, sphere) the
      depth ``R sin(theta + phi) + r`` is concave on the piece, so it lies
      above its chord and below its end tangents, and ``y`` minus the chord
      or plus a tangent is again a parabola with a closed-form maximum.
      These bounds are tight: most pieces are settled by them alone.

    Pieces of one kind (K kinds per half turn) repeat every half turn while
    ``y`` falls away from the apex, so the half turn holding the apex and
    one on either side hold every candidate. Pieces whose bound beats the
    best candidate are polished in order of their bound, by Newton steps on
    ``h' = 0`` kept inside a bracket that always moves uphill, until no
    unpolished piece's bound exceeds the best height found by more than
    :data:`PEAK_SLACK`. The polish
    starts where the chord bound peaks (bottom), where ``h'`` interpolated
    between the piece's ends vanishes (top; for a circle-rounded body ``h``
    is concave there, so that start is close and Newton converges in a few
    steps), or mid-piece (an ellipse's depth is not concave: ``h`` may have
    two local maxima on a piece). ``polish_steps`` is
    ``((circle, ellipse) for the bottom, (circle, ellipse) for the top)``
    (the general path's fixed Newton steps; the capsule path stops on
    bounds).

    Capsules and spheres (decided per body: ``half_wide`` 0 and a circular
    round part) take :func:`_capsule_peaks` instead, which needs one half
    turn for the lowest point and has its own top-point search.

    Peaks are within :data:`PEAK_SLACK` (1e-10 m) of the true peak, up to
    rounding; checked against dense sampling in ``tests/test_flight.py``.

    Returns
    -------
    centre, bottom, top : numpy.ndarray
        Peak heights above the floor. [m]
    """
    hl, hw, rl, rw = profile
    capsule = (hw == 0) & (rl == rw)
    if capsule.all():
        return _capsule_peaks(y, vy, theta, omega, duration, hl, rl)
    if not capsule.any():
        return _general_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps)
    # a mixed batch: each body takes its own path (so that no result
    # depends on its neighbours)
    out = tuple(np.empty(y.size) for _ in range(3))
    for is_capsule in (True, False):
        sel = np.flatnonzero(capsule if is_capsule else ~capsule)
        state = [a[sel] for a in (y, vy, theta, omega, duration)]
        if is_capsule:
            found = _capsule_peaks(*state, hl[sel], rl[sel])
        else:
            found = _general_peaks(*state, tuple(p[sel] for p in profile), d_low[sel], d_high[sel],
                                   polish_steps)
        for whole, part in zip(out, found):
            whole[sel] = part
    return out


def _centre_at(y, vy, t):
    """Height of the centre ``t`` into the flight. [m]"""
    return y + t * (vy - 0.5 * GRAVITY * t)


def _peak_window(y, vy, duration, spread):
    """The clipped apex ``t_apex``, the centre's peak there, and the window
    ``[t_lo, t_hi]`` where the centre is within ``spread`` of it: only
    there can a point of the body peak (its depth varies by less). [s],
    [m], [s], [s]"""
    t_apex = _clip(vy * (1.0 / GRAVITY), 0.0, duration)
    centre = _centre_at(y, vy, t_apex)
    disc = np.sqrt(np.maximum(vy * vy - 2 * GRAVITY * (centre - spread - y), 0.0))
    t_lo = _clip((vy - disc) * (1.0 / GRAVITY), 0.0, duration)
    t_hi = _clip((vy + disc) * (1.0 / GRAVITY), 0.0, duration)
    return t_apex, centre, t_lo, t_hi


def _apex_turn(theta, omega, t_apex, t_lo):
    """Whether each body spins, ``1 / omega`` (0 for a body that does not
    spin), the window's start
    for the breakpoints and pieces (infinity for a body that does not spin:
    no breakpoints, no pieces) and the half turn holding the apex (``phi``
    in ``[k pi, (k + 1) pi)``, as ``k``). Below 1e-9 rad/s the depth moves
    by under 1e-9 of the body size over a second of flight: such a body
    counts as not spinning (its apex is the peak)."""
    spinning = np.abs(omega) > 1e-9
    inv_omega = spinning / (omega + ~spinning)
    t_from = np.where(spinning, t_lo, np.inf)
    return spinning, inv_omega, t_from, np.floor((theta + omega * t_apex) * (1.0 / np.pi))


def _general_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps):
    """:func:`flight_peaks` for any body (three half turns, every kind of
    piece)."""
    hl, hw, rl, rw = profile
    four = bool(np.any(hw > 0))
    rounded = rl != rw
    rounded_any = bool(np.any(rounded))
    n = y.size
    t_apex, centre, t_lo, t_hi = _peak_window(y, vy, duration, d_high - d_low)

    offsets, depths = _breakpoints(profile, four)
    kinds = len(offsets)
    _, inv_omega, t_from, apex_turn = _apex_turn(theta, omega, t_apex, t_lo)
    # the half turn holding the apex, and one on either side
    first = (apex_turn - 1.0) * np.pi
    times, marks = [], []
    for turn in range(3):
        for offset, depth in zip(offsets, depths):
            times.append((first + (turn * np.pi + offset) - theta) * inv_omega)
            marks.append(depth)
    times.append((first + 3 * np.pi - theta) * inv_omega)
    marks.append(depths[0])
    # a body that does not spin has no breakpoints and no pieces: its
    # window starting at infinity leaves its marks outside and its pieces
    # empty
    pieces = []  # (lo, hi, t_a, t_b, d_a, d_b, kind) per piece, clipped to the window
    for i in range(3 * kinds):
        t_a, t_b = times[i], times[i + 1]
        lo = np.maximum(np.minimum(t_a, t_b), t_from)
        hi = np.minimum(np.maximum(t_a, t_b), t_hi)
        pieces.append((lo, hi, t_a, t_b, marks[i], marks[i + 1], i % kinds))
    # a circle as the round part: the depth is concave on each piece, so it
    # lies above its chord and below its end tangents (far tighter bounds)
    # (per body: a batch of mixed shapes gives each body the bounds of its own
    # shape, so that no result depends on its neighbours)
    concave = not np.all(rounded)
    slopes = _piece_slopes(profile, four)
    los = np.stack([p[0] for p in pieces])
    his = np.stack([p[1] for p in pieces])

    ends = (t_lo, t_apex, t_hi)
    d_ends = [_depth_terms(theta + omega * t, profile, rounded, rounded_any, four, False) for t in ends]
    y_ends = [_centre_at(y, vy, t_lo), centre, _centre_at(y, vy, t_hi)]
    # breakpoints inside the window are exact candidates, free of trigonometry
    # (adding NO_PIECE absorbs any height; adding -0.0 changes none)
    y_marks = [_centre_at(y, vy, t) + NO_PIECE * ((t < t_from) | (t > t_hi)) for t in times]
    # adding this sends a piece that does not exist to NO_PIECE (and adds -0.0
    # to one that does)
    missing = [NO_PIECE * (hi <= lo) for lo, hi, *_ in pieces]
    peaks = []
    for sign in (-1.0, 1.0):
        best = np.maximum.reduce([yc + sign * d for yc, d in zip(y_ends, d_ends)])
        for yc, d in zip(y_marks, marks):
            best = np.maximum(best, yc + sign * d)
        bounds = np.empty((len(pieces), n))
        starts = np.empty((len(pieces), n))
        chords = {}
        for i, (lo, hi, t_a, t_b, d_a, d_b, kind) in enumerate(pieces):
            if concave and sign < 0:
                # below the chord: y - d <= y - (d_a + k (t - t_a))
                if kind not in chords:
                    slope_a, slope_b, span = slopes[kind]
                    # (a piece narrower than 1e-12 rad changes the depth by
                    # under 1e-12 of the body size: its slope may be
                    # understated); the same for every half turn
                    chords[kind] = -omega * ((d_b - d_a) / np.maximum(span, 1e-12))
                bound, start = _best_on(lo, hi, y, vy, chords[kind], t_a, -d_a)
            if sign > 0:
                slope_a, slope_b, span = slopes[kind]
                # start where the slope h' interpolated between the piece's
                # ends (exact there) vanishes
                rise_a = vy - GRAVITY * t_a + omega * slope_a
                rise_b = vy - GRAVITY * t_b + omega * slope_b
                drop = rise_a - rise_b
                share = _clip(rise_a / (drop + (drop == 0)), 0.0, 1.0)
                start = _clip(t_a + share * (t_b - t_a), lo, hi)
            if concave and sign > 0:
                # below both end tangents: y + d <= y + d_end + omega d'_end (t - t_end)
                bound_a, _ = _best_on(lo, hi, y, vy, omega * slope_a, t_a, d_a)
                bound_b, _ = _best_on(lo, hi, y, vy, omega * slope_b, t_b, d_b)
                bound = np.minimum(bound_a, bound_b)
            if rounded_any:
                end_depth = np.maximum(d_a, d_b) if sign > 0 else -np.minimum(d_a, d_b)
                loose = _centre_at(y, vy, _clip(t_apex, lo, hi)) + end_depth
                # an ellipse's depth is not concave: h may have two local
                # maxima on a piece, and the middle is the safer start (of
                # an empty piece, a finite stand-in)
                middle = 0.5 * (np.minimum(lo, hi) + hi)
                start = _pick(rounded, middle, start) if concave else middle
                bound = _pick(rounded, loose, bound) if concave else loose
            np.add(bound, missing[i], out=bounds[i])
            starts[i] = start
        peaks.append(_settle(bounds, best, PEAK_SLACK, lambda sel, p_sel: _polish(
            y[sel], vy[sel], theta[sel], omega[sel], tuple(p[sel] for p in profile),
            rounded[sel] if rounded_any else rounded, rounded_any, four,
            los[p_sel, sel], his[p_sel, sel], starts[p_sel, sel], sign, polish_steps[sign > 0])))
    return centre, peaks[0], peaks[1]


def _settle(bounds, best, slack, polish):
    """Raise ``best`` (in place, and returned) until no piece's bound
    exceeds it by more than ``slack``: the pieces are polished in order of
    their bounds, ``polish(bodies, pieces)`` giving the highest height
    reached on each body's piece. Best only rises and bounds only fall,
    so a body with no open piece left is done: later rounds look only at
    the bodies just polished."""
    candidates, stack, floor = None, bounds, best
    for _ in range(bounds.shape[0]):
        pick, top = _largest(stack)
        open_ = np.flatnonzero(top > floor + slack)
        if open_.size == 0:
            break
        sel = open_ if candidates is None else candidates[open_]
        p_sel = pick[open_]
        bounds[p_sel, sel] = NO_PIECE
        best[sel] = np.maximum(best[sel], polish(sel, p_sel))
        candidates, stack, floor = sel, bounds[:, sel], best[sel]
    return best


def _capsule_peaks(y, vy, theta, omega, duration, half_long, radius):
    """:func:`flight_peaks` for capsules and spheres (``half_wide`` 0 and a
    circular round part), whose depth ``d = A |sin(phi)| + r`` (``phi =
    theta + omega t``) is least, ``r``, where the axis lies flat (``phi =
    k pi``, the kinks) and greatest, ``A + r``, upright.

    The lowest point ``h = y - d`` never exceeds ``y - r``, which it
    reaches at a kink, and the centre's height ``y`` falls away on both
    sides of the (clipped) apex ``t_c``: beyond the kink on either side of
    ``t_c``, ``h(t) <= y(t) - r <= y(t_k) - r = h(t_k)``. So the lowest
    point peaks at a window end, at a kink, or inside the half turn holding
    the apex, whose upright time splits it into two pieces on which ``d``
    is concave in ``t``: above its chord, so ``h`` lies below a parabola
    with a closed-form maximum (:func:`flight_peaks`' chord bound, on one
    half turn instead of three). Pieces whose bound beats the best
    candidate by more than :data:`PEAK_SLACK` are polished
    (:func:`_polish_capsule_bottom`). The top point takes
    :func:`_capsule_tops`.
    """
    # the window where the centre is within A (= d_high - d_low) of its peak
    t_apex, centre, t_lo, t_hi = _peak_window(y, vy, duration, half_long)
    spinning, inv_omega, t_from, apex_turn = _apex_turn(theta, omega, t_apex, t_lo)
    first = (apex_turn - 1.0) * np.pi
    # the flat, upright and flat times phi = turn pi + k pi / 2, k = 0, 1,
    # 2, of the half turn holding the apex
    quarters = [(first + (np.pi + k * (0.5 * np.pi)) - theta) * inv_omega for k in range(3)]
    # the window's ends are candidates, and so is the apex of a body that
    # does not spin (whose depth stays d_ends[0]; a spinning body's apex
    # lies on the pieces below)
    sc_ends = [sincos(theta + omega * t) for t in (t_lo, t_hi)]
    y_ends = [_centre_at(y, vy, t_lo), _centre_at(y, vy, t_hi), centre + NO_PIECE * spinning]
    d_ends = [half_long * np.abs(s) + radius for s, _ in sc_ends]
    d_ends.append(d_ends[0])
    bottom = np.maximum.reduce([yc - d for yc, d in zip(y_ends, d_ends)])
    top = np.maximum.reduce([yc + d for yc, d in zip(y_ends, d_ends)])

    cos_lo, cos_hi = sc_ends[0][1], sc_ends[1][1]
    # sign of sin(phi) on the half turn before the apex's (the apex's has
    # the other sign)
    sign0 = 2.0 * (apex_turn - 2.0 * np.floor(0.5 * apex_turn)) - 1.0
    # working memory: what the polishes below no longer need goes first
    del t_lo, spinning, apex_turn, first, sc_ends, y_ends, d_ends
    bottom = _capsule_bottoms(y, vy, theta, omega, half_long, radius, sign0, quarters, t_from, t_hi, bottom)
    top = _capsule_tops(y, vy, theta, omega, inv_omega, half_long, radius, sign0, quarters, t_apex, t_from,
                        t_hi, cos_lo, cos_hi, top)
    return centre, bottom, top


def _capsule_bottoms(y, vy, theta, omega, half_long, radius, sign0, times, t_from, t_hi, best):
    """Lowest-point peaks of capsules and spheres (:func:`_capsule_peaks`):
    ``best`` (the window ends' heights on entry) raised to the kinks and
    upright time of the apex's half turn (``times``: flat, upright, flat),
    then to the two pieces between them where their chord bounds beat it.
    """
    # the kinks either side of the apex and the upright time between them
    # are exact candidates inside the window
    t_0, t_1, t_2 = times
    upright = half_long + radius
    for t, d in ((t_0, radius), (t_1, upright), (t_2, radius)):
        best = np.maximum(best, (_centre_at(y, vy, t) + NO_PIECE * ((t < t_from) | (t > t_hi))) - d)
    table = np.empty((4, 2, y.size))  # per piece: bound, lo, hi, polish start
    end_speed = np.abs(omega) * half_long
    forwards = omega > 0
    for j, (t_a, t_b, d_a, d_b) in enumerate(((t_0, t_1, radius, upright), (t_1, t_2, upright, radius))):
        lo, hi = table[1, j], table[2, j]
        np.maximum(np.minimum(t_a, t_b), t_from, out=lo)
        np.minimum(np.maximum(t_a, t_b), t_hi, out=hi)
        # below the chord: y - d <= y - (d_a + k (t - t_a))
        chord = -omega * ((d_b - d_a) / (0.5 * np.pi))
        bound, table[3, j] = _best_on(lo, hi, y, vy, chord, t_a, -d_a)
        # From its kink into the piece, h'' grows (from -g to -g + A
        # omega^2 upright), so h' is convex there: if h does not rise out
        # of the kink (the centre's speed away from the kink's side is at
        # most the end's A |omega|), h' is negative and then positive at
        # most once, and h peaks at the piece's ends, which are candidates.
        t_kink = t_a if j == 0 else t_b
        rise = (vy - GRAVITY * t_kink) * (1.0 - 2.0 * (forwards != (j == 0))) - end_speed
        np.add(bound, NO_PIECE * ((hi <= lo) | (rise <= 0)), out=table[0, j])
    amp = -sign0 * half_long  # A signed as sin(phi) on the apex's half turn
    y_r = y - radius
    # the upright end of piece 0 (flat to upright) is its later end when
    # the body turns forwards; of piece 1 (upright to flat), its earlier end
    return _settle(table[0], best, PEAK_SLACK, lambda sel, p_sel: _polish_capsule_bottom(
        y_r[sel], vy[sel], theta[sel], omega[sel], amp[sel], table[1, p_sel, sel], table[2, p_sel, sel],
        table[3, p_sel, sel], forwards[sel] != (p_sel == 1), best[sel]))


def _polish(y, vy, theta, omega, profile, rounded, rounded_any, four, lo, hi, start, sign, steps):
    """Highest ``y +- d`` on ``[lo, hi]``: Newton on ``h' = 0`` where ``h`` is
    concave, otherwise halving towards the uphill side; the bracket only
    ever shrinks towards where ``h`` rises, so it ends at a local maximum
    or an end. Returns the best height seen inside (the caller has the
    ends: breakpoints or window edges).

    ``steps`` is ``(round, rounded)``: Newton steps for bodies whose round
    part is a circle, and for those with an ellipse; in a mixed batch the
    former stop (their values are frozen) after their own count, so that no
    result depends on the batch."""
    plain_steps, rounded_steps = steps
    total = max(plain_steps, rounded_steps) if rounded_any else plain_steps
    best = np.full(y.size, NO_PIECE)
    t = start
    omega2 = sign * omega * omega
    sign_omega = sign * omega
    for step in range(total):
        d, d1, d2 = _depth_terms(theta + omega * t, profile, rounded, rounded_any, four)
        gt = GRAVITY * t
        height = y + t * (vy - 0.5 * gt) + sign * d
        slope = vy - gt + sign_omega * d1
        curve = omega2 * d2 - GRAVITY
        up = slope > 0
        lo = _pick(up, t, lo)
        hi = _pick(up, hi, t)
        # a finite stand-in where h is not concave (no Newton step there)
        newton = t - slope / np.minimum(curve, -1e-3 * GRAVITY)
        newton_ok = (curve < 0) & (newton > lo) & (newton < hi)
        t_next = _pick(newton_ok, newton, 0.5 * (lo + hi))
        if rounded_any and step >= plain_steps:
            best = _pick(rounded, np.maximum(best, height), best)
            t = _pick(rounded, t_next, t)
        elif rounded_any and step >= rounded_steps:
            best = _pick(rounded, best, np.maximum(best, height))
            t = _pick(rounded, t, t_next)
        else:
            best = np.maximum(best, height)
            t = t_next
    d = _depth_terms(theta + omega * t, profile, rounded, rounded_any, four, False)
    return np.maximum(best, y + t * (vy - 0.5 * GRAVITY * t) + sign * d)


def _capsule_tops(y, vy, theta, omega, inv_omega, half_long, radius, sign0, times, t_apex, t_from, t_hi,
                  cos_lo, cos_hi, best, max_steps=12):
    """Top-point peaks of capsules and spheres (``half_wide`` 0, circular
    round part): :func:`flight_peaks`' fast path.

    The top point ``h = y + A |sin(phi)| + r`` is concave on each half turn
    ``[k pi, (k + 1) pi]`` of ``phi = theta + omega t`` (a "bump"), with
    ``h'' = -g - omega^2 A |sin(phi)| <= -g``; between bumps it has convex
    kinks. So each bump clipped to the window has one maximum: at a window
    end if ``h`` already falls (rises) there, inward, and otherwise at the
    single root of ``h'`` inside. ``times`` are the flat, upright and flat
    times of the bump holding the (clipped) apex ``t_apex``, whose upright
    time ``t_m`` gives the candidate ``h(t_m) = y(t_m) + A + r``. Beyond
    ``t_m`` on the side away from the apex the centre only falls, so there
    ``h <= y + A + r <= h(t_m)``: that bump's neighbour on the far side can
    be left out, and two bumps hold every candidate, the apex's and its
    neighbour on the apex's side of ``t_m`` (if ``t_m`` lies beyond the
    window's end, so does the far neighbour).

    Bound of a bump: ``cos(x) <= 1 - 4 x^2 / pi^2`` on ``|x| <= pi / 2``
    (equality at 0 and +-pi/2), with ``x = omega (t - t_m)``, so
    ``h <= y + A + r - (4 A omega^2 / pi^2) (t - t_m)^2``: a parabola whose
    maximum on the clipped bump is closed form. Bumps are polished in the
    order of their bounds, while a bound beats the best height by more than
    :data:`PEAK_SLACK`. Newton on ``h' = 0`` (from the trig-free Newton step
    off the bump's middle, where ``d = A + r`` and ``d' = 0``) is safeguarded
    by bisection in a bracket where ``h'`` changes sign. After each
    evaluation at ``t`` concavity gives ``h <= h(t) + h'(t)^2 / (2 g)`` on
    the whole bump: a body stops as soon as that is within
    :data:`PEAK_SLACK` of its best height (converged, or beaten by another
    candidate), so its result is within :data:`PEAK_SLACK` of the true peak
    whatever the batch. ``best`` holds the window ends' heights on entry (a
    bump whose maximum is at a window end is left to them; breakpoints are
    not needed: the kinks point down and a bump's middle is below the
    bump's maximum).
    """
    # per bump (the neighbour, then the apex's): bound, then lo, hi and
    # start of the polish (one array, so that picking each body's bump is
    # one gather)
    table = _capsule_top_bumps(y, vy, omega, inv_omega, half_long, radius, sign0, times, t_apex, t_from, t_hi,
                               cos_lo, cos_hi)
    y_r = y + radius

    def polish(sel, p_sel):
        lo, hi, start = table[1:, p_sel, sel]
        # A signed as sin(phi) on the bump
        amp = half_long[sel] * (sign0[sel] * (1.0 - 2.0 * (p_sel == 1)))
        return _polish_capsule_top(y_r[sel], vy[sel], theta[sel], omega[sel], amp, lo, hi, start, best[sel],
                                   max_steps)

    return _settle(table[0], best, PEAK_SLACK, polish)


def _capsule_top_bumps(y, vy, omega, inv_omega, half_long, radius, sign0, times, t_apex, t_from, t_hi, cos_lo,
                       cos_hi):
    """Per bump of :func:`_capsule_tops` (the neighbour, then the apex's),
    stacked: the bound (``NO_PIECE`` where the maximum is not inside), and
    the polish's bracket ``lo``, ``hi`` and start."""
    wa = omega * half_long
    fast = np.abs(wa)
    w2a = omega * wa
    kappa = (4.0 / np.pi ** 2) * w2a
    # the bound's vertex is at vertex_0 + vertex_1 t_m, the trig-free Newton
    # start at start_0 + start_1 t_m
    inv_vertex = 1.0 / (GRAVITY + 2.0 * kappa)
    vertex_0, vertex_1 = vy * inv_vertex, (2.0 * inv_vertex) * kappa
    inv_middle = 1.0 / (GRAVITY + w2a)
    start_0, start_1 = vy * inv_middle, w2a * inv_middle
    y_top = y + (half_long + radius)
    # d' = sigma A cos(phi) at the window's ends (sigma of the neighbour)
    signed = sign0 * wa
    turn_lo, turn_hi = signed * cos_lo, signed * cos_hi
    # what to add to |omega| A for the inward slope inside a bump: the
    # neighbour's sigma, then the apex bump's (the other sign)
    inner_lo = (turn_lo - fast, -turn_lo - fast)
    inner_hi = (turn_hi + fast, -turn_hi + fast)
    # the neighbour: it shares the apex bump's flat time t_0 when that is
    # on the apex's side of t_m, else t_2, and reaches a quarter turn
    # (signed time ``quarter``) on past it per step
    t_0, t_m, t_2 = times
    quarter = (0.5 * np.pi) * inv_omega
    at_0 = (t_apex <= t_m) == (omega > 0)
    delta = np.where(at_0, -quarter, quarter)
    shared = np.where(at_0, t_0, t_2)
    middle = shared + delta
    bumps = ((shared, middle, middle + delta), times)
    table = np.empty((4, 2, y.size))
    bounds = table[0]
    for j, (t_a, t_m, t_b) in enumerate(bumps):
        lo, hi, start = table[1:, j]
        first, last = np.minimum(t_a, t_b), np.maximum(t_a, t_b)
        np.maximum(first, t_from, out=lo)
        np.minimum(last, t_hi, out=hi)
        # inward slopes of h at the ends of the clipped bump: at a bump's
        # end d rises inward at |omega| A; inside it d' = sigma A cos(phi)
        # (sigma alternates from bump to bump)
        rise = ((vy - GRAVITY * lo) + fast) + inner_lo[j] * (first < t_from)
        fall = ((vy - GRAVITY * hi) - fast) + inner_hi[j] * (last > t_hi)
        inner = (hi > lo) & (rise > 0) & (fall < 0)
        vertex = _clip(vertex_0 + vertex_1 * t_m, lo, hi)
        off = vertex - t_m
        bound = y_top + vertex * (vy - 0.5 * GRAVITY * vertex) - kappa * off * off
        np.add(bound, NO_PIECE * ~inner, out=bounds[j])
        _clip(start_0 + start_1 * t_m, lo, hi, out=start)
    return table


def _retire(done, out, live, state):
    """One polish step's end: write the best heights (``state[-1]``) of the
    bodies ``live`` (their places in ``out``) and keep the bodies not
    ``done``. Returns the kept places and ``state`` cut to them, or
    ``(live, None)`` when every body is done."""
    out[live] = state[-1]
    keep = np.flatnonzero(~done)
    if keep.size == 0:
        return live, None
    return live[keep], tuple(a[keep] for a in state)


def _polish_capsule_top(y_r, vy, theta, omega, amp, lo, hi, t, best, max_steps):
    """Highest of ``best`` and the top point ``y_r + vy t - g t^2 / 2 +
    amp sin(theta + omega t)`` on a bump ``[lo, hi]`` where its slope falls
    from positive to negative (see :func:`_capsule_tops`); ``amp`` is
    ``A`` signed as ``sin`` on the bump."""
    out = best
    live = np.arange(y_r.size)
    spin_amp = omega * amp
    spin2_amp = omega * spin_amp
    for _ in range(max_steps):
        s, c = sincos(theta + omega * t)
        gt = GRAVITY * t
        height = y_r + t * (vy - 0.5 * gt) + amp * s
        slope = (vy - gt) + spin_amp * c
        np.maximum(best, height, out=best)
        # h <= h(t) + h'(t)^2 / (2 g) on the whole bump (h'' <= -g there)
        done = height + slope * slope * (0.5 / GRAVITY) <= best + PEAK_SLACK
        up = slope > 0
        lo = _pick(up, t, lo)
        hi = _pick(up, hi, t)
        newton = t + slope / (GRAVITY + spin2_amp * s)
        ok = (newton > lo) & (newton < hi)
        t = _pick(ok, newton, 0.5 * (lo + hi))
        if done.any():
            live, state = _retire(done, out, live, (y_r, vy, theta, omega, amp, spin_amp, spin2_amp, lo, hi, t, best))
            if state is None:
                return out
            y_r, vy, theta, omega, amp, spin_amp, spin2_amp, lo, hi, t, best = state
    out[live] = best
    return out


def _polish_capsule_bottom(y_r, vy, theta, omega, amp, lo, hi, t, upright_hi, best, max_steps=40):
    """Highest lowest point ``h = y_r + vy t - g t^2 / 2 - amp sin(phi)``
    (``phi = theta + omega t``) on a piece ``[lo, hi]`` between a kink and
    an upright time of the apex's half turn (:func:`_capsule_peaks`);
    ``amp`` is ``A`` signed as ``sin(phi)`` there, ``upright_hi`` says
    which end of the piece is the upright one.

    On the piece ``h'' = -g + omega^2 amp sin(phi)`` grows from ``-g`` at
    the kink to ``-g + A omega^2`` upright, so ``h'`` has at most one
    falling zero (a local maximum, where ``h`` is concave, on the kink side
    of where ``h`` turns convex). Newton steps on ``h' = 0`` are kept
    inside a bracket that keeps the uphill side of each evaluated ``t``,
    or its kink side where ``h`` is convex at ``t``: what is cut off peaks
    at ``t`` or at an end of the piece (a candidate already), so the
    bracket always holds the piece's best inner point. After each evaluation at ``t`` (an end of the new
    bracket), Taylor's theorem with ``M`` = the largest ``h''`` on the
    bracket (at its upright-side end, where ``amp sin(phi)`` is largest;
    ``A`` until that end has been evaluated) gives ``h <= Q(t') = h(t) +
    h'(t) (t' - t) + M (t' - t)^2 / 2`` on the bracket; a body stops as
    soon as ``max Q`` over the bracket (closed form) is within
    :data:`PEAK_SLACK` of its best height. Returns the best heights.
    """
    out = best
    live = np.arange(y_r.size)
    spin_amp = omega * amp
    omega2 = omega * omega
    # amp sin(phi) at the bracket's upright-side end (at most A)
    far = np.abs(amp)
    for _ in range(max_steps):
        s, c = sincos(theta + omega * t)
        gt = GRAVITY * t
        lift = amp * s
        height = y_r + t * (vy - 0.5 * gt) - lift
        slope = (vy - gt) - spin_amp * c
        np.maximum(best, height, out=best)
        here = omega2 * lift - GRAVITY  # h''(t)
        # keep the uphill side; where h is convex at t, the kink side (a
        # maximum lies where h is concave, towards the kink; towards the
        # upright end h is convex, so it peaks at t or at that end)
        convex = here >= 0
        up = ((slope > 0) & ~convex) | (convex & ~upright_hi)
        lo = _pick(up, t, lo)
        hi = _pick(up, hi, t)
        far = _pick(up != upright_hi, lift, far)
        curve = omega2 * far - GRAVITY  # >= h'' on the bracket
        # max of Q on [lo, hi]: at an end, or at Q's vertex if Q is concave
        flat = np.minimum(curve, -1e-12)
        vertex = _clip(t - slope / flat, lo, hi)
        bound = height
        for at in (lo, hi, vertex):
            dt = at - t
            bound = np.maximum(bound, height + dt * (slope + 0.5 * curve * dt))
        done = bound <= best + PEAK_SLACK
        # Newton where h is concave at t, else halve the bracket
        newton = t - slope / np.minimum(here, -1e-3 * GRAVITY)
        ok = (here < 0) & (newton > lo) & (newton < hi)
        t = _pick(ok, newton, 0.5 * (lo + hi))
        if done.any():
            live, state = _retire(done, out, live, (y_r, vy, theta, omega, amp, spin_amp, omega2, far, upright_hi,
                                                    lo, hi, t, best))
            if state is None:
                return out
            y_r, vy, theta, omega, amp, spin_amp, omega2, far, upright_hi, lo, hi, t, best = state
    out[live] = best
    return out
