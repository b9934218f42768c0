"""Drops onto an inclined floor (``Release.floor_angle``), and the statuses
of a drop that enters sustained contact.

Everything is in floor coordinates (docs/physics.md section 1): x along the
floor (positive floor angle: the floor falls towards +x), y normal to it,
gravity ``(g sin(alpha), -g cos(alpha))``.
"""
import numpy as np
import pytest

from hopscape import sim
import hopscape.sim.bench
from hopscape.sim.drop import VAULT_SHARE
from hopscape.sim.geometry import depth

G = sim.GRAVITY
RADIUS = 0.01  # [m]


def sphere_drop(alpha_deg, restitution, friction, height=0.2, impacts=4, vx=0.0, spin=0.0):
    """A solid sphere released at rest (in floor coordinates) ``height``
    above an inclined floor (its centre, normal to the floor)."""
    return sim.simulate(sim.Sphere(radius=RADIUS, density=1000.0),
                        sim.Release(height, 0.0, spin, vx=vx, floor_angle=np.radians(alpha_deg)),
                        sim.Contact(restitution, friction), impacts=impacts)


@pytest.mark.parametrize("alpha_deg", [-35.0, 10.0, 30.0, 60.0])
def test_frictionless_sphere_slides_with_g_sin_alpha_between_impacts(alpha_deg):
    # A frictionless body on an incline accelerates along it at g sin(alpha)
    # (Halliday, Resnick & Walker, Fundamentals of Physics, the frictionless
    # inclined plane); in flight the along-floor component of gravity is
    # the same, and a frictionless impact has no tangential impulse, so the
    # along-floor velocity is unchanged by each impact. The first impact
    # comes after t1 = sqrt(2 (h - R) / (g cos alpha)) (uniform acceleration
    # normal to the floor). Tolerance 1e-12 relative: a few roundings of
    # O(1) numbers.
    alpha = np.radians(alpha_deg)
    height, e = 0.2, 0.7
    r = sphere_drop(alpha_deg, e, 0.0, height=height)
    t1 = np.sqrt(2 * (height - RADIUS) / (G * np.cos(alpha)))
    assert r.time[0, 0] == pytest.approx(t1, rel=1e-12)
    assert r.vx_before[0, 0] == pytest.approx(G * np.sin(alpha) * t1, rel=1e-12)
    assert r.x[0, 0] == pytest.approx(0.5 * G * np.sin(alpha) * t1 ** 2, rel=1e-12)
    # unchanged by every impact
    np.testing.assert_allclose(r.vx[0], r.vx_before[0], rtol=1e-15, atol=0)
    # between impacts it grows by g sin(alpha) times the flight
    np.testing.assert_allclose(r.vx_before[0, 1:] - r.vx[0, :-1], G * np.sin(alpha) * r.flight[0, :-1],
                               rtol=1e-12, atol=1e-15)
    # the normal motion is that of a level floor under g cos(alpha): it leaves
    # with e times its approach speed and flies 2 v_n / (g cos(alpha))
    v_n = np.sqrt(2 * G * np.cos(alpha) * (height - RADIUS))
    assert r.vy[0, 0] == pytest.approx(e * v_n, rel=1e-12)
    assert r.flight[0, 0] == pytest.approx(2 * e * v_n / (G * np.cos(alpha)), rel=1e-12)
    # heights are normal to the floor: the centre tops out at R + (e v_n)^2 / (2 g cos(alpha))
    assert r.peak_centre[0, 0] == pytest.approx(RADIUS + (e * v_n) ** 2 / (2 * G * np.cos(alpha)), rel=1e-12)


@pytest.mark.parametrize("alpha_deg", [15.0, 30.0, 45.0])
def test_elastic_ball_on_incline_lands_eight_h_sin_alpha_further(alpha_deg):
    # Classic incline problem (from memory; e.g. the ball dropped onto an
    # inclined plane in problem books of introductory mechanics): a ball
    # falling vertically from a height H above the plane and bouncing
    # elastically (no friction) strikes it again 8 H sin(alpha) further
    # down the slope. Released at rest, the sphere falls vertically; its
    # centre is (h - R) / cos(alpha) above the plane vertically.
    alpha = np.radians(alpha_deg)
    height = 0.2
    r = sphere_drop(alpha_deg, 1.0, 0.0, height=height, impacts=3)
    vertical = (height - RADIUS) / np.cos(alpha)
    assert r.x[0, 1] - r.x[0, 0] == pytest.approx(8 * vertical * np.sin(alpha), rel=1e-12)
    # every flight of an elastic ball on an incline lasts the same time
    np.testing.assert_allclose(r.flight[0], r.flight[0, 0], rtol=1e-12)


