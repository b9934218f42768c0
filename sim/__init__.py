"""hopscape physics: exact, vectorised rigid-body drops onto a flat floor.

Pure functions and small value classes; no file I/O and no printing.
Conventions (everywhere): plane x (right, along the floor), y (up, normal to
the floor), floor y = 0, level or inclined by ``alpha``
(``Release.floor_angle``, positive where the floor falls towards +x: gravity
is then ``(g sin(alpha), -g cos(alpha))``); SI units;
angles in radians here (degrees only at the user's edge); ``theta`` from +x
to the symmetry axis and spin counter-clockwise positive.
"""
from .bounces import MERGE_WITHIN, Bounces, group_bounces
from .drop import (IMPACT_CODES, IMPACT_FIELDS, MODEL_WORDS, MODELS, REFERENCES, STATUS, Contact, DropResult,
                   Release, simulate)
from .flight import GRAVITY
from .history import history
from .impact import LAWS, SLIP_HISTORY, routh_impact
from .shapes import SHAPES, Capsule, Cylinder, RoundedTablet, Shape, Sphere, Spheroid, make_shape

__all__ = [
    "Bounces", "Capsule", "Contact", "Cylinder", "DropResult", "GRAVITY", "IMPACT_CODES",
    "IMPACT_FIELDS", "LAWS", "MERGE_WITHIN", "MODEL_WORDS", "MODELS", "REFERENCES", "Release", "SHAPES", "SLIP_HISTORY",
    "RoundedTablet", "STATUS", "Shape", "Sphere", "Spheroid", "group_bounces", "history", "make_shape",
    "routh_impact", "simulate",
]
