"""The study schema: strict pydantic models of a study file.

A study names a study, describes the body, the contact and the release,
says which quantities are fixed, swept on a grid or drawn from a
distribution, the metric and the analyses wanted, and how to run. The
models hold every check (ranges, choices, contradictions between sections,
with field locations); :mod:`explore.study_file` reads the YAML and reports
the problems as ``file:line:col: field.path: message``.

Units in a study file: metres, kilograms, seconds, degrees for angles,
rad/s for spin.
"""
from __future__ import annotations

import hashlib
import json
import math
from typing import Literal, Optional, Union

from pydantic import (BaseModel, ConfigDict, Field, PrivateAttr, ValidationError, ValidationInfo, field_validator,
                      model_validator)
from pydantic_core import InitErrorDetails, PydanticCustomError

from hopscape import sim
from hopscape.sim.limits import F_MAT, POSITIVE_SIZE, REFERENCE_SPEED, W_MIN, Interval, number_text
from hopscape.sim.materials import MODULUS, POISSON, materials

from .defaults import IMPACTS
from .errors import InputError, shown
from .metric_kinds import METRIC_KINDS
from .quantities import COLUMN, QUANTITIES, label
from .sensitivity import METHOD_NAMES, METHODS

__all__ = ["COLUMN", "QUANTITIES", "Study", "label", "load_study", "parse_study"]


class Strict(BaseModel):
    """Base of every study model: unknown fields are errors; values are frozen."""

    model_config = ConfigDict(extra="forbid", frozen=True, strict=True, allow_inf_nan=False)


class Uniform(Strict):
    """Uniform between ``low`` and ``high`` (in the quantity's unit)."""

    low: float
    high: float

    @model_validator(mode="after")
    def _ordered(self):
        if not self.low < self.high:
            raise ValueError(f"low must be below high, got low {self.low} and high {self.high}")
        return self


class Grid(Uniform):
    """Evenly spaced values from ``low`` to ``high`` inclusive."""

    steps: int = Field(ge=2, le=2001)


class LogUniform(Uniform):
    """Uniform in the logarithm between ``low`` > 0 and ``high``."""

    low: float = Field(gt=0)


class Normal(Strict):
    """Normal around ``mean`` with standard deviation ``sd``; truncated to
    the quantity's allowed range."""

    mean: float
    sd: float = Field(gt=0)


class Quantity(Strict):
    """A number (fixed), or exactly one of ``grid``, ``uniform``, ``normal``,
    ``log_uniform``."""

    value: Optional[float] = None
    grid: Optional[Grid] = None
    uniform: Optional[Uniform] = None
    normal: Optional[Normal] = None
    log_uniform: Optional[LogUniform] = None

    @model_validator(mode="before")
    @classmethod
    def _number_is_fixed(cls, data):
        if isinstance(data, bool):
            raise ValueError(f"must be a number or a mapping with one of value, grid, uniform, normal, "
                             f"log_uniform; got {shown(data)}")
        if isinstance(data, (int, float)):
            return {"value": data}
        if not isinstance(data, dict):
            raise ValueError("must be a number, or a mapping with one of grid, uniform, normal, log_uniform "
                             f"(see `hopscape new`); got {shown(data)}")
        return data

    @model_validator(mode="after")
    def _exactly_one(self):
        given = [k for k in ("value", "grid", "uniform", "normal", "log_uniform") if getattr(self, k) is not None]
        if len(given) != 1:
            raise ValueError("give exactly one of value, grid, uniform, normal, log_uniform"
                             + (f"; got {', '.join(given)}" if given else ""))
        if self.value is not None and not math.isfinite(self.value):
            raise ValueError(f"must be a finite number, got {self.value}")
        return self

    @property
    def kind(self):
        """``"fixed"``, ``"grid"``, ``"uniform"``, ``"normal"`` or ``"log_uniform"``."""
        for k in ("value", "grid", "uniform", "normal", "log_uniform"):
            if getattr(self, k) is not None:
                return "fixed" if k == "value" else k

    @property
    def varies(self):
        """True unless the quantity is fixed."""
        return self.kind != "fixed"

    def span(self):
        """(low, high) the quantity covers; the mean for a normal."""
        if self.value is not None:
            return self.value, self.value
        if self.grid is not None:
            return self.grid.low, self.grid.high
        if self.normal is not None:
            return self.normal.mean, self.normal.mean
        part = self.uniform or self.log_uniform
        return part.low, part.high


