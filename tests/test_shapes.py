"""Mass properties, lowest point and contact offset of the shapes.

Three kinds of check, each named where it is used:

* closed forms from standard tables and their limits (docs/physics.md
  section 3);
* an independent numerical integration: triangle meshes built by the mesh
  library trimesh (a test-only dependency) and its own mass properties;
* brute force for the lowest point: sample the outline densely, rotate it,
  take the lowest sample. That checks the envelope-theorem offset
  ``r = (-d'(theta), -d(theta))`` without using it.
"""
import numpy as np
import pytest
import trimesh

from hopscape import sim
from hopscape.sim.shapes import contact_offset, depth

# Angles that avoid the exact quarter turns, where two ends (or a whole flat
# face) are equally low and the offset is a convention (tested separately).
GENERIC_ANGLES = np.radians(np.linspace(-179.5, 179.5, 73) + 0.1234)


# --------------------------------------------------------------------------
# closed forms and limits
# --------------------------------------------------------------------------

def capsule_closed_form(length, radius, density):
    """Capsule mass and transverse moment, written out from the formula in
    docs/physics.md section 3 [pub: parry3d ``mass_properties_capsule.rs``;
    hemisphere centroid 3R/8 from its flat face plus the parallel-axis
    theorem, any rigid-body text]."""
    m_cyl = density * np.pi * radius ** 2 * length
    m_caps = density * 4.0 / 3.0 * np.pi * radius ** 3
    # each hemisphere about its own centroid: (83/320) m_h R^2; its centroid
    # sits L/2 + 3R/8 from the centre
    m_h = m_caps / 2
    hemisphere = 83.0 / 320.0 * m_h * radius ** 2 + m_h * (length / 2 + 3 * radius / 8) ** 2
    return m_cyl + m_caps, m_cyl * (3 * radius ** 2 + length ** 2) / 12 + 2 * hemisphere


@pytest.mark.parametrize("length, radius, density", [
    (0.0, 1.0, 1.0), (2.0, 1.0, 1.0), (4.0, 1.0, 1.0), (0.0123, 0.0035, 1500.0), (0.3, 0.01, 7800.0)])
def test_capsule_mass_and_inertia_closed_form(length, radius, density):
    # The hemisphere term is built here from its own centroidal moment
    # (83/320 m R^2, standard tables) rather than copied from the engine's
    # grouped expression, so the two are independent algebra of the same
    # closed form. Tolerance: a few ulps of accumulated rounding.
    capsule = sim.Capsule(length=length, radius=radius, density=density)
    mass, inertia = capsule_closed_form(length, radius, density)
    assert capsule.mass == pytest.approx(mass, rel=1e-13)
    assert capsule.inertia == pytest.approx(inertia, rel=1e-13)


def test_capsule_with_no_cylinder_is_a_sphere():
    # L = 0: I = 2/5 m R^2 [pub: standard tables; docs/physics.md section 3].
    # Rounding only, hence 1e-14.
    capsule = sim.Capsule(length=0.0, radius=0.004, density=1200.0)
    sphere = sim.Sphere(radius=0.004, density=1200.0)
    assert capsule.mass == pytest.approx(4 / 3 * np.pi * 0.004 ** 3 * 1200.0, rel=1e-14)
    assert capsule.inertia == pytest.approx(0.4 * capsule.mass * 0.004 ** 2, rel=1e-14)
    assert capsule.inertia == pytest.approx(sphere.inertia, rel=1e-14)


@pytest.mark.parametrize("ratio", [1e-3, 1e-5, 1e-7])
def test_capsule_thin_limit_is_a_rod(ratio):
    # R -> 0: I -> m L^2/12, the thin rod [pub: standard tables]. The caps
    # (mass 4R/(3L) of the cylinder's, at lever arm L/2) shift I/(m L^2) by
    # 2R/(9L) to first order, i.e. 8R/(3L) relative to 1/12, so the relative
    # deviation must shrink like R/L: the bounds 0.5 R/L and 8 R/L bracket
    # that leading term with a factor 3 either side.
    length = 1.0
    capsule = sim.Capsule(length=length, radius=ratio * length, density=1.0)
    relative = abs(capsule.inertia / (capsule.mass * length ** 2) - 1 / 12) * 12
    assert relative < 8 * ratio
    assert relative > 0.5 * ratio  # the leading term really is of order R/L