@pytest.mark.parametrize("alpha_deg, spin", [(20.0, 0.0), (30.0, 40.0), (-25.0, -15.0)])
def test_sphere_reaching_rolling_leaves_with_five_sevenths_in_floor_coordinates(alpha_deg, spin):
    # Solid sphere whose contact point stops slipping during the impact
    # (docs/physics.md section 4 [text]; angular momentum about the contact
    # point is conserved through the impact): v_x' = (5 v_x - 2 R omega) / 7
    # and R omega' = -v_x', with v_x and omega just before the impact, in
    # floor coordinates: on the incline v_x just before is g sin(alpha) t1.
    # Friction 2 makes the slip stop early. Tolerance 1e-12 relative.
    alpha = np.radians(alpha_deg)
    r = sphere_drop(alpha_deg, 0.6, 2.0, spin=spin, impacts=1)
    t1 = r.time[0, 0]
    v_x = G * np.sin(alpha) * t1
    assert r.vx_before[0, 0] == pytest.approx(v_x, rel=1e-12)
    expected = (5 * v_x - 2 * RADIUS * spin) / 7
    assert r.vx[0, 0] == pytest.approx(expected, rel=1e-12)
    assert RADIUS * r.spin[0, 0] == pytest.approx(-expected, rel=1e-12)
    assert r.slip[0, 0] == sim.SLIP_HISTORY.index("stick")


def random_tilted_drops(n, seed):
    shape, release, contact = sim.bench.population(n, seed=seed)
    rng = np.random.default_rng(seed + 100)
    tilted = sim.Release(release.height, release.angle, release.spin,
                         floor_angle=np.radians(rng.uniform(-60.0, 60.0, n)))
    return shape, tilted, contact


def test_energy_never_rises_on_an_incline_when_the_along_floor_potential_counts():
    # The energetic law never creates energy (Stronge, Proc. R. Soc. Lond. A
    # 431:169, 1990; docs/physics.md section 4), and flights conserve
    # mechanical energy; on an incline the potential in floor coordinates
    # is m g cos(alpha) y - m g sin(alpha) x. So the total after each impact
    # is at most that before it and at most the release energy, and the
    # total just before impact j + 1 equals that just after impact j.
    # Tolerances: 1e-12 of the release energy, rounding of sums of O(1) terms
    # (positions and speeds reach some 10 in these units).
    shape, release, contact = random_tilted_drops(4000, seed=11)
    r = sim.simulate(shape, release, contact, impacts=6)
    before, after = sum(r.energy_before()), sum(r.energy_after())
    scale = r.release_energy[:, None]
    ok = ~np.isnan(after)
    assert ok[:, 0].all()
    assert np.all((after <= before + 1e-12 * scale)[ok])
    assert np.all((after <= scale * (1 + 1e-12))[ok])
    assert np.allclose(before[:, 1:][ok[:, 1:]], after[:, :-1][ok[:, 1:]], rtol=0,
                       atol=1e-12 * scale.max())
    # the along-floor term is what makes it hold: without it, the energy
    # "rises" in the flights that run downhill
    kinetic_and_normal = before - (-r.mass[:, None] * r.gravity_along[:, None] * r.x)
    assert np.any((kinetic_and_normal > scale * 1.01)[ok])


def test_incline_search_never_skips_a_contact():
    # The contact search on an incline runs on the level-floor flight with
    # time stretched by sqrt(g / g_n) (sim.drop._run_chunk); checked here
    # directly in floor coordinates: sampled densely, no flight's floor gap
    # y - d(theta) under g_n dips below zero before the contact found, and
    # at the contact the gap is within the search's 1 nm (sim.search
    # CONTACT_GAP; sampling at 2,000 points per flight, 1e-9 m allowance).
    shape, release, contact = random_tilted_drops(300, seed=12)
    r = sim.simulate(shape, release, contact, impacts=4)
    g_n = r.gravity_normal
    start_y = np.concatenate([r.release["y"][:, None], r.y[:, :-1]], axis=1)
    start_vy = np.concatenate([r.release["vy"][:, None], r.vy[:, :-1]], axis=1)
    start_theta = np.concatenate([r.release["theta"][:, None], r.theta[:, :-1]], axis=1)
    start_spin = np.concatenate([r.release["spin"][:, None], r.spin[:, :-1]], axis=1)
    duration = r._flights_before()
    s = np.linspace(0.0, 1.0, 2001)
    for j in range(4):
        ok = ~np.isnan(r.y[:, j])
        t = duration[ok, j][:, None] * s[None, :]
        y = start_y[ok, j][:, None] + start_vy[ok, j][:, None] * t - 0.5 * g_n[ok][:, None] * t ** 2
        theta = start_theta[ok, j][:, None] + start_spin[ok, j][:, None] * t
        gap = y - depth(theta, *(p[ok][:, None] for p in r.profile))
        assert gap.min() > -1e-9
        assert np.all(np.abs(gap[:, -1]) < 2e-9)


