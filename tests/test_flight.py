"""Exact flights: the search for the next contact and the flight peaks.

The reference everywhere is brute force: the floor gap
``y(t) - d(theta(t))`` and the heights of the centre, lowest point and top
point, evaluated on very fine time grids from the closed-form flight
(x, y parabolic, theta linear in t) with the depth formulas of docs/physics.md
section 2 written out here. Grazing contacts that dip below the floor for
only 1e-5 s or 1e-6 s are constructed analytically (docs/physics.md
section 5: they exist, about 2 per 10^6 random flights, and must never be
skipped).
"""
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar

import sim
from sim import flight

G = sim.GRAVITY


def notes_depth(kind, theta, length, radius):
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
        d2 = flight.curvature_bound(*self.profile)
        _, d_high = flight.depth_range(*self.profile)
        return float(flight.next_contact(*self.arrays(), self.profile, d2, d_high)[0][0])

    def peaks(self, duration):
        d_low, d_high = flight.depth_range(*self.profile)
        out = flight.flight_peaks(*self.arrays(), np.atleast_1d(float(duration)), self.profile, d_low, d_high)
        return tuple(float(v[0]) for v in out)

    def centre(self, t):
        return self.y + self.vy * t - 0.5 * G * t * t

    def depth(self, t):
        return notes_depth(self.kind, self.theta + self.omega * t, self.length, self.radius)

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


# --------------------------------------------------------------------------
# random flights
# --------------------------------------------------------------------------

@st.composite
def flights(draw, min_vy=-3.0):
    kind = draw(st.sampled_from(["capsule", "cylinder", "spheroid", "sphere"]))
    radius = draw(st.floats(1e-3, 1e-2))
    length = radius * draw(st.floats(0.2, 6.0))
    theta = draw(st.floats(-np.pi, np.pi))
    omega = draw(st.one_of(st.just(0.0), st.floats(-300.0, 300.0, allow_subnormal=False)))
    vy = draw(st.floats(min_vy, 3.0))
    clearance = 10 ** draw(st.floats(-7.0, -0.5))  # 0.1 um .. 0.3 m above the floor
    y = float(notes_depth(kind, theta, length, radius)) + clearance
    return Flight(kind, length, radius, y, vy, theta, omega)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(flights())
def test_next_contact_is_the_first_root(body):
    # Brute force: the gap on 2e5 points up to the time the body must touch.
    # The returned time may never be later than the first negative sample,
    # and the gap there must be ~0: the search declares contact within
    # sim.flight.CONTACT_GAP (1e-9 m now) of the floor while approaching, from above, so
    # gap in [0, CONTACT_GAP] up to rounding of the heights (1e-13 m allowed,
    # heights are < 1 m).
    t_contact = body.next_contact()
    assert np.isfinite(t_contact)
    end = body.must_touch_by()
    t = np.linspace(0.0, end, 200_001)
    # "negative" beyond rounding of the heights (1e-13 m, as below)
    negative = np.flatnonzero(body.gap(t) < -1e-13)
    if negative.size:
        assert t_contact <= t[negative[0]]
    # up to the rounding of the heights (1e-13 m, as below) at the speed the
    # body then falls: a relative margin alone is too tight for contacts a
    # microsecond away (a flat spheroid 1 um up: 1e-18 m of rounding)
    fall_speed = max(abs(body.vy - G * end), 1e-3)
    assert t_contact <= end * (1 + 1e-12) + 1e-13 / fall_speed
    assert -1e-13 <= body.gap(t_contact) <= flight.CONTACT_GAP + 1e-13