def _check_range(name, q):
    if q is None:
        return q
    allowed = QUANTITIES[name].allowed
    for value in q.span():
        if not allowed.contains(value):
            raise ValueError(f"must be {allowed.describe()}, got {number_text(value)}")
    return q


def _problems(title, problems):
    """A ValidationError carrying ``(location, message)`` problems at their
    own field locations (pydantic prefixes the enclosing sections)."""
    return ValidationError.from_exception_data(title, [
        InitErrorDetails(type=PydanticCustomError("study", "{message}", {"message": message}), loc=tuple(loc),
                         input=None)
        for loc, message in problems])


def declared_range(field):
    """The :class:`sim.limits.Interval` a pydantic field declares with
    ``ge``/``gt``/``le``/``lt`` (None if it declares none), so that the
    study file, the command line and their messages share one range."""
    if isinstance(field, tuple):     # (model, field name)
        field = field[0].model_fields[field[1]]
    bounds = {name: getattr(meta, name) for meta in field.metadata for name in ("ge", "gt", "le", "lt")
              if getattr(meta, name, None) is not None}
    if not bounds:
        return None
    closed = {(True, True): "both", (True, False): "left", (False, True): "right", (False, False): "neither"}
    return Interval(bounds.get("ge", bounds.get("gt", -math.inf)), bounds.get("le", bounds.get("lt", math.inf)),
                    closed=closed["gt" not in bounds, "lt" not in bounds])


def _number_field(allowed, words, default=None):
    """A plain number (optional by default) bounded by ``allowed`` (a
    :class:`sim.limits.Interval`) through pydantic's ``ge``/``gt``/``le``/``lt``,
    which :func:`declared_range` reads back."""
    return Field(default, description=f"{words}, {allowed.describe()}",
                 **({"ge" if allowed.closed in ("both", "left") else "gt": allowed.low}
                    if math.isfinite(allowed.low) else {}),
                 **({"le" if allowed.closed in ("both", "right") else "lt": allowed.high}
                    if math.isfinite(allowed.high) else {}))


def _quantity_field(name, *default):
    """A section's field for quantity ``name``, described from its declaration."""
    spec = QUANTITIES[name]
    return Field(*default, description=f"{spec.label}, {spec.allowed.describe()}")


class _Section(Strict):
    @field_validator("*", mode="after")
    @classmethod
    def _in_range(cls, value, info):
        if isinstance(value, Quantity):
            return _check_range(info.field_name, value)
        return value


