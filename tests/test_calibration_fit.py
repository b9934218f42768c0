"""Calibration from synthetic tracks: flights, bounces, fitted contact.

The synthetic tracks are engine drops filmed by
:func:`hopscape.calibration.synthetic.synthetic_track` (the truth is what
the engine was given). Outside references: standard gravity (3rd CGPM
1901, ISO 80000-3; docs/physics.md section 1); the frictionless rod's
impulse ``p_n = (1 + e) m V / (1 + 3 cos^2 theta)`` [text, docs/physics.md
section 4]; a sphere dropped without spin rebounds at ``e`` times its
approach speed whatever the friction (all laws agree without slip,
docs/physics.md section 4; any dynamics text).
"""
from __future__ import annotations

import re
from functools import lru_cache

import numpy as np
import pandas as pd
import pytest

from hopscape import sim
from hopscape.calibration.estimate import impact_map
from hopscape.calibration.fit import fit_tracks, summary
from hopscape.calibration.flights import MIN_FLIGHT_FRAMES, find_flights
from hopscape.calibration.synthetic import synthetic_track
from hopscape.calibration.tracks import track_from_table
from hopscape.errors import InputError

#: A 20 mm steel pin: capsule with 16 mm between its cap centres, caps of 2 mm radius.
PIN = sim.Capsule(length=0.016, radius=0.002, density=7850)
TRUTH = sim.Contact(0.6, 0.2)
RELEASE = sim.Release(height=0.15, angle=np.radians(30))


@lru_cache(maxsize=None)
def _pin_drop(fps, position_noise=1e-4, angle_noise=0.5, seed=1, impacts=10):
    return synthetic_track(PIN, RELEASE, TRUTH, fps=fps, impacts=impacts, position_noise=position_noise,
                           angle_noise=angle_noise, seed=seed)


@lru_cache(maxsize=None)
def _pin_fit(fps):
    drop = _pin_drop(fps)
    return fit_tracks([track_from_table(drop.track, f"pin-{fps:g}.csv")], PIN, bootstrap=100)


def test_gravity_from_a_clean_track_within_half_a_percent():
    # standard gravity, 9.80665 m/s^2 (3rd CGPM 1901; ISO 80000-3)
    drop = _pin_drop(1000.0, position_noise=1e-6, angle_noise=1e-4)
    flights = find_flights(track_from_table(drop.track, "clean.csv"), PIN)
    assert flights.gravity == pytest.approx(9.80665, rel=0.005)
    # the noise is read back from the flights' residuals (put in: 1e-6 m, 1e-4 deg), within 15%
    assert flights.position_noise == pytest.approx(1e-6, rel=0.15)
    assert np.degrees(flights.angle_noise) == pytest.approx(1e-4, rel=0.15)


def test_noisy_track_reads_its_noise_and_gravity_back():
    flights = _pin_fit(10000.0).flights[0]
    # 0.1 mm and 0.5 deg were put in; thousands of frames: within 5%
    assert flights.position_noise == pytest.approx(1e-4, rel=0.05)
    assert np.degrees(flights.angle_noise) == pytest.approx(0.5, rel=0.05)
    # the free fit's own standard deviation is ~3 mm/s^2 here; five of them
    assert abs(flights.gravity - 9.80665) < 5 * flights.gravity_sd


@pytest.mark.slow
@pytest.mark.parametrize("fps", [1000.0, 10000.0])
def test_synthetic_pin_recovers_restitution_and_friction(fps):
    # the tolerances asked of a calibration: restitution within 0.03, friction within 0.05 on impacts that slip
    cal = _pin_fit(fps)
    est = cal.estimate
    assert est.restitution == pytest.approx(0.6, abs=0.03)
    assert est.friction is not None and est.friction == pytest.approx(0.2, abs=0.05)
    # the 95% intervals are of the size the frame noise allows (whether they hold the truth
    # often enough is test_intervals_cover_the_truth)
    assert 0 < est.restitution_high - est.restitution_low < 0.02
    assert 0 < est.friction_high - est.friction_low < 0.02
    assert (cal.bounces["model_slip"] != "stick").any()


def test_fast_frame_rate_resolves_the_two_ends():
    # at 10,000 fps the two ends' strikes 3.6 ms apart are two impacts (36 frames between)
    bounces = _pin_fit(10000.0).bounces
    truth = _pin_drop(10000.0).result.impacts["time"][0]
    assert bounces["resolved"].iloc[:2].all()
    np.testing.assert_allclose(bounces["time"].iloc[:2], truth[:2], atol=1e-4)


@pytest.mark.slow
def test_slow_frame_rate_merges_the_two_ends_and_says_what_would_resolve_them():
    cal = _pin_fit(1000.0)
    first = cal.bounces.iloc[0]
    assert not first["resolved"] and first["model_impacts"] == 2
    # the engine's own flight between the two ends, at the truth: 6 frames in it resolve it
    between = _pin_drop(1000.0).result.impacts["flight"][0, 0]
    assert float(first["fps_to_resolve"]) == pytest.approx(MIN_FLIGHT_FRAMES / between, rel=0.05)


