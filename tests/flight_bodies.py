"""Bodies in flight for the tests of the contact search and the flight
peaks (tests/test_search.py, tests/test_peaks.py): the engine's inputs and
brute-force views.

The reference everywhere is brute force: the floor gap
``y(t) - d(theta(t))`` and the heights of the centre, lowest point and top
point, evaluated on very fine time grids from the closed-form flight
(x, y parabolic, theta linear in t) with the depth formulas of docs/physics.md
section 2 written out here.
"""
import numpy as np
from hypothesis import strategies as st


from hopscape import sim
from hopscape.sim import geometry, peaks, search


G = sim.GRAVITY


def reference_depth(kind, theta, length, radius):
    """Depth of the lowest point below the centre, docs/physics.md section 2."""
    s, c = np.sin(theta), np.cos(theta)
    if kind == "capsule":
        return length / 2 * np.abs(s) + radius
    if kind == "spheroid":
        return np.sqrt((length / 2 * s) ** 2 + (radius * c) ** 2)
    if kind == "cylinder":
        return length / 2 * np.abs(s) + radius * np.abs(c)
    return radius + 0.0 * theta


class Flight:
    """One body in flight, with the engine's inputs and brute-force views."""

    def __init__(self, kind, length, radius, y, vy, theta, omega):
        self.kind, self.length, self.radius = kind, length, radius
        self.y, self.vy, self.theta, self.omega = y, vy, theta, omega
        shape = sim.make_shape(kind, length=length, radius=radius, density=1000.0)
        self.profile = tuple(np.atleast_1d(np.asarray(p, dtype=float)) for p in shape.profile)
        self.size = float(sum(p[0] for p in self.profile))  # A + B + a + b

    def __repr__(self):
        return (f"Flight({self.kind!r}, length={self.length!r}, radius={self.radius!r}, y={self.y!r}, "
                f"vy={self.vy!r}, theta={self.theta!r}, omega={self.omega!r})")

    def arrays(self):
        state = (self.y, self.vy, self.theta, self.omega)
        return tuple(np.atleast_1d(np.asarray(v, dtype=float)) for v in state)

    def next_contact(self):
        bound = geometry.curvature_bound(*self.profile)
        _, d_high = geometry.depth_range(*self.profile)
        return float(search.next_contact(*self.arrays(), self.profile, bound, d_high)[0][0])

    def peaks(self, duration):
        d_low, d_high = geometry.depth_range(*self.profile)
        out = peaks.flight_peaks(*self.arrays(), np.atleast_1d(float(duration)), self.profile, d_low, d_high)
        return tuple(float(v[0]) for v in out)

    def centre(self, t):
        return self.y + self.vy * t - 0.5 * G * t * t

    def depth(self, t):
        return reference_depth(self.kind, self.theta + self.omega * t, self.length, self.radius)

    def gap(self, t):
        return self.centre(t) - self.depth(t)

    def bottom(self, t):
        return self.centre(t) - self.depth(t)

    def top(self, t):
        return self.centre(t) + self.depth(t)

    def must_touch_by(self):
        """Time by which the centre has fallen to the smallest depth: the
        body is certainly touching then."""
        d_min = {"capsule": self.radius, "sphere": self.radius,
                 "spheroid": min(self.length / 2, self.radius),
                 "cylinder": min(self.length / 2, self.radius)}[self.kind]
        # the root of y + vy t - G t^2 / 2 = d_min written without the
        # cancellation of vy + sqrt(...) when falling fast from close by
        # (that form loses ~1e-11 relative at 1e-7 m and 3 m/s)
        drop = self.y - d_min
        return 2 * drop / (np.sqrt(self.vy ** 2 + 2 * G * drop) - self.vy) if self.vy < 0 else \
            (self.vy + np.sqrt(self.vy ** 2 + 2 * G * drop)) / G


def dense_max(height, duration, samples=200_001):
    """Highest value of ``height(t)`` on [0, duration] by brute force.

    A uniform grid, then the four best local maxima of the grid each
    re-sampled three times more (2001 points over four cells, so each level
    shrinks the cell 500-fold): the final cell is duration * 4e-14 (about
    1e-14 s), so the result is within |h'| * cell (< 1e-13 m here) of the
    true maximum, kinked or smooth.
    """
    t = np.linspace(0.0, duration, samples)
    h = height(t)
    peaks = np.flatnonzero(np.r_[True, (h[1:-1] >= h[:-2]) & (h[1:-1] >= h[2:]), True])
    best = float(h.max())
    cell0 = duration / (samples - 1)
    for i in peaks[np.argsort(h[peaks])[-4:]]:
        lo, hi = t[i] - 2 * cell0, t[i] + 2 * cell0
        for _ in range(3):
            lo, hi = max(lo, 0.0), min(hi, duration)
            tt = np.linspace(lo, hi, 2001)
            hh = height(tt)
            j = int(np.argmax(hh))
            best = max(best, float(hh[j]))
            cell = (hi - lo) / 2000
            lo, hi = tt[j] - 2 * cell, tt[j] + 2 * cell
    return best



@st.composite
def flights(draw, min_vy=-3.0):
    kind = draw(st.sampled_from(["capsule", "cylinder", "spheroid", "sphere"]))
    radius = draw(st.floats(1e-3, 1e-2))
    length = radius * draw(st.floats(0.2, 6.0))
    theta = draw(st.floats(-np.pi, np.pi))
    omega = draw(st.one_of(st.just(0.0), st.floats(-300.0, 300.0, allow_subnormal=False)))
    vy = draw(st.floats(min_vy, 3.0))
    clearance = 10 ** draw(st.floats(-7.0, -0.5))  # 0.1 um .. 0.3 m above the floor
    y = float(reference_depth(kind, theta, length, radius)) + clearance
    return Flight(kind, length, radius, y, vy, theta, omega)


def rounding_allowance(body):
    # flight_peaks evaluates sin/cos through sim._vector.sincos (tangent
    # half-angle, < 4e-15 absolute: test_sincos_matches_numpy in
    # tests/test_vector.py), which moves
    # a depth by < 4e-15 (A + B + a + b); ten times that, plus rounding of
    # the centre height (1e-12 m; heights are < 1 m).
    return 4e-14 * body.size + 1e-12


def random_flight(rng, kind, clearance=(-6, -0.7), omega=None):
    """A body of ``kind`` in flight, sizes 1-10 mm, 10**clearance m above
    the floor, vy in -1..3 m/s and (unless given) spin in -300..300 rad/s."""
    radius = 10 ** rng.uniform(-3, -2)
    length = radius * rng.uniform(0.2, 6.0)
    theta = rng.uniform(-np.pi, np.pi)
    y = float(reference_depth(kind, theta, length, radius)) + 10 ** rng.uniform(*clearance)
    vy = rng.uniform(-1, 3)
    return Flight(kind, length, radius, y, vy, theta, rng.uniform(-300, 300) if omega is None else omega)
