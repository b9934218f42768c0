"""Cross-check of a frictionless multi-impact drop against pymunk.

Outside source: pymunk 7 (https://www.pymunk.org), the Python binding of the
Chipmunk2D C library, a general-purpose 2D rigid-body engine written
independently of hopscape. Everything that decides the outcome on the pymunk
side is pymunk's own: collision detection (rounded segment against segment),
the contact solver (sequential impulses, Newton restitution on the normal
contact velocity, elasticity of the two shapes multiplied), the begin /
separate contact events and the time integrator. hopscape instead flies
exactly between impacts and resolves each impact by Routh's method; without
friction and with one contact point at a time every impact law reduces to
Newton's, so the two must agree up to pymunk's time-step error.

What is compared: the highest centre height of the flights longer than
``MIN_FLIGHT`` (the visible bounces). An end strike is often followed within
a few milliseconds by a strike of the other end; those short hops are
skipped on both sides, but the test also checks that the long flights follow
the same impact numbers in both engines, so like is compared with like.

Time step (explored before writing this test: pymunk minus hopscape, mm,
first and second long-flight peak, this file's functions at each dt):

    dt [s]     10 deg          20 deg          30 deg
    2e-6      -0.007 -0.142   +0.022 -0.785   +0.006 +0.297
    1e-6      -0.001 -0.014   +0.011 -0.382   -0.010 -0.454
    5e-7      -0.001 -0.009   +0.005 -0.176   -0.002 -0.091
    2.5e-7    +0.001 +0.024   +0.002 -0.071   +0.002 +0.100

The error is first order in dt with a phase that depends on where the step
grid falls: pymunk applies an impact at the first step at which the shapes
overlap, between 0 and 1 step late, and the fast spin after the first strike
(about 380 rad/s) turns that delay into a change of the angle at the next
strikes, which the later bounces amplify (at 20 and 30 deg the second bounce
moves by 2.5 to 5 mm per mrad of release angle in hopscape itself), so the
second bounce converges with a scatter of up to about 0.45 mm per
microsecond of step, not monotonically. 1e-6 s agrees with 5e-7 s within
0.36 mm, but its own error reaches 0.45 mm, too close to the tolerance;
5e-7 s halves it, agrees with 2.5e-7 s within 0.19 mm on every peak, and
keeps the three drops near 10 s. A thick static box as the floor instead of
the segment gives the same numbers. pymunk's solver settings were varied
(at 1.25e-6 s, started from the release velocity itself) without changing
any peak by as much as 0.1 um: iterations 1 or 10, collision_bias 1 (no overlap
correction) or the default, collision_slop 0 or 0.1 mm,
collision_persistence 1 or 3. Only one contact point is ever active and each
contact lasts one or two steps, so the solver has nothing to iterate and the
overlap correction no time to act.
"""
import math

import numpy as np
import pymunk
import pytest

from hopscape import sim

RADIUS = 3.5e-3  # cap radius [m]
LENGTH = 14e-3  # cylinder length [m]
DENSITY = 1500.0  # [kg/m^3]
HEIGHT = 0.30  # centre release height [m]
RESTITUTION = 0.8
TIME_STEP = 5e-7  # [s], see the module notes
MIN_FLIGHT = 0.020  # a flight longer than this is a visible bounce [s]
TOLERANCE = 0.5e-3  # [m]
BOUNCES = 2
TIME_LIMIT = 2.0  # [s] of simulated time, far beyond the two bounces here


