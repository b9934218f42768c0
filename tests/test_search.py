"""The search for the next contact (sim.search).

The reference is brute force on the bodies of tests/flight_bodies.py: the
floor gap ``y(t) - d(theta(t))`` on very fine time grids from the
closed-form flight, with the depth formulas of docs/physics.md section 2.
Grazing contacts that dip below the floor for only 1e-5 s or 1e-6 s are
constructed analytically (docs/physics.md section 5: they exist, about 2 per
10^6 random flights, and must never be skipped).
"""
import numpy as np
import pytest
from flight_bodies import G, Flight, flights, reference_depth
from hypothesis import HealthCheck, given, settings
from scipy.optimize import brentq, minimize_scalar


from hopscape import sim
from hopscape.sim import geometry, search


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(flights())
@pytest.mark.slow
def test_next_contact_is_the_first_root(body):
    # Brute force: the gap on 2e5 points up to the time the body must touch.
    # The returned time may never be later than the first negative sample,
    # and the gap there must be ~0: the search declares contact within
    # sim.search.CONTACT_GAP (1e-9 m now) of the floor while approaching, from above, so
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
    assert -1e-13 <= body.gap(t_contact) <= search.CONTACT_GAP + 1e-13


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
        y = float(reference_depth(kind, theta, length, radius)) + 10 ** rng.uniform(-6, -0.5)
        bodies.append(Flight(kind, length, radius, y, rng.uniform(-3, 3), theta, rng.uniform(-300, 300)))
    singles = np.array([b.next_contact() for b in bodies])
    profile = tuple(np.concatenate([b.profile[k] for b in bodies]) for k in range(4))
    state = [np.array([b.arrays()[k][0] for b in bodies]) for k in range(4)]
    bound = geometry.curvature_bound(*profile)
    _, d_high = geometry.depth_range(*profile)
    batch = search.next_contact(*state, profile, bound, d_high)[0]
    assert np.array_equal(batch, singles)
    # and per kind (one shape class per batch, as sim.simulate runs it)
    for k in range(4):
        pick = slice(k, None, 4)
        sub = search.next_contact(*(s[pick] for s in state), tuple(p[pick] for p in profile),
                                  bound[pick], d_high[pick])[0]
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
    early = brentq(lambda s: body.gap(s) - search.CONTACT_GAP, lowest - half, enter, xtol=1e-16)
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
    assert -1e-13 <= body.gap(t_contact) <= search.CONTACT_GAP + 1e-13



def test_contact_beside_a_receding_deeper_corner():
    # A nearly flat cylinder just after an impact: the corner that struck is
    # 1e-13 m inside the floor (rounding) and rising, the other bottom corner
    # 1.6e-11 m above it and coming down. The contact is that other corner,
    # now, and its offset must be a corner's, not NaN: the receding corner
    # strikes nothing. By hand (sim.search module notes): corner k has depth
    # A s_k sin(theta) + B c_k cos(theta) and gap rate -omega A s_k cos(theta)
    # with vy = 0, so at theta < 0 and omega > 0 the s_k = -1 corner is the
    # deeper one and rises, the s_k = +1 corner is higher and comes down.
    shape = sim.Cylinder(length=0.02, radius=0.005, density=1000.0)
    profile = tuple(np.atleast_1d(np.asarray(p, dtype=float)) for p in shape.profile)
    theta, omega = -8e-10, 50.0
    depth = float(sim.geometry.depth(theta, *shape.profile))
    state = [np.array([v]) for v in (depth - 1e-13, 0.0, theta, omega)]
    bound = geometry.curvature_bound(*profile)
    _, d_high = geometry.depth_range(*profile)
    t, along, across = search.next_contact(*state, profile, bound, d_high)
    assert t[0] == 0.0
    assert along[0] == 1.0 and across[0] == 1.0