def test_level_drops_are_bit_identical_whatever_shares_their_chunk():
    # floor_angle 0 must give exactly the level floor's results (g cos 0 =
    # g, g sin 0 = 0 exactly, and the time stretch is exactly 1), also in
    # a chunk whose other drops are tilted (no result depends on its
    # neighbours; docs/physics.md section 1).
    shape, release, contact = sim.bench.population(2000, seed=13)
    level = sim.simulate(shape, release, contact, impacts=3)
    alpha = np.zeros(2000)
    alpha[1::2] = np.radians(30.0)
    mixed = sim.simulate(shape, sim.Release(release.height, release.angle, release.spin, floor_angle=alpha),
                         contact, impacts=3)
    explicit = sim.simulate(shape, sim.Release(release.height, release.angle, release.spin, floor_angle=0.0),
                            contact, impacts=3)
    for name in tuple(sim.IMPACT_FIELDS) + tuple(sim.IMPACT_CODES):
        assert np.array_equal(level.impacts[name], explicit.impacts[name], equal_nan=True), name
        assert np.array_equal(level.impacts[name][::2], mixed.impacts[name][::2], equal_nan=True), name
    assert np.array_equal(level.status[::2], mixed.status[::2])
    # the tilted half really differs
    assert not np.allclose(level.time[1::2, 0], mixed.time[1::2, 0])


def test_energy_bound_is_not_applicable_on_an_incline():
    # On a slope the body can gain energy moving downhill, so the release
    # energy bounds no height normal to the floor: NaN (sim.DropResult
    # .energy_bound); on a level floor it is E / (m g) (docs/physics.md
    # section 6).
    r = sphere_drop(0.0, 0.5, 0.3, impacts=1)
    assert r.energy_bound[0] == pytest.approx(0.2, rel=1e-15)  # from rest: the release height
    assert np.isnan(sphere_drop(5.0, 0.5, 0.3, impacts=1).energy_bound[0])


@pytest.mark.parametrize("angle", [-np.pi / 2, np.pi / 2, 2.0, np.nan])
def test_floor_angle_out_of_range_is_refused(angle):
    with pytest.raises(ValueError, match="release floor_angle must be in"):
        sim.Release(0.1, floor_angle=angle)


# --------------------------------------------------------------------------
# sustained contact: contact and could_vault
# --------------------------------------------------------------------------

CAPSULE = sim.Capsule(length=0.04, radius=0.002, density=1000.0)


def plastic_sticking_impact(result, shape):
    """Closed form of an impact with restitution 0 that ends in stick: the
    body then turns about the contact point, and its angular momentum about
    that point is conserved through the impact (the impulse acts there):
    omega' = (I omega - m (r_x v_y - r_y v_x)) / (I + m |r|^2),
    v' = omega' (r_y, -r_x) (any rigid-body dynamics text; docs/physics.md
    section 4 for the contact velocity u = v + omega x r)."""
    theta = result.theta[0, 0]
    half = shape.length / 2
    # under the centre of the struck cap, at end * L/2 on the axis (sim.IMPACT_CODES)
    end = result.end[0, 0]
    assert end in (-1, 1)
    r_x, r_y = end * half * np.cos(theta), end * half * np.sin(theta) - shape.radius
    m, inertia = result.mass[0], result.inertia[0]
    v_x, v_y, w = result.vx_before[0, 0], result.vy_before[0, 0], result.spin_before[0, 0]
    w_after = (inertia * w - m * (r_x * v_y - r_y * v_x)) / (inertia + m * (r_x ** 2 + r_y ** 2))
    return w_after * r_y, -w_after * r_x, w_after


@pytest.mark.parametrize("spin, expected", [(0.0, "contact"), (-30.0, "contact"), (30.0, "contact"),
                                            (80.0, "could_vault"), (150.0, "could_vault")])
