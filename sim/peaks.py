"""Flight peaks: the highest centre, lowest point and top point a body
reaches over a flight (:func:`flight_peaks`), from the depth's
breakpoints and bounds on the pieces between them (:mod:`sim.geometry`),
polished where a bound beats the best height found.

Heights are normal to the floor; on an inclined floor the peaks are those
of the level-floor flight with the same path (time stretched, see
:func:`sim.drop._run_chunk`), which reaches the same heights.
"""
from __future__ import annotations

import numpy as np

from ._vector import clip, largest, pick, sincos
from .flight import GRAVITY, centre_at
from .geometry import breakpoints, depth_terms, piece_slopes

#: Flight peaks are settled once no bound beats the best height found by
#: more than this: a tenth of the contact search's CONTACT_GAP, the
#: precision to which the flight's end (the next contact) is found. [m]
PEAK_SLACK = 1e-10


def _best_on(t_lo, t_hi, y, vy, slope, t0, d0):
    """Largest ``y + vy t - g t^2/2 + d0 + slope (t - t0)`` on ``[t_lo, t_hi]``
    and where it is: a parabola, so the vertex clipped to the piece."""
    t = clip((vy + slope) * (1.0 / GRAVITY), t_lo, t_hi)
    return y + t * (vy - 0.5 * GRAVITY * t) + d0 + slope * (t - t0), t


#: Stands for "no such piece" in the piece bounds (finite, so that masks can
#: be applied by arithmetic). [m]
NO_PIECE = -1e30


def flight_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps=((6, 10), (4, 6)),
                 points=("bottom", "top")):
    """Highest centre, lowest-point and top-point heights over a flight.

    The heights are those actually reached in ``[0, duration]``, not the
    ballistic apex: a flight that strikes again on the way up peaks at its
    end.

    The centre peak is exact. For the lowest point ``y - d(theta)`` and the
    top point ``y + d(theta)``: only the window where the centre is within
    ``d_high - d_low`` of its highest can hold a peak. The window is cut at
    the breakpoints of the depth (axis flat, upright, or along the
    rectangle's diagonal; :func:`sim.geometry.breakpoints`), where the depth and its
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
    rounding; checked against dense sampling in ``tests/test_peaks.py``.

    ``points`` names which of ``"bottom"`` and ``"top"`` are worked out (the
    centre's peak is exact and free); the others are NaN.

    Returns
    -------
    centre, bottom, top : numpy.ndarray
        Peak heights above the floor. [m]
    """
    hl, hw, rl, rw = profile
    capsule = (hw == 0) & (rl == rw)
    if capsule.all():
        return _capsule_peaks(y, vy, theta, omega, duration, hl, rl, points)
    if not capsule.any():
        return _general_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps, points)
    # a mixed batch: each body takes its own path (so that no result
    # depends on its neighbours)
    out = tuple(np.empty(y.size) for _ in range(3))
    for is_capsule in (True, False):
        sel = np.flatnonzero(capsule if is_capsule else ~capsule)
        state = [a[sel] for a in (y, vy, theta, omega, duration)]
        if is_capsule:
            found = _capsule_peaks(*state, hl[sel], rl[sel], points)
        else:
            found = _general_peaks(*state, tuple(p[sel] for p in profile), d_low[sel], d_high[sel],
                                   polish_steps, points)
        for whole, part in zip(out, found):
            whole[sel] = part
    return out


def _peak_window(y, vy, duration, spread):
    """The clipped apex ``t_apex``, the centre's peak there, and the window
    ``[t_lo, t_hi]`` where the centre is within ``spread`` of it: only
    there can a point of the body peak (its depth varies by less). [s],
    [m], [s], [s]"""
    t_apex = clip(vy * (1.0 / GRAVITY), 0.0, duration)
    centre = centre_at(y, vy, t_apex)
    disc = np.sqrt(np.maximum(vy * vy - 2 * GRAVITY * (centre - spread - y), 0.0))
    t_lo = clip((vy - disc) * (1.0 / GRAVITY), 0.0, duration)
    t_hi = clip((vy + disc) * (1.0 / GRAVITY), 0.0, duration)
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


