"""Study files: YAML 1.2 text to a validated :class:`explore.study.Study`.

Every mistake is reported before anything is simulated, all at once, as
``file:line:col: field.path: message``: ruamel.yaml keeps the line and
column of every key, pydantic gives each error's field location, and the
two are joined here. Also the commented template ``hopscape new`` writes.
"""
from __future__ import annotations

import string
from importlib import resources
from pathlib import Path

from pydantic import BaseModel, ValidationError
from ruamel.yaml import YAML
from ruamel.yaml.error import MarkedYAMLError

from hopscape import sim
from hopscape.sim.materials import materials
from hopscape.sim.impact import LAW_TABLE

from .errors import InputError, shown
from .metric_kinds import METRIC_KINDS
from .plausibility import study_warnings
from .study import SECTIONS, Study, check_size, contradictions, declared_range


def _sections_alone(plain):
    """The sections of a study file that validate on their own (a section
    left out counts with its default, when it has one)."""
    out = {}
    for name in SECTIONS:
        field = Study.model_fields[name]
        value = plain.get(name) if isinstance(plain, dict) else None
        if value is None:
            if not field.is_required() and field.default is not None:
                out[name] = field.default
            continue
        try:
            out[name] = field.annotation.model_validate(value)
        except ValidationError:
            continue
    return out


def template_text(name):
    """The commented study template for ``hopscape new``, named ``name``,
    with the choices of each kind filled in from their declarations."""
    text = resources.files("hopscape").joinpath("templates/study.yaml").read_text(encoding="utf-8")
    laws = " | ".join(law.name + (" (default, never creates energy)" if law.name == "energetic" else "")
                      + (" (can create energy)" if law.creates_energy else "") for law in LAW_TABLE)
    return string.Template(text).substitute(
        shapes=" | ".join(sim.SHAPES), laws=laws, metric_kinds=" | ".join(METRIC_KINDS),
        references=" | ".join(sim.REFERENCES),
        materials=" | ".join(materials())).replace("name: NAME", f"name: {name}")


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
                k = key.value if key.id == "scalar" else None   # a list or mapping as a key is refused later
                if k is not None and k in seen:
                    found.append((key.start_mark.line + 1, key.start_mark.column + 1,
                                  f"{_loc_text(path + (k,))}: duplicate key (first given on line {seen[k]})"))
                elif k is not None:
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


#: Largest study file read [bytes]. A study is a few kilobytes; a file far
#: larger is a mistake (or an attack on the parser), refused before parsing.
MAX_BYTES = 256 * 1024
#: Deepest nesting of mappings and lists; a study needs four levels.
MAX_DEPTH = 12
#: Most YAML tokens (keys, values, brackets) a study file may hold; the
#: example studies hold about 300. Counting stops here, so a file of huge
#: lists is refused in a fraction of a second instead of parsed for seconds.
MAX_TOKENS = 5000


def load_study(path) -> Study:
    """Read and validate a study file; raise :class:`InputError` with every
    problem as ``file:line:col: field: message``."""
    return parse_study(read_study_text(path), str(path))


