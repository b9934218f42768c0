"""A suite of broken study files, generated from the declared schema.

Every field of the study models (``hopscape.study``) gets broken in the ways
its declaration allows: a wrong type, a value past each end of its declared
range, an unknown choice, a missing required field, an unknown neighbour,
and for a quantity every malformed form. A new field therefore gets its
broken cases without a line of test code. Each case must end quickly with
exit 2, one ``file:line:col: field: message`` line per problem naming the
broken field, and no traceback.
"""
from __future__ import annotations

import math
import time
import typing

import pytest
from pydantic import BaseModel

from hopscape.cli import main
from hopscape.quantities import QUANTITIES
from hopscape.study import Quantity, Study, declared_range

# a small valid study: every section present, a tiny grid, so that each case
# is checked in milliseconds
BASE = {
    "name": "broken",
    "description": "a valid study the suite breaks field by field",
    "body": {"shape": "capsule", "diameter": 0.006, "aspect_ratio": {"grid": {"low": 2, "high": 4, "steps": 3}},
             "density": 1100},
    "contact": {"law": "energetic", "restitution": {"uniform": {"low": 0.8, "high": 0.9}}, "friction": 0.2},
    "release": {"height": 0.01, "height_of": "bottom", "angle": {"grid": {"low": 0, "high": 90, "steps": 4}}},
    "metric": {"kind": "ratio", "reference": "bottom"},
    "tolerance": {"draws": 4},
    "analyses": {"draws": 2, "maps": [{"x": "angle", "y": "aspect_ratio"}], "curves": [{"x": "angle"}],
                 "sensitivity": {"method": "sobol", "samples": 16}, "picks": {"count": 3}},
    "run": {"jobs": 1, "impacts": 4, "seed": 1},
}


def flow(value):
    """YAML flow text of a value (strings quoted, so that 'yes' stays text)."""
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k}: {flow(v)}" for k, v in value.items()) + "}"
    if isinstance(value, list):
        return "[" + ", ".join(flow(v) for v in value) + "]"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value + '"'
    if value is None:
        return "null"
    if isinstance(value, float) and math.isinf(value):
        return ".inf" if value > 0 else "-.inf"
    return repr(value)


def study_text(data):
    """One line per top-level key, each section in flow style."""
    return "".join(f"{key}: {flow(value)}\n" for key, value in data.items())


REMOVE = object()


def with_value(path, value):
    """A copy of BASE with the field at ``path`` set (or removed)."""
    data = {k: (dict(v) if isinstance(v, dict) else v) for k, v in BASE.items()}
    node = data
    for key in path[:-1]:
        node[key] = dict(node.get(key) or {})
        node = node[key]
    if value is REMOVE:
        node.pop(path[-1], None)
    else:
        node[path[-1]] = value
    return data


def _inner(annotation):
    """(the type, whether None is allowed) of a field annotation."""
    args = typing.get_args(annotation)
    if typing.get_origin(annotation) is typing.Union:
        real = [a for a in args if a is not type(None)]
        return (real[0] if len(real) == 1 else annotation), type(None) in args
    return annotation, False


def _number_cases(path, field, kind):
    allowed = declared_range(field)
    cases = [("true", True), ("text", "3"), ("list", [1, 2]), ("mapping", {"a": 1})]
    if kind is int:
        cases.append(("fraction", 2.5))
    if allowed is not None:
        if math.isfinite(allowed.low):
            cases.append(("below", allowed.low - max(1, abs(allowed.low))))
        if math.isfinite(allowed.high):
            cases.append(("above", allowed.high + max(1, abs(allowed.high))))
    return cases


