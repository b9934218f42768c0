"""Study files: YAML 1.2 with line tracking into strict pydantic models.

A study file names a study, describes the body, the contact and the
release, says which quantities are fixed, swept on a grid or drawn from a
distribution, the metric and the analyses wanted, and how to run. Every
mistake is reported before anything is simulated, all at once, as
``file:line:col: field.path: message``.

Units in a study file: metres, kilograms, seconds, degrees for angles,
rad/s for spin.
"""
from __future__ import annotations

import hashlib
import json
import math
from pathlib import Path
from typing import Literal, Optional, Union

from pydantic import BaseModel, ConfigDict, Field, ValidationError, field_validator, model_validator
from ruamel.yaml import YAML
from ruamel.yaml.error import MarkedYAMLError

from .errors import InputError

#: Every quantity a study can fix, sweep or draw: section, unit, allowed
#: range (inclusive), axis label. The ranges are plausibility limits for a
#: drop rig, not physics limits; ``check`` names them in its messages.
QUANTITIES = {
    "aspect_ratio": ("body", "-", 0.05, 50.0, "aspect ratio (overall length / diameter)"),
    "length": ("body", "m", 0.0, 5.0, "length"),
    "diameter": ("body", "m", 1e-5, 2.0, "diameter"),
    "density": ("body", "kg/m^3", 1.0, 30000.0, "density"),
    "restitution": ("contact", "-", 0.0, 1.0, "restitution"),
    "friction": ("contact", "-", 0.0, 5.0, "friction coefficient"),
    "height": ("release", "m", 1e-5, 100.0, "release height"),
    "angle": ("release", "deg", -360.0, 360.0, "release angle"),
    "spin": ("release", "rad/s", -10000.0, 10000.0, "release spin"),
    "vx": ("release", "m/s", -100.0, 100.0, "release velocity x"),
    "vy": ("release", "m/s", -100.0, 100.0, "release velocity y"),
}
#: Column name of each quantity in result tables (the unit in the name).
COLUMN = {name: name if unit == "-" else f"{name}_{unit.replace('/', '_').replace('^', '')}"
          for name, (_, unit, *_rest) in QUANTITIES.items()}


def label(name):
    """Axis label with unit, e.g. ``release angle [deg]``."""
    section, unit, low, high, text = QUANTITIES[name]
    return f"{text} [{unit}]"


class Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class Uniform(Strict):
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
                             f"log_uniform; got {data!r}")
        if isinstance(data, (int, float)):
            return {"value": data}
        if not isinstance(data, dict):
            raise ValueError("must be a number, or a mapping with one of grid, uniform, normal, log_uniform "
                             f"(see `hopscape new`); got {data!r}")
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
        for k in ("value", "grid", "uniform", "normal", "log_uniform"):
            if getattr(self, k) is not None:
                return "fixed" if k == "value" else k

    @property
    def varies(self):
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
    _, unit, low, high, _ = QUANTITIES[name]
    lo, hi = q.span()
    for v in (lo, hi):
        if not (low <= v <= high):
            unit_text = "" if unit == "-" else f" {unit}"
            raise ValueError(f"must lie in [{low:g}, {high:g}]{unit_text}, got {v:g}")
    return q


class _Section(Strict):
    @field_validator("*", mode="after")
    @classmethod
    def _in_range(cls, value, info):
        if isinstance(value, Quantity):
            return _check_range(info.field_name, value)
        return value


class Body(_Section):
    shape: Literal["capsule", "sphere", "spheroid", "cylinder"] = "capsule"
    diameter: Quantity
    aspect_ratio: Optional[Quantity] = None
    length: Optional[Quantity] = None
    density: Quantity = Quantity(value=1200.0)


class Contact(_Section):
    law: Literal["energetic", "poisson", "newton"] = "energetic"
    restitution: Quantity
    friction: Quantity


class Release(_Section):
    height: Quantity
    height_of: Literal["centre", "bottom"] = "centre"
    angle: Quantity
    spin: Quantity = Quantity(value=0.0)
    vx: Quantity = Quantity(value=0.0)
    vy: Quantity = Quantity(value=0.0)


class Metric(Strict):
    """What counts: the rebound ratio of a bounce, or one of two flags."""

    kind: Literal["ratio", "beats_release", "beats_first"] = "ratio"
    bounce: Union[int, str] = "later"
    reference: Literal["centre", "bottom", "top"] = "centre"
    goal: Literal["seek", "avoid"] = "seek"
    threshold: float = Field(default=1.0, gt=0, le=10)

    @field_validator("bounce", mode="before")
    @classmethod
    def _bounce(cls, v):
        if v in ("later", "first") or (isinstance(v, int) and not isinstance(v, bool) and v >= 1):
            return v
        raise ValueError(f"must be 'later', 'first' or a bounce number >= 1, got {v!r}")