def test_sustained_contact_status_says_whether_the_body_could_vault(spin, expected):
    # A capsule dropped at 45 deg with restitution 0 and friction 5 sticks
    # and stops separating at its first impact (sustained contact). Its
    # state after is the closed form above; with no spin it tips towards
    # lying flat, its centre falling: 'contact'. Spun counter-clockwise
    # (towards upright) it keeps turning up about the struck cap, its centre
    # rising: at 30 rad/s with little kinetic energy left ('contact': it
    # falls back), from 80 rad/s with over a tenth of the release's energy
    # ('could_vault'). Tolerance 1e-9
    # relative: the contact point is found to 1 nm.
    r = sim.simulate(CAPSULE, sim.Release(0.002, np.radians(45.0), spin, reference="bottom"),
                     sim.Contact(0.0, 5.0), impacts=3)
    assert r.count[0] == 1
    v_x, v_y, w = plastic_sticking_impact(r, CAPSULE)
    assert r.vx[0, 0] == pytest.approx(v_x, rel=1e-9)
    assert r.vy[0, 0] == pytest.approx(v_y, rel=1e-9)
    assert r.spin[0, 0] == pytest.approx(w, rel=1e-9)
    # the rule (sim.drop): centre rising, and kinetic energy over a tenth
    # of the release's energy above rest (rest: m g R, lying flat)
    m, inertia = r.mass[0], r.inertia[0]
    kinetic = 0.5 * m * (v_x ** 2 + v_y ** 2) + 0.5 * inertia * w ** 2
    share = kinetic / (r.release_energy[0] - m * G * CAPSULE.radius)
    assert (v_y > 0 and share > VAULT_SHARE) == (expected == "could_vault")
    assert sim.STATUS[r.status[0]] == expected


def test_rising_centre_with_little_energy_left_is_plain_contact():
    # Between the spins that tip the capsule down (centre falling) and those
    # that vault it, the closed form gives a small positive omega': the
    # centre rises, but with kinetic energy under a tenth of the release's
    # energy above rest, so the status is 'contact' (the tilted pose's
    # potential energy can only bring it down). Found by bisection on the
    # spin for omega' = 0 (the closed form is linear in the spin before
    # impact).
    def run(spin):
        return sim.simulate(CAPSULE, sim.Release(0.002, np.radians(45.0), spin, reference="bottom"),
                            sim.Contact(0.0, 5.0), impacts=1)
    low, high = 0.0, 30.0
    for _ in range(40):
        mid = 0.5 * (low + high)
        low, high = (mid, high) if run(mid).spin[0, 0] < 0 else (low, mid)
    r = run(high * 1.05)
    v_x, v_y, w = plastic_sticking_impact(r, CAPSULE)
    assert w > 0 and v_y > 1e-6 and r.vy[0, 0] == pytest.approx(v_y, rel=1e-9)
    kinetic = 0.5 * r.mass[0] * (v_x ** 2 + v_y ** 2) + 0.5 * r.inertia[0] * w ** 2
    assert kinetic < VAULT_SHARE * (r.release_energy[0] - r.mass[0] * G * CAPSULE.radius)
    assert sim.STATUS[r.status[0]] == "contact"



def test_study_rows_carry_their_floor_angle():
    # explore.metrics.simulate_frame passes each row's floor_angle_deg to
    # the simulation: a row's first rebound ratio (centre) is that of the
    # same drop simulated on its own (sim.group_bounces), and on a slope its
    # energy bound ratio is NaN (sim.DropResult.energy_bound). The same
    # floating-point operations: equal to 1e-15.
    import pandas as pd
    from conftest import PIN, study_yaml
    from hopscape.metrics import simulate_frame
    from hopscape.study import COLUMN, parse_study

    study = parse_study(study_yaml({
        "name": "chute", "body": {**PIN, "aspect_ratio": 3.0, "density": 1150},
        "contact": {"restitution": 0.8, "friction": 0.2},
        "release": {"height": 0.05, "angle": 30, "floor_angle": {"grid": {"low": -30, "high": 30, "steps": 3}}},
        "metric": {"kind": "ratio", "reference": "centre"}, "run": {"impacts": 4}}))
    frame = pd.DataFrame({COLUMN["aspect_ratio"]: 3.0, COLUMN["diameter"]: 0.006, COLUMN["density"]: 1150.0,
                          COLUMN["restitution"]: 0.8, COLUMN["friction"]: 0.2, COLUMN["height"]: 0.05,
                          COLUMN["angle"]: 30.0, COLUMN["spin"]: 0.0, COLUMN["vx"]: 0.0, COLUMN["vy"]: 0.0,
                          COLUMN["floor_angle"]: [-30.0, 0.0, 30.0]})
    out = simulate_frame(study, frame)
    shape = sim.Capsule.from_aspect_ratio(3.0, 0.006, 1150.0)
    for row, alpha in enumerate((-30.0, 0.0, 30.0)):
        result = sim.simulate(shape, sim.Release(0.05, np.radians(30.0), floor_angle=np.radians(alpha)),
                              sim.Contact(0.8, 0.2), impacts=4)
        ratio = sim.group_bounces(result, study.run.merge_ms / 1e3).ratio["centre"][0, 0]
        assert out["ratio_1"].iloc[row] == pytest.approx(ratio, rel=1e-15)
    assert np.isnan(out["energy_bound_ratio"].iloc[0]) and np.isnan(out["energy_bound_ratio"].iloc[2])
    assert out["energy_bound_ratio"].iloc[1] == pytest.approx(1.0, rel=1e-12)  # from rest, level floor
    assert len(set(out["ratio_1"])) == 3
