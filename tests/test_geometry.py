"""The depth of the lowest point and what is derived from it (sim.geometry).

References: the depth formula of docs/physics.md section 2 (written out
per shape in tests/flight_bodies.py, ``reference_depth``), central differences
of it for the slopes, and brute force (dense sampling over the angle, or
over the outline) for the bounds and the lowest point.
"""
import numpy as np
import pytest
from flight_bodies import reference_depth

from hopscape import sim
from hopscape.sim import geometry

SHAPES = [("capsule", 0.012, 0.0035), ("sphere", 0.0, 0.004), ("spheroid", 0.02, 0.004),
          ("spheroid", 0.003, 0.005), ("cylinder", 0.004, 0.005), ("cylinder", 0.03, 0.002)]

# angles away from the quarter turns, where the depth has kinks
GENERIC = np.radians(np.linspace(-179.5, 179.5, 721) + 0.1234)


def profile_of(kind, length, radius):
    shape = sim.make_shape(kind, length=length, radius=radius, density=1000.0)
    return tuple(np.asarray(p, dtype=float) for p in shape.profile)


def flags(profile):
    """``rounded``, ``rounded_any`` and ``four`` of one body."""
    rounded = profile[2] != profile[3]
    return rounded, bool(rounded), bool(profile[1] > 0)


@pytest.mark.parametrize("kind, length, radius", SHAPES)
def test_depth_terms_match_the_formula_and_its_derivatives(kind, length, radius):
    # d from the kernels' tangent half-angle sin/cos against the formula of
    # docs/physics.md section 2 (both within ~4e-15 of each other: sincos
    # errors, tests/test_vector.py; 1e-14 of the size allowed); d' and d''
    # against central differences of the formula with h = 1e-4 rad
    # (truncation ~ h^2 d'''' / 12 ~ 1e-9 of the size, rounding ~
    # 1e-16 / h^2 = 1e-8 of the size for d'': 1e-7 of the size allowed).
    profile = profile_of(kind, length, radius)
    size = sum(float(p) for p in profile)
    d, d_prime, d_second = geometry.depth_terms(GENERIC, profile, *flags(profile))
    h = 1e-4
    plus, mid, minus = (reference_depth(kind, GENERIC + k * h, length, radius) for k in (1, 0, -1))
    assert np.abs(d - mid).max() <= 1e-14 * size
    assert np.abs(d - geometry.depth(GENERIC, *profile)).max() <= 1e-14 * size
    assert np.abs(d_prime - (plus - minus) / (2 * h)).max() <= 1e-7 * size
    assert np.abs(d_second - (plus - 2 * mid + minus) / h ** 2).max() <= 1e-6 * size


@pytest.mark.parametrize("kind, length, radius", SHAPES)
def test_curvature_bound_and_depth_range_hold_and_are_tight(kind, length, radius):
    # The contact search's proof needs |d_k''| <= D2 on every piece
    # (sim.search module notes; docs/physics.md section 5) and
    # d_low <= d <= d_high; both are checked on 10^5 angles plus the
    # quarter turns and the rim's diagonal, where the extreme depths are:
    # depth_range is exact for these shapes (reached up to rounding, 1e-14
    # of the size). D2 is exact for the capsule (|d''| = A upright) and the
    # cylinder (sqrt(A^2 + B^2) on the diagonal), reached to 1e-6 on the
    # grid (d'' is smooth there).
    profile = profile_of(kind, length, radius)
    size = sum(float(p) for p in profile)
    diagonal = float(np.arctan2(profile[0], profile[1]))
    theta = np.concatenate([np.linspace(-np.pi, np.pi, 100_001) + 1e-7, np.arange(-4, 5) * (np.pi / 2),
                            [diagonal, np.pi - diagonal]])
    d, _, d_second = geometry.depth_terms(theta, profile, *flags(profile))
    bound = float(geometry.curvature_bound(*profile))
    assert np.abs(d_second).max() <= bound * (1 + 1e-12)
    if kind in ("capsule", "cylinder"):
        assert np.abs(d_second).max() == pytest.approx(bound, rel=1e-6)
    low, high = (float(v) for v in geometry.depth_range(*profile))
    assert low - 1e-14 * size <= d.min() <= low + 1e-14 * size
    assert high - 1e-14 * size <= d.max() <= high + 1e-14 * size


@pytest.mark.parametrize("kind, length, radius", SHAPES)
def test_breakpoint_depths_are_exact(kind, length, radius):
    # The flight peaks use the depth at its breakpoints (flat, the rim's
    # diagonal, upright) without trigonometry: the same as the formula
    # there (rounding only: 1e-14 of the size), and the largest depth on
    # the diagonal of a cylinder (where A |sin| + B |cos| peaks).
    profile = profile_of(kind, length, radius)
    size = sum(float(p) for p in profile)
    four = bool(profile[1] > 0)
    angles, depths = geometry.breakpoints(profile, four)
    for angle, depth in zip(angles, depths):
        assert float(depth) == pytest.approx(float(reference_depth(kind, angle, length, radius)), abs=1e-14 * size)
    if four:
        assert float(depths[1]) == pytest.approx(float(geometry.depth_range(*profile)[1]), rel=1e-14)


@pytest.mark.parametrize("kind, length, radius", SHAPES)
def test_outline_lowest_point_is_the_contact_offset(kind, length, radius):
    # Brute force on the picture's outline: rotated by theta, its lowest
    # point lies d(theta) below the centre at the contact offset r
    # (docs/physics.md section 2). 20,001 outline points: the lowest sample
    # is within R (pi / 20000)^2 / 2 ~ 1e-8 R of the true lowest point in
    # height; its x is within R pi / 20000 ~ 2e-4 R, or anywhere on a flat
    # edge lying exactly flat (not sampled here: generic angles).
    profile = profile_of(kind, length, radius)
    size = sum(float(p) for p in profile)
    bx, by = geometry.outline(profile, 20_001)
    for theta in GENERIC[::40]:
        c, s = np.cos(theta), np.sin(theta)
        x, y = c * bx - s * by, s * bx + c * by
        low = int(np.argmin(y))
        r_x, r_y = geometry.contact_offset(theta, *profile)
        assert y[low] == pytest.approx(float(r_y), abs=1e-7 * size)
        assert x[low] == pytest.approx(float(r_x), abs=1e-3 * size)


def test_kernel_offset_at_the_struck_corner_is_the_contact_offset():
    # The impact's offset (sim.geometry.contact_offset_at, from the
    # corners the search reports) is the lowest point's offset when the
    # lowest corner strikes (sim.geometry.contact_offset, independent sin
    # and cos): equal up to the sincos errors (4e-15 absolute; 1e-14 of the
    # size allowed), also for a batch of mixed shapes.
    profiles = [profile_of(*case) for case in SHAPES]
    profile = tuple(np.repeat([p[k] for p in profiles], GENERIC.size) for k in range(4))
    theta = np.tile(GENERIC, len(SHAPES))
    along, across = geometry.flat_sign(np.sin(theta)), geometry.flat_sign(np.cos(theta))
    r_x, r_y = geometry.contact_offset_at(theta, profile, along, across)
    e_x, e_y = geometry.contact_offset(theta, *profile)
    size = sum(profile)
    assert np.all(np.abs(r_x - e_x) <= 1e-14 * size)
    assert np.all(np.abs(r_y - e_y) <= 1e-14 * size)