def test_sphere_rebounds_at_restitution_and_friction_stays_unknown():
    sphere = sim.Sphere(radius=0.005, density=7850)
    drop = synthetic_track(sphere, sim.Release(height=0.1), sim.Contact(0.7, 0.3), fps=1000, impacts=4, seed=3)
    cal = fit_tracks([track_from_table(drop.track, "ball.csv")], sphere, bootstrap=0)
    # every bounce: -u_n after / u_n before = e (no slip, no spin), within 3 of its own deviations
    b = cal.bounces
    assert np.all(np.abs(b["restitution_apparent"] - 0.7) < 3 * b["restitution_apparent_sd"] + 1e-3)
    assert cal.estimate.restitution == pytest.approx(0.7, abs=0.005)
    # no impact slips: friction is a lower bound, not a number
    assert cal.estimate.friction is None and cal.estimate.friction_high is None
    assert cal.estimate.friction_low == 0.0
    assert summary(cal)["friction"] is None


@pytest.mark.slow
def test_friction_that_sticks_from_the_start_is_a_lower_bound():
    # released without spin at 30 deg the first impact meets no slip, and with mu = 1.5 above the
    # rod's stick threshold (0.74 at 30 deg, docs/physics.md section 4) no later one slips long enough
    drop = synthetic_track(PIN, RELEASE, sim.Contact(0.6, 1.5), fps=10000, impacts=6, seed=3)
    est = fit_tracks([track_from_table(drop.track, "stuck.csv")], PIN, bootstrap=0).estimate
    assert est.friction is None
    assert 0.5 < est.friction_low <= 1.5


def test_impact_map_matches_the_frictionless_rod():
    # a thin rod (cylinder of 0.05 mm radius) striking with one end; p_n = (1 + e) m V / (1 + 3 cos^2)
    rod = sim.Cylinder(length=0.1, radius=5e-5, density=7850)
    theta, speed, e = np.radians(35.0), 2.0, 0.8
    vx, vy, spin, _ = impact_map(rod, 0.0, -speed, 0.0, theta, e, 0.0, "energetic")
    expected = (1 + e) * speed / (1 + 3 * np.cos(theta) ** 2)  # p_n / m
    assert vy + speed == pytest.approx(expected, rel=2e-3)
    assert vx == 0.0


def test_restitution_by_impact_angle_is_kept_per_bounce():
    b = _pin_fit(10000.0).bounces
    assert b["impact_angle"].between(0, 90).all()
    assert b["impact_angle"].iloc[0] == pytest.approx(30.0, abs=0.5)  # the release angle, no spin before
    # measured and model apparent restitution agree bounce by bounce within 3 deviations (+0.01 for the fit)
    gap = np.abs(b["restitution_apparent"] - b["model_restitution"].astype(float))
    assert np.all(gap[b["resolved"]] < 3 * b["restitution_apparent_sd"][b["resolved"]] + 0.01)


def test_track_errors():
    frame = _pin_drop(1000.0).track
    with pytest.raises(InputError, match=r"below.csv: column 'y' row \d+: the body's lowest point is \d.* mm below "
                                         r"the floor line .*check --floor-y, --y-down and --scale"):
        find_flights(track_from_table(frame.assign(y=frame["y"] - 0.005), "below.csv"), PIN)
    with pytest.raises(InputError, match=r"high.csv: no impact in the track: the body's lowest point comes no "
                                         r"closer than 49.\d mm"):
        find_flights(track_from_table(frame.assign(y=frame["y"] + 0.05), "high.csv"), PIN)
    sparse = _pin_drop(1000.0).track.iloc[::40]
    with pytest.raises(InputError, match=r"sparse.csv: no flight long enough to fit: \d flight\(s\) with at least "
                                         r"6 frames .*film at a higher frame rate"):
        find_flights(track_from_table(sparse, "sparse.csv"), PIN)


def test_lost_frames_do_not_change_the_fit_much():
    drop = synthetic_track(PIN, RELEASE, TRUTH, fps=10000, impacts=6, seed=4, lost=0.1)
    assert drop.track["x"].isna().mean() == pytest.approx(0.1, abs=0.02)
    est = fit_tracks([track_from_table(drop.track, "lost.csv")], PIN, bootstrap=0).estimate
    assert est.restitution == pytest.approx(0.6, abs=0.03)
    assert est.friction == pytest.approx(0.2, abs=0.05)


def test_two_tracks_fit_together():
    tracks = [track_from_table(_pin_drop(10000.0, seed=s, impacts=5).track, f"{s}.csv") for s in (5, 6)]
    cal = fit_tracks(tracks, PIN, bootstrap=0)
    assert set(cal.bounces["track"]) == {0, 1}
    assert cal.estimate.restitution == pytest.approx(0.6, abs=0.03)
    assert isinstance(pd.DataFrame(summary(cal)["impacts"]), pd.DataFrame)


