"""Allowed ranges of the physical inputs, declared once.

Every entry point (a study file, the command line, a batch table, the
Python API) checks its numbers against these declarations and words its
message the same way, e.g. ``restitution must be in [0, 1], got 1.2``. The
pattern is scikit-learn's declared parameter constraints (its ``Interval``
with a ``closed`` side), reduced to what the physics needs.

A declaration says what the model can compute. What is merely unusual for
a drop rig (a 50 m drop of a pill) is a *plausible* range, declared beside
it and used for warnings, never for refusing.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

_SIDES = {"both": ("[", "]"), "left": ("[", ")"), "right": ("(", "]"), "neither": ("(", ")")}


def number_text(value):
    """A number as a person reads it: ``0.3``, ``1e-05``, ``inf``."""
    if isinstance(value, (bool, np.bool_)):
        return repr(bool(value))
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    value = float(value)
    return "inf" if value == math.inf else "-inf" if value == -math.inf else f"{value:g}"


@dataclass(frozen=True)
class Interval:
    """Closed, open or half-open range of finite numbers.

    Parameters
    ----------
    low, high : float
        Ends of the range; ``-inf`` / ``inf`` for none.
    closed : {"both", "left", "right", "neither"}
        Which ends belong to the range (scikit-learn's wording).
    unit : str
        Unit printed after the numbers (``"m"``), or ``""``.
    """

    low: float = -math.inf
    high: float = math.inf
    closed: str = "both"
    unit: str = ""

    def __post_init__(self):
        if self.closed not in _SIDES:
            raise ValueError(f"closed must be one of {', '.join(_SIDES)}, got {self.closed!r}")

    def intersection(self, other):
        """The values in both ranges (the tighter end of each side wins)."""
        low_end = max((self.low, self.closed in ("both", "left")), (other.low, other.closed in ("both", "left")),
                      key=lambda end: (end[0], not end[1]))
        high_end = min((self.high, self.closed in ("both", "right")),
                       (other.high, other.closed in ("both", "right")), key=lambda end: (end[0], end[1]))
        closed = {(True, True): "both", (True, False): "left", (False, True): "right",
                  (False, False): "neither"}[low_end[1], high_end[1]]
        return Interval(low_end[0], high_end[0], closed=closed, unit=self.unit or other.unit)

    def contains(self, value):
        """Element-wise: finite and inside the range."""
        value = np.asarray(value, dtype=float)
        with np.errstate(invalid="ignore"):
            above = value >= self.low if self.closed in ("both", "left") else value > self.low
            below = value <= self.high if self.closed in ("both", "right") else value < self.high
        return np.isfinite(value) & above & below

    def describe(self):
        """``in [0, 1]``, ``> 0 m``, ``>= 0``, or ``a finite number``."""
        unit = f" {self.unit}" if self.unit and self.unit != "-" else ""
        left, right = _SIDES[self.closed]
        if self.low == -math.inf and self.high == math.inf:
            return "a finite number"
        if self.low == self.high and self.closed == "both":
            return f"{number_text(self.low)}{unit}"
        if self.high == math.inf:
            return (">= " if left == "[" else "> ") + number_text(self.low) + unit
        if self.low == -math.inf:
            return ("<= " if right == "]" else "< ") + number_text(self.high) + unit
        return f"in {left}{number_text(self.low)}, {number_text(self.high)}{right}{unit}"

    def problem(self, name, value):
        """The message for the first value outside the range, or None."""
        value = np.asarray(value, dtype=float)
        bad = ~self.contains(value)
        if not np.any(bad):
            return None
        first = value[bad].flat[0] if value.ndim else float(value)
        return f"{name} must be {self.describe()}, got {number_text(first)}"

    def check(self, name, value):
        """``value`` as a float array; ValueError naming ``name`` if any element is outside."""
        message = self.problem(name, value)
        if message is not None:
            raise ValueError(message)
        return np.asarray(value, dtype=float)


#: Any finite number (angles, spins, velocities, heights of the centre).
FINITE = Interval()
#: Coefficient of restitution, in the sense of the chosen impact law.
RESTITUTION = Interval(0.0, 1.0, unit="-")
#: Coulomb friction coefficient.
FRICTION = Interval(0.0, math.inf, unit="-")
#: A size that must be there (a radius, a spheroid's length).
POSITIVE_SIZE = Interval(0.0, math.inf, closed="right", unit="m")
#: A size that may vanish (a capsule's cylindrical part: a sphere).
SIZE_OR_ZERO = Interval(0.0, math.inf, unit="m")
#: Density of the solid.
DENSITY = Interval(0.0, math.inf, closed="right", unit="kg/m^3")
#: Total mass of the body.
MASS = Interval(0.0, math.inf, closed="right", unit="kg")
#: Inclination of the floor: gravity must keep a component into the floor
#: (``g cos(alpha) > 0``) for a flight to end.
FLOOR_ANGLE = Interval(-math.pi / 2, math.pi / 2, closed="neither", unit="rad")
#: Exponent p of restitution as a power law of the normal impact speed,
#: ``e = e_ref (v_n / v_ref)^(-p)`` (0: restitution independent of speed;
#: about 1/4 for tablets, Bharadwaj, Smith & Hancock, Int. J. Pharm.
#: 402:50, 2010).
SPEED_EXPONENT = Interval(0.0, 1.0, unit="-")
#: The normal impact speed at which the restitution is ``e_ref``.
REFERENCE_SPEED = Interval(0.0, math.inf, closed="neither", unit="m/s")
#: Vogel & Peukert's material parameters of the impact-breakage master
#: curve (Powder Technol. 129:101, 2003): f_Mat and W_m,min.
F_MAT = Interval(0.0, math.inf, unit="kg/(J m)")
W_MIN = Interval(0.0, math.inf, unit="J/kg")