class Body(_Section):
    """The body: its shape (:data:`sim.SHAPES`), size and density.

    Give ``aspect_ratio`` or ``length`` (as the shape defines it) for every
    shape with a length of its own; a sphere takes neither.
    """

    shape: Literal[tuple(sim.SHAPES)] = Field("capsule", description="shape of the body")
    diameter: Quantity = _quantity_field("diameter")
    aspect_ratio: Optional[Quantity] = _quantity_field("aspect_ratio", None)
    length: Optional[Quantity] = _quantity_field("length", None)
    density: Quantity = _quantity_field("density", Quantity(value=1200.0))
    # the contact model (docs/physics.md section 9): a material of the table,
    # or its modulus and Poisson's ratio (a number given overrides the table's)
    material: Optional[Literal[tuple(materials())]] = Field(
        None, description="body material for contact duration and force (hopscape.sim.materials)")
    modulus: Optional[float] = _number_field(MODULUS, "Young's modulus of the body [Pa]")
    poisson: Optional[float] = _number_field(POISSON, "Poisson's ratio of the body [-]")
    rim_edge_radius: Optional[float] = _number_field(
        POSITIVE_SIZE, "edge radius of a flat-ended cylinder's sharp rim for the contact model [m] (default 5% "
        "of the smaller of radius and half length)")
    breakage_f_mat: Optional[float] = _number_field(F_MAT, "f_Mat of the Vogel & Peukert breakage master curve "
                                                    "[kg/(J m)]")
    breakage_w_min: Optional[float] = _number_field(W_MIN, "W_m,min of the Vogel & Peukert breakage master curve "
                                                    "[J/kg]")

    @field_validator("aspect_ratio", "length", mode="after")
    @classmethod
    def _fits_the_shape(cls, q, info: ValidationInfo):
        shape = sim.SHAPES.get(info.data.get("shape"))
        if q is None or shape is None:
            return q
        if not shape.has_length():
            raise ValueError(f"a {shape.kind} has no {info.field_name}; remove it")
        allowed = shape.aspect_ratio_allowed if info.field_name == "aspect_ratio" \
            else shape.dimension("length").allowed
        for value in q.span():
            if not allowed.contains(value):
                words = shape.dimension("length").meaning if info.field_name == "length" else "aspect ratio"
                raise ValueError(f"a {shape.kind}'s {info.field_name} ({words}) must be {allowed.describe()}, "
                                 f"got {number_text(value)}")
        return q

    @model_validator(mode="after")
    def _one_length(self):
        shape = sim.SHAPES[self.shape]
        given = [n for n in ("aspect_ratio", "length") if getattr(self, n) is not None]
        if shape.has_length() and len(given) != 1:
            raise ValueError(f"a {shape.kind} needs exactly one of aspect_ratio or length"
                             + (f"; got {' and '.join(given)}" if given else ""))
        return self

    def make_shape(self, diameter, density, aspect_ratio=None, length=None):
        """The :class:`sim.Shape` of one or many drops from their column values."""
        return sim.SHAPES[self.shape].from_diameter(diameter, density, aspect_ratio=aspect_ratio, length=length)


class Contact(_Section):
    """The floor contact: impact law, restitution and friction."""

    law: Literal[tuple(sim.LAWS)] = Field("energetic", description="impact law (sim.LAWS)")
    restitution: Quantity = _quantity_field("restitution")
    friction: Quantity = _quantity_field("friction")
    # absent: restitution the same at every speed
    speed_exponent: Optional[Quantity] = _quantity_field("speed_exponent", None)
    reference_speed: float = _number_field(REFERENCE_SPEED, "normal impact speed at which the restitution is "
                                           "`restitution` [m/s]", 1.0)
    # measured (normal impact speed [m/s], restitution) pairs: replace restitution
    restitution_table: Optional[list[list[float]]] = Field(
        None, description="measured restitution against normal impact speed: [[speed, restitution], ...], speeds "
                          "rising; replaces restitution and speed_exponent")
    floor_material: Optional[Literal[tuple(materials())]] = Field(
        None, description="floor material for contact duration and force (hopscape.sim.materials)")
    floor_modulus: Optional[float] = _number_field(MODULUS, "Young's modulus of the floor [Pa]")
    floor_poisson: Optional[float] = _number_field(POISSON, "Poisson's ratio of the floor [-]")


    @field_validator("restitution_table", mode="after")
    @classmethod
    def _table(cls, table):
        if table is not None:
            from hopscape.sim.impact import check_restitution_table
            check_restitution_table(table)
        return table

    @model_validator(mode="after")
    def _one_restitution(self):
        if self.restitution_table is not None and self.speed_exponent is not None:
            raise _problems("contact", [(("speed_exponent",), "give restitution_table or speed_exponent, not both")])
        if self.restitution_table is not None and self.restitution.varies:
            raise _problems("contact", [(("restitution",), "restitution_table replaces restitution: fix "
                                                           "restitution (its value is then not used)")])
        return self


