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
from hopscape.sim.limits import FRICTION, REFERENCE_SPEED, RESTITUTION, SPEED_EXPONENT


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
    "speed_exponent": ("-, p of restitution = restitution x (normal impact speed / reference_speed)^-p, "
                       + SPEED_EXPONENT.describe() + " (about 1/4 for tablets; 0: the same at every speed)", 0.0),
    "reference_speed": ("m/s, normal impact speed at which the restitution is the restitution column, "
                        + REFERENCE_SPEED.describe(), 1.0),
}
#: Columns of the contact model (all optional: without materials the
#: contact outputs are empty), read by :mod:`explore.contact_inputs`.
CONTACT_COLUMNS = {
    "body_material": "name in the materials table (hopscape.sim.materials); empty: give body_modulus and "
                     "body_poisson, or neither side for no contact outputs",
    "floor_material": "name in the materials table, as body_material",
    "body_modulus": "Pa, Young's modulus of the body (overrides body_material's)",
    "body_poisson": "-, Poisson's ratio of the body (overrides body_material's)",
    "floor_modulus": "Pa, Young's modulus of the floor",
    "floor_poisson": "-, Poisson's ratio of the floor",
    "rim_edge_radius": "m, edge radius of a flat-ended cylinder's sharp rim for the contact model (default 5% of "
                       "the smaller of radius and half length; a rim is not a Hertzian contact: a guide only)",
    "breakage_f_mat": "kg/(J m), f_Mat of the Vogel & Peukert breakage master curve",
    "breakage_w_min": "J/kg, W_m,min of the Vogel & Peukert breakage master curve",
}
INPUT_COLUMNS.update({name: (words, "" if name.endswith("_material") else np.nan)
                      for name, words in CONTACT_COLUMNS.items()})
# every further dimension a shape declares gets a column of its own,
# optional (an empty cell or no column: the shape's default)
INPUT_COLUMNS.update({d.name: ("m; " + per_shape(d.name), np.nan) for cls in sim.SHAPES.values()
                      for d in cls.dimensions if d.name not in INPUT_COLUMNS})
#: Dimensions some shape declares, in column order.
DIMENSIONS = tuple(dict.fromkeys(d.name for cls in sim.SHAPES.values() for d in cls.dimensions))
#: Columns read as numbers for every row; the shapes' own dimensions
#: (length, radius) are checked per shape, as each shape declares them.
NUMBERS = ("density", "height", "angle", "spin", "vx", "vy", "restitution", "friction", "floor_angle",
           "speed_exponent", "reference_speed")

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
    # the contact model (docs/physics.md section 9): empty without materials
    # and for line or face contacts (not Hertzian)
    "struck": "cap | rim | surface | band | face: the feature that struck",
    "normal_speed": "m/s, normal approach speed of the contact point",
    "tangential_speed": "m/s, sliding speed of the contact point at first touch",
    "energy_lost": "J, kinetic energy lost in the impact",
    "restitution_used": "-, this impact's restitution (after the speed law)",
    "contact_time": "s, duration of the compliant Hertz contact",
    "peak_force": "N, largest normal contact force",
    "indentation": "m, largest indentation",
    "peak_pressure": "Pa, Hertz's largest contact pressure",
    "breakage_probability": "-, Vogel & Peukert master curve for this impact alone (needs breakage_f_mat, "
                            "breakage_w_min)",
}
