"""Terminal tables (explore/report_text.py).

The drop report is checked on the one drop whose every number is known in
closed form: a frictionless solid sphere released from rest with its lowest
point at height h above the floor, restitution e. It falls freely for
t_1 = sqrt(2 h / g), strikes at v_0 = sqrt(2 g h) and leaves at e v_0
(restitution; without friction the three impact laws agree, docs/physics.md
section 4); after impact k it leaves at e^k v_0, flies 2 e^k v_0 / g and its
lowest point rises to e^(2k) h: the textbook bouncing ball (a standard
result, cited from memory; e.g. Halliday, Resnick & Walker, *Fundamentals
of Physics*, the chapters on free fall and collisions). Its mass is
(4/3) pi R^3 rho and its moment of inertia (2/5) m R^2 (standard tables;
docs/physics.md section 3). Printed numbers are compared to within half a
unit of their last printed digit.
"""
import math

import numpy as np
import pytest

from hopscape import sim
from hopscape.report_text import drop_report, table, wrap_degrees

G = 9.80665           # standard gravity, docs/physics.md section 1 [m/s^2]
RADIUS, DENSITY = 0.005, 1000.0
HEIGHT, RESTITUTION, IMPACTS = 0.1, 0.8, 4


# --------------------------------------------------------------------------
# wrap_degrees and table
# --------------------------------------------------------------------------

@pytest.mark.parametrize("degrees, wrapped", [
    (0, 0), (90, 90), (179, 179), (180, -180), (-180, -180), (190, -170), (359, -1), (360, 0),
    (-190, 170), (540, -180), (725, 5),
])
def test_wrap_degrees(degrees, wrapped):
    # [-180, 180): 180 deg and -180 deg are the same direction, written -180
    assert wrap_degrees(math.radians(degrees)) == pytest.approx(wrapped, abs=1e-12)


def test_wrap_degrees_keeps_the_array_shape():
    theta = np.radians([[10.0, 370.0], [-350.0, 200.0]])
    np.testing.assert_allclose(wrap_degrees(theta), [[10.0, 10.0], [10.0, -160.0]], atol=1e-12)


def test_table_right_aligns_under_a_dashed_rule():
    text = table(["a", "bb"], [[1, 22], [333, 4]])
    assert text.splitlines() == ["  a  bb",
                                 "---  --",
                                 "  1  22",
                                 "333   4"]


def test_table_widens_a_column_to_its_longest_cell():
    lines = table(["angle [deg]", "n"], [["12.5", 1000]]).splitlines()
    assert lines == ["angle [deg]     n", "-----------  ----", "       12.5  1000"]


# --------------------------------------------------------------------------
# drop_report of the bouncing sphere
# --------------------------------------------------------------------------

@pytest.fixture(scope="module")
def sphere_report():
    shape = sim.Sphere(radius=RADIUS, density=DENSITY)
    result = sim.simulate(shape, sim.Release(height=HEIGHT, reference="bottom"),
                          sim.Contact(RESTITUTION, 0.0), impacts=IMPACTS)
    return drop_report(shape, result, sim.group_bounces(result), reference="bottom")