class MapSpec(Strict):
    x: Literal[tuple(QUANTITIES)]
    y: Literal[tuple(QUANTITIES)]
    formats: list[Literal["png", "svg", "pdf"]] = ["png"]


class CurveSpec(Strict):
    x: Literal[tuple(QUANTITIES)]
    formats: list[Literal["png", "svg", "pdf"]] = ["png"]


class Sensitivity(Strict):
    method: Literal["sobol", "morris"] = "sobol"
    samples: int = Field(default=1024, ge=4, le=2 ** 20)
    second_order: bool = False
    levels: int = Field(default=4, ge=2, le=16)

    @model_validator(mode="after")
    def _power_of_two(self):
        if self.method == "sobol" and self.samples & (self.samples - 1):
            raise ValueError(f"samples must be a power of two for Sobol sampling, got {self.samples} "
                             f"(nearest: {2 ** round(math.log2(self.samples))})")
        return self


class Tolerance(Strict):
    """Release tolerance of the rig, as +- half-widths of uniform errors."""

    angle: float = Field(default=2.0, ge=0, le=90)
    height: float = Field(default=0.005, ge=0, le=10)
    spin: float = Field(default=0.0, ge=0, le=1000)
    draws: int = Field(default=32, ge=2, le=4096)


class Picks(Strict):
    count: int = Field(default=5, ge=1, le=100)
    target: float = Field(default=0.8, gt=0, le=1)
    chaotic_spread: float = Field(default=0.1, gt=0, le=10)


class Analyses(Strict):
    maps: list[MapSpec] = []
    curves: list[CurveSpec] = []
    draws: int = Field(default=16, ge=1, le=4096)
    robustness: bool = True
    sensitivity: Optional[Sensitivity] = None
    picks: Optional[Picks] = None


class RunSettings(Strict):
    jobs: int = Field(default=2, ge=1, le=512)
    backend: Literal["loky", "threading", "sequential", "dask"] = "loky"
    scheduler: Optional[str] = None
    chunk_size: int = Field(default=20000, ge=100, le=1_000_000)
    seed: int = Field(default=1, ge=1, le=2 ** 32 - 1)
    impacts: int = Field(default=6, ge=1, le=50)
    merge_ms: float = Field(default=10.0, ge=0, le=1000)


class Study(Strict):
    name: str = Field(pattern=r"^[A-Za-z0-9][A-Za-z0-9_.-]*$", max_length=80)
    description: str = ""
    body: Body
    contact: Contact
    release: Release
    metric: Metric = Metric()
    tolerance: Tolerance = Tolerance()
    analyses: Analyses = Analyses()
    run: RunSettings = RunSettings()

    # ------------------------------------------------------------------
    def quantity(self, name):
        section = QUANTITIES[name][0]
        return getattr(getattr(self, section), name)

    def quantities(self):
        """All quantities given (name -> Quantity), in a fixed order."""
        out = {}
        for name in QUANTITIES:
            q = self.quantity(name)
            if q is not None:
                out[name] = q
        return out

    def gridded(self):
        return [n for n, q in self.quantities().items() if q.kind == "grid"]

    def random(self):
        return [n for n, q in self.quantities().items() if q.kind in ("uniform", "normal", "log_uniform")]

    def varying(self):
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


def _get(data, *path):
    for key in path:
        if isinstance(data, dict) and key in data:
            data = data[key]
        elif isinstance(data, list) and isinstance(key, int) and 0 <= key < len(data):
            data = data[key]
        else:
            return None
    return data


def _kind(q):
    """'grid', 'fixed', a distribution name, or None for an unreadable quantity."""
    if isinstance(q, (int, float)) and not isinstance(q, bool):
        return "fixed"
    if isinstance(q, dict):
        keys = [k for k in ("value", "grid", "uniform", "normal", "log_uniform") if k in q]
        return ("fixed" if keys[0] == "value" else keys[0]) if len(keys) == 1 else None
    return None


def _low(q):
    if isinstance(q, (int, float)) and not isinstance(q, bool):
        return float(q)
    kind = _kind(q)
    part = _get(q, kind) if kind not in (None, "fixed") else None
    value = _get(q, "value") if kind == "fixed" else (_get(part, "low") if kind != "normal" else _get(part, "mean"))
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) else None