@pytest.mark.parametrize("length_over_radius, derived", [
    # the published closed form evaluated here, beside the [derived]
    # regression value of docs/physics.md section 3 (4 decimals; a Monte Carlo integration agreed to 0.1%)
    (2.0, 1.2100), (4.0, 2.6625)])
def test_capsule_derived_regression_values(length_over_radius, derived):
    capsule = sim.Capsule(length=length_over_radius, radius=1.0, density=1.0)
    mass, inertia = capsule_closed_form(length_over_radius, 1.0, 1.0)
    # published closed form (docs/physics.md section 3): rounding only
    assert capsule.inertia / capsule.mass == pytest.approx(inertia / mass, rel=1e-13)
    # [derived] regression value, NOT published: I / (m R^2) quoted to 4
    # decimals in docs/physics.md, so half a unit of the last decimal
    assert capsule.inertia / capsule.mass == pytest.approx(derived, abs=5e-5)


def test_sphere_spheroid_cylinder_closed_forms():
    # Moments of inertia of solids as tabulated in standard references, e.g.
    # the table in Halliday, Resnick & Walker, Fundamentals of Physics (from
    # memory; docs/physics.md section 3), and checked against trimesh below:
    # sphere 2/5 m R^2, spheroid m (a^2 + b^2)/5, solid cylinder
    # m (3 R^2 + H^2)/12 about a transverse axis through the centre.
    # Rounding only.
    rho = 1300.0
    sphere = sim.Sphere(radius=0.005, density=rho)
    assert sphere.mass == pytest.approx(rho * 4 / 3 * np.pi * 0.005 ** 3, rel=1e-14)
    assert sphere.inertia == pytest.approx(0.4 * sphere.mass * 0.005 ** 2, rel=1e-14)

    a, b = 0.009, 0.003  # semi-axis along the axis, equatorial radius
    spheroid = sim.Spheroid(length=2 * a, radius=b, density=rho)
    assert spheroid.mass == pytest.approx(rho * 4 / 3 * np.pi * a * b * b, rel=1e-14)
    assert spheroid.inertia == pytest.approx(spheroid.mass * (a * a + b * b) / 5, rel=1e-14)

    height, radius = 0.004, 0.005
    cylinder = sim.Cylinder(length=height, radius=radius, density=rho)
    assert cylinder.mass == pytest.approx(rho * np.pi * radius ** 2 * height, rel=1e-14)
    assert cylinder.inertia == pytest.approx(cylinder.mass * (3 * radius ** 2 + height ** 2) / 12, rel=1e-14)


def test_spheroid_with_equal_axes_is_a_sphere():
    # a = b reduces the spheroid to the sphere (both from standard tables).
    spheroid = sim.Spheroid(length=0.01, radius=0.005, density=900.0)
    sphere = sim.Sphere(radius=0.005, density=900.0)
    assert spheroid.mass == pytest.approx(sphere.mass, rel=1e-14)
    assert spheroid.inertia == pytest.approx(sphere.inertia, rel=1e-14)
    assert spheroid.depth(0.7) == pytest.approx(0.005, rel=1e-14)


def test_with_mass_scales_density_only():
    # Mass and inertia are both linear in density: rescaling to a mass keeps
    # I/m. Rounding only.
    capsule = sim.Capsule(length=0.01, radius=0.003, density=1500.0)
    heavy = capsule.with_mass(2.5)
    assert heavy.mass == pytest.approx(2.5, rel=1e-14)
    assert heavy.inertia / heavy.mass == pytest.approx(capsule.inertia / capsule.mass, rel=1e-14)
    assert heavy.length == capsule.length and heavy.radius == capsule.radius


# --------------------------------------------------------------------------
# independent integration with trimesh meshes
# --------------------------------------------------------------------------

def mesh_mass_properties(mesh, density, scale=1.0):
    """Mass and moment about the two transverse axes (x, y) through the
    centre of mass, for a mesh whose symmetry axis is z (trimesh's
    ``moment_inertia`` is taken about the centre of mass).

    Meshes are built in units of ``scale`` metres (so their size is of
    order 1) and the results converted back: trimesh merges vertices closer
    than its fixed merge tolerance, and a millimetre capsule mesh built in
    metres came out non-watertight with the wrong length (seen with trimesh
    5.2). Mass scales as scale^3, moment as scale^5.
    """
    mesh.density = density
    inertia = mesh.moment_inertia
    return (mesh.mass * scale ** 3, inertia[0, 0] * scale ** 5, inertia[1, 1] * scale ** 5,
            mesh.center_mass * scale)