@pytest.mark.slow
def test_intervals_cover_the_truth():
    # 20 drops with restitution, friction and release angle drawn at random: a 95% interval should
    # hold the truth in about 19; at least 16 (a binomial count of 15 or fewer has probability 0.3%
    # if the coverage is 95%). benchmarks/fit_coverage.py runs 200 at two frame rates.
    rng = np.random.default_rng(20)
    inside = []
    for seed in range(20):
        e, mu, angle = rng.uniform(0.4, 0.8), rng.uniform(0.1, 0.4), rng.uniform(15, 75)
        drop = synthetic_track(PIN, sim.Release(height=0.15, angle=np.radians(angle)), sim.Contact(e, mu),
                               fps=10000, impacts=8, seed=100 + seed)
        est = fit_tracks([track_from_table(drop.track, "c.csv")], PIN, bootstrap=0).estimate
        high = est.friction_high if est.friction_high is not None else np.inf
        inside.append(est.restitution_low <= e <= est.restitution_high and est.friction_low <= mu <= high)
    assert sum(inside) >= 16


@pytest.mark.slow
def test_wrong_scale_warns_through_gravity():
    # positions 5% too large (a wrong --scale) make gravity 5% too large: a warning naming the causes
    frame = _pin_drop(10000.0).track
    track = track_from_table(frame, "scaled.csv", scale=1 / 1.05)
    cal = fit_tracks([track], PIN, bootstrap=0)
    # (the flights are found with the body's true size, so the scale error shows as 4-6%, not exactly 5%)
    assert 0.04 < cal.gravity / 9.80665 - 1 < 0.06
    assert any(re.match(r"scaled.csv: gravity fitted from the flights is 10\.\d+ \+- [\d.]+ m/s\^2, \+[45]\.\d% off "
                        r"standard gravity 9.80665 m/s\^2: check --scale, the frame rate", w) for w in cal.warnings)


@pytest.mark.slow
def test_a_wrong_scale_also_shows_as_a_misfit():
    # the flights found with the true body size no longer meet the floor where the impact law says
    frame = _pin_drop(10000.0).track
    cal = fit_tracks([track_from_table(frame, "scaled.csv", scale=1 / 1.05)], PIN, bootstrap=0)
    assert any(re.match(r"the model misses the measured bounces by [\d.]+ times their uncertainty \(reduced "
                        r"chi-square [\d.]+\): another law", w) for w in cal.warnings)
    assert any(re.match(r"1 bounce\(s\) kept the body at the floor for over 20 ms between fitted flights", w)
               for w in cal.warnings)


def test_unknown_law_and_no_bounce_to_fit(monkeypatch):
    track = track_from_table(_pin_drop(1000.0).track, "pin.csv")
    with pytest.raises(InputError, match=r"law must be one of energetic, poisson, newton, got 'hertz'"):
        fit_tracks([track], PIN, law="hertz")
    # only the first (merged) bounce, with merged bounces ruled out: nothing left to fit
    first_two = track_from_table(_pin_drop(1000.0).track.iloc[:300], "short.csv")
    import hopscape.calibration.fit as fit_module
    monkeypatch.setattr(fit_module, "LONGEST_MERGED", 0.0)
    with pytest.raises(InputError, match=r"short.csv: no bounce to fit between two fitted flights"):
        fit_tracks([first_two], PIN, bootstrap=0)


def test_clicked_ends_check_the_scale():
    # ends 10% farther apart than the body is long: a wrong --scale or body size
    frame = _pin_drop(10000.0, impacts=4).track
    half = 1.1 * float(PIN.overall_length) / 2
    angle = np.radians(frame["angle"])
    ends = pd.DataFrame({"time": frame["time"], "x1": frame["x"] - half * np.cos(angle),
                         "y1": frame["y"] - half * np.sin(angle), "x2": frame["x"] + half * np.cos(angle),
                         "y2": frame["y"] + half * np.sin(angle)})
    cal = fit_tracks([track_from_table(ends, "ends.csv")], PIN, bootstrap=0)
    assert any(re.match(r"ends.csv: the clicked ends are 22 mm apart, the body is 20 mm long: check --scale", w)
               for w in cal.warnings)


@pytest.mark.parametrize("shape", [sim.Cylinder(length=0.004, radius=0.005, density=1200),
                                   sim.Spheroid(length=0.02, radius=0.004, density=1200)],
                         ids=["flat tablet", "spheroid"])
def test_other_shapes_calibrate_alike(shape):
    # the lowest point and contact offset come from the shape (docs/physics.md section 2), so a
    # tablet's rim and a spheroid's surface are read as the pin's caps are
    drop = synthetic_track(shape, sim.Release(height=0.12, angle=np.radians(35)), sim.Contact(0.5, 0.3), fps=10000,
                           impacts=8, seed=1)
    est = fit_tracks([track_from_table(drop.track, "other.csv")], shape, bootstrap=0).estimate
    assert est.restitution == pytest.approx(0.5, abs=0.03)
    assert est.friction == pytest.approx(0.3, abs=0.05)
