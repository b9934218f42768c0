"""Values that are legal but probably typed in the wrong unit.

A 50 mm pill dropped from 40 m, an angle range of 0-1.57 "degrees", a spin
of 30,000 rad/s: the model computes them, but a person almost certainly
meant millimetres, radians or revolutions per minute. These checks warn,
once per suspicious value, with where it was given and the likely cause;
they never stop a run (``--strict`` makes them errors).

Each plausible range is declared beside the quantity it belongs to
(:data:`PLAUSIBLE`, keyed like :data:`explore.quantities.QUANTITIES`; a
shape's dimensions declare theirs in :mod:`sim.shapes`); the rules that
relate two values (a height against the body's size, a tolerance against
the height) are the functions below.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from hopscape.sim.limits import Interval, number_text

from .quantities import QUANTITIES


@dataclass(frozen=True)
class Plausible:
    """The range a real part or rig lies in, and what a value outside it
    probably means.

    Parameters
    ----------
    range : Interval
        Values inside it raise no warning.
    above, below : str
        The likely cause of a value above or below the range.
    """

    range: Interval
    above: str
    below: str = ""

    def problem(self, value):
        """The warning for ``value`` (a number), or None."""
        if self.range.contains(value):
            return None
        unit = f" {self.range.unit}" if self.range.unit not in ("", "-") else ""
        side = self.above if value > self.range.high else self.below
        return (f"{number_text(value)}{unit} is outside the usual {number_text(self.range.low)} to "
                f"{number_text(self.range.high)}{unit}" + (f"; {side}" if side else ""))


#: Plausible ranges of the study quantities (the same names as
#: :data:`explore.quantities.QUANTITIES`); the body's sizes (diameter,
#: length) are checked against the shape's own declaration instead, see
#: :func:`size_problem`.
PLAUSIBLE = {
    "density": Plausible(Interval(100.0, 25000.0, unit="kg/m^3"), "is it in kg/m^3 (water is 1000)?",
                         "is it in g/cm^3? (water is 1000 kg/m^3)"),
    "friction": Plausible(Interval(0.0, 1.5, unit="-"), "Coulomb coefficients of hard parts are below about 1"),
    "height": Plausible(Interval(1e-4, 2.0, unit="m"), "drops from above 2 m are rare on a drop rig or a line; "
                        "is it in millimetres?", "is it in metres?"),
    "spin": Plausible(Interval(-1e4, 1e4, unit="rad/s"), "is it in rpm or deg/s? (1 rev/s = 6.28 rad/s)"),
    "vx": Plausible(Interval(-10.0, 10.0, unit="m/s"), "is it in mm/s?"),
    "vy": Plausible(Interval(-10.0, 10.0, unit="m/s"), "is it in mm/s?"),
    # the contact model: rubbers (~1e6 Pa) to tungsten carbide (~6e11 Pa)
    "body_modulus": Plausible(Interval(1e5, 1.2e12, unit="Pa"), "is it in kPa?",
                              "is it in GPa or MPa? (steel is 2e11 Pa)"),
    "floor_modulus": Plausible(Interval(1e5, 1.2e12, unit="Pa"), "is it in kPa?",
                               "is it in GPa or MPa? (steel is 2e11 Pa)"),
    "speed_exponent": Plausible(Interval(0.0, 0.5, unit="-"), "published tablet values are about 1/4 (Bharadwaj, "
                                "Smith & Hancock 2010)"),
    "reference_speed": Plausible(Interval(0.01, 20.0, unit="m/s"), "is it in mm/s?", "is it in m/s?"),
}

#: A drop higher than this many body sizes is probably a height given in
#: millimetres: a 6 mm pin from 3 "m" (meant: 3 mm) is 500 sizes, while rigs
#: and feeders drop parts from a few to some tens of sizes (judgement of the
#: trade, not a published figure).
HEIGHT_PER_SIZE = 200.0


def angle_range_problem(low, high):
    """Warning for a varied angle whose whole range fits in one turn of
    radians (0 to 6.3) while spanning more than a tenth of a radian: degrees
    were meant, radians were typed."""
    if -2 * np.pi - 0.01 <= low and high <= 2 * np.pi + 0.01 and high - low > 0.1:
        return (f"the angle spans only {number_text(low)} to {number_text(high)} deg; is it in radians? "
                "(angles are in degrees)")
    return None


def height_problem(height, size):
    """Warning for a release height above :data:`HEIGHT_PER_SIZE` body sizes."""
    if height > HEIGHT_PER_SIZE * size:
        return (f"{number_text(height)} m is {height / size:,.0f} times the body's size ({number_text(size)} m); "
                "is the height in millimetres?")
    return None


def tolerance_problem(tolerance, height):
    """Warning for a release-height tolerance larger than the release height."""
    if tolerance > height:
        return (f"the height tolerance +-{number_text(tolerance)} m is larger than the release height "
                f"{number_text(height)} m; is it in millimetres?")
    return None


def size_problem(dimension, value, factor=1.0):
    """Warning for a body size outside the plausible range its shape declares
    (:class:`sim.shapes.Dimension`); ``factor`` 2 judges a diameter by the
    radius's range."""
    low, high = dimension.plausible
    return Plausible(Interval(low * factor, high * factor, unit="m"), "is it in millimetres?",
                     "is it in metres?").problem(value)


