"""The quantities a study can fix, sweep or draw, declared once.

Each declaration gives the section of the study file it lives in, its unit,
the words for axis labels and reports, and its allowed range. The ranges
that are physics (restitution in [0, 1]) come from :mod:`sim.limits`, so a
study file, the command line and a batch table word them alike; the others
are the limits of a drop rig this tool is built for. Everything else (the
study schema's range checks, result-table column names, axis labels, the
truncation of ``normal`` draws) is built from here.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hopscape.sim.limits import RESTITUTION, SPEED_EXPONENT, Interval


@dataclass(frozen=True)
class QuantitySpec:
    """One quantity of a study.

    Parameters
    ----------
    name : str
        Key in the study file (``"angle"``).
    section : str
        Section of the study file that holds it (``"release"``).
    unit : str
        Unit in study files and tables (``"deg"``); ``"-"`` for none.
    text : str
        Words for labels and reports (``"release angle"``).
    allowed : Interval
        Range every value and every distribution's support must lie in.
    """

    name: str
    section: str
    unit: str
    text: str
    allowed: Interval

    @property
    def column(self):
        """Column name in result tables, with the unit (``angle_deg``)."""
        if self.unit == "-":
            return self.name
        return f"{self.name}_{self.unit.replace('/', '_').replace('^', '')}"

    @property
    def label(self):
        """Axis label with unit, e.g. ``release angle [deg]``."""
        return f"{self.text} [{self.unit}]"


def _rig(low, high, unit):
    return Interval(low, high, unit=unit)


#: In study-file order; this order is also the column order of stage tables.
QUANTITIES = {spec.name: spec for spec in (
    QuantitySpec("aspect_ratio", "body", "-", "aspect ratio (overall length / diameter)", _rig(0.05, 50.0, "-")),
    QuantitySpec("length", "body", "m", "length", _rig(0.0, 5.0, "m")),
    QuantitySpec("diameter", "body", "m", "diameter", _rig(1e-5, 2.0, "m")),
    QuantitySpec("density", "body", "kg/m^3", "density", _rig(1.0, 30000.0, "kg/m^3")),
    QuantitySpec("restitution", "contact", "-", "restitution", RESTITUTION),
    QuantitySpec("friction", "contact", "-", "friction coefficient", _rig(0.0, 5.0, "-")),
    # e = restitution (v_n / reference_speed)^-p; absent: the same at every speed
    QuantitySpec("speed_exponent", "contact", "-", "restitution's speed exponent", SPEED_EXPONENT),
    QuantitySpec("height", "release", "m", "release height", _rig(1e-5, 100.0, "m")),
    QuantitySpec("angle", "release", "deg", "release angle", _rig(-360.0, 360.0, "deg")),
    QuantitySpec("spin", "release", "rad/s", "release spin", _rig(-1e6, 1e6, "rad/s")),
    QuantitySpec("vx", "release", "m/s", "release velocity x", _rig(-100.0, 100.0, "m/s")),
    QuantitySpec("vy", "release", "m/s", "release velocity y", _rig(-100.0, 100.0, "m/s")),
    # positive: the floor falls towards +x; heights are then normal to the floor
    QuantitySpec("floor_angle", "release", "deg", "floor inclination", _rig(-60.0, 60.0, "deg")),
)}

#: Column name of each quantity in result tables (the unit in the name).
COLUMN = {name: spec.column for name, spec in QUANTITIES.items()}


def label(name):
    """Axis label with unit of quantity ``name``, e.g. ``release angle [deg]``."""
    return QUANTITIES[name].label


def radians_within_one_turn(degrees):
    """Degrees to radians, reduced to one turn first where they exceed it.

    ``fmod`` by 360 is exact in floating point, so an angle of 1e20 deg
    gives exactly the answer of its reduced form; angles within one turn
    are converted untouched (bit for bit as before).
    """
    degrees = np.asarray(degrees, dtype=float)
    return np.radians(np.where(np.abs(degrees) > 360.0, np.fmod(degrees, 360.0), degrees))