def _quantity_cases(name):
    allowed = QUANTITIES[name].allowed
    cases = [
        ("true", True), ("text", "0.5"), ("list", [1, 2]), ("value_true", {"value": True}),
        ("two_forms", {"value": 1, "grid": {"low": 0, "high": 1, "steps": 3}}), ("no_form", {}),
        ("unknown_form", {"triangle": {"low": 0, "high": 1}}), ("grid_one_step", {"grid": {"low": 0, "high": 1,
                                                                                          "steps": 1}}),
        ("grid_reversed", {"grid": {"low": 1, "high": 0, "steps": 3}}),
        ("grid_text_steps", {"grid": {"low": 0, "high": 1, "steps": "many"}}),
        ("uniform_missing_high", {"uniform": {"low": 0}}), ("normal_zero_sd", {"normal": {"mean": 0, "sd": 0}}),
        ("normal_infinite_sd", {"normal": {"mean": 0, "sd": math.inf}}),
        ("log_uniform_negative", {"log_uniform": {"low": -1, "high": 1}}),
        ("infinite", math.inf),
    ]
    if math.isfinite(allowed.high):
        cases.append(("above", allowed.high + max(1, abs(allowed.high))))
        cases.append(("grid_above", {"grid": {"low": allowed.low if math.isfinite(allowed.low) else 0,
                                              "high": allowed.high * 2 + 1, "steps": 3}}))
    if math.isfinite(allowed.low):
        cases.append(("below", allowed.low - max(1, abs(allowed.low))))
    return cases


def _cases(model, path=()):
    """(id, path, broken value, field path the message must name) for
    every field of ``model`` and below."""
    for name, field in model.model_fields.items():
        here = path + (name,)
        dotted = ".".join(here)
        kind, optional = _inner(field.annotation)
        if field.is_required():
            yield f"{dotted}-missing", here, REMOVE, dotted if len(here) > 1 else name
        if kind is Quantity:
            for case, value in _quantity_cases(name):
                yield f"{dotted}-{case}", here, value, dotted
        elif isinstance(kind, type) and issubclass(kind, BaseModel):
            yield f"{dotted}-list", here, [1, 2], dotted
            yield f"{dotted}-number", here, 3, dotted
            yield f"{dotted}-unknown_key", here + ("no_such_field",), 1, dotted + ".no_such_field"
            if not here[:1] == ("analyses",) or len(here) < 2 or here[-1] in ("sensitivity", "picks"):
                yield from _cases(kind, here)
        elif typing.get_origin(kind) is typing.Literal:
            yield f"{dotted}-unknown_choice", here, "no_such_choice", dotted
            yield f"{dotted}-number", here, 3, dotted
        elif kind is bool:
            yield f"{dotted}-text", here, "yes", dotted
            yield f"{dotted}-number", here, 1, dotted
        elif kind in (int, float):
            for case, value in _number_cases(here, field, kind):
                yield f"{dotted}-{case}", here, value, dotted
        elif kind is str:
            yield f"{dotted}-list", here, ["a"], dotted
            yield f"{dotted}-number", here, 3, dotted
        elif typing.get_origin(kind) is list:
            yield f"{dotted}-not_a_list", here, "png", dotted
            yield f"{dotted}-list_of_numbers", here, [1, 2], dotted
    if not path:
        yield "top-unknown_section", ("no_such_section",), {"a": 1}, "no_such_section"


CASES = list(_cases(Study))


def test_the_suite_is_large_and_covers_every_field():
    assert len(CASES) >= 300
    named = {case[3].split(".")[0] for case in CASES}
    assert set(Study.model_fields) <= named


@pytest.mark.slow
@pytest.mark.parametrize("path, value, field", [case[1:] for case in CASES], ids=[case[0] for case in CASES])
def test_a_broken_study_is_refused_with_its_place(tmp_path, capsys, path, value, field):
    study = tmp_path / "broken.yaml"
    study.write_text(study_text(with_value(path, value)), encoding="utf-8")
    start = time.perf_counter()
    code = main(["check", str(study)])
    seconds = time.perf_counter() - start
    out, err = capsys.readouterr()
    errors = [line for line in err.splitlines() if not line.startswith("hopscape: warning: ")]
    assert code == 2, f"accepted: {study.read_text()}"
    assert seconds < 3.0
    assert "Traceback" not in err and errors
    for line in errors:
        assert line.startswith(f"hopscape: error: {study}:"), line
        place = line[len(f"hopscape: error: {study}:"):].split(":")
        assert place[0].isdigit() and place[1].isdigit(), line
    assert any(f": {field}" in line for line in errors), f"no message names {field}:\n" + "\n".join(errors)


def test_the_unbroken_base_study_is_accepted(tmp_path, capsys):
    study = tmp_path / "base.yaml"
    study.write_text(study_text(BASE), encoding="utf-8")
    assert main(["check", str(study)]) == 0, capsys.readouterr().err