def test_next_contact_batch_equals_one_by_one():
    # The search advances many bodies together; a body's answer must not
    # depend on its neighbours (bit for bit), including mixed shapes in one
    # batch (four-corner pieces then also run for the round shapes).
    rng = np.random.default_rng(7)
    bodies = []
    for i in range(120):
        kind = ["capsule", "cylinder", "spheroid", "sphere"][i % 4]
        radius = rng.uniform(1e-3, 1e-2)
        length = radius * rng.uniform(0.2, 6.0)
        theta = rng.uniform(-np.pi, np.pi)
        y = float(notes_depth(kind, theta, length, radius)) + 10 ** rng.uniform(-6, -0.5)
        bodies.append(Flight(kind, length, radius, y, rng.uniform(-3, 3), theta, rng.uniform(-300, 300)))
    singles = np.array([b.next_contact() for b in bodies])
    profile = tuple(np.concatenate([b.profile[k] for b in bodies]) for k in range(4))
    state = [np.array([b.arrays()[k][0] for b in bodies]) for k in range(4)]
    d2 = flight.curvature_bound(*profile)
    _, d_high = flight.depth_range(*profile)
    batch = flight.next_contact(*state, profile, d2, d_high)[0]
    assert np.array_equal(batch, singles)
    # and per kind (one shape class per batch, as sim.simulate runs it)
    for k in range(4):
        pick = slice(k, None, 4)
        sub = flight.next_contact(*(s[pick] for s in state), tuple(p[pick] for p in profile),
                                  d2[pick], d_high[pick])[0]
        assert np.array_equal(sub, singles[pick])


# --------------------------------------------------------------------------
# constructed grazing flights
# --------------------------------------------------------------------------

def deepest_angle(kind, length, radius):
    """Angle where the depth has a smooth maximum (the point sweeping
    lowest): the cap under the centre, the rim corner on the diagonal, the
    spheroid's end."""
    if kind == "cylinder":
        return np.arctan2(length / 2, radius)
    return np.pi / 2


def grazing_flight(kind, length, radius, omega, dip, duration):
    """A flight whose deepest point clips the floor by ``dip`` [m].

    The centre starts at its apex (vy = 0) and the body turns at ``omega``
    so that the deepest angle comes round at t0 = 0.8 theta_max / omega,
    before any other part could come close. With ``dip`` None it is set so
    the gap stays negative for about ``duration`` [s]; a negative dip is a
    near miss. Returns the flight, the time of the deepest approach (scipy's
    bounded minimiser on the closed-form gap) and a half-width around it
    that stays clear of the depth's kinks.
    """
    theta_max = deepest_angle(kind, length, radius)
    # angular distance from theta_max to the nearest kink of d(theta)
    clear = min(theta_max, np.pi / 2 - theta_max) if kind == "cylinder" else np.pi / 2
    t0 = 0.8 * theta_max / omega
    theta0 = theta_max - omega * t0
    probe = Flight(kind, length, radius, 0.0, 0.0, theta0, omega)
    half = 0.6 * clear / omega
    lowest = minimize_scalar(probe.gap, bounds=(t0 - half, t0 + half), method="bounded",
                             options={"xatol": 1e-15}).x
    assert abs(lowest - t0) < 0.5 * half  # a true interior minimum
    h = 1e-5
    curvature = (probe.gap(lowest + h) - 2 * probe.gap(lowest) + probe.gap(lowest - h)) / h ** 2
    assert curvature > 0
    if dip is None:
        dip = 0.5 * curvature * (duration / 2) ** 2
    y0 = -dip - probe.gap(lowest)
    body = Flight(kind, length, radius, y0, 0.0, theta0, omega)
    return body, lowest, 0.5 * half


GRAZES = [
    # kind, length, radius, spin [rad/s], time below the floor [s]
    ("capsule", 0.012, 0.0035, 200.0, 1e-5),
    ("capsule", 0.012, 0.0035, 1000.0, 1e-6),
    ("capsule", 0.004, 0.002, 150.0, 1e-5),
    ("cylinder", 0.004, 0.005, 300.0, 1e-5),
    ("cylinder", 0.03, 0.002, 800.0, 1e-6),
    ("spheroid", 0.02, 0.004, 400.0, 1e-5),
]


@pytest.mark.parametrize("kind, length, radius, omega, duration", GRAZES)
def test_grazing_contact_is_found(kind, length, radius, omega, duration):
    body, lowest, half = grazing_flight(kind, length, radius, omega, None, duration)
    enter = brentq(body.gap, lowest - half, lowest, xtol=1e-16)
    leave = brentq(body.gap, lowest, lowest + half, xtol=1e-16)
    # the construction really is a graze of about the intended length, and
    # nothing touches before it (2e5-point check of the gap)
    assert 0.8 * duration < leave - enter < 1.25 * duration
    t = np.linspace(0.0, enter, 200_001)[:-1]
    assert body.gap(t).min() > 0
    # the search must stop inside [first time within CONTACT_GAP, enter]:
    # it declares contact when a piece is within CONTACT_GAP and approaching
    t_contact = body.next_contact()
    early = brentq(lambda s: body.gap(s) - flight.CONTACT_GAP, lowest - half, enter, xtol=1e-16)
    assert early - 1e-12 <= t_contact <= enter + 1e-12
    assert t_contact < leave
    # ... and so must a whole drop released in that state
    shape = sim.make_shape(kind, length=length, radius=radius, density=1000.0)
    result = sim.simulate(shape, sim.Release(height=body.y, angle=body.theta, spin=omega),
                          sim.Contact(0.5, 0.3), impacts=1)
    assert early - 1e-12 <= result.time[0, 0] <= enter + 1e-12