def richardson(coarse, fine):
    """Extrapolate two mesh results whose error falls as h^2 (h halved)."""
    return (4 * fine - coarse) / 3


def test_trimesh_capsule_height_convention():
    # trimesh.creation.capsule: its docstring says `height` is the distance
    # between the two sphere centres. Check the convention instead of
    # trusting it: the mesh spans height + 2 R along z and is centred.
    mesh = trimesh.creation.capsule(height=3.0, radius=0.5, count=[32, 32])
    assert mesh.bounds[:, 2] == pytest.approx([-2.0, 2.0], abs=1e-12)
    assert mesh.is_watertight


@pytest.mark.parametrize("length, radius", [(0.0, 1.0), (2.0, 1.0), (4.0, 1.0), (0.011, 0.0035)])
def test_capsule_against_trimesh(length, radius):
    # Inscribed polygonal meshes lose volume and moment like h^2 (h the edge
    # length): 2.4e-3 relative at 64 sections, 6e-4 at 128 (measured).
    # Richardson extrapolation of the two removes the h^2 term and leaves
    # about 1e-6, so 2e-5 relative is strict yet safe. The raw fine mesh is
    # also checked at 1e-3.
    density = 1500.0
    shape = sim.Capsule(length=length, radius=radius, density=density)
    results = []
    for count in (64, 128):
        if length == 0.0:
            # trimesh needs a positive height; a sphere mesh of the same
            # latitude-longitude kind stands in for the capsule with L = 0
            mesh = trimesh.creation.uv_sphere(radius=1.0, count=[count, count])
        else:
            mesh = trimesh.creation.capsule(height=length / radius, radius=1.0, count=[count, count])
        assert mesh.is_watertight
        results.append(mesh_mass_properties(mesh, density, scale=radius))
    (m1, ix1, iy1, c1), (m2, ix2, iy2, c2) = results
    assert np.allclose(c2, 0.0, atol=1e-12 * (length + radius))  # centred
    assert m2 == pytest.approx(shape.mass, rel=1e-3)
    assert ix2 == pytest.approx(shape.inertia, rel=1e-3)
    assert richardson(m1, m2) == pytest.approx(shape.mass, rel=2e-5)
    assert richardson(ix1, ix2) == pytest.approx(shape.inertia, rel=2e-5)
    assert richardson(iy1, iy2) == pytest.approx(shape.inertia, rel=2e-5)


@pytest.mark.parametrize("length, radius", [(0.004, 0.005), (0.03, 0.002), (2.0, 1.0)])
def test_cylinder_against_trimesh(length, radius):
    # trimesh.creation.cylinder: `height` is the full length, centred on the
    # origin along z. Polygon error ~ h^2 (measured 1.3e-4 at 256
    # sections); Richardson on 256/512 leaves < 1e-7, hence 1e-5.
    density = 1500.0
    shape = sim.Cylinder(length=length, radius=radius, density=density)
    (m1, ix1, _, _), (m2, ix2, iy2, c2) = (
        mesh_mass_properties(trimesh.creation.cylinder(radius=1.0, height=length / radius, sections=n),
                             density, scale=radius)
        for n in (256, 512))
    assert np.allclose(c2, 0.0, atol=1e-12 * (length + radius))
    assert richardson(m1, m2) == pytest.approx(shape.mass, rel=1e-5)
    assert richardson(ix1, ix2) == pytest.approx(shape.inertia, rel=1e-5)
    assert iy2 == pytest.approx(shape.inertia, rel=1e-3)