def cross_check(data):
    """Settings that contradict each other, read from the plain file data so
    that they are found even when some fields are invalid: a list of
    (field path, message)."""
    problems = []
    if not isinstance(data, dict):
        return problems
    body = _get(data, "body") or {}
    shape = _get(body, "shape") or "capsule"
    if shape == "sphere":
        for name in ("aspect_ratio", "length"):
            if _get(body, name) is not None:
                problems.append((("body", name), f"a sphere has no {name}; remove it"))
    elif shape in ("capsule", "spheroid", "cylinder") and isinstance(body, dict):
        given = [n for n in ("aspect_ratio", "length") if _get(body, n) is not None]
        if len(given) != 1:
            problems.append((("body",), f"a {shape} needs exactly one of aspect_ratio or length"
                             + (f"; got {' and '.join(given)}" if given else "")))
        low = _low(_get(body, "aspect_ratio"))
        if shape == "capsule" and low is not None and low < 1:
            problems.append((("body", "aspect_ratio"), "a capsule's aspect ratio must be >= 1 "
                             f"(it is at least a sphere), got {low:g}"))
        low = _low(_get(body, "length"))
        if shape in ("spheroid", "cylinder") and low is not None and low <= 0:
            problems.append((("body", "length"), f"a {shape}'s length must be > 0 m, got {low:g}"))
    kinds = {name: _kind(_get(data, QUANTITIES[name][0], name)) for name in QUANTITIES}
    gridded = [n for n, k in kinds.items() if k == "grid"]
    varying = [n for n, k in kinds.items() if k not in (None, "fixed")]
    analyses = _get(data, "analyses") or {}
    for i, m in enumerate(_get(analyses, "maps") or []):
        for axis in ("x", "y"):
            name = _get(m, axis)
            if name in QUANTITIES and name not in gridded:
                problems.append((("analyses", "maps", i, axis), f"{name} is not swept on a grid; map axes must "
                                 f"be grid quantities (gridded here: {', '.join(gridded) or 'none'})"))
        if _get(m, "x") is not None and _get(m, "x") == _get(m, "y"):
            problems.append((("analyses", "maps", i, "y"), "x and y must differ"))
    for i, c in enumerate(_get(analyses, "curves") or []):
        name = _get(c, "x")
        if name in QUANTITIES and name not in gridded:
            problems.append((("analyses", "curves", i, "x"), f"{name} is not swept on a grid; curve axes must be "
                             f"grid quantities (gridded here: {', '.join(gridded) or 'none'})"))
    if _get(analyses, "sensitivity") is not None and len(varying) < 2:
        problems.append((("analyses", "sensitivity"), "needs at least two quantities that vary (grid or "
                         f"distribution), got {len(varying)}"))
    wants_picks = _get(analyses, "picks") is not None
    wants_robust = _get(analyses, "robustness") is not False
    if (wants_picks or wants_robust) and not gridded:
        problems.append((("analyses", "picks" if wants_picks else "robustness"),
                         "picks and the robustness map need at least one grid quantity (set robustness: false "
                         "for a ranking-only study)"))
    bounce = _get(data, "metric", "bounce")
    impacts = _get(data, "run", "impacts")
    impacts = impacts if isinstance(impacts, int) else RunSettings().impacts
    if isinstance(bounce, int) and not isinstance(bounce, bool) and bounce > impacts:
        problems.append((("metric", "bounce"), f"bounce {bounce} can never be seen with run.impacts {impacts}; "
                         "raise run.impacts"))
    if _get(data, "run", "scheduler") is not None and _get(data, "run", "backend") != "dask":
        problems.append((("run", "scheduler"), "a scheduler address needs backend: dask"))
    return problems


def check_size(study: Study):
    cells = grid_cells(study)
    total = cells * max(study.analyses.draws if study.random() else 1, 1)
    if total > 20_000_000:
        return [(("analyses", "draws"), f"the grid needs {total:,} drops (over the 20,000,000 limit); "
                 "use fewer steps or draws")]
    return []


def grid_cells(study):
    cells = 1
    for name in study.gridded():
        cells *= study.quantity(name).grid.steps
    return cells


# ----------------------------------------------------------------------
# loading


def _position(data, loc):
    """Line and column (1-based) of the deepest part of ``loc`` in ``data``."""
    line, col = 1, 1
    node = data
    for key in loc:
        lc = getattr(node, "lc", None)
        try:
            if isinstance(key, int) and isinstance(node, list):
                if lc is not None and key < len(node):
                    line, col = lc.item(key)
                    line, col = line + 1, col + 1
                node = node[key]
            elif hasattr(node, "keys") and key in node:
                if lc is not None:
                    kl, kc = lc.key(key)
                    line, col = kl + 1, kc + 1
                node = node[key]
            else:
                break
        except Exception:  # noqa: BLE001 - positions are a courtesy
            break
    return line, col


def _duplicates(yaml, text):
    """All duplicate keys, as (line, col, message); ruamel stops at the first."""
    found = []
    try:
        root = yaml.compose(text)
    except MarkedYAMLError:
        return found
    stack = [(root, ())]
    while stack:
        node, path = stack.pop()
        if node is None:
            continue
        if node.id == "mapping":
            seen = {}
            for key, value in node.value:
                k = getattr(key, "value", None)
                if k in seen:
                    found.append((key.start_mark.line + 1, key.start_mark.column + 1,
                                  f"{_loc_text(path + (k,))}: duplicate key (first given on line {seen[k]})"))
                else:
                    seen[k] = key.start_mark.line + 1
                stack.append((value, path + (k,)))
        elif node.id == "sequence":
            stack.extend((v, path + (i,)) for i, v in enumerate(node.value))
    found.sort()
    return found