def study_warnings(study):
    """Every suspicious value of a validated study, as (field location,
    message)."""
    from hopscape import sim

    shape = sim.SHAPES[study.body.shape]
    found = []

    def judge(loc, values, problem):
        for value in dict.fromkeys(values):
            message = problem(value)
            if message is not None:
                found.append((loc, message))
                return

    # a body without a round part (a flat-ended cylinder) has sharp rims;
    # a unit body of the kind says whether it has one
    sharp = shape(density=1.0, **{d.name: 1.0 for d in shape.dimensions if d.required}).round_long == 0
    if sharp and (study.body.material is not None or study.body.modulus is not None):
        from hopscape.sim.hertz import RIM_WARNING
        found.append((("body", "shape"), RIM_WARNING))
    for loc, value in ((("body", "modulus"), study.body.modulus), (("contact", "floor_modulus"),
                                                                   study.contact.floor_modulus),
                       (("contact", "reference_speed"), study.contact.reference_speed)):
        if value is not None:
            judge(loc, [value], PLAUSIBLE[loc[1] if loc[1] != "modulus" else "body_modulus"].problem)
    for name, q in study.quantities().items():
        loc = (QUANTITIES[name].section, name)
        if name == "diameter":
            judge(loc, q.span(), lambda v: size_problem(shape.dimension("radius"), v, factor=2.0))
        elif name == "length" and shape.has_length():
            judge(loc, q.span(), lambda v: size_problem(shape.dimension("length"), v))
        elif name in PLAUSIBLE:
            judge(loc, q.span(), PLAUSIBLE[name].problem)
        if name == "angle" and q.varies:
            judge(loc, [q.span()], lambda span: angle_range_problem(*span))
    body = study.body
    largest = body.make_shape(body.diameter.span()[1], 1000.0,
                              aspect_ratio=None if body.aspect_ratio is None else body.aspect_ratio.span()[1],
                              length=None if body.length is None else body.length.span()[1])
    size = float(max(largest.overall_length, largest.diameter))
    low_height, high_height = study.release.height.span()
    judge(("release", "height"), [high_height], lambda h: height_problem(h, size))
    judge(("tolerance", "height"), [study.tolerance.height], lambda t: tolerance_problem(t, low_height))
    if study.metric.limit is not None:   # a height too: a lip of 12 "m" is 12 mm
        judge(("metric", "limit"), [study.metric.limit], PLAUSIBLE["height"].problem)
    return found



def drop_warnings(shape, values):
    """Suspicious values of drops given one by one (``hopscape drop``, a
    batch table).

    Parameters
    ----------
    shape : sim.Shape
        The bodies (arrays or scalars), one per drop.
    values : dict
        Name -> value per drop for the quantities of :data:`PLAUSIBLE`
        (``height`` of the centre [m], ``spin`` [rad/s], ...) and the body's
        own dimensions (``length``, ``radius``, ... [m]).

    Returns
    -------
    list of (name, numpy.ndarray of bool, str)
        The value's name, which drops are suspicious, and the message for
        the first of them.
    """
    found = []
    sizes = {d.name: d for d in getattr(shape, "parts", (shape,))[0].dimensions}
    n = np.size(shape.mass)
    for name, value in values.items():
        value = np.broadcast_to(np.asarray(value, dtype=float), (n,))
        if name in sizes:
            problem = lambda v, d=sizes[name]: size_problem(d, v)  # noqa: E731
        elif name in PLAUSIBLE:
            problem = PLAUSIBLE[name].problem
        else:
            continue
        bad = _outside(name, sizes, value)
        if bad.any():
            found.append((name, bad, problem(value[np.argmax(bad)])))
    if "height" in values:
        size = np.maximum(np.broadcast_to(shape.overall_length, (n,)), np.broadcast_to(shape.diameter, (n,)))
        height = np.broadcast_to(np.asarray(values["height"], dtype=float), (n,))
        bad = height > HEIGHT_PER_SIZE * size
        if bad.any():
            i = int(np.argmax(bad))
            found.append(("height", bad, height_problem(height[i], size[i])))
    return found


def _outside(name, sizes, value):
    """Element-wise: outside the plausible range (vectorised for tables)."""
    usual = Interval(*sizes[name].plausible) if name in sizes else PLAUSIBLE[name].range
    # at or below zero where the usual range is positive: an error says so, not a unit hint
    return ~usual.contains(value) & ~np.isnan(value) & ~((value <= 0) & (usual.low > 0))
