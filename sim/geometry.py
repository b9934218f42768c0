"""Where the lowest point of a body is: its depth below the centre, the
contact offset, and the facts about the depth that the contact search, the
flight peaks, the impact and the pictures use.

Every body is the Minkowski sum of a rectangle (half-extents ``A`` =
``half_long`` along the axis, ``B`` = ``half_wide`` across) and an ellipse
(semi-axes ``a`` = ``round_long``, ``b`` = ``round_wide``), so its support
is the sum of the parts' supports and the depth of the lowest point at
axis angle ``theta`` is (docs/physics.md section 2)::

    d(theta) = A |sin theta| + B |cos theta| + E(theta),
    E(theta) = sqrt(a^2 sin^2 theta + b^2 cos^2 theta)   (the round part)

that is, the largest of four smooth pieces
``d_k = A s_k sin + B c_k cos + E``, one per rectangle corner
``(s_k, c_k)`` (:data:`CORNERS`). The offset from the centre to the lowest
point is ``r = (-d'(theta), -d(theta))`` (envelope theorem). The body is
centrally symmetric, so its top point stands ``d(theta)`` above the centre.

Functions taking ``theta`` use NumPy's ``sin``/``cos``; those taking
``s, c`` or an ``angle`` with a ``profile`` are the kernels' own
(:func:`sim._vector.sincos`), written once here for the search, the peaks
and the impact.
"""
from __future__ import annotations

import numpy as np

from ._vector import pick, sincos

#: The four rectangle corners (along-axis sign, across-axis sign).
CORNERS = np.array([(1.0, 1.0), (-1.0, 1.0), (1.0, -1.0), (-1.0, -1.0)])

#: Below this |sin| or |cos| the rectangle part counts as exactly flat on the
#: floor (both ends, or the whole flat face, touch at once). ``cos(pi/2)`` is
#: 6e-17 in floating point; a real tilt is far above 1e-12 rad.
FLAT_TOLERANCE = 1e-12


def flat_sign(x):
    """``sign(x)``, 0 where ``|x|`` is below :data:`FLAT_TOLERANCE`."""
    return np.where(np.abs(x) < FLAT_TOLERANCE, 0.0, np.sign(x))


def round_part(s, c, round_long, round_wide):
    """Support ``E = sqrt(a^2 s^2 + b^2 c^2)`` of the ellipse part in the
    body-frame direction ``(s, c)`` (along, across the axis; a unit
    vector): for the depth, ``s = sin``, ``c = cos`` of the axis angle. [m]"""
    return np.sqrt((round_long * s) ** 2 + (round_wide * c) ** 2)


def round_support(s, c, round_long, round_wide, rounded):
    """Support ``E`` of the ellipse part and ``dE/dtheta``. [m]

    Where the two semi-axes are equal (``rounded`` False) ``E`` is exactly
    the radius; the chunk-wide shortcut gives the same bits as the general
    formula does for those bodies, so results never depend on chunking.
    """
    if not np.any(rounded):
        return round_long, 0.0
    ellipse = round_part(s, c, round_long, round_wide)
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = (round_long ** 2 - round_wide ** 2) * s * c / ellipse
    slope = np.where(rounded & (ellipse > 0), slope, 0.0)
    return np.where(rounded, ellipse, round_long), slope


def depth(theta, half_long, half_wide, round_long, round_wide):
    """Depth of the lowest point below the centre of mass.

    Parameters
    ----------
    theta : array_like
        Angle from +x to the symmetry axis, counter-clockwise. [rad]
    half_long, half_wide : array_like
        Half-extents of the rectangle part along and across the axis. [m]
    round_long, round_wide : array_like
        Semi-axes of the ellipse part along and across the axis. [m]

    Returns
    -------
    numpy.ndarray
        Depth ``d(theta)`` of the lowest point below the centre. [m]
    """
    s, c = np.sin(theta), np.cos(theta)
    return half_long * np.abs(s) + half_wide * np.abs(c) + round_part(s, c, round_long, round_wide)