def _loc_text(loc):
    parts = []
    for item in loc:
        if isinstance(item, int):
            parts.append(f"[{item}]")
        else:
            parts.append(("." if parts else "") + str(item))
    return "".join(parts) or "(top level)"


def load_study(path) -> Study:
    """Read and validate a study file; raise :class:`InputError` with every
    problem as ``file:line:col: field: message``."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: no such study file")
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the study file ({exc})")
    return parse_study(text, str(path))


def parse_study(text, filename="<study>") -> Study:
    yaml = YAML(typ="rt")
    yaml.version = (1, 2)
    yaml.allow_duplicate_keys = True
    messages = [f"{filename}:{ln}:{col}: {msg}" for ln, col, msg in _duplicates(YAML(typ="rt"), text)]
    try:
        data = yaml.load(text)
    except MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line, col = (mark.line + 1, mark.column + 1) if mark else (1, 1)
        problem = exc.problem or exc.context or "YAML syntax error"
        raise InputError(messages + [f"{filename}:{line}:{col}: YAML syntax error: {problem}"])
    if data is None:
        raise InputError(messages + [f"{filename}:1:1: the study file is empty; start from `hopscape new NAME`"])
    if not hasattr(data, "keys"):
        kind = "list" if isinstance(data, list) else "number" if isinstance(data, (int, float)) else "text"
        raise InputError(messages + [f"{filename}:1:1: a study file must be a mapping of sections "
                                     f"(name, body, contact, release, ...), got a {kind}"])
    plain = _plain(data)
    found = []  # (line, col, text)
    study = None
    try:
        study = Study.model_validate(plain)
    except ValidationError as exc:
        for err in exc.errors():
            loc = tuple(err["loc"])
            line, col = _position(data, loc)
            found.append((line, col, f"{_loc_text(loc)}: {_message(err)}"))
    for loc, msg in cross_check(plain) + (check_size(study) if study is not None else []):
        line, col = _position(data, loc)
        found.append((line, col, f"{_loc_text(loc)}: {msg}"))
    messages += [f"{filename}:{line}:{col}: {text}" for line, col, text in sorted(set(found))]
    if messages:
        raise InputError(messages)
    return study


_BOUND_WORDS = {"greater_than_equal": "ge", "less_than_equal": "le", "greater_than": "gt", "less_than": "lt"}


def _field_bounds(loc):
    """(ge/gt, le/lt) declared on the model field at ``loc``, if any."""
    model, info = Study, None
    for key in loc:
        if isinstance(key, int):
            continue
        fields = getattr(model, "model_fields", {})
        if key not in fields:
            return None
        info = fields[key]
        annotation = info.annotation
        model = next((a for a in getattr(annotation, "__args__", (annotation,))
                      if isinstance(a, type) and issubclass(a, BaseModel)), None)
        if model is None:
            model = annotation
    if info is None:
        return None
    low = high = None
    for meta in info.metadata:
        for name, side in (("ge", "["), ("gt", "(")):
            if getattr(meta, name, None) is not None:
                low = (side, getattr(meta, name))
        for name, side in (("le", "]"), ("lt", ")")):
            if getattr(meta, name, None) is not None:
                high = (side, getattr(meta, name))
    return low, high


def _message(err):
    msg = err["msg"].removeprefix("Value error, ")
    kind = err["type"]
    if kind == "extra_forbidden":
        return "unknown field (check the spelling; `hopscape new` writes every field)"
    if kind == "missing":
        return "required field is missing"
    if kind in _BOUND_WORDS:
        bounds = _field_bounds(tuple(err["loc"]))
        if bounds:
            low, high = bounds
            num = lambda v: str(v) if isinstance(v, int) else f"{v:g}"  # noqa: E731
            if low and high:
                text = f"in {low[0]}{num(low[1])}, {num(high[1])}{high[0]}"
            elif low:
                text = (">= " if low[0] == "[" else "> ") + num(low[1])
            else:
                text = ("<= " if high[0] == "]" else "< ") + num(high[1])
            return f"must be {text}, got {err['input']!r}"
    if "input" in err and kind != "value_error" and "got" not in msg:
        return f"{msg}, got {err['input']!r}"
    return msg


def _plain(node):
    """ruamel containers to plain dicts and lists (pydantic wants those)."""
    if hasattr(node, "keys"):
        return {str(k): _plain(v) for k, v in node.items()}
    if isinstance(node, list):
        return [_plain(v) for v in node]
    return node