def pymunk_drop(angle, time_step=TIME_STEP, bounces=BOUNCES, chunk=20000):
    """Drop the capsule in pymunk until ``bounces`` long flights have ended.

    Returns a list of ``(impacts before the flight, flight duration [s],
    highest centre height in the flight [m])`` for every flight after the
    first contact, short ones included.
    """
    capsule = sim.Capsule(length=LENGTH, radius=RADIUS, density=DENSITY)
    space = pymunk.Space()
    space.gravity = (0.0, -sim.GRAVITY)
    space.damping = 1.0  # no velocity damping
    space.collision_slop = 0.0  # contacts at zero overlap
    # hopscape's mass and its 3D solid's transverse moment, set explicitly
    body = pymunk.Body(float(capsule.mass), float(capsule.inertia))
    body.position = (0.0, HEIGHT)
    body.angle = angle
    # Each pymunk step moves the position with the velocity it starts with and
    # only then adds gravity, so it is a leapfrog integrator (exact in free
    # flight) when that velocity is the one half a step later; started with
    # the release velocity itself it drifts by g dt t / 2 (0.6 um, hence a
    # 0.25 us late first strike, at dt = 5e-7 s). Release from rest: v(dt/2).
    body.velocity = (0.0, -0.5 * sim.GRAVITY * time_step)
    shape = pymunk.Segment(body, (-LENGTH / 2, 0.0), (LENGTH / 2, 0.0), RADIUS)
    shape.elasticity = RESTITUTION  # pymunk multiplies the two elasticities
    shape.friction = 0.0
    floor = pymunk.Segment(space.static_body, (-1.0, 0.0), (1.0, 0.0), 0.0)
    floor.elasticity = 1.0
    floor.friction = 0.0
    space.add(body, shape, floor)
    assert body.mass == capsule.mass and body.moment == capsule.inertia

    heights = []
    events = []  # (kind, index of the step in which pymunk reported it)

    def begin(arbiter, space, data):
        events.append(("begin", len(heights)))

    def separate(arbiter, space, data):
        events.append(("separate", len(heights)))

    space.on_collision(None, None, begin=begin, separate=separate)
    step = space.step
    record = heights.append
    while len(heights) * time_step < TIME_LIMIT:
        for _ in range(chunk):
            step(time_step)
            record(body.position.y)
        flights = _flights(events, heights, time_step)
        if sum(duration > MIN_FLIGHT for _, duration, _ in flights) >= bounces:
            return flights
    raise AssertionError(f"pymunk drop at {math.degrees(angle):.1f} deg did not make "
                         f"{bounces} bounces in {TIME_LIMIT} s")


def _flights(events, heights, time_step):
    """Flights between pymunk's separate and the next begin event."""
    flights = []
    impacts = 0
    left = None
    for kind, index in events:
        if kind == "begin":
            impacts += 1
            if left is not None:
                flights.append((impacts - 1, (index - left) * time_step, max(heights[left:index])))
            left = None
        else:
            left = index
    return flights


def long_flight_peaks(flights, bounces=BOUNCES):
    """``(impact numbers, peaks)`` of the first ``bounces`` flights > MIN_FLIGHT."""
    picked = [(k, peak) for k, duration, peak in flights if duration > MIN_FLIGHT][:bounces]
    return [k for k, _ in picked], np.array([peak for _, peak in picked])


def hopscape_drop(angle, impacts=8):
    result = sim.simulate(sim.Capsule(length=LENGTH, radius=RADIUS, density=DENSITY),
                          sim.Release(height=HEIGHT, angle=angle),
                          sim.Contact(restitution=RESTITUTION, friction=0.0), impacts=impacts)
    assert result.count[0] == impacts
    # impact k (1-based) is followed by flight k
    return [(k + 1, result.flight[0, k], result.peak_centre[0, k]) for k in range(impacts)]


@pytest.mark.parametrize("angle_deg", [10.0, 20.0, 30.0])
@pytest.mark.slow
def test_long_flight_peaks_match_pymunk(angle_deg):
    angle = math.radians(angle_deg)
    impacts_pm, peaks_pm = long_flight_peaks(pymunk_drop(angle))
    impacts_hs, peaks_hs = long_flight_peaks(hopscape_drop(angle))
    assert len(peaks_hs) == BOUNCES
    # the same strikes close each visible bounce in both engines
    assert impacts_pm == impacts_hs
    np.testing.assert_allclose(peaks_pm, peaks_hs, rtol=0, atol=TOLERANCE)
    # and the drop bounces visibly: the peaks are well above the resting height
    assert np.all(peaks_hs > RADIUS + 5e-3)
