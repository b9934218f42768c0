"""Both ends at once: the engine's two-contact impact (sim/pair_contact.py)
against an independent dense integration (tests/two_contact_reference.py:
Hertz, Johnson 1985 eq. 4.22; damping of Hunt & Crossley 1975 calibrated as
in docs/physics.md section 7; regularised Coulomb friction; SciPy's DOP853).

Before the engine resolved such pairs, a capsule landing exactly flat while
sliding (vx = 1, vy = -1 m/s, e = 1, mu = 0.3) left with -64 rad/s (one
impulse under the midpoint) where the two-contact model gives +12 rad/s,
and -181 rad/s at a tilt of 1e-4 deg (an end impulse, then the other's).
"""
import numpy as np
import pandas as pd
import pytest

from hopscape import sim
import hopscape.sim.bench  # noqa: F401  (sim.bench)
from hopscape.sim import pair_contact
from hopscape.sim.materials import effective_modulus, material
from two_contact_reference import capsule_reference

CAPSULE = sim.Capsule(length=14e-3, radius=3.5e-3, density=1500.0)


def landing(tilt_deg, restitution, friction=0.3, impacts=3, contact_modulus=None):
    """The capsule touching the floor at ``tilt_deg`` with vx = 1, vy = -1 m/s."""
    theta = np.radians(tilt_deg)
    release = sim.Release(height=CAPSULE.radius + CAPSULE.half_long * abs(np.sin(theta)) + 1e-9, angle=theta,
                          vx=1.0, vy=-1.0)
    return sim.simulate(CAPSULE, release, sim.Contact(restitution, friction, contact_modulus=contact_modulus),
                        impacts=impacts, model="two-ends")


def after_both_ends(result):
    """``vx, vy, spin`` once both ends have struck: the first impact when it
    was resolved as a pair (end 0), else the second (the other end)."""
    j = 0 if result.end[0, 0] == 0 else 1
    return result.vx[0, j], result.vy[0, j], result.spin[0, j]


def reference(tilt_deg, restitution, friction=0.3, gravity=0.0):
    return capsule_reference(CAPSULE.mass, CAPSULE.inertia, CAPSULE.half_long, CAPSULE.radius,
                             np.radians(tilt_deg), 1.0, -1.0, 0.0, restitution, friction,
                             pair_contact.DEFAULT_CONTACT_MODULUS, gravity=gravity)


def test_the_default_modulus_is_hard_gelatin_on_steel():
    # E* of the table's rows (Johnson 1985, ch. 4): written out in the kernel
    body, floor = (material(name) for name in pair_contact.DEFAULT_PAIR)
    expected = effective_modulus(body.youngs_modulus, body.poisson, floor.youngs_modulus, floor.poisson)
    assert pair_contact.DEFAULT_CONTACT_MODULUS == pytest.approx(expected, rel=1e-7)


@pytest.mark.parametrize("restitution", [1.0, 0.5])
@pytest.mark.parametrize("tilt_deg", [0.0, 1e-4, 1e-2, 0.1, 1.0])
def test_near_flat_landing_agrees_with_the_two_contact_reference(tilt_deg, restitution):
    # Tolerance: 2e-3 of the 1 m/s impact speed on vx, vy and on the ends'
    # speed from spin (spin x half length), 0.3 rad/s here. Measured: at
    # most 0.022 rad/s and 4e-4 m/s (e = 0.5, 0.1 deg). At 1 deg the
    # contacts do not overlap: the engine's two impulses have a flight
    # between them, and the reference gets gravity for it (the engine's
    # impacts leave out gravity's impulse over their microseconds).
    vx, vy, spin = after_both_ends(landing(tilt_deg, restitution))
    ref = reference(tilt_deg, restitution, gravity=sim.GRAVITY if tilt_deg >= 1 else 0.0)
    assert vx == pytest.approx(ref["vx"], abs=2e-3)
    assert vy == pytest.approx(ref["vy"], abs=2e-3)
    assert spin == pytest.approx(ref["spin"], abs=2e-3 / CAPSULE.half_long)