class Release(_Section):
    """How the body leaves the rig: height (of the centre or the lowest
    point), angle, spin and velocity, and the floor's inclination
    (``floor_angle``, positive where the floor falls towards +x; the height
    is then normal to the floor and the angle from the floor line)."""

    height: Quantity = _quantity_field("height")
    height_of: Literal["centre", "bottom"] = Field("centre", description="the point the height is measured to")
    angle: Quantity = _quantity_field("angle")
    spin: Quantity = _quantity_field("spin", Quantity(value=0.0))
    vx: Quantity = _quantity_field("vx", Quantity(value=0.0))
    vy: Quantity = _quantity_field("vy", Quantity(value=0.0))
    # absent: a level floor (0 deg); heights, vx and vy are then in floor coordinates
    floor_angle: Optional[Quantity] = _quantity_field("floor_angle", None)


class Metric(Strict):
    """What counts in each drop (:data:`explore.metric_kinds.METRIC_KINDS`)."""

    kind: Literal[tuple(METRIC_KINDS)] = Field(description=f"metric kind: {' | '.join(METRIC_KINDS)}")
    bounce: Union[int, str] = Field("later", description="'later' (best later bounce), 'first' or a bounce number")
    reference: Literal[tuple(sim.REFERENCES)] = Field(description=f"the point whose height counts: "
                                                              f"{' | '.join(sim.REFERENCES)}")
    goal: Literal["seek", "avoid"] = Field("seek", description="whether the event is wanted or to be avoided")
    threshold: float = Field(default=1.0, gt=0, le=10, description="event: value above this [-]")
    limit: Optional[float] = Field(default=None, gt=0, le=100,
                                   description="kind clears: the height the reference point must rise above [m]")
    force_limit: Optional[float] = Field(default=None, gt=0, le=1e7,
                                         description="kind peak_force: the contact force not to exceed [N]")

    @model_validator(mode="after")
    def _limit_fits_the_kind(self):
        kind = METRIC_KINDS[self.kind]
        if kind.uses_limit and self.limit is None:
            raise _problems("metric", [(("limit",), f"kind {self.kind} needs limit, the height to clear [m]")])
        if not kind.uses_limit and self.limit is not None:
            users = ", ".join(name for name, k in METRIC_KINDS.items() if k.uses_limit)
            raise _problems("metric", [(("limit",), f"limit is used only by kind {users}; remove it or change "
                                                    "the kind")])
        if kind.uses_force_limit and self.force_limit is None:
            raise _problems("metric", [(("force_limit",), f"kind {self.kind} needs force_limit, the force not to "
                                                          "exceed [N]")])
        if not kind.uses_force_limit and self.force_limit is not None:
            raise _problems("metric", [(("force_limit",), "force_limit is used only by kind peak_force; remove it "
                                                          "or change the kind")])
        return self

    @field_validator("bounce", mode="before")
    @classmethod
    def _bounce(cls, v):
        if v in ("later", "first") or (isinstance(v, int) and not isinstance(v, bool) and v >= 1):
            return v
        raise ValueError(f"must be 'later', 'first' or a bounce number >= 1, got {shown(v)}")


_FORMATS = Field(["png"], description="picture file formats")


class MapSpec(Strict):
    """A regime map over two grid quantities."""

    x: Literal[tuple(QUANTITIES)] = Field(description="grid quantity on the horizontal axis")
    y: Literal[tuple(QUANTITIES)] = Field(description="grid quantity on the vertical axis")
    formats: list[Literal["png", "svg", "pdf"]] = _FORMATS


class CurveSpec(Strict):
    """A curve of the metric over one grid quantity."""

    x: Literal[tuple(QUANTITIES)] = Field(description="grid quantity on the horizontal axis")
    formats: list[Literal["png", "svg", "pdf"]] = _FORMATS


class Sensitivity(Strict):
    """Which quantities matter: a global sensitivity analysis."""

    method: Literal[METHOD_NAMES] = Field("sobol", description="sensitivity method")
    samples: int = Field(default=1024, ge=4, le=2 ** 20,
                         description="base samples (Sobol: a power of two) or trajectories (Morris)")
    second_order: bool = Field(False, description="also the second-order Sobol indices")
    levels: int = Field(default=4, ge=2, le=16, description="grid levels of a Morris design")

    @model_validator(mode="after")
    def _fits_the_method(self):
        problem = METHODS[self.method].settings_problem(self)
        if problem is not None:
            raise ValueError(problem)
        return self


