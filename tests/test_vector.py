"""The kernels' vectorised helpers (sim._vector) against the NumPy calls
they stand for."""
import numpy as np


from hopscape.sim import _vector


def test_sincos_matches_numpy():
    # The tangent half-angle sin/cos against NumPy's own (libm) sin and cos,
    # over the angles a flight reaches (|theta| up to 1e3 rad) and the
    # awkward points: multiples of pi/2, where tan(theta/2) is 0, 1 or huge.
    rng = np.random.default_rng(11)
    theta = np.concatenate([rng.uniform(-1e3, 1e3, 100_000), rng.uniform(-4, 4, 100_000),
                            np.arange(-40, 41) * (np.pi / 2), [0.0, -0.0, 1e-300, np.pi, -np.pi]])
    s, c = _vector.sincos(theta)
    assert np.abs(s - np.sin(theta)).max() < 4e-15
    assert np.abs(c - np.cos(theta)).max() < 4e-15
    assert _vector.sincos(np.array([0.0]))[0][0] == 0.0 and _vector.sincos(np.array([0.0]))[1][0] == 1.0