@pytest.mark.parametrize("kind, length, radius, omega, duration", GRAZES)
def test_near_miss_is_not_a_contact(kind, length, radius, omega, duration):
    # Same flights raised to clear the floor by 1e-9 m (ten times the contact
    # gap): the search must pass the near miss and return the later, real
    # contact, still never after a sampled negative gap.
    body, lowest, half = grazing_flight(kind, length, radius, omega, -1e-9, duration)
    assert body.gap(lowest) == pytest.approx(1e-9, rel=1e-3)
    t_contact = body.next_contact()
    assert t_contact > lowest
    t = np.linspace(0.0, t_contact * 1.5, 400_001)
    negative = np.flatnonzero(body.gap(t) < -1e-13)
    assert negative.size and t_contact <= t[negative[0]]
    assert -1e-13 <= body.gap(t_contact) <= flight.CONTACT_GAP + 1e-13


# --------------------------------------------------------------------------
# flight peaks
# --------------------------------------------------------------------------

def test_contact_beside_a_receding_deeper_corner():
    # A nearly flat cylinder just after an impact: the corner that struck is
    # 1e-13 m inside the floor (rounding) and rising, the other bottom corner
    # 1.6e-11 m above it and coming down. The contact is that other corner,
    # now, and its offset must be a corner's, not NaN: the receding corner
    # strikes nothing. By hand (sim.flight module notes): corner k has depth
    # A s_k sin(theta) + B c_k cos(theta) and gap rate -omega A s_k cos(theta)
    # with vy = 0, so at theta < 0 and omega > 0 the s_k = -1 corner is the
    # deeper one and rises, the s_k = +1 corner is higher and comes down.
    shape = sim.Cylinder(length=0.02, radius=0.005, density=1000.0)
    profile = tuple(np.atleast_1d(np.asarray(p, dtype=float)) for p in shape.profile)
    theta, omega = -8e-10, 50.0
    depth = float(sim.shapes.depth(theta, *shape.profile))
    state = [np.array([v]) for v in (depth - 1e-13, 0.0, theta, omega)]
    d2 = flight.curvature_bound(*profile)
    _, d_high = flight.depth_range(*profile)
    t, along, across = flight.next_contact(*state, profile, d2, d_high)
    assert t[0] == 0.0
    assert along[0] == 1.0 and across[0] == 1.0


@pytest.mark.parametrize("speed_up, height", [
    (-3.0, 1e-7), (-3.0, 0.3), (0.0, 0.05), (2.0, 0.0), (2.0, 1e-9), (0.5, 0.2), (-1e-3, 1e-12),
])
def test_fall_time_is_the_positive_root(speed_up, height):
    # Textbook kinematics (from memory): h + v t - g t^2 / 2 = 0 has the
    # positive root t = (v + sqrt(v^2 + 2 g h)) / g. Checked in exact
    # rational arithmetic at the returned time (the residual of the
    # quadratic, relative to its largest term), which the cancelling form
    # (v + sqrt(...)) / g misses by ~1e-11 at 1e-7 m and 3 m/s.
    from fractions import Fraction
    t = float(flight.fall_time(np.array([speed_up]), np.array([height]))[0])
    assert t >= 0.0
    g, v, h, tt = (Fraction(x) for x in (flight.GRAVITY, speed_up, height, t))
    residual = h + v * tt - g * tt * tt / 2
    scale = max(abs(h), abs(v * tt), g * tt * tt / 2, Fraction(1, 10 ** 300))
    assert abs(residual) / scale < 1e-14
    if height == 0.0:
        assert t == pytest.approx(max(2 * speed_up / flight.GRAVITY, 0.0), abs=0.0)