@pytest.mark.parametrize("a, b", [(1.5, 0.5), (0.5, 1.5), (0.006, 0.002)])
def test_spheroid_against_trimesh(a, b):
    # Icosphere scaled by (b, b, a): a spheroid with its axis along z.
    # Each subdivision halves the edge length, so the error falls by 4
    # (measured 9e-4 at 5 subdivisions); Richardson on 4/5 leaves ~1e-6,
    # hence 2e-5.
    density = 1500.0
    shape = sim.Spheroid(length=2 * a, radius=b, density=density)
    results = []
    for subdivisions in (4, 5):
        mesh = trimesh.creation.icosphere(subdivisions=subdivisions, radius=1.0)
        mesh.apply_scale([b / a, b / a, 1.0])
        results.append(mesh_mass_properties(mesh, density, scale=a))
    (m1, ix1, _, _), (m2, ix2, iy2, _) = results
    assert richardson(m1, m2) == pytest.approx(shape.mass, rel=2e-5)
    assert richardson(ix1, ix2) == pytest.approx(shape.inertia, rel=2e-5)
    assert iy2 == pytest.approx(shape.inertia, rel=2e-3)


# --------------------------------------------------------------------------
# depth and contact offset: the formulas of docs/physics.md section 2
# --------------------------------------------------------------------------

def reference_depth(kind, theta, length, radius):
    """Depth of the lowest point, docs/physics.md section 2, written out."""
    s, c = np.sin(theta), np.cos(theta)
    if kind == "capsule":
        return length / 2 * np.abs(s) + radius
    if kind == "spheroid":
        a = length / 2
        return np.sqrt(a * a * s * s + radius * radius * c * c)
    if kind == "cylinder":
        return length / 2 * np.abs(s) + radius * np.abs(c)
    return np.full_like(theta, radius)


SHAPE_CASES = [
    ("capsule", 0.012, 0.0035), ("capsule", 0.0, 0.004),
    ("spheroid", 0.02, 0.004), ("spheroid", 0.004, 0.006),
    ("cylinder", 0.004, 0.005), ("cylinder", 0.03, 0.002),
    ("sphere", 0.0, 0.005),
]


def build(kind, length, radius, density=1000.0):
    return sim.make_shape(kind, length=length, radius=radius, density=density)


@pytest.mark.parametrize("kind, length, radius", SHAPE_CASES)
def test_depth_matches_notes_formula(kind, length, radius):
    # docs/physics.md section 2. The engine evaluates one general Minkowski
    # formula; agreement to rounding (1e-14 relative) checks the mapping of
    # each shape onto it.
    theta = np.radians(np.linspace(-360, 360, 1441))
    shape = build(kind, length, radius)
    assert np.allclose(shape.depth(theta), reference_depth(kind, theta, length, radius), rtol=1e-14, atol=0)


@pytest.mark.parametrize("kind, length, radius", SHAPE_CASES)
def test_contact_offset_is_minus_depth_slope(kind, length, radius):
    # r = (-d'(theta), -d(theta)) (docs/physics.md section 2). d' by central
    # differences of the section 2 formula with h = 1e-6 rad: truncation
    # ~ h^2 d''' / 6 and rounding ~ 1e-16 d / h, both below 1e-9 of the body
    # size, hence atol 1e-8 * size. Generic angles only (d has kinks at the
    # quarter turns).
    shape = build(kind, length, radius)
    size = length + radius
    h = 1e-6
    slope = (reference_depth(kind, GENERIC_ANGLES + h, length, radius)
             - reference_depth(kind, GENERIC_ANGLES - h, length, radius)) / (2 * h)
    r_x, r_y = shape.contact_offset(GENERIC_ANGLES)
    assert np.allclose(r_x, -slope, rtol=0, atol=1e-8 * size)
    assert np.allclose(r_y, -reference_depth(kind, GENERIC_ANGLES, length, radius), rtol=1e-14, atol=0)


def test_capsule_contact_is_under_the_lower_cap_centre():
    # docs/physics.md section 2: the contact is straight under the lower cap
    # centre. At 30 deg the axis points up-right, so the lower cap is the
    # one at -axis: centre offset -(L/2)(cos, sin), contact R below it.
    length, radius = 0.012, 0.0035
    theta = np.radians(30.0)
    r_x, r_y = sim.Capsule(length=length, radius=radius, density=1.0).contact_offset(theta)
    assert r_x == pytest.approx(-length / 2 * np.cos(theta), rel=1e-14)
    assert r_y == pytest.approx(-length / 2 * np.sin(theta) - radius, rel=1e-14)


