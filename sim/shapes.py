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
from typing import ClassVar

import numpy as np

from .geometry import contact_offset, depth
from .limits import DENSITY, POSITIVE_SIZE, SIZE_OR_ZERO, Interval


@dataclass(frozen=True)
class Dimension:
    """One dimension a shape is built from, as its class declares it.

    Parameters
    ----------
    name : str
        Keyword of the shape's constructor and batch-table column
        (``"length"``, ``"radius"``).
    meaning : str
        What it measures on this shape, for help texts and messages.
    allowed : Interval
        What the model can compute (errors outside it).
    plausible : tuple of float
        ``(low, high)`` a real part or rig lies in [m]; outside it a value
        is probably typed in the wrong unit (warnings, not errors).
    required : bool
        False when the shape has a default for it: then None, or NaN in an
        element, means "not given".
    """

    name: str
    meaning: str
    allowed: Interval = POSITIVE_SIZE
    plausible: tuple = (5e-5, 0.25)
    required: bool = True

    def checked(self, value):
        """``value`` as a float array (or None where an optional dimension
        is not given); ValueError for a value outside :attr:`allowed`."""
        if not self.required:
            if value is None:
                return None
            value = np.asarray(value, dtype=float)
            self.allowed.check(self.name, value[~np.isnan(value)])
            return value
        return self.allowed.check(self.name, value)


#: Every shape class that can be named, by its ``kind``; filled as the
#: classes are defined (see :meth:`Shape.__init_subclass__`).
SHAPES = {}


@dataclass(frozen=True)
class Shape:
    """Base of all shapes: four profile numbers plus mass properties.

    Subclasses set the profile in ``__post_init__`` from their own
    dimensions. Dimensions may be arrays (one body per element).

    A subclass declares, once, everything the other layers read:

    ``kind``
        The name in study files, batch tables and the command line.
    ``dimensions``
        Its :class:`Dimension` s (constructor keywords, meaning, allowed and
        plausible ranges); ``length`` among them means a study may give
        ``length`` or ``aspect_ratio``.
    ``aspect_ratio_allowed``
        The overall length / diameter it can have.
    ``from_aspect_ratio``
        The rule from aspect ratio and diameter to its dimensions.
    """

    density: float | np.ndarray
    half_long: np.ndarray = field(init=False, repr=False)
    half_wide: np.ndarray = field(init=False, repr=False)
    round_long: np.ndarray = field(init=False, repr=False)
    round_wide: np.ndarray = field(init=False, repr=False)
    mass: np.ndarray = field(init=False, repr=False)
    inertia: np.ndarray = field(init=False, repr=False)

    kind: ClassVar[str] = "shape"
    dimensions: ClassVar[tuple] = ()
    aspect_ratio_allowed: ClassVar[Interval] = Interval(0.0, float("inf"), closed="right")
    #: Name of the feature that strikes, by the impact's ``end`` code (+1 the
    #: end the axis points to, -1 the other end, 0 the middle: lying flat).
    struck_names: ClassVar[dict] = {1: "end +", -1: "end -", 0: "flat"}
    #: Listed in :data:`SHAPES` (False for helper classes such as mixed batches).
    named: ClassVar[bool] = True

    def __init_subclass__(cls, **kwargs):
        super().__init_subclass__(**kwargs)
        if cls.named:
            SHAPES[cls.kind] = cls

    @classmethod
    def has_length(cls):
        """True when the shape has a length of its own besides its radius."""
        return any(d.name == "length" for d in cls.dimensions)

    @classmethod
    def dimension(cls, name):
        """The :class:`Dimension` called ``name``."""
        return next(d for d in cls.dimensions if d.name == name)

    @classmethod
    def from_dimensions(cls, *, density, **sizes):
        """Build from keyword sizes, ignoring the ones this shape has not
        (a sphere takes no ``length``); an optional dimension may be left out."""
        return cls(density=density, **{d.name: sizes[d.name] for d in cls.dimensions
                                        if d.required or sizes.get(d.name) is not None})

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Shape of overall length / diameter ``aspect_ratio`` and ``diameter`` [m]."""
        raise NotImplementedError

    @classmethod
    def from_diameter(cls, diameter, density, *, aspect_ratio=None, length=None):
        """Build from a diameter [m] and either an aspect ratio or the length
        [m] (as :attr:`dimensions` defines it); the way study files describe
        a body."""
        if aspect_ratio is not None:
            return cls.from_aspect_ratio(aspect_ratio, diameter, density)
        return cls.from_dimensions(density=density, length=length, radius=np.asarray(diameter, dtype=float) / 2)

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
        sizes = {d.name: getattr(self, d.name) for d in self.dimensions}
        return type(self)(**sizes, density=self.density * np.asarray(mass) / self.mass)


def _checked(shape):
    """The shape's declared dimensions and its density, checked, as arrays."""
    sizes = {d.name: d.checked(getattr(shape, d.name)) for d in shape.dimensions}
    return sizes, DENSITY.check("density", shape.density)