def test_exactly_flat_sliding_landing_spins_forward():
    # the reference gives +12.1 rad/s (friction at both ends turns the body
    # forward); the single midpoint impulse gave -64 rad/s
    vx, vy, spin = after_both_ends(landing(0.0, 1.0))
    assert 11.5 < spin < 12.7
    assert vy == pytest.approx(1.025, abs=2e-3)
    assert vx == pytest.approx(0.392, abs=2e-3)


def test_outcome_is_continuous_in_the_tilt_through_flat():
    # tilts 0, 1e-4, 1e-2, 0.1, 1 deg: the reference's spin rises smoothly
    # 12.1, 12.2, 18.2, 55.5, 64.7 rad/s; the engine's must too, and the
    # step from exactly flat to 1e-4 deg must be small (it was 117 rad/s)
    tilts = [0.0, 1e-4, 1e-2, 0.1, 1.0]
    spins = np.array([after_both_ends(landing(t, 1.0))[2] for t in tilts])
    assert np.all(np.diff(spins) > -0.05)
    assert abs(spins[1] - spins[0]) < 0.2
    assert 60 < spins[-1] < 70
    # and on the other side of flat the mirror image (tilt -> -tilt with vx
    # -> -vx gives spin -> -spin): landing at -1e-4 deg sliding to +x is
    # close to landing flat
    mirrored = landing(-1e-4, 1.0)
    assert abs(after_both_ends(mirrored)[2] - spins[0]) < 0.2


def test_flat_landing_at_low_restitution_does_not_chatter():
    # e = 0.2, flat and sliding: a midpoint impulse drove one end into the
    # floor and set off 41 impacts within 3.8 ms; the pair leaves at once
    # with vy = e x 1 m/s and one impact in that time
    result = landing(0.0, 0.2, impacts=20)
    times = result.time[0, :result.count[0]]
    assert np.sum(times - times[0] <= 3.8e-3) == 1
    assert result.vy[0, 0] == pytest.approx(0.2, abs=2e-3)


def test_drops_without_a_pair_are_unchanged_bit_for_bit():
    # the same drops by the impulse engine alone: every drop that never had
    # both ends at once (end 0) has the same bits, so resolving pairs
    # touches no other drop of its chunk
    population = sim.bench.population(3000, seed=11)
    with_pairs = sim.simulate(*population, impacts=3, model="two-ends")
    without = sim.simulate(*population, impacts=3)
    paired = np.any(with_pairs.end == 0, axis=1)
    assert 0 < paired.sum() < 0.02 * paired.size
    for name, values in with_pairs.impacts.items():
        assert np.array_equal(values[~paired], without.impacts[name][~paired], equal_nan=True), name
    assert np.array_equal(with_pairs.status[~paired], without.status[~paired])


# --------------------------------------------------------------------------
# the compliant model: every impact through sim.pair_contact.resolve_pairs
# --------------------------------------------------------------------------

def test_compliant_model_meets_the_impulse_engine_in_the_stiff_limit():
    # Frictionless, a single contact's restitution is the calibrated one
    # whatever the modulus (the scaled contact, docs/physics.md section 7),
    # so the models differ only by the body turning during the contact and
    # by second contacts, both of order t_c ~ E*^(-2/5) (Johnson 1985,
    # section 11.4): the difference must fall by about 10^0.4 = 2.5 per
    # decade of modulus (measured 2.3-2.6) and be under 3e-3 m/s at
    # 1e11 Pa (measured 2.7e-3 at most over these three drops).
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1500.0)
    release = sim.Release(height=0.1, angle=np.radians([10.0, 30.0, 60.0]), spin=[20.0, -40.0, 5.0])
    rigid = sim.simulate(capsule, release, sim.Contact(0.8, 0.0), impacts=1)
    differences = []
    for modulus in (1e8, 1e9, 1e10, 1e11):
        soft = sim.simulate(capsule, release, sim.Contact(0.8, 0.0, contact_modulus=modulus), impacts=1,
                            model="compliant")
        # the ends' speed change: vy and spin x half length [m/s]
        differences.append(np.abs(soft.vy[:, 0] - rigid.vy[:, 0])
                           + np.abs(soft.spin[:, 0] - rigid.spin[:, 0]) * capsule.half_long)
    differences = np.array(differences)
    ratio = differences[:-1] / differences[1:]
    assert np.all((ratio > 2.0) & (ratio < 3.2))
    assert differences[-1].max() < 3e-3


