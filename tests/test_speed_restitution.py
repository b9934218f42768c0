"""Restitution as a power law of the normal impact speed (Bharadwaj, Smith
& Hancock, Int. J. Pharm. 402:50-56, 2010: tablet restitution falls
roughly with the fourth root of the impact speed; docs/physics.md section 9)."""
from __future__ import annotations

import numpy as np
import pytest

from hopscape import sim
from hopscape.sim.flight import GRAVITY
from hopscape.sim.impact import speed_restitution


def test_power_law_values():
    # e = e_ref (v / v_ref)^(-1/4): 16 times the speed halves it
    assert speed_restitution(0.8, -1.0, 0.25, 1.0) == pytest.approx(0.8)
    assert speed_restitution(0.8, -16.0, 0.25, 1.0) == pytest.approx(0.4)
    assert speed_restitution(0.8, -0.01, 0.25, 1.0) == 1.0  # kept within [0, 1]
    assert speed_restitution(0.8, -5.0, 0.0, 1.0) == 0.8


def test_sphere_rebounds_with_the_speed_law():
    # frictionless sphere head-on: every law gives v' = e(v) v (docs/physics.md section 4)
    sphere = sim.Sphere(radius=0.005, density=1200.0)
    heights = np.array([0.05, 0.5, 2.0])
    result = sim.simulate(sphere, sim.Release(height=heights + 0.005),
                          sim.Contact(0.8, 0.0, speed_exponent=0.25, reference_speed=1.0), impacts=1)
    v = np.sqrt(2 * GRAVITY * heights)
    assert result.vy[:, 0] == pytest.approx(0.8 * v ** 0.75, rel=1e-9)


def test_no_exponent_is_bit_for_bit_the_constant_law():
    capsule = sim.Capsule(length=0.014, radius=0.0035, density=1200.0)
    release = sim.Release(height=0.3, angle=np.linspace(0.1, 1.4, 50), spin=3.0)
    a = sim.simulate(capsule, release, sim.Contact(0.7, 0.3), impacts=4)
    b = sim.simulate(capsule, release, sim.Contact(0.7, 0.3, speed_exponent=0.0, reference_speed=2.0), impacts=4)
    for name in ("vx", "vy", "spin", "time"):
        assert np.array_equal(getattr(a, name), getattr(b, name), equal_nan=True)


def test_out_of_range_exponent_is_refused():
    with pytest.raises(ValueError, match=r"speed_exponent must be in \[0, 1\], got 1.5"):
        sim.Contact(0.7, 0.3, speed_exponent=1.5)
    with pytest.raises(ValueError, match=r"reference_speed must be > 0 m/s, got 0"):
        sim.Contact(0.7, 0.3, speed_exponent=0.25, reference_speed=0.0)


def test_restitution_from_a_measured_table():
    # a table of (speed, restitution): linear between points, ends beyond
    from hopscape.sim.impact import table_restitution
    table = ((0.5, 0.9), (1.0, 0.8), (3.0, 0.6))
    assert table_restitution(np.array([-0.2, -0.75, -2.0, -5.0]), table) == pytest.approx([0.9, 0.85, 0.7, 0.6])
    sphere = sim.Sphere(radius=0.005, density=1200.0)
    heights = np.array([0.02, 0.2])
    result = sim.simulate(sphere, sim.Release(height=heights + 0.005),
                          sim.Contact(0.5, 0.0, restitution_table=table), impacts=1)
    v = np.sqrt(2 * GRAVITY * heights)  # 0.63 and 1.98 m/s
    assert result.vy[:, 0] == pytest.approx(np.interp(v, (0.5, 1.0, 3.0), (0.9, 0.8, 0.6)) * v, rel=1e-9)


@pytest.mark.parametrize("table, words", [
    (((1.0, 0.8),), "at least two"),
    (((1.0, 0.8), (0.5, 0.9)), "speeds must rise"),
    (((1.0, 0.8), (2.0, 1.3)), "restitution_table restitution must be in [0, 1], got 1.3"),
    (((0.0, 0.8), (2.0, 0.3)), "restitution_table speed must be > 0 m/s, got 0"),
])
def test_bad_restitution_tables(table, words):
    with pytest.raises(ValueError) as caught:
        sim.Contact(0.7, 0.3, restitution_table=table)
    assert words in str(caught.value)