def test_sincos_matches_numpy():
    # The tangent half-angle sin/cos against NumPy's own (libm) sin and cos,
    # over the angles a flight reaches (|theta| up to 1e3 rad) and the
    # awkward points: multiples of pi/2, where tan(theta/2) is 0, 1 or huge.
    rng = np.random.default_rng(11)
    theta = np.concatenate([rng.uniform(-1e3, 1e3, 100_000), rng.uniform(-4, 4, 100_000),
                            np.arange(-40, 41) * (np.pi / 2), [0.0, -0.0, 1e-300, np.pi, -np.pi]])
    s, c = flight.sincos(theta)
    assert np.abs(s - np.sin(theta)).max() < 4e-15
    assert np.abs(c - np.cos(theta)).max() < 4e-15
    assert flight.sincos(np.array([0.0]))[0][0] == 0.0 and flight.sincos(np.array([0.0]))[1][0] == 1.0


def rounding_allowance(body):
    # flight_peaks evaluates sin/cos through sim.flight.sincos (tangent
    # half-angle, < 4e-15 absolute: test_sincos_matches_numpy), which moves
    # a depth by < 4e-15 (A + B + a + b); ten times that, plus rounding of
    # the centre height (1e-12 m; heights are < 1 m).
    return 4e-14 * body.size + 1e-12


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(flights(min_vy=-1.0), st.one_of(st.just(1.0), st.floats(0.01, 1.0)))
def test_flight_peaks_centre_exact_and_never_above_reached(body, fraction):
    # Flights up to the next contact (or a fraction of it: flight_peaks is
    # defined for any duration). The centre peak is a closed form: rounding
    # only. The lowest- and top-point peaks must be heights actually
    # reached: never above the brute-force maximum by more than the
    # rounding of the engine's evaluation.
    duration = body.next_contact() * fraction
    centre, bottom, top = body.peaks(duration)
    assert centre == pytest.approx(dense_max(body.centre, duration), abs=1e-12)
    assert bottom <= dense_max(body.bottom, duration) + rounding_allowance(body)
    assert top <= dense_max(body.top, duration) + rounding_allowance(body)


def test_flight_peaks_without_spin_are_exact():
    # No spin: the depth is constant, so both peaks sit at the centre's
    # apex (or the flight's end): closed form, up to rounding.
    for kind, theta in (("capsule", 0.7), ("cylinder", 1.1), ("spheroid", -0.4)):
        body = Flight(kind, 0.012, 0.004, 0.05, 1.2, theta, 0.0)
        duration = body.next_contact()
        apex = body.centre(min(1.2 / G, duration))
        d = float(body.depth(0.0))
        centre, bottom, top = body.peaks(duration)
        assert centre == pytest.approx(apex, abs=1e-12)
        assert bottom == pytest.approx(apex - d, abs=rounding_allowance(body))
        assert top == pytest.approx(apex + d, abs=rounding_allowance(body))


# Peak accuracy asked of the engine: 1e-9 m (a millionth of a millimetre,
# far below any measured bounce height). The polish converges inside that:
# on 6000 random flights of the four shapes, the worst difference from
# dense sampling was 4e-13 m (measured while tuning the polish).
PEAK_TOLERANCE = 1e-9


@pytest.mark.parametrize("kind, length, radius, y, vy, theta, omega, which", [
    # found by dense sampling while writing this suite
    ("capsule", 0.007106468724158611, 0.0015000052803466838, 0.004166545837841054,
     1.6626317734289318, 2.2967477844211848, 49.749132905543945, "bottom"),
    ("cylinder", 0.03811382982197448, 0.00867368359200123, 0.019477632633078903,
     0.9165843202092478, -1.5196115794247353, -54.08886856822542, "top"),
])
def test_flight_peaks_regression_cases(kind, length, radius, y, vy, theta, omega, which):
    body = Flight(kind, length, radius, y, vy, theta, omega)
    duration = body.next_contact()
    _, bottom, top = body.peaks(duration)
    reported = {"bottom": bottom, "top": top}[which]
    assert reported == pytest.approx(dense_max(getattr(body, which), duration), abs=PEAK_TOLERANCE)