class Tolerance(Strict):
    """Release tolerance of the rig, as +- half-widths of uniform errors."""

    angle: float = Field(default=2.0, ge=0, le=90, description="release angle error, +- half-width [deg]")
    height: float = Field(default=0.005, ge=0, le=10, description="release height error, +- half-width [m]")
    spin: float = Field(default=0.0, ge=0, le=1000, description="release spin error, +- half-width [rad/s]")
    draws: int = Field(default=32, ge=2, le=4096, description="toleranced drops per grid cell")


class Picks(Strict):
    """Recommended drop conditions."""

    count: int = Field(default=5, ge=1, le=100, description="how many conditions to recommend")
    target: float = Field(default=0.8, gt=0, le=1,
                          description="probability under tolerance of the goal (the event to seek it, its absence "
                                      "to avoid it) a pick must reach [-]")
    chaotic_flip_rate: float = Field(default=0.2, gt=0, le=1,
                                     description="share of toleranced drops whose outcome differs from the same "
                                                 "drop released exactly, above which a cell is chaotic [-]")


class Analyses(Strict):
    """What to compute from the drops."""

    maps: list[MapSpec] = Field([], description="regime maps")
    curves: list[CurveSpec] = Field([], description="curves over one grid quantity")
    draws: int = Field(default=16, ge=1, le=4096, description="drops per grid cell over the random quantities")
    robustness: bool = Field(True, description="the robustness map under the release tolerance")
    sensitivity: Optional[Sensitivity] = Field(None, description="global sensitivity ranking")
    picks: Optional[Picks] = Field(None, description="recommended drop conditions")


class RunSettings(Strict):
    """How to run: workers, backend, chunks, seed, impacts per drop."""

    jobs: int = Field(default=2, ge=1, le=512, description="worker processes")
    backend: Literal["loky", "threading", "sequential", "dask"] = Field("loky", description="parallel backend")
    scheduler: Optional[str] = Field(None, description="address of a Dask scheduler (backend: dask)")
    # the kernel's own chunk: a task pays the near-flat pairs' integration
    # once per impact whatever its size (docs/physics.md section 7.1)
    chunk_size: int = Field(default=sim.drop.CHUNK_SIZE, ge=100, le=1_000_000,
                            description="drops per task and result part")
    seed: int = Field(default=1, ge=1, le=2 ** 32 - 1, description="seed of every random draw")
    impacts: int = Field(default=IMPACTS, ge=1, le=50, description="impacts followed per drop")
    merge_ms: float = Field(default=10.0, ge=0, le=1000,
                            description="impacts closer than this are one visible bounce [ms] (10 ms is what a "
                                        "camera at 100 frames per second merges)")
    camera_fps: Optional[float] = Field(default=None, gt=0, le=1e7,
                                        description="instead of merge_ms: your camera's frame rate [1/s]; impacts "
                                                    "closer than one frame interval are one visible bounce")
    model: Literal[tuple(sim.MODELS)] = Field(
        default=sim.MODELS[0], description=f"contact model: {sim.drop.models_in_words()} (docs/physics.md "
                                           "section 7.1)")

    @model_validator(mode="after")
    def _one_merge_window(self):
        if self.camera_fps is not None and "merge_ms" in self.model_fields_set:
            raise _problems("run", [(("camera_fps",), "give camera_fps or merge_ms, not both")])
        return self

    @property
    def merge_window(self):
        """Impacts closer than this are one visible bounce [s]."""
        return 1.0 / self.camera_fps if self.camera_fps is not None else self.merge_ms / 1e3


