"""Flights from a track: where the body touches the floor, and the exact
ballistic fit of each flight in between (docs/physics.md sections 5, 10).

Between impacts the centre follows a parabola under gravity (along -y) and
the angle grows linearly, so each flight is three straight-line least
squares: ``x`` and ``y + g t^2 / 2`` and the angle against time. The track
is split in two steps:

1. Touches: frames whose lowest point (height ``y - d(theta)``, the
   shape's depth, docs/physics.md section 2) is within the noise of the
   floor, and local minima of that height that stand out of the noise and
   come within one frame's travel of the floor (a fast impact between
   frames).
2. Each stretch between touches is fitted on its middle first; frames
   that the middle's prediction does not reach within the noise (a
   hidden second impact, a frame in contact) are cut from the ends, and
   the rest is fitted again. A stretch left with fewer than
   :data:`MIN_FLIGHT_FRAMES` frames is a flight too short to fit.

The frame noise comes from the fits' residuals, pooled over all flights;
gravity is fitted once more freely (one ``g`` for all flights) as a check
of the scale and the frame rate.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import find_peaks

from hopscape.sim.flight import GRAVITY

from ..errors import InputError

#: Frames a flight needs to be fitted: two parameters per coordinate and
#: enough left over to see whether it is one parabola. [-]
MIN_FLIGHT_FRAMES = 6
#: A touch must stand out of the noise by this many standard deviations of
#: the lowest point's height (find_peaks' prominence). [-]
PROMINENCE = 4.0
#: A frame lies off a flight when its residual exceeds this many standard
#: deviations of the prediction (a normal tail of 3e-5 per frame). [-]
OFF_FLIGHT = 4.0
#: A frame whose lowest point is closer to the floor than this many noise
#: deviations may be in contact: it belongs to no flight. [-]
NEAR_FLOOR = 3.0
#: The lowest point may sit this many noise deviations below the floor
#: before the track counts as wrong (floor line, scale or y direction). [-]
BELOW_FLOOR = 6.0
#: Share of a gravity off standard gravity that earns a warning. [-]
GRAVITY_WARNING = 0.02


@dataclass
class Flights:
    """The fitted flights of one track, one entry per flight in each array.

    Positions, velocities, angles and spins are at each flight's mean frame
    time ``t_ref``; ``stt`` is the sum of squared time offsets from it, so
    a value at offset ``tau`` has variance ``noise^2 (1/n + tau^2/stt)``
    and a slope ``noise^2 / stt`` (a centred straight-line fit).
    """

    first: np.ndarray  # index of the first frame [-]
    last: np.ndarray  # index of the last frame (inclusive) [-]
    n: np.ndarray  # frames fitted [-]
    t_ref: np.ndarray  # [s]
    stt: np.ndarray  # [s^2]
    x: np.ndarray  # [m]
    vx: np.ndarray  # [m/s]
    y: np.ndarray  # [m]
    vy: np.ndarray  # [m/s]
    angle: np.ndarray  # [rad]
    spin: np.ndarray  # [rad/s]
    chi2: np.ndarray  # residual sum of squares over noise^2, x, y and angle together [-]
    position_noise: float  # [m]
    angle_noise: float  # [rad]
    gravity: float  # fitted freely [m/s^2]
    gravity_sd: float  # [m/s^2]
    touching: np.ndarray  # per frame: at the floor or too close to tell (no flight's) [-]

    @property
    def count(self):
        return self.n.size

    def state(self, k, t):
        """Position, angle, velocity and spin of flight ``k`` at times ``t``.

        Returns
        -------
        dict of numpy.ndarray
            ``x``, ``y`` [m], ``angle`` [rad], ``vx``, ``vy`` [m/s], ``spin`` [rad/s].
        """
        tau = np.asarray(t, dtype=float) - self.t_ref[k]
        return {"x": self.x[k] + self.vx[k] * tau, "y": self.y[k] + self.vy[k] * tau - 0.5 * GRAVITY * tau ** 2,
                "angle": self.angle[k] + self.spin[k] * tau, "vx": self.vx[k] + 0 * tau,
                "vy": self.vy[k] - GRAVITY * tau, "spin": self.spin[k] + 0 * tau}

    def variances(self, k, t):
        """Variances of the values and of the slopes of flight ``k`` at ``t``:
        ``(position, velocity, angle, spin)`` [m^2, m^2/s^2, rad^2, rad^2/s^2]."""
        tau = np.asarray(t, dtype=float) - self.t_ref[k]
        share = 1.0 / self.n[k] + tau ** 2 / self.stt[k]
        return (self.position_noise ** 2 * share, self.position_noise ** 2 / self.stt[k],
                self.angle_noise ** 2 * share, self.angle_noise ** 2 / self.stt[k])


def _second_difference_noise(t, values, acceleration):
    """Noise of ``values`` from second divided differences (robust: the
    median absolute value, so impacts do not count), with the known
    ``acceleration`` taken off. [units of values]"""
    h1, h2 = np.diff(t)[:-1], np.diff(t)[1:]
    c_next, c_prev = 2 / ((h1 + h2) * h2), 2 / ((h1 + h2) * h1)
    second = c_next * values[2:] + c_prev * values[:-2] - (c_next + c_prev) * values[1:-1]
    scaled = (second - acceleration) / np.sqrt(c_next ** 2 + c_prev ** 2 + (c_next + c_prev) ** 2)
    return 1.4826 * float(np.median(np.abs(scaled)))


def _line_fit(t, z):
    """Centred straight line ``z = a + b (t - t_ref)``: a, b, t_ref, stt and the residuals."""
    t_ref = t.mean()
    tau = t - t_ref
    stt = float(tau @ tau)
    a = z.mean()
    b = float(tau @ (z - a)) / stt
    return a, b, t_ref, stt, z - a - b * tau


def _fit_one(t, x, y, angle):
    """Straight-line fits of ``x``, ``y + g t^2 / 2`` (about the flight's own
    middle) and the angle; their parameters and residuals."""
    tm = t.mean()
    lifted = y + 0.5 * GRAVITY * (t - tm) ** 2
    fx, fy, fa = _line_fit(t, x), _line_fit(t, lifted), _line_fit(t, angle)
    return fx, fy, fa


def _trimmed(t, x, y, angle, position_noise, angle_noise):
    """The frames of one stretch that belong to one flight: fit the middle
    half, keep the run of frames around it that its prediction reaches
    within :data:`OFF_FLIGHT` deviations, and do the same again from the
    whole run. Returns a boolean mask."""
    n = t.size
    keep = np.zeros(n, bool)
    keep[n // 4: n - n // 4] = True
    for _ in range(3):
        if keep.sum() < 3:
            return keep
        fx, fy, fa = _fit_one(t[keep], x[keep], y[keep], angle[keep])
        tau = t - fy[2]
        share = 1.0 / keep.sum() + tau ** 2 / fy[3]
        off = ((np.abs(x - fx[0] - fx[1] * (t - fx[2])) > OFF_FLIGHT * position_noise * np.sqrt(1 + share))
               | (np.abs(y + 0.5 * GRAVITY * tau ** 2 - fy[0] - fy[1] * tau)
                  > OFF_FLIGHT * position_noise * np.sqrt(1 + share))
               | (np.abs(angle - fa[0] - fa[1] * (t - fa[2])) > OFF_FLIGHT * angle_noise * np.sqrt(1 + share)))
        core = np.flatnonzero(keep)
        middle = core[core.size // 2]
        # a lone noisy frame inside the flight must not end it: a frame is
        # off the flight when its outer neighbour is off too, or it is the
        # stretch's last frame (a contact or a hidden impact spoils every
        # frame beyond it)
        outer = np.where(np.arange(n) < middle, np.roll(off, 1), np.roll(off, -1))
        outer[[0, -1]] = True
        off &= outer
        bad = np.flatnonzero(off)
        low = bad[bad < middle].max() + 1 if np.any(bad < middle) else 0
        high = bad[bad > middle].min() if np.any(bad > middle) else n
        new = np.zeros(n, bool)
        new[low:high] = True
        if np.array_equal(new, keep):
            break
        keep = new
    return keep


def find_flights(track, shape):
    """Touches and fitted flights of one track.

    Parameters
    ----------
    track : hopscape.calibration.tracks.Track
    shape : sim.Shape
        One body (its depth gives the lowest point).

    Returns
    -------
    Flights

    Raises
    ------
    InputError
        The body sits below the floor line; no impact in the track; no
        flight long enough to fit.
    """
    t, x, y, angle = track.time, track.x, track.y, track.angle
    position_noise = max(_second_difference_noise(t, x, 0.0), _second_difference_noise(t, y, -GRAVITY), 1e-9)
    angle_noise = max(_second_difference_noise(t, angle, 0.0), 1e-9)
    reach = float(shape.overall_length) / 2
    gap_noise = float(np.hypot(position_noise, reach * angle_noise))
    gap = y - shape.depth(angle)
    below = gap < -max(BELOW_FLOOR * gap_noise, 0.02 * 2 * reach)
    if below.any():
        i = int(np.argmax(below))
        raise InputError(f"{track.name}: column 'y' row {track.rows[i]}: the body's lowest point is "
                         f"{-gap[i] * 1e3:.3g} mm below the floor line (centre y = {y[i]:.6g} m, angle "
                         f"{np.degrees(angle[i]):.4g} deg); check --floor-y, --y-down and --scale")
    minima, _ = find_peaks(-gap, prominence=PROMINENCE * gap_noise)
    if minima.size:
        travel = np.maximum(np.abs(gap[minima - 1] - gap[minima]), np.abs(gap[minima + 1] - gap[minima]))
        minima = minima[gap[minima] < PROMINENCE * gap_noise + travel]
    # frames the noise cannot tell from contact belong to no flight: a body
    # rocking or sliding on the floor is followed by the model, not fitted
    touching = gap < NEAR_FLOOR * gap_noise
    touching[minima] = True
    if not touching.any():
        raise InputError(f"{track.name}: no impact in the track: the body's lowest point comes no closer than "
                         f"{gap.min() * 1e3:.3g} mm to the floor line (y = 0); check --floor-y, --y-down, "
                         "--scale, or whether the track holds a bounce")
    # stretches of frames clear of the floor: [start, stop)
    stretches = np.flatnonzero(np.diff(np.concatenate([[0], (~touching).astype(np.int8), [0]])) != 0).reshape(-1, 2)
    rows = []
    for start, stop in stretches:
        if stop - start < MIN_FLIGHT_FRAMES:
            continue
        sl = slice(start, stop)
        keep = _trimmed(t[sl], x[sl], y[sl], angle[sl], position_noise, angle_noise)
        if keep.sum() >= MIN_FLIGHT_FRAMES and _one_parabola(t[sl][keep], x[sl][keep], y[sl][keep],
                                                              angle[sl][keep], position_noise, angle_noise):
            index = np.flatnonzero(keep) + start
            rows.append((index[0], index[-1]))
    rows = _join_false_touches(t, x, y, angle, rows, position_noise, angle_noise)
    rows = _extended(t, x, y, angle, rows, shape, gap_noise)
    if len(rows) < 2:
        longest = int(max((stop - start for start, stop in stretches), default=0))
        raise InputError(f"{track.name}: no flight long enough to fit: {len(rows)} flight(s) with at least "
                         f"{MIN_FLIGHT_FRAMES} frames (the longest stretch between touches has {longest}); a "
                         "bounce needs a fitted flight before and after it: film at a higher frame rate or "
                         "track more frames")
    return _fit_flights(t, x, y, angle, np.array(rows), touching)


def _one_parabola(t, x, y, angle, position_noise, angle_noise):
    """Whether one flight fits these frames as well as noise allows: the
    chi-square of the residuals within :data:`OFF_FLIGHT` of its standard
    deviations above its 3 (n - 2) degrees of freedom."""
    fx, fy, fa = _fit_one(t, x, y, angle)
    chi2 = (fx[4] @ fx[4] + fy[4] @ fy[4]) / position_noise ** 2 + (fa[4] @ fa[4]) / angle_noise ** 2
    dof = 3 * (t.size - 2)
    return chi2 < dof + OFF_FLIGHT * np.sqrt(2 * dof)


def _extended(t, x, y, angle, spans, shape, gap_noise):
    """Each flight grown over the frames next to it that its own fit puts
    clear of the floor (by one noise deviation of the lowest point).

    Frames were first kept out by their measured height, which selects on
    their noise: a frame whose noise happened to lift it stayed in, one
    whose noise lowered it was left out, and the fit near the floor was
    biased by a share of the noise. The fitted flight has no such
    selection."""
    grown = []
    for k, (first, last) in enumerate(spans):
        low = spans[k - 1][1] + 1 if k else 0
        high = spans[k + 1][0] - 1 if k + 1 < len(spans) else t.size - 1
        sl = slice(first, last + 1)
        fx, fy, fa = _fit_one(t[sl], x[sl], y[sl], angle[sl])
        tau = t[low:high + 1] - fy[2]
        fitted_gap = (fy[0] + fy[1] * tau - 0.5 * GRAVITY * tau ** 2
                      - shape.depth(fa[0] + fa[1] * (t[low:high + 1] - fa[2])))
        clear = fitted_gap > gap_noise
        inside = np.arange(low, high + 1)
        before = inside[(inside < first) & ~clear]
        after = inside[(inside > last) & ~clear]
        start = before.max() + 1 if before.size else low
        stop = after.min() - 1 if after.size else high
        grown.append((min(start, first), max(stop, last)))
    return grown


def _join_false_touches(t, x, y, angle, spans, position_noise, angle_noise):
    """Join neighbouring flights that one parabola fits as well (a touch
    that noise made out of a close pass over the floor): the joint fit's
    residuals within :data:`OFF_FLIGHT` standard deviations of their
    chi-square (3 (n - 2) degrees of freedom) of what noise alone gives."""
    spans = list(spans)
    k = 0
    while k < len(spans) - 1:
        sl = slice(spans[k][0], spans[k + 1][1] + 1)
        if _one_parabola(t[sl], x[sl], y[sl], angle[sl], position_noise, angle_noise):
            spans[k:k + 2] = [(spans[k][0], spans[k + 1][1])]
        else:
            k += 1
    return spans


def _fit_flights(t, x, y, angle, spans, touching):
    """Fit every flight; the noise from the pooled residuals; gravity freely."""
    fits, sums = [], np.zeros(3)
    dof = np.zeros(3)
    g_num = g_den = 0.0
    for first, last in spans:
        sl = slice(first, last + 1)
        fx, fy, fa = _fit_one(t[sl], x[sl], y[sl], angle[sl])
        fits.append((fx, fy, fa))
        sums += [fx[4] @ fx[4], fy[4] @ fy[4], fa[4] @ fa[4]]
        dof += last + 1 - first - 2
        # free gravity (Frisch-Waugh): the part of t^2/2 no straight line explains
        tau = t[sl] - fy[2]
        square = 0.5 * tau ** 2
        square -= square.mean() + (tau @ square) / fy[3] * tau
        raw = y[sl] - y[sl].mean()
        raw -= (tau @ raw) / fy[3] * tau
        g_num -= square @ raw
        g_den += square @ square
    position_noise = float(np.sqrt((sums[0] + sums[1]) / (dof[0] + dof[1])))
    angle_noise = float(np.sqrt(sums[2] / dof[2]))
    chi2 = np.array([(f[0][4] @ f[0][4] + f[1][4] @ f[1][4]) / position_noise ** 2
                     + (f[2][4] @ f[2][4]) / angle_noise ** 2 for f in fits])
    column = lambda i, j: np.array([f[i][j] for f in fits])  # noqa: E731  (part j of fit i)
    return Flights(first=spans[:, 0], last=spans[:, 1], n=spans[:, 1] + 1 - spans[:, 0], t_ref=column(1, 2),
                   stt=column(1, 3), x=column(0, 0) + column(0, 1) * (column(1, 2) - column(0, 2)),
                   vx=column(0, 1), y=column(1, 0), vy=column(1, 1), angle=column(2, 0), spin=column(2, 1),
                   chi2=chi2, position_noise=position_noise, angle_noise=angle_noise,
                   gravity=float(g_num / g_den), gravity_sd=float(position_noise / np.sqrt(g_den)),
                   touching=touching)


def gravity_warning(flights, name):
    """A warning when the freely fitted gravity is off standard gravity by
    more than :data:`GRAVITY_WARNING` (wrong scale, frame rate or a
    distorting lens), else None."""
    share = flights.gravity / GRAVITY - 1
    if abs(share) <= GRAVITY_WARNING:
        return None
    return (f"{name}: gravity fitted from the flights is {flights.gravity:.4g} +- {flights.gravity_sd:.2g} m/s^2, "
            f"{share:+.1%} off standard gravity {GRAVITY} m/s^2: check --scale, the frame rate (--fps or the "
            "time column) and lens distortion")