def test_cylinder_contact_is_a_rim_corner():
    # docs/physics.md section 2: the contact of a flat-ended cylinder is a rim
    # corner, here the corner at -axis and -across for 0 < theta < 90 deg.
    height, radius = 0.004, 0.005
    theta = np.radians(40.0)
    axis, across = np.array([np.cos(theta), np.sin(theta)]), np.array([-np.sin(theta), np.cos(theta)])
    corner = -height / 2 * axis - radius * across
    r = sim.Cylinder(length=height, radius=radius, density=1.0).contact_offset(theta)
    assert np.allclose(r, corner, rtol=0, atol=1e-16)


@pytest.mark.parametrize("shape, theta, middle_x", [
    # x of the middle of the touching flat, from the geometry:
    # capsule lying flat: halfway between the two cap bottoms, x = 0;
    # cylinder lying flat: centre of its long side, x = sign(cos) R sin;
    # cylinder standing: centre of its lower face, x = -sign(sin) (H/2) cos.
    # cos(fl(pi/2)) = 6.1e-17 is a real (tiny) tilt of the float angle, so
    # the standing face centre sits 1.2e-19 m off the vertical, not at 0.
    (sim.Capsule(length=0.01, radius=0.003, density=1.0), 0.0, 0.0),
    (sim.Capsule(length=0.01, radius=0.003, density=1.0), np.pi, 0.0),
    (sim.Cylinder(length=0.004, radius=0.005, density=1.0), 0.0, 0.0),
    (sim.Cylinder(length=0.004, radius=0.005, density=1.0), np.pi, 0.005 * -1 * np.sin(np.pi)),
    (sim.Cylinder(length=0.004, radius=0.005, density=1.0), np.pi / 2, -0.002 * np.cos(np.pi / 2)),
    (sim.Cylinder(length=0.004, radius=0.005, density=1.0), -np.pi / 2, 0.002 * np.cos(-np.pi / 2)),
])
def test_flat_contact_offset_is_the_middle_of_the_flat(shape, theta, middle_x):
    # Lying (or standing) exactly flat is a line contact; by the engine's
    # documented convention the offset is the middle of the touching edge.
    # The tilt of the other rectangle side (its sign flips across the flat)
    # must not leak in: agreement to 1e-30 m, i.e. exact up to the float
    # angle's own tilt.
    r_x, r_y = shape.contact_offset(theta)
    assert r_x == pytest.approx(middle_x, abs=1e-30)
    assert r_y == pytest.approx(-shape.depth(theta), rel=1e-15)


# --------------------------------------------------------------------------
# depth and contact offset: brute force on the outline
# --------------------------------------------------------------------------

def circle(centre_x, radius):
    return lambda u: (centre_x + radius * np.cos(u), radius * np.sin(u)), (0.0, 2 * np.pi)


def ellipse(a, b):
    return lambda u: (a * np.cos(u), b * np.sin(u)), (0.0, 2 * np.pi)


def rectangle(half_long, half_wide):
    def outline(u):
        u = np.mod(u, 4.0)
        edge, f = np.floor(u), u - np.floor(u)
        x = np.select([edge == 0, edge == 1, edge == 2], [half_long * (2 * f - 1), half_long,
                                                         half_long * (1 - 2 * f)], -half_long)
        y = np.select([edge == 0, edge == 1, edge == 2], [-half_wide, half_wide * (2 * f - 1), half_wide],
                      half_wide * (1 - 2 * f))
        return x, y
    return outline, (0.0, 4.0)


def lowest_on_outline(pieces, theta, samples=4001, stages=3):
    """Lowest point of the rotated outline by brute-force sampling.

    Each piece is sampled uniformly, then re-sampled around its lowest
    sample (two cells either side) ``stages - 1`` more times; the lowest
    over all pieces wins. Returns ``(x, y)`` of the lowest point relative to
    the centre (body frame rotated by ``theta``).
    """
    c, s = np.cos(theta), np.sin(theta)
    best = None
    for outline, (lo, hi) in pieces:
        for _ in range(stages):
            u = np.linspace(lo, hi, samples)
            bx, by = outline(u)
            x, y = c * bx - s * by, s * bx + c * by
            i = int(np.argmin(y))
            cell = (hi - lo) / (samples - 1)
            lo, hi = u[i] - 2 * cell, u[i] + 2 * cell
        if best is None or y[i] < best[1]:
            best = (x[i], y[i])
    return best