def section(text, title):
    """The rows of the table under ``title`` (header and rule dropped), split
    into cells."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(title))
    rows = []
    for line in lines[start + 3:]:
        if not line.strip():
            break
        rows.append(line.split())
    return rows


def close(printed, exact):
    """``printed`` (text) equals ``exact`` to within half its last digit."""
    decimals = len(printed.split(".")[1]) if "." in printed else 0
    return abs(float(printed) - exact) <= 0.5 * 10 ** -decimals + 1e-9


def test_sphere_mass_and_moment_of_inertia(sphere_report):
    mass = 4 / 3 * math.pi * RADIUS ** 3 * DENSITY
    first = sphere_report.splitlines()[0]
    assert first.startswith("sphere: mass ")
    words = first.replace(",", "").split()
    assert close(words[2], mass * 1e6) and words[3] == "mg"                     # [mg]
    assert close(words[7], 0.4 * mass * RADIUS ** 2 * 1e12) and words[8] == "mg"  # [mg mm^2]
    assert first.endswith("aspect ratio 1.00")


def test_sphere_impacts_follow_the_bouncing_ball(sphere_report):
    rows = section(sphere_report, "Impacts")
    assert [int(r[0]) for r in rows] == [1, 2, 3, 4]
    mass = 4 / 3 * math.pi * RADIUS ** 3 * DENSITY
    v0 = math.sqrt(2 * G * HEIGHT)
    time = math.sqrt(2 * HEIGHT / G)
    energy = mass * G * (HEIGHT + RADIUS)                 # from rest: all potential, centre at h + R
    for k, row in enumerate(rows, start=1):
        _, t_ms, angle, struck, _, vx, vy, spin, jn, e_before, e_after, flight, peak_c, peak_b = row
        speed_in, speed_out = RESTITUTION ** (k - 1) * v0, RESTITUTION ** k * v0
        assert close(t_ms, time * 1e3), (k, t_ms)
        assert (angle, struck) == ("0.0", "surface")
        assert close(vx, 0.0) and close(spin, 0.0)
        assert close(vy, speed_out)
        assert close(jn, mass * (speed_in + speed_out) * 1e3)          # momentum change [mN s]
        assert close(e_before, energy * 1e3)
        energy = mass * G * RADIUS + 0.5 * mass * speed_out ** 2      # kinetic + potential at contact
        assert close(e_after, energy * 1e3)
        assert close(flight, 2 * speed_out / G * 1e3)
        assert close(peak_b, RESTITUTION ** (2 * k) * HEIGHT * 1e3)   # e^(2k) h [mm]
        assert close(peak_c, (RESTITUTION ** (2 * k) * HEIGHT + RADIUS) * 1e3)
        time += 2 * speed_out / G


def test_sphere_bounces_and_ratios(sphere_report):
    rows = section(sphere_report, "Bounces")
    # impacts are hundreds of ms apart: each is its own bounce
    assert [(r[0], r[1]) for r in rows] == [("1", "1"), ("2", "2"), ("3", "3"), ("4", "4")]
    for k, (_, _, centre, bottom, top, ratio) in enumerate(rows, start=1):
        peak = RESTITUTION ** (2 * k) * HEIGHT
        assert close(bottom, peak * 1e3)
        assert close(centre, (peak + RADIUS) * 1e3) and close(top, (peak + 2 * RADIUS) * 1e3)
        assert close(ratio, RESTITUTION ** (2 * k))                   # the lowest point's ratio: e^(2k)


def test_sphere_summary_lines(sphere_report):
    lines = sphere_report.splitlines()
    assert "release height: centre 105.00 mm, bottom 100.00 mm, top 110.00 mm" in lines
    # from rest the energy bound of the centre is its release height
    # (docs/physics.md section 6)
    assert any(line.startswith("energy bound: the centre can never rise above 105.00 mm") for line in lines)
    # best later bounce: bounce 2, e^4 = 0.4096
    assert (f"best later bounce (bottom): {RESTITUTION ** 4:.3f} x release height; "
            "a later bounce beats the first: no; beats the release height: no") in lines
    assert lines[-1] == "the drop ended after 4 impact(s): the impact limit (--impacts) was reached"
    assert "GAIN" not in sphere_report          # the energetic law never creates energy


def test_the_energy_bound_is_qualified_for_a_law_that_can_create_energy():
    # Newton's law can create energy (docs/physics.md section 4; Stronge,
    # J. Appl. Mech. 58:1049, 1991), so the bound is not promised under it
    from hopscape.report_text import drop_report
    shape = sim.Capsule(length=0.01, radius=0.003, density=1100.0)
    release = sim.Release(height=0.05, angle=0.5)
    texts = {}
    for law in ("energetic", "newton"):
        result = sim.simulate(shape, release, sim.Contact(0.9, 0.3, law), impacts=2)
        texts[law] = drop_report(shape, result, sim.group_bounces(result))
    assert "bound does not hold" in texts["newton"] and "newton law can create energy" in texts["newton"]
    assert "bound does not hold" not in texts["energetic"]


def test_a_bounce_cut_short_by_the_impact_limit_is_said():
    # the README's pin: impacts 7 and 8 come 4.8 ms apart (one bounce at
    # 10 ms), and the impact limit of 8 ends the drop before that bounce's
    # flight: the report says so instead of dropping it silently
    from hopscape.report_text import drop_report
    shape = sim.Capsule(length=0.024, radius=0.003, density=1200.0)
    release = sim.Release(0.006, math.radians(50), reference="bottom")
    result = sim.simulate(shape, release, sim.Contact(0.9, 0.1), impacts=8)
    text = drop_report(shape, result, sim.group_bounces(result), "bottom")
    assert "impact(s) 7, 8 begin a bounce that the impact limit (8) cut short" in text