def random_flight(rng, kind, clearance=(-6, -0.7), omega=None):
    """A body of ``kind`` in flight, sizes 1-10 mm, 10**clearance m above
    the floor, vy in -1..3 m/s and (unless given) spin in -300..300 rad/s."""
    radius = 10 ** rng.uniform(-3, -2)
    length = radius * rng.uniform(0.2, 6.0)
    theta = rng.uniform(-np.pi, np.pi)
    y = float(notes_depth(kind, theta, length, radius)) + 10 ** rng.uniform(*clearance)
    vy = rng.uniform(-1, 3)
    return Flight(kind, length, radius, y, vy, theta, rng.uniform(-300, 300) if omega is None else omega)


def test_flight_peaks_reach_the_true_peak():
    # A fixed random population of flights (numpy seed, so the outcome is
    # reproducible) up to their next contact: every reported lowest- and
    # top-point peak within PEAK_TOLERANCE of the brute-force maximum.
    rng = np.random.default_rng(2024)
    worst = 0.0
    for i in range(400):
        body = random_flight(rng, ["capsule", "cylinder", "spheroid", "sphere"][i % 4])
        duration = body.next_contact()
        _, bottom, top = body.peaks(duration)
        for reported, height in ((bottom, body.bottom), (top, body.top)):
            worst = max(worst, abs(reported - dense_max(height, duration, samples=50_001)))
    assert worst <= PEAK_TOLERANCE


def test_capsule_fast_path_reaches_the_true_peaks():
    # Capsules and spheres take their own path (sim.flight._capsule_peaks):
    # the lowest point from the kinks and the one half turn around the apex,
    # the top point from bump bounds and Newton stopped by the concavity
    # bound. The reference is brute force: dense sampling of the
    # depth formula of docs/physics.md section 2 (dense_max above). Benchmark-like capsules plus fast
    # spins, slow spins and release heights near and far from the floor.
    rng = np.random.default_rng(77)
    worst = 0.0
    for i in range(300):
        omega = rng.choice([-1.0, 1.0]) * 10 ** rng.uniform(-1, 2.5)
        body = random_flight(rng, "sphere" if i % 10 == 9 else "capsule", (-6, -0.5), omega)
        duration = body.next_contact() * rng.choice([1.0, rng.uniform(0.05, 1.0)])
        _, bottom, top = body.peaks(duration)
        for reported, height in ((bottom, body.bottom), (top, body.top)):
            reference = dense_max(height, duration, samples=50_001)
            assert reported <= reference + rounding_allowance(body)
            worst = max(worst, abs(reported - reference))
    assert worst <= PEAK_TOLERANCE


def test_flight_peaks_do_not_depend_on_the_batch():
    # Each body's peaks are per-body decisions (capsules and spheres take the
    # fast top path, the others the general pieces): the same bits alone as
    # in a mixed batch.
    rng = np.random.default_rng(5)
    bodies = []
    for i in range(40):
        bodies.append(random_flight(rng, ["capsule", "cylinder", "spheroid", "sphere"][i % 4], (-4, -0.7)))
    durations = np.array([b.next_contact() for b in bodies])
    alone = np.array([b.peaks(d) for b, d in zip(bodies, durations)])
    state = [np.concatenate([b.arrays()[k] for b in bodies]) for k in range(4)]
    profile = tuple(np.concatenate([b.profile[k] for b in bodies]) for k in range(4))
    d_low, d_high = flight.depth_range(*profile)
    batch = np.array(flight.flight_peaks(*state, durations, profile, d_low, d_high)).T
    np.testing.assert_array_equal(batch, alone)


def test_flight_peaks_of_bodies_without_spin_warn_of_nothing():
    # A body without spin has empty pieces (its window starts at infinity);
    # in a batch with spheroids their mid-piece starts once came out
    # inf * 0 = NaN with a RuntimeWarning on the user's console.
    bodies = [Flight(kind, 0.012, 0.004, 0.05, 1.2, 0.7, omega)
              for kind in ("capsule", "cylinder", "spheroid", "sphere") for omega in (0.0, 40.0)]
    durations = np.array([b.next_contact() for b in bodies])
    state = [np.concatenate([b.arrays()[k] for b in bodies]) for k in range(4)]
    profile = tuple(np.concatenate([b.profile[k] for b in bodies]) for k in range(4))
    d_low, d_high = flight.depth_range(*profile)
    with np.errstate(all="raise"):
        peaks = np.array(flight.flight_peaks(*state, durations, profile, d_low, d_high))
    assert np.isfinite(peaks).all()
