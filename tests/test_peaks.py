"""Flight peaks (sim.peaks): the highest centre, lowest point and top point
over a flight, against brute force (dense sampling of the closed-form
flight with the depth formulas of docs/physics.md section 2; the bodies of
tests/flight_bodies.py).
"""
import numpy as np
import pytest
from flight_bodies import G, Flight, dense_max, flights, random_flight, rounding_allowance
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st


from hopscape.sim import geometry, peaks


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(flights(min_vy=-1.0), st.one_of(st.just(1.0), st.floats(0.01, 1.0)))
@pytest.mark.slow
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



@pytest.mark.slow
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


@pytest.mark.slow
def test_capsule_fast_path_reaches_the_true_peaks():
    # Capsules and spheres take their own path (sim.peaks._capsule_peaks):
    # the lowest point from the kinks and the one half turn around the apex,
    # the top point from bump bounds and Newton stopped by the concavity
    # bound. The reference is brute force: dense sampling of docs/physics.md's
    # depth formula (dense_max above). Benchmark-like capsules plus fast
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
    d_low, d_high = geometry.depth_range(*profile)
    batch = np.array(peaks.flight_peaks(*state, durations, profile, d_low, d_high)).T
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
    d_low, d_high = geometry.depth_range(*profile)
    with np.errstate(all="raise"):
        found = np.array(peaks.flight_peaks(*state, durations, profile, d_low, d_high))
    assert np.isfinite(found).all()