def read_study_text(path):
    """The text of a study file: a one-line :class:`InputError` for a missing,
    oversized, unreadable or non-UTF-8 file."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: no such study file")
    try:
        size = path.stat().st_size
        if size > MAX_BYTES:
            raise InputError(f"{path}:1:1: the study file is {size:,} bytes; a study file may hold at most "
                             f"{MAX_BYTES:,} (is this the right file?)")
        return path.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(f"{path}: the study file is not UTF-8 text (byte {exc.start})")
    except OSError as exc:
        raise InputError(f"{path}: cannot read the study file ({exc.strerror or exc})")


def _hostile(text, filename):
    """Problems found before any YAML is built: size, control characters,
    anchors and aliases (a few lines can expand to gigabytes), nesting
    deeper than :data:`MAX_DEPTH`, more than :data:`MAX_TOKENS` tokens. The scanner reads tokens one by one and
    builds nothing, so this is safe on any input."""
    if len(text.encode("utf-8", "replace")) > MAX_BYTES:
        return [f"{filename}:1:1: the study text is over {MAX_BYTES:,} bytes; a study file may hold at most that"]
    for number, line in enumerate(text.splitlines(), 1):
        bad = next((i for i, ch in enumerate(line) if (ord(ch) < 32 and ch != "\t") or ord(ch) == 127), None)
        if bad is not None:
            return [f"{filename}:{number}:{bad + 1}: control character {line[bad]!r} in the study file "
                    "(only text, tabs and line breaks are allowed)"]
    depth = 0
    try:
        for count, token in enumerate(YAML(typ="rt").scan(text)):
            name = type(token).__name__
            if count > MAX_TOKENS:
                return [f"{mark_text(filename, token.start_mark)}: the study file holds over {MAX_TOKENS:,} YAML "
                        "keys, values and brackets; a study needs a few hundred (is this the right file?)"]
            if name in ("AnchorToken", "AliasToken"):
                mark = token.start_mark
                return [f"{mark_text(filename, mark)}: YAML anchors and aliases (& and *) are not allowed in study "
                        "files; write the value out"]
            if name in ("BlockMappingStartToken", "BlockSequenceStartToken", "FlowMappingStartToken",
                        "FlowSequenceStartToken"):
                depth += 1
                if depth > MAX_DEPTH:
                    return [f"{mark_text(filename, token.start_mark)}: nested more than {MAX_DEPTH} levels deep; "
                            "a study file needs four"]
            elif name in ("BlockEndToken", "FlowMappingEndToken", "FlowSequenceEndToken"):
                depth -= 1
    except MarkedYAMLError:
        return []   # the loader reports the syntax error with its place
    return []


def mark_text(filename, mark):
    """``file:line:col`` of a YAML mark (1-based)."""
    return f"{filename}:{mark.line + 1}:{mark.column + 1}"


def parse_study(text, filename="<study>") -> Study:
    """Validate the text of a study file.

    Parameters
    ----------
    text : str
        YAML 1.2 text of the study.
    filename : str
        Name used in messages (``file:line:col``).

    Returns
    -------
    Study

    Raises
    ------
    InputError
        With every problem at once, one ``file:line:col: field: message``
        line each.
    """
    hostile = _hostile(text, filename)
    if hostile:
        raise InputError(hostile)
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
        # the sections that are right on their own can still contradict each other
        for loc, msg in contradictions(_sections_alone(plain)):
            line, col = _position(data, loc)
            found.append((line, col, f"{_loc_text(loc)}: {msg}"))
    inside_share = None
    if study is not None:
        from .plan import count_drops   # the planner needs the validated study
        counts = count_drops(study)
        size_problems = check_size(study, counts)
        if not size_problems and counts.get("grid", 0) <= 2_000_000:
            inside_share = _inside_share(study)
            if inside_share == 1.0:
                size_problems.append((("release", "height"), "every drop of the grid starts touching or inside "
                                      "the floor (the centre is no higher than the body's lowest point below it); "
                                      "raise the height or give height_of: bottom"))
    else:
        size_problems = []
    for loc, msg in size_problems:
        line, col = _position(data, loc)
        found.append((line, col, f"{_loc_text(loc)}: {msg}"))
    messages += [f"{filename}:{line}:{col}: {text}" for line, col, text in sorted(set(found))]
    if messages:
        raise InputError(messages)
    warnings = []
    for loc, message in study_warnings(study):
        line, col = _position(data, loc)
        warnings.append((line, col, f"{filename}:{line}:{col}: {_loc_text(loc)}: {message}"))
    if inside_share:
        line, col = _position(data, ("release", "height"))
        warnings.append((line, col, f"{filename}:{line}:{col}: release.height: {inside_share:.0%} of the grid's "
                                    "drops start touching or inside the floor and will not be simulated"))
    study._warnings = tuple(text for *_, text in sorted(warnings))
    return study


def _inside_share(study):
    """Share of the grid stage's drops that start inside the floor."""
    from .plan import grid_columns, inside_floor
    inside = inside_floor(study, grid_columns(study))
    return float(inside.mean()) if inside.size else 0.0


#: Pydantic's type errors in plain words (a study file's numbers are strict:
#: true, false and quoted text are not numbers).
_TYPE_WORDS = {"finite_number": "a finite number", "float_type": "a number", "float_parsing": "a number", "int_type": "a whole number",
               "int_parsing": "a whole number", "int_from_float": "a whole number", "bool_type": "true or false",
               "string_type": "text"}
_BOUND_WORDS = {"greater_than_equal": "ge", "less_than_equal": "le", "greater_than": "gt", "less_than": "lt"}


def _field_info(loc):
    """The pydantic field declaration at ``loc`` (None where there is none)."""
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
                      if isinstance(a, type) and issubclass(a, BaseModel)), annotation)
    return info


def _field_interval(loc):
    """The :class:`sim.limits.Interval` declared on the model field at
    ``loc`` (:func:`declared_range`); None where the field declares none."""
    info = _field_info(loc)
    return None if info is None else declared_range(info)


def _message(err):
    msg = err["msg"].removeprefix("Value error, ")
    kind = err["type"]
    if kind == "extra_forbidden":
        return "unknown field (check the spelling; `hopscape new` writes every field)"
    if kind == "missing":
        info = _field_info(tuple(err["loc"]))
        if len(err["loc"]) == 1 and err["loc"][0] in SECTIONS:
            return (f"the study has no {err['loc'][0]} section ({info.description}); `hopscape new` writes a "
                    "complete study")
        return "required field is missing" + (f" ({info.description})" if info is not None and info.description
                                               else "")
    if kind in _TYPE_WORDS:
        return f"must be {_TYPE_WORDS[kind]}, got {shown(err['input'])}"
    if kind in _BOUND_WORDS:
        interval = _field_interval(tuple(err["loc"]))
        if interval is not None:
            return f"must be {interval.describe()}, got {shown(err['input'])}"
    if "input" in err and kind not in ("value_error", "study") and "got" not in msg:
        return f"{msg}, got {shown(err['input'])}"
    return msg


def _plain(node):
    """ruamel containers to plain dicts and lists (pydantic wants those)."""
    if hasattr(node, "keys"):
        return {str(k): _plain(v) for k, v in node.items()}
    if isinstance(node, list):
        return [_plain(v) for v in node]
    return node