def test_compliant_model_of_a_sphere_is_the_calibrated_restitution():
    # a sphere's contact is central: its compliant restitution is the
    # calibrated one (within 1e-3, tests/test_damping.py) at any modulus
    sphere = sim.Sphere(radius=0.005, density=1500.0)
    result = sim.simulate(sphere, sim.Release(height=0.1, angle=0.0), sim.Contact(0.7, 0.0, contact_modulus=1e9),
                          impacts=1, model="compliant")
    assert result.vy[0, 0] == pytest.approx(-0.7 * result.vy_before[0, 0], rel=2e-3)


def test_unknown_model_is_refused():
    with pytest.raises(ValueError, match="model must be one of two-ends, impulse, compliant"):
        sim.simulate(CAPSULE, sim.Release(height=0.1, angle=0.3), sim.Contact(), model="soft")


# --------------------------------------------------------------------------
# --model compliant at the user's edge
# --------------------------------------------------------------------------

def test_drop_command_runs_either_model(capsys):
    from hopscape.cli import main
    rows = {}
    for model in ("impulse", "compliant"):
        assert main(["drop", "--angle", "30", "--impacts", "1", "--no-plots", "--model", model,
                     "--body-material", "hard_gelatin", "--floor-material", "steel"]) == 0
        text = capsys.readouterr().out
        rows[model] = next(line for line in text.splitlines() if line.startswith("1 "))
    # the first impact's rebound: the two models agree to within a few
    # percent at 30 deg, frictional (the spin column differs in its last digits)
    vy = {model: float(row.split()[6]) for model, row in rows.items()}
    assert vy["compliant"] == pytest.approx(vy["impulse"], rel=0.05)
    assert rows["compliant"] != rows["impulse"]


def test_batch_gives_each_row_its_own_material_pair(tmp_path, capsys):
    # rows of different materials in one table: each row's contact uses its
    # own E* (sim.Contact.contact_modulus per drop), so a row simulated in
    # a mixed table gives what it gives alone
    from hopscape.cli import main
    header = "shape,length,radius,density,height,angle,restitution,friction,body_material,floor_material\n"
    rows = ["capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,acrylic,steel\n",
            "capsule,0.014,0.0035,1200,0.3,30,0.8,0.3,rubber,steel\n"]
    tables = {}
    for name, lines in {"mixed": rows, "acrylic": rows[:1], "rubber": rows[1:]}.items():
        source, out = tmp_path / f"{name}.csv", tmp_path / f"{name}-out.csv"
        source.write_text(header + "".join(lines))
        assert main(["batch", str(source), "--out", str(out), "--model", "compliant", "--impacts", "2"]) == 0
        tables[name] = pd.read_csv(out)
    mixed = tables["mixed"]
    for drop, alone in ((0, tables["acrylic"]), (1, tables["rubber"])):
        got = mixed[mixed["drop"] == drop].reset_index(drop=True)
        assert np.allclose(got["vy"], alone["vy"], rtol=0, atol=1e-12)
    # and the pairs differ: a rubber-on-steel contact lasts far longer
    # (t_c ~ E*^(-2/5), Johnson 1985)
    times = mixed.groupby("drop")["contact_time"].first()
    assert times[1] > 5 * times[0]


