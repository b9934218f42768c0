"""The exact flight (sim.flight): the time to fall back to a level."""
import numpy as np
import pytest


from hopscape.sim import flight


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