def _general_peaks(y, vy, theta, omega, duration, profile, d_low, d_high, polish_steps, points=("bottom", "top")):
    """:func:`flight_peaks` for any body (three half turns, every kind of
    piece)."""
    hl, hw, rl, rw = profile
    four = bool(np.any(hw > 0))
    rounded = rl != rw
    rounded_any = bool(np.any(rounded))
    n = y.size
    t_apex, centre, t_lo, t_hi = _peak_window(y, vy, duration, d_high - d_low)

    offsets, depths = breakpoints(profile, four)
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
    slopes = piece_slopes(profile, four)
    los = np.stack([p[0] for p in pieces])
    his = np.stack([p[1] for p in pieces])

    ends = (t_lo, t_apex, t_hi)
    d_ends = [depth_terms(theta + omega * t, profile, rounded, rounded_any, four, False) for t in ends]
    y_ends = [centre_at(y, vy, t_lo), centre, centre_at(y, vy, t_hi)]
    # breakpoints inside the window are exact candidates, free of trigonometry
    # (adding NO_PIECE absorbs any height; adding -0.0 changes none)
    y_marks = [centre_at(y, vy, t) + NO_PIECE * ((t < t_from) | (t > t_hi)) for t in times]
    # adding this sends a piece that does not exist to NO_PIECE (and adds -0.0
    # to one that does)
    missing = [NO_PIECE * (hi <= lo) for lo, hi, *_ in pieces]
    peaks = []
    for sign in (-1.0, 1.0):
        if ("bottom" if sign < 0 else "top") not in points:
            peaks.append(np.full(n, np.nan))
            continue
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
                share = clip(rise_a / (drop + (drop == 0)), 0.0, 1.0)
                start = clip(t_a + share * (t_b - t_a), lo, hi)
            if concave and sign > 0:
                # below both end tangents: y + d <= y + d_end + omega d'_end (t - t_end)
                bound_a, _ = _best_on(lo, hi, y, vy, omega * slope_a, t_a, d_a)
                bound_b, _ = _best_on(lo, hi, y, vy, omega * slope_b, t_b, d_b)
                bound = np.minimum(bound_a, bound_b)
            if rounded_any:
                end_depth = np.maximum(d_a, d_b) if sign > 0 else -np.minimum(d_a, d_b)
                loose = centre_at(y, vy, clip(t_apex, lo, hi)) + end_depth
                # an ellipse's depth is not concave: h may have two local
                # maxima on a piece, and the middle is the safer start (of
                # an empty piece, a finite stand-in)
                middle = 0.5 * (np.minimum(lo, hi) + hi)
                start = pick(rounded, middle, start) if concave else middle
                bound = pick(rounded, loose, bound) if concave else loose
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
        pick, top = largest(stack)
        open_ = np.flatnonzero(top > floor + slack)
        if open_.size == 0:
            break
        sel = open_ if candidates is None else candidates[open_]
        p_sel = pick[open_]
        bounds[p_sel, sel] = NO_PIECE
        best[sel] = np.maximum(best[sel], polish(sel, p_sel))
        candidates, stack, floor = sel, bounds[:, sel], best[sel]
    return best


