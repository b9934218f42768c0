"""Radii of curvature at the struck point (sim.hertz), against the
parametric curvature of an ellipse (the standard result
kappa = a b / (a^2 sin^2 t + b^2 cos^2 t)^(3/2), any calculus text) and
the solids' own radii (a sphere's R, a torus' tube radius)."""
from __future__ import annotations

import numpy as np
import pytest

from hopscape import sim
from hopscape.sim import hertz


def test_sphere_and_capsule_cap_have_the_cap_radius():
    for shape in (sim.Sphere(radius=0.004, density=1000.0), sim.Capsule(length=0.01, radius=0.004, density=1000.0)):
        rho_1, rho_2 = hertz.principal_radii(np.radians(37.0), shape.profile)
        assert rho_1 == pytest.approx(0.004) and rho_2 == pytest.approx(0.004)


def test_spheroid_in_plane_radius_is_the_ellipse_curvature():
    a, b = 0.01, 0.004
    body = sim.Spheroid(length=2 * a, radius=b, density=1000.0)
    theta = np.radians(25.0)
    rho_1, rho_2 = hertz.principal_radii(theta, body.profile)
    # the lowest point of the tilted ellipse: parameter t with the outward
    # normal straight down; numerically from the body frame outline
    t = np.linspace(0, 2 * np.pi, 2_000_001)
    x, y = a * np.cos(t), b * np.sin(t)
    height = x * np.sin(theta) + y * np.cos(theta)
    lowest = t[np.argmin(height)]
    kappa = a * b / (a ** 2 * np.sin(lowest) ** 2 + b ** 2 * np.cos(lowest) ** 2) ** 1.5
    assert rho_1 == pytest.approx(1 / kappa, rel=1e-5)  # the grid of t: measured 1.5e-6
    # across the plane: the normal's distance to the axis (Meusnier's theorem)
    point = np.array([x[np.argmin(height)], y[np.argmin(height)]])
    normal = -np.array([np.sin(theta), np.cos(theta)])
    assert rho_2 == pytest.approx(abs(point[1] / normal[1]), rel=1e-5)
    # the pole is an umbilic: both radii b^2 / a
    pole = hertz.principal_radii(np.pi / 2, body.profile)
    assert pole[0] == pytest.approx(b ** 2 / a) and pole[1] == pytest.approx(b ** 2 / a)


def test_rounded_tablet_rim_and_sharp_cylinder_rim():
    tablet = sim.RoundedTablet(length=0.004, radius=0.005, edge=0.001, density=1200.0)
    theta = np.radians(60.0)
    rho_1, rho_2 = hertz.principal_radii(theta, tablet.profile)
    # the rim is a torus: tube radius edge in the plane, and across it the
    # distance along the normal to the axis, (R - edge) / cos(theta) + edge
    assert rho_1 == pytest.approx(0.001)
    assert rho_2 == pytest.approx(0.004 / np.cos(theta) + 0.001)
    rod = sim.Cylinder(length=0.02, radius=0.003, density=1200.0)
    default = hertz.rim_edge_default(rod.profile)
    assert default == pytest.approx(hertz.RIM_EDGE_FRACTION * 0.003)
    assert hertz.principal_radii(theta, rod.profile)[0] == pytest.approx(default)
    assert hertz.principal_radii(theta, rod.profile, 2e-4)[0] == pytest.approx(2e-4)


def test_features_by_pose():
    cap = sim.Capsule(length=0.01, radius=0.004, density=1000.0)
    rod = sim.Cylinder(length=0.02, radius=0.003, density=1200.0)
    name = lambda theta, body: hertz.FEATURES[int(hertz.struck_feature(theta, body.profile))]  # noqa: E731
    assert name(0.3, cap) == "cap" and name(0.0, cap) == "band"
    assert name(0.3, rod) == "rim" and name(0.0, rod) == "band" and name(np.pi / 2, rod) == "face"
    assert name(0.0, sim.Sphere(radius=0.01, density=1.0)) == "surface"
    assert np.isinf(hertz.principal_radii(np.pi / 2, rod.profile)[0])