def outline_pieces(kind, length, radius):
    if kind == "capsule":
        return [circle(length / 2, radius), circle(-length / 2, radius)]
    if kind == "spheroid":
        return [ellipse(length / 2, radius)]
    if kind == "cylinder":
        return [rectangle(length / 2, radius)]
    return [circle(0.0, radius)]


@pytest.mark.parametrize("kind, length, radius", SHAPE_CASES)
def test_contact_offset_against_brute_force_outline(kind, length, radius):
    # Three sampling stages of 4001 points: the final parameter cell is
    # (2 pi / 4000) * (4/4000)^2 ~ 1.6e-9 rad. The height is then exact to
    # rounding (1e-12 * size allowed). Where the outline is round its lowest
    # point is a flat quadratic minimum: rounding of y (1e-16 * size) only
    # pins the location to sqrt(1e-16) ~ 1e-8 of the size, which is the
    # resolution of any brute force in double precision; hence x to
    # 1e-7 * size. (Corners of the cylinder are found far more exactly.)
    shape = build(kind, length, radius)
    size = length + radius
    r_x, r_y = shape.contact_offset(GENERIC_ANGLES)
    for i, theta in enumerate(GENERIC_ANGLES):
        x, y = lowest_on_outline(outline_pieces(kind, length, radius), theta)
        assert r_y[i] == pytest.approx(y, abs=1e-12 * size), theta
        assert r_x[i] == pytest.approx(x, abs=1e-7 * size), theta


# --------------------------------------------------------------------------
# scalar and array input, constructors, validation
# --------------------------------------------------------------------------

@pytest.mark.parametrize("kind, length, radius", SHAPE_CASES)
def test_scalar_and_array_angles_agree(kind, length, radius):
    # Vectorisation must not change a single bit.
    shape = build(kind, length, radius)
    theta = np.radians([-170.0, -90.0, -33.3, 0.0, 12.5, 90.0, 135.0, 180.0])
    d_array = shape.depth(theta)
    rx_array, ry_array = shape.contact_offset(theta)
    for i, angle in enumerate(theta):
        assert shape.depth(float(angle)) == d_array[i]
        r_x, r_y = shape.contact_offset(float(angle))
        assert r_x == rx_array[i] and r_y == ry_array[i]


def test_array_dimensions_match_scalar_shapes():
    # One body per array element: each element must equal the scalar shape.
    lengths = np.array([0.0, 0.004, 0.011, 0.02])
    radii = np.array([0.002, 0.0035, 0.003, 0.005])
    for cls in (sim.Capsule, sim.Spheroid, sim.Cylinder):
        if cls is not sim.Capsule:
            lengths = np.where(lengths == 0, 0.001, lengths)
        many = cls(length=lengths, radius=radii, density=1500.0)
        for i in range(lengths.size):
            one = cls(length=lengths[i], radius=radii[i], density=1500.0)
            assert many.mass[i] == one.mass and many.inertia[i] == one.inertia
            assert many.depth(0.4)[i] == one.depth(0.4)
    # the free functions broadcast a profile array against an angle array
    hl = np.array([0.001, 0.002, 0.003])
    d = depth(np.array([0.1, 0.2, 0.3]), hl, 0.0, 0.002, 0.002)
    assert d == pytest.approx(hl * np.sin([0.1, 0.2, 0.3]) + 0.002, rel=1e-14)
    r_x, _ = contact_offset(np.array([0.1, 0.2, 0.3]), hl, 0.0, 0.002, 0.002)
    assert r_x == pytest.approx(-hl * np.cos([0.1, 0.2, 0.3]), rel=1e-14)