def _capsule_peaks(y, vy, theta, omega, duration, half_long, radius, points=("bottom", "top")):
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
    y_ends = [centre_at(y, vy, t_lo), centre_at(y, vy, t_hi), centre + NO_PIECE * spinning]
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
    if "bottom" in points:
        bottom = _capsule_bottoms(y, vy, theta, omega, half_long, radius, sign0, quarters, t_from, t_hi, bottom)
    else:
        bottom = np.full(y.size, np.nan)
    if "top" in points:
        top = _capsule_tops(y, vy, theta, omega, inv_omega, half_long, radius, sign0, quarters, t_apex, t_from,
                            t_hi, cos_lo, cos_hi, top)
    else:
        top = np.full(y.size, np.nan)
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
        best = np.maximum(best, (centre_at(y, vy, t) + NO_PIECE * ((t < t_from) | (t > t_hi))) - d)
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
    y_less_r = y - radius
    # the upright end of piece 0 (flat to upright) is its later end when
    # the body turns forwards; of piece 1 (upright to flat), its earlier end
    return _settle(table[0], best, PEAK_SLACK, lambda sel, p_sel: _polish_capsule_bottom(
        y_less_r[sel], vy[sel], theta[sel], omega[sel], amp[sel], table[1, p_sel, sel], table[2, p_sel, sel],
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
        d, d_prime, d_second = depth_terms(theta + omega * t, profile, rounded, rounded_any, four)
        gt = GRAVITY * t
        height = y + t * (vy - 0.5 * gt) + sign * d
        slope = vy - gt + sign_omega * d_prime
        curve = omega2 * d_second - GRAVITY
        up = slope > 0
        lo = pick(up, t, lo)
        hi = pick(up, hi, t)
        # a finite stand-in where h is not concave (no Newton step there)
        newton = t - slope / np.minimum(curve, -1e-3 * GRAVITY)
        newton_ok = (curve < 0) & (newton > lo) & (newton < hi)
        t_next = pick(newton_ok, newton, 0.5 * (lo + hi))
        if rounded_any and step >= plain_steps:
            best = pick(rounded, np.maximum(best, height), best)
            t = pick(rounded, t_next, t)
        elif rounded_any and step >= rounded_steps:
            best = pick(rounded, best, np.maximum(best, height))
            t = pick(rounded, t, t_next)
        else:
            best = np.maximum(best, height)
            t = t_next
    d = depth_terms(theta + omega * t, profile, rounded, rounded_any, four, False)
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
    y_plus_r = y + radius

    def polish(sel, p_sel):
        lo, hi, start = table[1:, p_sel, sel]
        # A signed as sin(phi) on the bump
        amp = half_long[sel] * (sign0[sel] * (1.0 - 2.0 * (p_sel == 1)))
        return _polish_capsule_top(y_plus_r[sel], vy[sel], theta[sel], omega[sel], amp, lo, hi, start, best[sel],
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
        vertex = clip(vertex_0 + vertex_1 * t_m, lo, hi)
        off = vertex - t_m
        bound = y_top + vertex * (vy - 0.5 * GRAVITY * vertex) - kappa * off * off
        np.add(bound, NO_PIECE * ~inner, out=bounds[j])
        clip(start_0 + start_1 * t_m, lo, hi, out=start)
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


def _polish_capsule_top(y_plus_r, vy, theta, omega, amp, lo, hi, t, best, max_steps):
    """Highest of ``best`` and the top point ``y_plus_r + vy t - g t^2 / 2 +
    amp sin(theta + omega t)`` on a bump ``[lo, hi]`` where its slope falls
    from positive to negative (see :func:`_capsule_tops`); ``amp`` is
    ``A`` signed as ``sin`` on the bump."""
    out = best
    live = np.arange(y_plus_r.size)
    spin_amp = omega * amp
    spin2_amp = omega * spin_amp
    for _ in range(max_steps):
        s, c = sincos(theta + omega * t)
        gt = GRAVITY * t
        height = y_plus_r + t * (vy - 0.5 * gt) + amp * s
        slope = (vy - gt) + spin_amp * c
        np.maximum(best, height, out=best)
        # h <= h(t) + h'(t)^2 / (2 g) on the whole bump (h'' <= -g there)
        done = height + slope * slope * (0.5 / GRAVITY) <= best + PEAK_SLACK
        up = slope > 0
        lo = pick(up, t, lo)
        hi = pick(up, hi, t)
        newton = t + slope / (GRAVITY + spin2_amp * s)
        ok = (newton > lo) & (newton < hi)
        t = pick(ok, newton, 0.5 * (lo + hi))
        if done.any():
            live, state = _retire(done, out, live,
                                  (y_plus_r, vy, theta, omega, amp, spin_amp, spin2_amp, lo, hi, t, best))
            if state is None:
                return out
            y_plus_r, vy, theta, omega, amp, spin_amp, spin2_amp, lo, hi, t, best = state
    out[live] = best
    return out


def _polish_capsule_bottom(y_less_r, vy, theta, omega, amp, lo, hi, t, upright_hi, best, max_steps=40):
    """Highest lowest point ``h = y_less_r + vy t - g t^2 / 2 - amp sin(phi)``
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
    live = np.arange(y_less_r.size)
    spin_amp = omega * amp
    omega2 = omega * omega
    # amp sin(phi) at the bracket's upright-side end (at most A)
    far = np.abs(amp)
    for _ in range(max_steps):
        s, c = sincos(theta + omega * t)
        gt = GRAVITY * t
        lift = amp * s
        height = y_less_r + t * (vy - 0.5 * gt) - lift
        slope = (vy - gt) - spin_amp * c
        np.maximum(best, height, out=best)
        here = omega2 * lift - GRAVITY  # h''(t)
        # keep the uphill side; where h is convex at t, the kink side (a
        # maximum lies where h is concave, towards the kink; towards the
        # upright end h is convex, so it peaks at t or at that end)
        convex = here >= 0
        up = ((slope > 0) & ~convex) | (convex & ~upright_hi)
        lo = pick(up, t, lo)
        hi = pick(up, hi, t)
        far = pick(up != upright_hi, lift, far)
        curve = omega2 * far - GRAVITY  # >= h'' on the bracket
        # max of Q on [lo, hi]: at an end, or at Q's vertex if Q is concave
        flat = np.minimum(curve, -1e-12)
        vertex = clip(t - slope / flat, lo, hi)
        bound = height
        for at in (lo, hi, vertex):
            dt = at - t
            bound = np.maximum(bound, height + dt * (slope + 0.5 * curve * dt))
        done = bound <= best + PEAK_SLACK
        # Newton where h is concave at t, else halve the bracket
        newton = t - slope / np.minimum(here, -1e-3 * GRAVITY)
        ok = (here < 0) & (newton > lo) & (newton < hi)
        t = pick(ok, newton, 0.5 * (lo + hi))
        if done.any():
            live, state = _retire(done, out, live, (y_less_r, vy, theta, omega, amp, spin_amp, omega2, far, upright_hi,
                                                    lo, hi, t, best))
            if state is None:
                return out
            y_less_r, vy, theta, omega, amp, spin_amp, omega2, far, upright_hi, lo, hi, t, best = state
    out[live] = best
    return out