def bounce_window(merge_ms=None, camera_fps=None, names=("merge_ms", "camera_fps")):
    """The bounce-grouping window of a command or call, checked like ``run.merge_ms`` and ``run.camera_fps``.

    Parameters
    ----------
    merge_ms : float, optional
        Impacts closer than this are one visible bounce [ms]; default 10.
    camera_fps : float, optional
        Instead: the camera's frame rate [1/s]; one frame interval.
    names : (str, str)
        How the caller spells the two (``--merge-ms``, ``--fps``) in messages.

    Returns
    -------
    float
        The window [s].

    Raises
    ------
    InputError
        Both given, or a value outside the study file's declared range.
    """
    if merge_ms is not None and camera_fps is not None:
        raise InputError(f"give {names[0]} or {names[1]}, not both")
    field, name, value = (("camera_fps", names[1], camera_fps) if camera_fps is not None else
                          ("merge_ms", names[0], RunSettings.model_fields["merge_ms"].default
                           if merge_ms is None else merge_ms))
    problem = declared_range((RunSettings, field)).problem(name, value)
    if problem is not None:
        raise InputError(problem)
    return 1.0 / float(value) if field == "camera_fps" else float(value) / 1e3

#: The contact model's optional settings, by section (left out of
#: :meth:`Study.numbers` when not given).
_CONTACT_FIELDS = {"body": ("material", "modulus", "poisson", "rim_edge_radius", "breakage_f_mat", "breakage_w_min"),
                   "contact": ("speed_exponent", "restitution_table", "floor_material", "floor_modulus",
                               "floor_poisson"),
                   "metric": ("force_limit",)}

#: The sections of a study file that hold settings.
SECTIONS = ("body", "contact", "release", "metric", "tolerance", "analyses", "run")


class Study(Strict):
    """A validated study: what is dropped, how, what counts, what to compute.

    Build one with :func:`load_study` (a file) or :func:`parse_study` (text);
    both report every mistake at once as ``file:line:col: field: message``.
    """

    name: str = Field(pattern=r"^[A-Za-z0-9][A-Za-z0-9_.-]*$", max_length=80,
                      description="name of the study and of its run folder")
    description: str = Field("", description="what the study is for, in a sentence")
    _warnings: tuple = PrivateAttr(default=())
    body: Body = Field(description=f"the body: shape ({' | '.join(sim.SHAPES)}), diameter, and aspect_ratio "
                                   "or length")
    contact: Contact = Field(description="the floor contact: restitution and friction (law optional)")
    release: Release = Field(description="the release: height and angle (spin, vx, vy optional)")
    metric: Metric = Field(description=f"what counts in each drop: kind ({' | '.join(METRIC_KINDS)}) and "
                                       f"reference ({' | '.join(sim.REFERENCES)})")
    tolerance: Tolerance = Tolerance()
    analyses: Analyses = Analyses()
    run: RunSettings = RunSettings()

    @model_validator(mode="after")
    def _sections_agree(self):
        problems = contradictions({name: getattr(self, name) for name in SECTIONS})
        if problems:
            raise _problems("Study", problems)
        return self

    @property
    def picks_settings(self):
        """``analyses.picks``, or the defaults when the study asks for no picks
        (the robustness map and safe regions judge cells by them too)."""
        return self.analyses.picks or Picks()

    @property
    def warnings(self):
        """Legal but suspicious values (:mod:`explore.plausibility`), one
        ``file:line:col: field: message`` line each, as found by
        :func:`parse_study`."""
        return self._warnings

    # ------------------------------------------------------------------
    def quantity(self, name):
        """The :class:`Quantity` called ``name`` (None where not given)."""
        return getattr(getattr(self, QUANTITIES[name].section), name)

    def allowed(self, name):
        """The range quantity ``name`` may take in this study: its declared
        range narrowed by the body's own (a capsule's aspect ratio is at
        least 1; a cylinder's length is above 0). Draws are kept inside it."""
        allowed = QUANTITIES[name].allowed
        shape = sim.SHAPES[self.body.shape]
        own = {"aspect_ratio": shape.aspect_ratio_allowed,
               "length": shape.dimension("length").allowed if shape.has_length() else None}.get(name)
        return allowed if own is None else allowed.intersection(own)

    def quantities(self):
        """All quantities given (name -> Quantity), in a fixed order."""
        out = {}
        for name in QUANTITIES:
            q = self.quantity(name)
            if q is not None:
                out[name] = q
        return out

    def gridded(self):
        """Names of the quantities swept on a grid, in declaration order."""
        return [n for n, q in self.quantities().items() if q.kind == "grid"]

    def random(self):
        """Names of the quantities drawn from a distribution."""
        return [n for n, q in self.quantities().items() if q.kind in ("uniform", "normal", "log_uniform")]

    def varying(self):
        """Names of the quantities that are not fixed."""
        return [n for n, q in self.quantities().items() if q.varies]

    def numbers(self):
        """Everything that decides the simulated drops, as plain data: not the
        description, jobs, backend, scheduler, nor the maps, curves and picks
        (those only read the drops)."""
        data = self.model_dump(mode="json")
        data.pop("description")
        for key in ("jobs", "backend", "scheduler"):
            data["run"].pop(key)
        for key in ("maps", "curves", "picks"):
            data["analyses"].pop(key)
        # the contact model's settings count only when given, so that a study
        # without them keeps the fingerprint it had before they existed (its
        # run folder resumes); the reference speed only with a speed law
        for section, names in _CONTACT_FIELDS.items():
            for name in names:
                if data[section][name] is None:
                    data[section].pop(name)
        if "speed_exponent" not in data["contact"]:
            data["contact"].pop("reference_speed")
        # impulse was the default before two-ends: a study that names it
        # keeps the fingerprint it had then (its run folder resumes), and a
        # study that names none gets a new one (its near-flat drops changed)
        if data["run"]["model"] == "impulse":
            data["run"].pop("model")
        return data

    def fingerprint(self):
        """Hash of :meth:`numbers`."""
        return hashlib.sha256(json.dumps(self.numbers(), sort_keys=True).encode()).hexdigest()[:16]