def test_aspect_ratio_constructors():
    # aspect ratio = overall length / diameter, for every shape
    capsule = sim.Capsule.from_aspect_ratio(3.0, diameter=0.008, density=1500.0)
    assert capsule.radius == pytest.approx(0.004, rel=1e-15)
    assert capsule.length == pytest.approx(0.016, rel=1e-15)  # cylinder part: (3 - 1) * diameter
    assert capsule.overall_length == pytest.approx(0.024, rel=1e-15)
    assert capsule.aspect_ratio == pytest.approx(3.0, rel=1e-15)
    assert sim.Capsule.from_aspect_ratio(1.0, 0.008, 1500.0).inertia == pytest.approx(
        sim.Sphere(radius=0.004, density=1500.0).inertia, rel=1e-14)
    for cls in (sim.Spheroid, sim.Cylinder):
        shape = cls.from_aspect_ratio(np.array([0.5, 2.5]), diameter=0.01, density=1500.0)
        assert shape.length == pytest.approx([0.005, 0.025], rel=1e-15)
        assert shape.aspect_ratio == pytest.approx([0.5, 2.5], rel=1e-15)
        assert shape.diameter == pytest.approx([0.01, 0.01], rel=1e-15)
    assert sim.Sphere.from_aspect_ratio(1.0, 0.01, 1500.0).radius == pytest.approx(0.005)
    with pytest.raises(ValueError, match="aspect_ratio"):
        sim.Capsule.from_aspect_ratio(0.9, 0.008, 1500.0)
    with pytest.raises(ValueError, match="aspect_ratio"):
        sim.Sphere.from_aspect_ratio(2.0, 0.008, 1500.0)


@pytest.mark.parametrize("kwargs, name", [
    (dict(length=0.01, radius=0.0, density=1.0), "radius"),
    (dict(length=-0.01, radius=0.003, density=1.0), "length"),
    (dict(length=0.01, radius=0.003, density=0.0), "density"),
    (dict(length=0.01, radius=np.nan, density=1.0), "radius"),
])
def test_invalid_dimensions_name_the_parameter(kwargs, name):
    with pytest.raises(ValueError, match=name):
        sim.Capsule(**kwargs)


def test_make_shape_by_name():
    assert sim.make_shape("capsule", length=0.01, radius=0.003, density=1.0).kind == "capsule"
    assert sim.make_shape("sphere", radius=0.003, density=1.0).mass == pytest.approx(
        4 / 3 * np.pi * 0.003 ** 3, rel=1e-14)
    with pytest.raises(ValueError, match="shape must be one of"):
        sim.make_shape("cube", length=0.01, radius=0.003, density=1.0)


# --- declarations: what each shape tells the other layers ------------------

def test_registry_is_built_from_the_classes():
    assert sim.SHAPES == {"capsule": sim.Capsule, "sphere": sim.Sphere, "spheroid": sim.Spheroid,
                          "cylinder": sim.Cylinder, "rounded_tablet": sim.shapes.RoundedTablet}
    assert "mixed" not in sim.SHAPES


@pytest.mark.parametrize("kind", ["capsule", "spheroid", "cylinder"])
def test_aspect_ratio_and_length_describe_the_same_body(kind):
    # the length rule each class declares: overall length / diameter = aspect ratio
    cls = sim.SHAPES[kind]
    by_ratio = cls.from_diameter(0.006, 1100.0, aspect_ratio=3.5)
    by_length = cls.from_diameter(0.006, 1100.0, length=by_ratio.length)
    assert by_ratio.aspect_ratio == pytest.approx(3.5, rel=1e-14)
    assert by_length.mass == by_ratio.mass and by_length.inertia == by_ratio.inertia


def test_sphere_ignores_a_length_and_needs_aspect_ratio_one():
    sphere = sim.Sphere.from_diameter(0.01, 1000.0, length=np.nan)
    assert float(sphere.mass) == pytest.approx(1000.0 * np.pi / 6 * 0.01 ** 3, rel=1e-14)  # rho pi d^3 / 6
    with pytest.raises(ValueError, match=r"aspect_ratio of a sphere must be 1, got 2"):
        sim.Sphere.from_aspect_ratio(2.0, 0.01, 1000.0)


@pytest.mark.parametrize("kind, value, message", [
    ("capsule", -0.001, "length must be >= 0 m, got -0.001"),
    ("cylinder", 0.0, "length must be > 0 m, got 0"),
    ("spheroid", np.nan, "length must be > 0 m, got nan"),
])
def test_declared_dimension_ranges_are_what_the_classes_enforce(kind, value, message):
    with pytest.raises(ValueError, match=message):
        sim.make_shape(kind, length=value, radius=0.003, density=1000.0)


def test_capsule_aspect_ratio_below_one_is_refused():
    with pytest.raises(ValueError, match=r"aspect_ratio of a capsule must be >= 1, got 0\.5"):
        sim.Capsule.from_aspect_ratio(0.5, 0.006, 1000.0)