def test_studies_run_on_the_two_ends_model_by_default():
    # run.model: two-ends unless named. A study naming impulse (the default
    # before) keeps the fingerprint it had then, so its run folder resumes;
    # one naming none gets a new fingerprint (its near-flat drops changed).
    # Drops released exactly flat without spin land on both ends at once
    # symmetrically: both models give the calibrated midpoint impact there
    # (nothing slips or turns), so they agree; drops released flat while
    # moving sideways slide on both ends, and there the models differ
    from conftest import PIN, PIN_ON_STEEL, grid, run_text, study_yaml
    from hopscape.study import parse_study
    base = {"name": "flat", "body": {**PIN, "aspect_ratio": 3.0, "density": 1150},
            "contact": PIN_ON_STEEL, "release": {"height": 0.02, "angle": grid(0, 60, 7), "vx": grid(0, 0.5, 2)},
            "metric": {"kind": "ratio", "reference": "centre"},
            "analyses": {"draws": 6, "robustness": False}, "run": {"jobs": 1, "impacts": 3, "seed": 4}}
    default_text = study_yaml(base)
    named = study_yaml({**base, "run": {**base["run"], "model": "two-ends"}})
    impulse = study_yaml({**base, "run": {**base["run"], "model": "impulse"}})
    assert parse_study(named).fingerprint() == parse_study(default_text).fingerprint()
    assert parse_study(impulse).fingerprint() != parse_study(default_text).fingerprint()
    assert "model" not in parse_study(impulse).numbers()["run"]
    import tempfile
    from pathlib import Path
    with tempfile.TemporaryDirectory() as a, tempfile.TemporaryDirectory() as b:
        rigid = run_text(impulse, Path(a)).tables["grid"]
        paired = run_text(default_text, Path(b)).tables["grid"]
    changed = ~np.isclose(rigid["value"], paired["value"], rtol=0, atol=1e-12)
    flat = (rigid["angle_deg"] == 0).to_numpy()
    sliding = (rigid["vx_m_s"] > 0).to_numpy()
    assert not changed[flat & ~sliding].any()
    assert changed[flat & sliding].all()
    assert changed[~flat].mean() < 0.5