def changed_fields(old, new, path=()):
    """Dotted paths where two :meth:`Study.numbers` dicts differ."""
    if isinstance(old, dict) and isinstance(new, dict):
        out = []
        for key in sorted(set(old) | set(new)):
            out += changed_fields(old.get(key), new.get(key), path + (key,))
        return out
    return [] if old == new else [".".join(map(str, path))]


def contradictions(sections):
    """Settings that contradict each other across sections, as (field
    location, message).

    ``sections`` maps section names to validated sections; a section that
    is missing (its own fields are wrong) is not judged, so that a file's
    field mistakes and its contradictions are reported together.
    """
    known = {name: getattr(sections[spec.section], name) for name, spec in QUANTITIES.items()
             if spec.section in sections}
    gridded = [name for name, q in known.items() if q is not None and q.kind == "grid"]
    varying = [name for name, q in known.items() if q is not None and q.varies]
    gridded_text = ", ".join(gridded) or "none"
    complete = all(section in sections for section in ("body", "contact", "release"))
    problems = []
    analyses = sections.get("analyses")
    if analyses is not None:
        for i, spec in enumerate(analyses.maps):
            for axis in ("x", "y"):
                name = getattr(spec, axis)
                if name in known and name not in gridded:
                    problems.append((("analyses", "maps", i, axis), f"{name} is not swept on a grid; map axes "
                                     f"must be grid quantities (gridded here: {gridded_text})"))
            if spec.x == spec.y:
                problems.append((("analyses", "maps", i, "y"), "x and y must differ"))
        for i, spec in enumerate(analyses.curves):
            if spec.x in known and spec.x not in gridded:
                problems.append((("analyses", "curves", i, "x"), f"{spec.x} is not swept on a grid; curve axes "
                                 f"must be grid quantities (gridded here: {gridded_text})"))
        if complete and analyses.sensitivity is not None and len(varying) < 2:
            problems.append((("analyses", "sensitivity"), "needs at least two quantities that vary (grid or "
                             f"distribution), got {len(varying)}"))
        if complete and (analyses.picks is not None or analyses.robustness) and not gridded:
            problems.append((("analyses", "picks" if analyses.picks is not None else "robustness"),
                             "picks and the robustness map need at least one grid quantity (set robustness: "
                             "false for a ranking-only study)"))
    body, contact = sections.get("body"), sections.get("contact")
    if body is not None and contact is not None:
        problems += _contact_problems(body, contact)
        metric = sections.get("metric")
        needs = METRIC_KINDS[metric.kind].needs if metric is not None else ()
        settings = contact_settings(body, contact)
        if "materials" in needs and not any(settings[name] is not None for name in
                                            ("body_material", "body_modulus")):
            problems.append((("metric", "kind"), f"kind {metric.kind} needs the contact model's materials: give "
                             "body.material and contact.floor_material (or body.modulus and body.poisson, "
                             "contact.floor_modulus and contact.floor_poisson)"))
        if metric is not None and metric.kind == "breakage" and metric.threshold >= 1:
            problems.append((("metric", "threshold"), f"kind breakage compares a probability with threshold, which "
                             f"must then be below 1 (e.g. 0.01), got {number_text(metric.threshold)}"))
        if "breakage" in needs and settings["breakage_f_mat"] is None:
            problems.append((("metric", "kind"), f"kind {metric.kind} needs body.breakage_f_mat and "
                             "body.breakage_w_min (Vogel & Peukert's material parameters)"))
    metric, run = sections.get("metric"), sections.get("run")
    if metric is not None and run is not None and isinstance(metric.bounce, int) and metric.bounce > run.impacts:
        problems.append((("metric", "bounce"), f"bounce {metric.bounce} can never be seen with run.impacts "
                         f"{run.impacts}; raise run.impacts"))
    if metric is not None and run is not None and metric.bounce == "later" and run.impacts < 2:
        problems.append((("metric", "bounce"), f"a later bounce needs at least 2 impacts, got run.impacts "
                         f"{run.impacts}; raise run.impacts or use bounce: first"))
    if run is not None and run.scheduler is not None and run.backend != "dask":
        problems.append((("run", "scheduler"), "a scheduler address needs backend: dask"))
    return problems