def corner_offset(s, c, profile, along, across, rounded):
    """Offset ``(r_x, r_y)`` from the centre to the lowest point of the
    piece of corner ``(along, across)`` (:data:`CORNERS`; their means where
    several pieces touch at once) at the axis angle whose sine and cosine
    are ``s``, ``c``: ``r = (-d_k', -d_k)``. [m]

    ``rounded`` says where the round part is an ellipse
    (:func:`round_support`).
    """
    half_long, half_wide, round_long, round_wide = profile
    ellipse, ellipse_slope = round_support(s, c, round_long, round_wide, rounded)
    r_x = -(half_long * c * along - half_wide * s * across + ellipse_slope)
    r_y = -(half_long * s * along + half_wide * c * across + ellipse)
    return r_x, r_y


def contact_offset(theta, half_long, half_wide, round_long, round_wide):
    """Offset ``(r_x, r_y)`` from the centre to the lowest point.

    ``r = (-d'(theta), -d(theta))`` (envelope theorem, see the module notes).
    Where the rectangle part lies exactly flat (two corners equally low) the
    offset is the midpoint of the touching edge, which is what a symmetric
    two-point impact reduces to.

    Returns
    -------
    tuple of numpy.ndarray
        ``r_x`` and ``r_y``. [m]
    """
    s, c = np.sin(theta), np.cos(theta)
    return corner_offset(s, c, (half_long, half_wide, round_long, round_wide), flat_sign(s), flat_sign(c), True)


def contact_offset_at(theta, profile, along, across):
    """:func:`corner_offset` at the pieces that strike (``along``,
    ``across``: :func:`sim.search.next_contact`), with the kernels'
    :func:`sim._vector.sincos`. [m]

    A ``sin`` or ``cos`` below :data:`FLAT_TOLERANCE` counts as 0
    (``cos(pi/2)`` is 6e-17): a body released exactly upright or flat
    lands exactly so. The round part's support is exactly the radius for a
    circle (capsules, spheres and cylinders skip the square root).
    """
    s, c = (v * (np.abs(v) >= FLAT_TOLERANCE) for v in sincos(theta))
    return corner_offset(s, c, profile, along, across, profile[2] != profile[3])


def depth_terms(angle, profile, rounded, rounded_any, four, derivatives=True):
    """Depth ``d`` of the lowest point and, with ``derivatives``, ``d'`` and
    ``d''`` (one-sided mean at the corners) at ``angle``, with
    :func:`sim._vector.sincos`. [m]

    ``rounded``: where the round part is an ellipse; ``rounded_any`` and
    ``four`` (any flat face) say which parts the batch has at all.
    """
    half_long, half_wide, round_long, round_wide = profile
    s, c = sincos(angle)
    sa = np.abs(s)
    if rounded_any:
        ellipse, ellipse_slope = round_support(s, c, round_long, round_wide, rounded)
    else:
        ellipse, ellipse_slope = round_long, 0.0
    rect = half_long * sa + half_wide * np.abs(c) if four else half_long * sa
    d = rect + ellipse
    if not derivatives:
        return d
    d_prime = half_long * np.sign(s) * c + ellipse_slope
    if four:
        d_prime = d_prime - half_wide * np.sign(c) * s
    d_second = -rect
    if rounded_any:
        stretch = round_long ** 2 - round_wide ** 2
        with np.errstate(invalid="ignore", divide="ignore"):
            ellipse_second = (stretch * (c * c - s * s) - ellipse_slope * ellipse_slope) / ellipse
        d_second = d_second + pick(rounded & (ellipse > 0), np.nan_to_num(ellipse_second), 0.0)
    return d, d_prime, d_second


def curvature_bound(half_long, half_wide, round_long, round_wide):
    """Bound ``D2 >= |d_k''(theta)|`` on every smooth piece of the depth:
    ``sqrt(A^2 + B^2)`` for the corner part plus the largest radius of
    curvature less the smallest support of the ellipse,
    ``max(a, b)^2 / min(a, b) - min(a, b)``. [m]"""
    big = np.maximum(round_long, round_wide)
    small = np.minimum(round_long, round_wide)
    with np.errstate(divide="ignore", invalid="ignore"):
        ellipse = np.where(small > 0, big ** 2 / small - small, 0.0)
    return np.hypot(half_long, half_wide) + ellipse