@pytest.mark.slow
def test_the_model_comparison_map_draws(tmp_path):
    # docs/compare_models.py: the same drops by both models, mapped; on a
    # small grid the first bounce agrees within 0.05 of the release height in
    # most cells (the stiff limit above), and the picture is written
    import subprocess
    import sys
    from pathlib import Path
    root = Path(__file__).resolve().parents[1]
    out = tmp_path / "m.png"
    done = subprocess.run([sys.executable, str(root / "docs" / "compare_models.py"), "--out", str(out),
                           "--angles", "6", "--ratios", "3"], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr[-400:]
    first = int(done.stdout.split("first bounce ")[1].split("%")[0])
    assert first >= 70
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_the_radius_bound_holds_for_every_shape_and_angle():
    # overlapping_pairs skips the exact Hertz duration where a bound (the
    # whole mass, the smallest end radius) already rules a pair out: the
    # bound must be below the radius at every angle, for every shape kind
    theta = np.linspace(-np.pi, np.pi, 2001)
    for name, cls in sim.SHAPES.items():
        body = sim.shapes.make_shapes(np.array([name] * theta.size), density=np.full(theta.size, 1000.0),
                                      length=np.full(theta.size, 0.02), radius=np.full(theta.size, 0.004),
                                      **{d.name: np.full(theta.size, 0.003) for d in cls.dimensions
                                         if d.name not in ("length", "radius")})
        radius = pair_contact._radius(theta, body.profile)
        bound = pair_contact._smallest_radius(body.profile)
        assert np.all(radius >= bound), name
        assert bound.max() > 0.2 * radius.min(), name  # a bound that rules pairs out


def test_waiting_pairs_give_the_bits_of_drops_simulated_alone():
    # The kernel sets a chunk's near-flat pairs aside until every other drop
    # is done or waiting, strikes them together and lets them fly on from
    # their own impacts (sim.drop._run_chunk). A drop's result must not
    # depend on which drops wait with it: landings within 0.3 deg of flat,
    # sliding, all in one chunk and each alone.
    rng = np.random.default_rng(8)
    n = 120
    angle = np.radians(rng.uniform(-0.3, 0.3, n)) + np.pi * rng.integers(0, 2, n)
    release = sim.Release(height=CAPSULE.radius + CAPSULE.half_long * np.abs(np.sin(angle)) + 0.02, angle=angle,
                          vx=rng.uniform(-1, 1, n))
    contact = sim.Contact(rng.uniform(0.3, 0.9, n), rng.uniform(0, 0.5, n))
    together = sim.simulate(CAPSULE, release, contact, impacts=6)
    alone = sim.simulate(CAPSULE, release, contact, impacts=6, chunk_size=1)
    for name, values in together.impacts.items():
        assert np.array_equal(values, alone.impacts[name], equal_nan=True), name
    assert np.array_equal(together.status, alone.status) and np.array_equal(together.count, alone.count)
    # most drops land as a pair, some twice: more than one round of waiting
    pairs_per_drop = np.sum(together.end == 0, axis=1)
    assert pairs_per_drop.max() >= 2 and np.sum(pairs_per_drop > 0) > n // 2


@pytest.mark.parametrize("shape, height, angle_deg, spin, restitution, friction", [
    # a quick-study pin: its fifth impact is a pair whose first end leaves
    # and touches again at a crawl
    (sim.Capsule.from_aspect_ratio(3.8, 0.006, 1150.0), 0.010375492065999598, 12.0, 0.0, 0.8074775547898592,
     0.05204016057617665),
    # two rod-glass rods, drawn by its Sobol plan
    (sim.Cylinder.from_aspect_ratio(3.37137620337307453, 0.005, 1180.0), 0.08476825352758169, 30.18432749435305595,
     29.77585997432470322, 0.66800910755991938, 0.32631289586424828),
    (sim.Cylinder.from_aspect_ratio(3.49525220599025488, 0.005, 1180.0), 0.22991339036263528, 59.14083835668861866,
     24.41049804911017418, 0.7007944274693727, 0.17816274985671043),
], ids=["pin", "rod-1", "rod-2"])
def test_pairs_never_create_energy(shape, height, angle_deg, spin, restitution, friction):
    # These drops once left a pair at 30 to 150 m/s (the centre rising a
    # kilometre or more): an end that had left was given the damping of an
    # end touching at 1e-12 m/s, and the explicit step blew up. Damping and
    # friction only take energy (docs/physics.md section 6), so no bounce
    # of the centre may rise above the energy bound h0 + I w0^2 / (2 m g).
    result = sim.simulate(shape, sim.Release(height=height, angle=np.radians(angle_deg), spin=spin),
                          sim.Contact(restitution, friction), impacts=8)
    assert np.any(result.end == 0)                           # the drop has pairs
    assert not result.energy_gain.any()
    assert np.nanmax(result.peak_centre) <= result.energy_bound[0] * (1 + 1e-9)


def test_drop_says_which_model_ran_and_which_impacts_were_pairs(capsys):
    from hopscape.cli import main
    flat = ["drop", "--angle", "0", "--vx", "0.5", "--height", "0.01", "--impacts", "2", "--no-plots"]
    assert main(flat) == 0
    assert "contact model: two-ends; impact(s) 1 on both ends at once" in capsys.readouterr().out
    assert main(flat + ["--model", "impulse"]) == 0
    assert "contact model: impulse\n" in capsys.readouterr().out