def contact_settings(body, contact):
    """The contact model's dict of settings (the batch columns' names) from
    the body and contact sections (None where not given)."""
    return {"body_material": body.material, "floor_material": contact.floor_material,
            "body_modulus": body.modulus, "body_poisson": body.poisson, "floor_modulus": contact.floor_modulus,
            "floor_poisson": contact.floor_poisson, "rim_edge_radius": body.rim_edge_radius,
            "breakage_f_mat": body.breakage_f_mat, "breakage_w_min": body.breakage_w_min}


def _contact_problems(body, contact):
    """The contact model's settings that do not go together, as (location, message)."""
    from .contact_inputs import single_settings
    try:
        single_settings(contact_settings(body, contact))
    except ValueError as exc:
        message = str(exc)
        where = {"body_": "body", "floor_": "contact", "breakage": "body"}
        for prefix, section in where.items():
            if message.startswith(prefix):
                field = message.split()[0]
                name = field if section == "contact" else field.removeprefix("body_")
                return [((section, name), message)]
        return [(("contact",), message)]
    return []


#: Most drops a study may ask for, over all its stages.
MAX_DROPS = 20_000_000


def check_size(study: Study, counts):
    """Problems of size, as (location, message): every stage's drops
    (``counts``, from :func:`explore.plan.count_drops`) together over
    :data:`MAX_DROPS`."""
    total = sum(counts.values())
    if total <= MAX_DROPS:
        return []
    biggest = max(counts, key=counts.get)
    where = {"grid": ("analyses", "draws"), "robust": ("tolerance", "draws")}.get(biggest, ("analyses", "sensitivity"))
    listing = ", ".join(f"{stage} {n:,}" for stage, n in counts.items())
    return [(where, f"the study needs {total:,} drops ({listing}), over the {MAX_DROPS:,} limit; use fewer grid "
             f"steps or draws (the {biggest} stage is the largest)")]


def grid_cells(study):
    """Number of grid cells: the product of the grid quantities' steps."""
    cells = 1
    for name in study.gridded():
        cells *= study.quantity(name).grid.steps
    return cells


# the loader needs the models above; importing it last keeps
# ``from explore.study import load_study, parse_study`` working
from .study_file import load_study, parse_study, template_text  # noqa: E402,F401
