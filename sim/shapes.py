"""Rigid convex bodies seen in their plane of motion.

Every shape here is the Minkowski sum of a rectangle (half-extents
``half_long`` along the symmetry axis and ``half_wide`` across it) and an
ellipse (semi-axes ``round_long`` along the axis and ``round_wide`` across).
That one family holds the capsule (segment + disc), the sphere (disc), the
spheroid (ellipse) and the flat-ended cylinder (rectangle), and the kernels
only ever see its four numbers, so a new member of the family is one small
class: its four profile numbers, its mass and its transverse moment.

The depth of the lowest point below the centre, the contact offset and
the outline of the family are worked out in :mod:`sim.geometry`.

All numbers in SI units; angles in radians.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .geometry import contact_offset, depth


@dataclass(frozen=True)
class Shape:
    """Base of all shapes: four profile numbers plus mass properties.

    Subclasses set the profile in ``__post_init__`` from their own
    dimensions. Dimensions may be arrays (one body per element).
    """

    density: float | np.ndarray
    half_long: np.ndarray = field(init=False, repr=False)
    half_wide: np.ndarray = field(init=False, repr=False)
    round_long: np.ndarray = field(init=False, repr=False)
    round_wide: np.ndarray = field(init=False, repr=False)
    mass: np.ndarray = field(init=False, repr=False)
    inertia: np.ndarray = field(init=False, repr=False)

    kind = "shape"

    def _set(self, **values):
        for key, value in values.items():
            object.__setattr__(self, key, np.asarray(value, dtype=float))

    @property
    def profile(self):
        """``(half_long, half_wide, round_long, round_wide)`` in metres."""
        return self.half_long, self.half_wide, self.round_long, self.round_wide

    @property
    def overall_length(self):
        """Extent along the symmetry axis. [m]"""
        return 2 * (self.half_long + self.round_long)

    @property
    def diameter(self):
        """Extent across the symmetry axis. [m]"""
        return 2 * (self.half_wide + self.round_wide)

    @property
    def aspect_ratio(self):
        """Overall length / diameter. [-]"""
        return self.overall_length / self.diameter

    def depth(self, theta):
        """Depth of the lowest point below the centre at ``theta``. [m]"""
        return depth(theta, *self.profile)

    def contact_offset(self, theta):
        """``(r_x, r_y)`` from the centre to the lowest point. [m]"""
        return contact_offset(theta, *self.profile)

    def with_mass(self, mass):
        """Same shape scaled in density so that its mass is ``mass`` [kg]."""
        return type(self)(**{**self._dimensions(), "density": self.density * np.asarray(mass) / self.mass})

    def _dimensions(self):
        raise NotImplementedError


def _check_positive(name, value, allow_zero=False):
    value = np.asarray(value, dtype=float)
    bad = ~np.isfinite(value) | ((value < 0) if allow_zero else (value <= 0))
    if np.any(bad):
        first = value[bad].flat[0] if value.ndim else float(value)
        bound = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name} must be a finite number {bound}, got {first}")
    return value


@dataclass(frozen=True)
class Capsule(Shape):
    """Cylinder of length ``length`` capped by two hemispheres of ``radius``.

    Mass properties of the solid (hemisphere centroid 3R/8 from its flat
    face, parallel-axis theorem); see the capsule formulas in the parry3d
    source ``mass_properties_capsule.rs`` or any rigid-body text.
    """

    length: float | np.ndarray = 0.0
    radius: float | np.ndarray = 0.0
    kind = "capsule"

    def __post_init__(self):
        length = _check_positive("length", self.length, allow_zero=True)
        radius = _check_positive("radius", self.radius)
        rho = _check_positive("density", self.density)
        m_cyl = rho * np.pi * radius ** 2 * length
        m_caps = rho * 4.0 / 3.0 * np.pi * radius ** 3
        inertia = (m_cyl * (3 * radius ** 2 + length ** 2) / 12
                   + m_caps * (2 * radius ** 2 / 5 + length ** 2 / 4 + 3 * length * radius / 8))
        self._set(half_long=length / 2, half_wide=np.zeros_like(length), round_long=radius,
                  round_wide=radius, mass=m_cyl + m_caps, inertia=inertia)

    def _dimensions(self):
        return {"length": self.length, "radius": self.radius}

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Capsule of overall length / diameter ``aspect_ratio`` (>= 1)."""
        aspect_ratio = np.asarray(aspect_ratio, dtype=float)
        if np.any(aspect_ratio < 1):
            raise ValueError(f"aspect_ratio of a capsule must be >= 1, got {np.min(aspect_ratio)}")
        radius = np.asarray(diameter, dtype=float) / 2
        return cls(density=density, length=(aspect_ratio - 1) * 2 * radius, radius=radius)


@dataclass(frozen=True)
class Sphere(Shape):
    """Solid sphere; ``I = 2/5 m R^2`` (standard tables)."""

    radius: float | np.ndarray = 0.0
    kind = "sphere"

    def __post_init__(self):
        radius = _check_positive("radius", self.radius)
        rho = _check_positive("density", self.density)
        mass = rho * 4.0 / 3.0 * np.pi * radius ** 3
        zero = np.zeros_like(radius)
        self._set(half_long=zero, half_wide=zero, round_long=radius, round_wide=radius,
                  mass=mass, inertia=0.4 * mass * radius ** 2)

    def _dimensions(self):
        return {"radius": self.radius}

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        if np.any(np.asarray(aspect_ratio) != 1):
            raise ValueError("aspect_ratio of a sphere must be 1")
        return cls(density=density, radius=np.asarray(diameter, dtype=float) / 2)