def depth_range(half_long, half_wide, round_long, round_wide):
    """Lower bound of the smallest and upper bound of the largest depth. [m]

    Exact for the capsule, sphere, spheroid and cylinder.
    """
    low = np.minimum(half_long, half_wide) + np.minimum(round_long, round_wide)
    high = np.hypot(half_long, half_wide) + np.maximum(round_long, round_wide)
    return low, high


def breakpoints(profile, four):
    """Angles in [0, pi) where the depth has its corners and turning points,
    and the exact depth there: flat (0), the rectangle's diagonal (theta*),
    upright (pi/2), the other diagonal (pi - theta*); without a flat face
    (``half_wide`` 0 in the whole batch) the diagonals are upright, so only
    flat and upright remain. Between two consecutive breakpoints both parts
    of the depth are monotone."""
    half_long, half_wide, round_long, round_wide = profile
    flat, upright = half_wide + round_wide, half_long + round_long
    if not four:
        return [0.0, 0.5 * np.pi], [flat, upright]
    hyp = np.hypot(half_long, half_wide)
    diagonal = np.arctan2(half_long, half_wide)  # where A|sin| + B|cos| peaks
    with np.errstate(invalid="ignore", divide="ignore"):
        d_diag = hyp + np.hypot(round_long * half_long, round_wide * half_wide) / np.where(hyp > 0, hyp, 1.0)
    d_diag = np.where(hyp > 0, d_diag, flat)
    return [0.0, diagonal, 0.5 * np.pi, np.pi - diagonal], [flat, d_diag, upright, d_diag]


def piece_slopes(profile, four):
    """Per kind of piece (as :func:`breakpoints` orders them): the depth's
    slope ``d'`` at the piece's first and last angle, from inside the piece,
    and the piece's angular span. Exact: the ellipse part has no slope flat
    or upright, and its slope on the diagonal is added."""
    half_long, half_wide, round_long, round_wide = profile
    if not four:
        half = 0.5 * np.pi
        return [(half_long, 0.0, half), (0.0, -half_long, half)]
    diagonal = np.arctan2(half_long, half_wide)
    rest = 0.5 * np.pi - diagonal
    # E'(theta*) = (a^2 - b^2) sin cos / E with sin, cos = A, B over hypot(A, B)
    hyp2 = half_long ** 2 + half_wide ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        diagonal_slope = ((round_long ** 2 - round_wide ** 2) * half_long * half_wide
              / (hyp2 * np.hypot(round_long * half_long, round_wide * half_wide) / np.sqrt(hyp2)))
    diagonal_slope = np.nan_to_num(diagonal_slope, nan=0.0, posinf=0.0, neginf=0.0)
    return [(half_long, diagonal_slope, diagonal), (diagonal_slope, -half_wide, rest),
            (half_wide, -diagonal_slope, rest), (-diagonal_slope, -half_long, diagonal)]


def outline(profile, points=90):
    """Closed outline of a body in its own frame (x along the axis), the
    rectangle part swept by the ellipse: for each outward normal ``n`` the
    boundary point of a Minkowski sum is the sum of the parts' support
    points, the corner ``(A sign n_x, B sign n_y)`` and the ellipse's
    ``(a^2 n_x, b^2 n_y) / E(n)`` (:func:`round_part`). [m]"""
    half_long, half_wide, round_long, round_wide = profile
    phi = np.linspace(0, 2 * np.pi, points)
    n_x, n_y = np.cos(phi), np.sin(phi)
    support = round_part(n_x, n_y, round_long, round_wide)
    with np.errstate(invalid="ignore", divide="ignore"):
        ellipse_x = np.where(support > 0, round_long ** 2 * n_x / support, 0.0)
        ellipse_y = np.where(support > 0, round_wide ** 2 * n_y / support, 0.0)
    return half_long * flat_sign(n_x) + ellipse_x, half_wide * flat_sign(n_y) + ellipse_y
