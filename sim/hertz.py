"""Hertz contact of the body's struck point on a flat floor.

Where the body touches the floor, its surface has two principal radii of
curvature: ``rho_1`` in the plane of motion and ``rho_2`` across it (the
body is a solid of revolution about its axis). For the family of
:mod:`sim.shapes` (a rectangle swept by an ellipse of semi-axes ``a``
along the axis and ``b`` across, turned about the axis), at the axis angle
``theta`` with ``s = |sin theta|``, ``c = |cos theta|`` and the ellipse's
support ``E = sqrt(a^2 s^2 + b^2 c^2)``::

    rho_1 = a^2 b^2 / E^3          (an ellipse's radius of curvature
                                    against its normal's direction)
    rho_2 = B / c + b^2 / E        (the distance along the normal from the
                                    contact point to the axis; Meusnier)

so a cap of radius R gives ``rho_1 = rho_2 = R``, a spheroid's pole
``b^2 / a`` twice, and its equator ``a^2 / b`` and ``b``. A flat-ended
cylinder's rim is a sharp corner: it is given an edge radius
(:data:`RIM_EDGE_FRACTION` of the smaller of radius and half length unless
the user gives one), and its answers are only a guide, since a sharp rim
is not a Hertzian contact. A body lying exactly along its cylindrical
band or on its flat face touches along a line or an area: not Hertzian,
those impacts get no contact outputs (NaN).

The floor is flat, so the contact's radius is the body's; for a contact
with two radii Hertz's equivalent radius ``R_e = sqrt(rho_1 rho_2)`` is used
(Johnson 1985, section 4.2; the approximation for a mildly elliptical
contact, from memory).

References
----------
K. L. Johnson, *Contact Mechanics*, Cambridge University Press 1985,
ch. 4 (point contact) and ch. 11 (impact); docs/physics.md sections 7, 9.
"""
from __future__ import annotations

import numpy as np

from .geometry import flat_sign

#: Edge radius of a flat-ended cylinder's rim when none is given, as a
#: fraction of the smaller of its radius and half length: a pressed or
#: machined edge is rarely sharper (a documented choice, not a measurement).
RIM_EDGE_FRACTION = 0.05
#: Hertz's time of impact, ``t_c = 2.868 (m*^2 / (R* E*^2 v))^(1/5)``
#: (Johnson 1985, section 11.4). [-]
HERTZ_DURATION_FACTOR = 2.868

#: What strikes, by code: point contacts first (Hertzian), then line and area.
FEATURES = ("cap", "rim", "surface", "band", "face")
CAP, RIM, SURFACE, BAND, FACE = range(5)


def struck_feature(theta, profile):
    """Code of :data:`FEATURES` for the lowest point at ``theta``: ``band``
    where a body with a straight part lies exactly along it, ``face`` where
    a flat-faced body stands exactly on a face, otherwise the corner piece:
    ``cap`` (round ends on a straight part: capsules), ``rim`` (flat-faced
    bodies), ``surface`` (spheres, spheroids)."""
    return feature_at(flat_sign(np.sin(theta)), flat_sign(np.cos(theta)), profile)


def feature_at(along, across, profile):
    """:func:`struck_feature` from the signs ``along = flat_sign(sin theta)``,
    ``across = flat_sign(cos theta)`` of the struck piece."""
    half_long, half_wide, _, _ = (np.asarray(p, dtype=float) for p in profile)
    corner = np.where(half_wide > 0, RIM, np.where(half_long > 0, CAP, SURFACE))
    feature = np.where((half_wide > 0) & (across == 0), FACE, corner)
    return np.where((half_long > 0) & (along == 0), BAND, feature).astype(np.int8)


#: What a user is told when a sharp rim meets the contact model.
RIM_WARNING = ("a flat-ended cylinder's rim is a sharp edge, not a Hertzian contact: its contact outputs use an edge "
               "radius (rim_edge_radius, default 5% of the smaller of radius and half length) and are a guide only")


def rim_edge_default(profile):
    """Edge radius given to a sharp rim when the user gives none. [m]"""
    half_long, half_wide, _, _ = profile
    return RIM_EDGE_FRACTION * np.minimum(half_long, half_wide)


def principal_radii(theta, profile, edge_radius=None, sines=None):
    """``rho_1`` (in the plane of motion) and ``rho_2`` (across it) of the
    body's surface at its lowest point (module notes). [m]

    ``edge_radius`` rounds a sharp rim (a body whose round part is a
    point); default :func:`rim_edge_default`. Line and face contacts give
    ``inf``. ``sines``: ``(sin theta, cos theta)`` when already known.
    """
    half_long, half_wide, round_long, round_wide = (np.asarray(p, dtype=float) for p in profile)
    sharp = (round_long == 0) & (round_wide == 0)
    edge = rim_edge_default(profile) if edge_radius is None else np.asarray(edge_radius, dtype=float)
    a = np.where(sharp, edge, round_long)
    b = np.where(sharp, edge, round_wide)
    sin, cos = (np.sin(theta), np.cos(theta)) if sines is None else sines
    s, c = np.abs(sin), np.abs(cos)
    support = np.sqrt((a * s) ** 2 + (b * c) ** 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        rho_1 = a ** 2 * b ** 2 / support ** 3
        rho_2 = np.where(half_wide > 0, half_wide / c, 0.0) + b ** 2 / support
    feature = feature_at(flat_sign(sin), flat_sign(cos), profile)
    point = feature < BAND
    return np.where(point, rho_1, np.inf), np.where(point, rho_2, np.inf)


def equivalent_radius(rho_1, rho_2):
    """``R_e = sqrt(rho_1 rho_2)`` (Johnson 1985, section 4.2). [m]"""
    return np.sqrt(rho_1 * rho_2)


def hertz_indentation(effective_mass, speed, effective_modulus, radius):
    """Largest indentation of an undamped Hertz impact,
    ``(15 m* v^2 / (16 E* sqrt(R*)))^(2/5)`` (Johnson 1985, section 11.4). [m]"""
    return (15 * effective_mass * speed ** 2 / (16 * effective_modulus * np.sqrt(radius))) ** 0.4


def hertz_duration(effective_mass, speed, effective_modulus, radius):
    """Duration of an undamped Hertz impact,
    ``2.868 (m*^2 / (R* E*^2 v))^(1/5)`` (Johnson 1985, section 11.4). [s]"""
    return HERTZ_DURATION_FACTOR * (effective_mass ** 2 / (radius * effective_modulus ** 2 * speed)) ** 0.2


def hertz_force(indentation, effective_modulus, radius):
    """Hertz's force ``(4/3) E* sqrt(R*) delta^(3/2)`` (Johnson 1985, eq. 4.22). [N]"""
    return 4.0 / 3.0 * effective_modulus * np.sqrt(radius) * indentation ** 1.5


def hertz_peak_pressure(indentation, effective_modulus, radius):
    """Hertz's largest contact pressure at the indentation ``delta``:
    ``p0 = 3 F / (2 pi a^2) = (2 E* / pi) sqrt(delta / R*)`` with
    ``a = sqrt(R* delta)`` (Johnson 1985, eq. 4.23). [Pa]"""
    return 2.0 * effective_modulus / np.pi * np.sqrt(indentation / radius)