def test_every_shape_declares_its_dimensions_and_struck_features():
    for kind, cls in sim.SHAPES.items():
        names = [d.name for d in cls.dimensions]
        assert "radius" in names, kind
        assert set(cls.struck_names) == {1, -1, 0}, kind
        for d in cls.dimensions:
            low, high = d.plausible
            assert 0 <= low < high and d.meaning, (kind, d.name)


def test_with_mass_keeps_the_declared_dimensions():
    capsule = sim.Capsule(length=0.01, radius=0.003, density=1000.0)
    heavier = capsule.with_mass(2 * float(capsule.mass))
    assert float(heavier.mass) == pytest.approx(2 * float(capsule.mass), rel=1e-14)
    assert heavier.length == capsule.length and heavier.radius == capsule.radius


# --- the rounded-rim tablet ----------------------------------------------------

def rounded_tablet_mesh(length, radius, edge, sections=256, arc=64):
    """Watertight mesh of the solid of revolution (axis z): the (r, z)
    outline from the bottom centre round the rounded rim to the top centre."""
    c, b = length / 2 - edge, radius - edge
    phi = np.linspace(-np.pi / 2, np.pi / 2, arc)
    rim = np.column_stack([b + edge * np.cos(phi), np.where(phi < 0, -c, c) + edge * np.sin(phi)])
    outline = np.vstack([[0.0, -length / 2], rim, [0.0, length / 2]])
    return trimesh.creation.revolve(outline, sections=sections)


@pytest.mark.parametrize("length, radius, edge", [(4.0, 5.0, 1.0), (1.0, 3.0, 0.5), (6.0, 1.0, 0.25)])
def test_rounded_tablet_against_trimesh(length, radius, edge):
    # trimesh integrates the revolved polygon independently; the polygon
    # loses volume and moment like h^2 (sections and rim points halved in
    # step), so Richardson on the two leaves ~1e-6 relative; 2e-5 is safe.
    density = 1200.0
    shape = sim.SHAPES["rounded_tablet"](length=length, radius=radius, edge=edge, density=density)
    (m1, ix1, _, _), (m2, ix2, iy2, c2) = (
        mesh_mass_properties(rounded_tablet_mesh(length, radius, edge, sections=n, arc=n // 4), density)
        for n in (256, 512))
    assert np.allclose(c2, 0.0, atol=1e-9)
    assert richardson(m1, m2) == pytest.approx(shape.mass, rel=2e-5)
    assert richardson(ix1, ix2) == pytest.approx(shape.inertia, rel=2e-5)
    assert iy2 == pytest.approx(shape.inertia, rel=1e-3)


def test_rounded_tablet_limits_are_the_cylinder_and_the_sphere():
    tablet = sim.SHAPES["rounded_tablet"]
    flat = tablet(length=0.004, radius=0.005, edge=0.0, density=1000.0)
    cylinder = sim.Cylinder(length=0.004, radius=0.005, density=1000.0)
    assert flat.mass == pytest.approx(cylinder.mass, rel=1e-14)
    assert flat.inertia == pytest.approx(cylinder.inertia, rel=1e-14)
    ball = tablet(length=0.01, radius=0.005, edge=0.005, density=1000.0)
    sphere = sim.Sphere(radius=0.005, density=1000.0)
    assert ball.mass == pytest.approx(sphere.mass, rel=1e-14)      # 4/3 pi R^3 rho
    assert ball.inertia == pytest.approx(sphere.inertia, rel=1e-14)  # 2/5 m R^2
    assert ball.depth(0.7) == pytest.approx(0.005, rel=1e-15)       # round in the plane too


def test_rounded_tablet_needs_no_change_outside_its_class(tmp_path):
    # the batch table takes its edge column, and the default rim when empty
    import pandas as pd
    from hopscape.batch import run_batch
    table = run_batch(pd.DataFrame({"shape": ["rounded_tablet"] * 2, "length": [0.004] * 2, "radius": [0.005] * 2,
                                    "edge": [0.001, np.nan], "density": [1200.0] * 2, "height": [0.05] * 2,
                                    "angle": [30.0] * 2, "restitution": [0.8] * 2, "friction": [0.3] * 2}))
    assert (table["error"] == "").all() and set(table["drop"]) == {0, 1}
    with pytest.raises(ValueError, match="edge of a rounded_tablet must be <= its radius"):
        sim.make_shape("rounded_tablet", length=0.004, radius=0.005, edge=0.003, density=1200.0)