def _check_aspect_ratio(cls, aspect_ratio):
    return cls.aspect_ratio_allowed.check(f"aspect_ratio of a {cls.kind}", aspect_ratio)


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
    dimensions = (Dimension("length", "cylindrical part between the caps", SIZE_OR_ZERO, (0.0, 0.5)),
                  Dimension("radius", "cap radius"))
    aspect_ratio_allowed = Interval(1.0, float("inf"))
    struck_names = {1: "cap +", -1: "cap -", 0: "side"}

    def __post_init__(self):
        sizes, rho = _checked(self)
        length, radius = sizes["length"], sizes["radius"]
        m_cyl = rho * np.pi * radius ** 2 * length
        m_caps = rho * 4.0 / 3.0 * np.pi * radius ** 3
        inertia = (m_cyl * (3 * radius ** 2 + length ** 2) / 12
                   + m_caps * (2 * radius ** 2 / 5 + length ** 2 / 4 + 3 * length * radius / 8))
        self._set(half_long=length / 2, half_wide=np.zeros_like(length), round_long=radius,
                  round_wide=radius, mass=m_cyl + m_caps, inertia=inertia)

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Capsule of overall length / diameter ``aspect_ratio`` (>= 1)."""
        aspect_ratio = _check_aspect_ratio(cls, aspect_ratio)
        radius = np.asarray(diameter, dtype=float) / 2
        return cls(density=density, length=(aspect_ratio - 1) * 2 * radius, radius=radius)


@dataclass(frozen=True)
class Sphere(Shape):
    """Solid sphere; ``I = 2/5 m R^2`` (standard tables)."""

    radius: float | np.ndarray = 0.0
    kind = "sphere"
    dimensions = (Dimension("radius", "radius"),)
    aspect_ratio_allowed = Interval(1.0, 1.0)
    struck_names = dict.fromkeys((1, -1, 0), "surface")

    def __post_init__(self):
        sizes, rho = _checked(self)
        radius = sizes["radius"]
        mass = rho * 4.0 / 3.0 * np.pi * radius ** 3
        zero = np.zeros_like(radius)
        self._set(half_long=zero, half_wide=zero, round_long=radius, round_wide=radius,
                  mass=mass, inertia=0.4 * mass * radius ** 2)

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Sphere of ``diameter``; the aspect ratio must be 1."""
        _check_aspect_ratio(cls, aspect_ratio)
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
    dimensions = (Dimension("length", "full length along the axis", plausible=(5e-5, 0.5)),
                  Dimension("radius", "equatorial radius"))
    struck_names = dict.fromkeys((1, -1, 0), "surface")

    def __post_init__(self):
        sizes, rho = _checked(self)
        a, radius = sizes["length"] / 2, sizes["radius"]
        mass = rho * 4.0 / 3.0 * np.pi * a * radius ** 2
        zero = np.zeros_like(a)
        self._set(half_long=zero, half_wide=zero, round_long=a, round_wide=radius,
                  mass=mass, inertia=mass * (a ** 2 + radius ** 2) / 5)

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Spheroid of full length ``aspect_ratio * diameter``."""
        return _full_length_from_aspect_ratio(cls, aspect_ratio, diameter, density)


@dataclass(frozen=True)
class Cylinder(Shape):
    """Flat-ended solid cylinder (tablet, rod, disc) of full ``length``.

    ``I = m (3 R^2 + H^2) / 12`` about a transverse axis through the centre
    (standard tables of moments of inertia). Contact is at a rim corner.
    """

    length: float | np.ndarray = 0.0
    radius: float | np.ndarray = 0.0
    kind = "cylinder"
    dimensions = (Dimension("length", "full length along the axis", plausible=(5e-5, 0.5)),
                  Dimension("radius", "radius"))
    struck_names = {1: "rim +", -1: "rim -", 0: "flat face"}

    def __post_init__(self):
        sizes, rho = _checked(self)
        length, radius = sizes["length"], sizes["radius"]
        mass = rho * np.pi * radius ** 2 * length
        zero = np.zeros_like(length)
        self._set(half_long=length / 2, half_wide=radius, round_long=zero, round_wide=zero,
                  mass=mass, inertia=mass * (3 * radius ** 2 + length ** 2) / 12)

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Cylinder of full length ``aspect_ratio * diameter``."""
        return _full_length_from_aspect_ratio(cls, aspect_ratio, diameter, density)


