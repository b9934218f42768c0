"""The benchmark population: the drops ``hopscape bench`` times.

Capsules under the energetic law with friction, 3 impacts; release angle
uniform 0-180 deg, spin uniform -150..150 rad/s, restitution 0.5-0.95,
friction 0-0.6, cylinder length / cap radius 0.5-6 with cap radius 3.5 mm,
density 1500 kg/m^3, centre release height 0.03-0.5 m, redrawn where the
body would start inside the floor.
"""
from __future__ import annotations

import numpy as np

from .drop import Contact, Release
from .geometry import depth
from .shapes import Capsule

CAP_RADIUS = 3.5e-3  # [m]
DENSITY = 1500.0  # [kg/m^3]
IMPACTS = 3


def population(n, seed=1):
    """``(shape, release, contact)`` for ``n`` benchmark drops."""
    rng = np.random.default_rng(seed)
    angle = rng.uniform(0.0, np.pi, n)
    spin = rng.uniform(-150.0, 150.0, n)
    restitution = rng.uniform(0.5, 0.95, n)
    friction = rng.uniform(0.0, 0.6, n)
    length = rng.uniform(0.5, 6.0, n) * CAP_RADIUS
    lowest_safe = depth(angle, length / 2, 0.0, CAP_RADIUS, CAP_RADIUS)
    height = rng.uniform(0.03, 0.5, n)
    inside = height <= lowest_safe
    while np.any(inside):
        height[inside] = rng.uniform(0.03, 0.5, inside.sum())
        inside = height <= lowest_safe
    shape = Capsule(length=length, radius=CAP_RADIUS, density=DENSITY)
    return shape, Release(height=height, angle=angle, spin=spin), Contact(restitution, friction, "energetic")