@dataclass(frozen=True)
class Spheroid(Shape):
    """Solid spheroid: full ``length`` along the axis, equatorial ``radius``.

    ``length > 2 radius`` is prolate (a rugby-ball pill), ``< 2 radius``
    oblate (a lentil). ``I = m (a^2 + b^2) / 5`` about a transverse axis
    (standard tables of moments of inertia).
    """

    length: float | np.ndarray = 0.0
    radius: float | np.ndarray = 0.0
    kind = "spheroid"

    def __post_init__(self):
        length = _check_positive("length", self.length)
        radius = _check_positive("radius", self.radius)
        rho = _check_positive("density", self.density)
        a = length / 2
        mass = rho * 4.0 / 3.0 * np.pi * a * radius ** 2
        zero = np.zeros_like(a)
        self._set(half_long=zero, half_wide=zero, round_long=a, round_wide=radius,
                  mass=mass, inertia=mass * (a ** 2 + radius ** 2) / 5)

    def _dimensions(self):
        return {"length": self.length, "radius": self.radius}

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        radius = np.asarray(diameter, dtype=float) / 2
        return cls(density=density, length=np.asarray(aspect_ratio, dtype=float) * 2 * radius, radius=radius)


@dataclass(frozen=True)
class Cylinder(Shape):
    """Flat-ended solid cylinder (tablet, rod, disc) of full ``length``.

    ``I = m (3 R^2 + H^2) / 12`` about a transverse axis through the centre
    (standard tables of moments of inertia). Contact is at a rim corner.
    """

    length: float | np.ndarray = 0.0
    radius: float | np.ndarray = 0.0
    kind = "cylinder"

    def __post_init__(self):
        length = _check_positive("length", self.length)
        radius = _check_positive("radius", self.radius)
        rho = _check_positive("density", self.density)
        mass = rho * np.pi * radius ** 2 * length
        zero = np.zeros_like(length)
        self._set(half_long=length / 2, half_wide=radius, round_long=zero, round_wide=zero,
                  mass=mass, inertia=mass * (3 * radius ** 2 + length ** 2) / 12)

    def _dimensions(self):
        return {"length": self.length, "radius": self.radius}

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        radius = np.asarray(diameter, dtype=float) / 2
        return cls(density=density, length=np.asarray(aspect_ratio, dtype=float) * 2 * radius, radius=radius)


SHAPES = {cls.kind: cls for cls in (Capsule, Sphere, Spheroid, Cylinder)}


def make_shape(kind, *, length=0.0, radius, density):
    """Build a shape by name from the batch-table dimensions.

    ``length`` is the cylindrical part for a capsule and the full length
    along the axis for a spheroid or cylinder; it is ignored for a sphere.
    """
    if kind not in SHAPES:
        raise ValueError(f"shape must be one of {', '.join(SHAPES)}, got {kind!r}")
    if kind == "sphere":
        return Sphere(density=density, radius=radius)
    return SHAPES[kind](density=density, length=length, radius=radius)


@dataclass(frozen=True)
class MixedShapes(Shape):
    """Bodies of different kinds in one array, for batches of mixed shapes.

    Built by :func:`make_shapes`; holds the profile and mass properties of
    each body as computed by its own class.
    """

    kinds: tuple = ()
    parts: tuple = ()
    kind = "mixed"

    def __post_init__(self):
        values = {name: np.concatenate([np.broadcast_to(getattr(p, name), np.shape(p.mass)).ravel()
                                        for p in self.parts]) if self.parts else np.zeros(0)
                  for name in ("half_long", "half_wide", "round_long", "round_wide", "mass", "inertia")}
        self._set(**values)


def make_shapes(kinds, length, radius, density):
    """One body per element from the batch-table columns, in input order.

    Returns a :class:`Shape` whose arrays follow the order of ``kinds``.
    """
    kinds = np.asarray(kinds, dtype=object)
    length, radius, density = (np.broadcast_to(np.asarray(v, dtype=float), kinds.shape) for v in (length, radius, density))
    order = []
    parts = []
    for kind in SHAPES:
        pick = np.flatnonzero(kinds == kind)
        if pick.size:
            parts.append(make_shape(kind, length=length[pick], radius=radius[pick], density=density[pick]))
            order.append(pick)
    unknown = set(kinds.tolist()) - set(SHAPES)
    if unknown:
        raise ValueError(f"shape must be one of {', '.join(SHAPES)}, got {sorted(map(str, unknown))[0]!r}")
    mixed = MixedShapes(density=1.0, kinds=tuple(SHAPES), parts=tuple(parts))
    if not parts:
        return mixed
    inverse = np.empty(kinds.size, dtype=np.int64)
    inverse[np.concatenate(order)] = np.arange(kinds.size)
    for name in ("half_long", "half_wide", "round_long", "round_wide", "mass", "inertia"):
        object.__setattr__(mixed, name, getattr(mixed, name)[inverse])
    return mixed