#: Gauss-Legendre nodes and weights on [0, pi/2] for the rounded rim's
#: integrals: the integrands are smooth trigonometric polynomials there, and
#: 24 nodes integrate them to rounding (checked against the closed form of
#: the volume in the tests).
_RIM_NODES, _RIM_WEIGHTS = np.polynomial.legendre.leggauss(24)
_RIM_NODES, _RIM_WEIGHTS = (_RIM_NODES + 1) * np.pi / 4, _RIM_WEIGHTS * np.pi / 4


@dataclass(frozen=True)
class RoundedTablet(Shape):
    """Flat-faced tablet (or disc, or short rod) whose rim is rounded with
    radius ``edge``: in its plane a rectangle plus a disc of radius ``edge``.

    ``edge`` = 0 is the flat-ended :class:`Cylinder`; ``edge`` = ``radius``
    = ``length / 2`` is a sphere. Mass and transverse moment are integrals
    over thin discs along the axis (a disc of radius r at height z adds
    ``pi r^2 dz`` of volume and ``pi r^2 (r^2 / 4 + z^2) dz`` of moment;
    standard tables: a thin disc's moment about a diameter is m r^2 / 4,
    plus the parallel-axis term); over the rounded rim, with
    ``z = c + edge sin(phi)`` and ``r = b + edge cos(phi)``, they are smooth
    in ``phi`` and are taken by Gauss-Legendre quadrature.
    """

    length: float | np.ndarray = 0.0
    radius: float | np.ndarray = 0.0
    edge: float | np.ndarray | None = None
    kind = "rounded_tablet"
    dimensions = (Dimension("length", "full thickness along the axis", plausible=(5e-5, 0.5)),
                  Dimension("radius", "outer radius"),
                  Dimension("edge", "radius of the rounded rim", SIZE_OR_ZERO, (0.0, 0.1), required=False))
    struck_names = {1: "rim +", -1: "rim -", 0: "flat face"}
    #: rim rounding of a body described by aspect ratio or diameter alone,
    #: as a fraction of the smaller of radius and half length
    EDGE_FRACTION = 0.25

    def __post_init__(self):
        sizes, rho = _checked(self)
        length, radius, edge = sizes["length"], sizes["radius"], sizes["edge"]
        default = self.EDGE_FRACTION * np.minimum(radius, length / 2)
        edge = default if edge is None else np.where(np.isnan(edge), default, edge)
        too_round = edge > np.minimum(radius, length / 2) * (1 + 1e-12)
        if np.any(too_round):
            raise ValueError(f"edge of a {self.kind} must be <= its radius and half its length, got "
                             f"{np.asarray(edge)[too_round].flat[0] if np.ndim(edge) else float(edge)}")
        c, b = length / 2 - edge, radius - edge
        # the straight band |z| <= c: a cylinder of radius R
        volume = np.pi * radius ** 2 * 2 * c
        moment = np.pi * radius ** 2 * 2 * c * (radius ** 2 / 4) + np.pi * radius ** 2 * (2 * c) ** 3 / 12
        # the two rounded rims, z = +-(c + edge sin phi)
        phi = _RIM_NODES.reshape((-1,) + (1,) * np.ndim(c))
        w = _RIM_WEIGHTS.reshape(phi.shape)
        r = b + edge * np.cos(phi)
        z = c + edge * np.sin(phi)
        dz = edge * np.cos(phi)
        volume = volume + 2 * np.pi * np.sum(w * r ** 2 * dz, axis=0)
        moment = moment + 2 * np.pi * np.sum(w * r ** 2 * (r ** 2 / 4 + z ** 2) * dz, axis=0)
        self._set(half_long=c, half_wide=b, round_long=edge, round_wide=edge,
                  mass=rho * volume, inertia=rho * moment)

    @classmethod
    def from_aspect_ratio(cls, aspect_ratio, diameter, density):
        """Tablet of full length ``aspect_ratio * diameter``, its rim rounded
        by :attr:`EDGE_FRACTION` of the smaller of radius and half length."""
        return _full_length_from_aspect_ratio(cls, aspect_ratio, diameter, density)


