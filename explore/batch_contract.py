"""The batch table's columns: the contract other programs read.

``hopscape batch`` reads one row per drop with the columns of
:data:`INPUT_COLUMNS` and writes one row per drop and impact with those of
:data:`OUTPUT_COLUMNS`; their names stay as they are. A light module of its
own, so that the command line can show the columns in its help without
importing pandas.
"""
from __future__ import annotations

import numpy as np

from hopscape import sim
from hopscape.sim.impact import LAWS
from hopscape.sim.limits import FRICTION, RESTITUTION


def per_shape(dimension, missing="ignored"):
    """``capsule: cap radius; sphere: radius; ...`` from the shapes' declarations
    (``missing``, or left out when None, for shapes without it)."""
    return "; ".join(f"{kind}: {cls.dimension(dimension).meaning}" if any(d.name == dimension for d in cls.dimensions)
                     else f"{kind}: {missing}" for kind, cls in sim.SHAPES.items()
                     if missing is not None or any(d.name == dimension for d in cls.dimensions))


#: Input columns, their units, and default values (None: required).
INPUT_COLUMNS = {
    "shape": (" | ".join(sim.SHAPES), None),
    "length": ("m; " + per_shape("length"), 0.0),
    "radius": ("m; " + per_shape("radius"), None),
    "density": ("kg/m^3", None),
    "height": ("m, release height of the centre of mass", None),
    "angle": ("deg, counter-clockwise from +x to the axis", None),
    "spin": ("rad/s, counter-clockwise positive", 0.0),
    "vx": ("m/s", 0.0),
    "vy": ("m/s", 0.0),
    "restitution": ("-, " + RESTITUTION.describe(), None),
    "friction": ("-, " + FRICTION.describe(), None),
    "law": (" | ".join(LAWS), None),
    "floor_angle": ("deg, floor inclination, positive where the floor falls towards +x; height, angle, vx and vy "
                    "are then in floor coordinates (height normal to the floor)", 0.0),
}
# every further dimension a shape declares gets a column of its own,
# optional (an empty cell or no column: the shape's default)
INPUT_COLUMNS.update({d.name: ("m; " + per_shape(d.name), np.nan) for cls in sim.SHAPES.values()
                      for d in cls.dimensions if d.name not in INPUT_COLUMNS})
#: Dimensions some shape declares, in column order.
DIMENSIONS = tuple(dict.fromkeys(d.name for cls in sim.SHAPES.values() for d in cls.dimensions))
#: Columns read as numbers for every row; the shapes' own dimensions
#: (length, radius) are checked per shape, as each shape declares them.
NUMBERS = ("density", "height", "angle", "spin", "vx", "vy", "restitution", "friction", "floor_angle")

#: Output columns (one row per drop and impact) and their units.
OUTPUT_COLUMNS = {
    "drop": "0-based input row",
    "impact": "1-based",
    "time": "s since release",
    "angle": "deg at impact, wrapped to [-180, 180)",
    "vx": "m/s just after", "vy": "m/s just after", "spin": "rad/s just after",
    "impulse_normal": "N s", "impulse_tangential": "N s",
    "energy_before": "J", "energy_after": "J",
    "peak_centre": "m", "peak_bottom": "m",
    "peak_top": "m", "flight": "s, flight after this impact",
    "x": "m, centre at impact", "y": "m, centre at impact",
    "end": "+1 axis end, -1 other end, 0 middle",
    "slip": "slip | stick | reversed",
    "energy_gain": "True where the impact created energy (Newton law)",
    "bounce": "1-based visible bounce this impact belongs to (empty: none, the body stayed in contact)",
    "status": "why the drop stopped: impacts | settled | contact | could_vault | failed (README, 'Batch tables')",
    "error": "why the row could not be simulated (empty when it ran)",
}