def _full_length_from_aspect_ratio(cls, aspect_ratio, diameter, density):
    aspect_ratio = _check_aspect_ratio(cls, aspect_ratio)
    radius = np.asarray(diameter, dtype=float) / 2
    return cls(density=density, length=aspect_ratio * 2 * radius, radius=radius)


def make_shape(kind, *, length=0.0, radius, density, **sizes):
    """Build a shape by name from the batch-table dimensions.

    ``length`` is what the shape declares it to be (the cylindrical part for
    a capsule, the full length along the axis for a spheroid or cylinder);
    sizes a shape does not declare (a sphere's length) are ignored.
    """
    if kind not in SHAPES:
        raise ValueError(f"shape must be one of {', '.join(SHAPES)}, got {kind!r}")
    return SHAPES[kind].from_dimensions(density=density, length=length, radius=radius, **sizes)


@dataclass(frozen=True)
class MixedShapes(Shape):
    """Bodies of different kinds in one array, for batches of mixed shapes.

    Built by :func:`make_shapes`; holds the profile and mass properties of
    each body as computed by its own class.
    """

    kinds: tuple = ()
    parts: tuple = ()
    kind = "mixed"
    named = False

    def __post_init__(self):
        values = {name: np.concatenate([np.broadcast_to(getattr(p, name), np.shape(p.mass)).ravel()
                                        for p in self.parts]) if self.parts else np.zeros(0)
                  for name in ("half_long", "half_wide", "round_long", "round_wide", "mass", "inertia")}
        self._set(**values)


def make_shapes(kinds, length, radius, density, **sizes):
    """One body per element from the batch-table columns, in input order.

    ``sizes`` holds the columns of further dimensions some shapes declare.
    Returns a :class:`Shape` whose arrays follow the order of ``kinds``.
    """
    kinds = np.asarray(kinds, dtype=object)
    columns = {name: np.broadcast_to(np.asarray(v, dtype=float), kinds.shape)
               for name, v in dict(sizes, length=length, radius=radius, density=density).items()}
    order = []
    parts = []
    for kind in SHAPES:
        pick = np.flatnonzero(kinds == kind)
        if pick.size:
            parts.append(make_shape(kind, **{name: v[pick] for name, v in columns.items()}))
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
