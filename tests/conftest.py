"""What several test modules share: study files built from parts, runs of
them, and the command line.

Study files are written as Python dicts and rendered to YAML by
:func:`study_yaml`, so a test says only how its study differs from another
(:func:`changed`) instead of repeating the whole file. Test modules import
the helpers with ``from conftest import ...``.

Run the fast set with ``python -m pytest -m "not slow"``; CI runs every test.
"""
from __future__ import annotations

import sys
from pathlib import Path

import pandas as pd
import pytest

from _ishigami import BASE, ISHIGAMI_NAMES, SEED, ishigami_outputs
from hopscape import sensitivity as sens
from hopscape.cli import main
from hopscape.runner import run_study
from hopscape.study import parse_study

#: Order of the sections in a study file.
SECTIONS = ("name", "description", "body", "contact", "release", "metric", "tolerance", "analyses", "run")


def grid(low, high, steps):
    """A quantity swept on ``steps`` evenly spaced values, ends included."""
    return {"grid": {"low": low, "high": high, "steps": steps}}


def uniform(low, high):
    """A quantity drawn uniformly from [low, high]."""
    return {"uniform": {"low": low, "high": high}}


def _flow(value):
    """A value in YAML flow style: ``{grid: {low: 0, high: 90, steps: 5}}``."""
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k}: {_flow(v)}" for k, v in value.items()) + "}"
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_flow(v) for v in value) + "]"
    if isinstance(value, bool):
        return "true" if value else "false"
    return str(value)


def study_yaml(sections: dict) -> str:
    """The text of a study file: top-level scalars, then one block per
    section; a list (maps, curves) becomes one flow mapping per line."""
    lines = []
    for name in SECTIONS:
        section = sections.get(name)
        if section is None:
            continue
        if not isinstance(section, dict):
            lines.append(f"{name}: {section}")
            continue
        lines.append(f"{name}:")
        for key, value in section.items():
            if isinstance(value, list):
                lines.append(f"  {key}:")
                lines += [f"    - {_flow(item)}" for item in value]
            else:
                lines.append(f"  {key}: {_flow(value)}")
    return "\n".join(lines) + "\n"


def changed(sections: dict, **updates) -> dict:
    """A copy of ``sections`` with keys replaced section by section; a value
    of None removes the key (or the whole section)."""
    out = {name: dict(value) if isinstance(value, dict) else value for name, value in sections.items()}
    for name, update in updates.items():
        if isinstance(update, dict) and isinstance(out.get(name), dict):
            out[name].update(update)
            out[name] = {k: v for k, v in out[name].items() if v is not None}
        elif update is None:
            out.pop(name, None)
        else:
            out[name] = update
    return out


# --------------------------------------------------------------------------
# parts of the studies the tests run: round-ended polymer pins, 6 mm across,
# tipping off a feeder step onto steel (a scenario of our own; restitution
# and friction ranges illustrative)
# --------------------------------------------------------------------------

PIN = {"shape": "capsule", "diameter": 0.006}
PIN_ON_STEEL = {"restitution": uniform(0.8, 0.95), "friction": uniform(0.05, 0.3)}

#: 5 aspect ratios x 16 angles = 80 cells x 12 draws = 960 grid drops,
#: 80 x 8 = 640 robust drops, Sobol 128 x (5 + 2) = 896 drops: 2,496.
SMALL_STUDY = {
    "name": "small",
    "description": "pins tipping off a feeder step, small enough for the tests",
    "body": {**PIN, "aspect_ratio": grid(2.0, 6.0, 5), "density": 1150},
    "contact": PIN_ON_STEEL,
    "release": {"height": uniform(0.003, 0.008), "height_of": "bottom", "angle": grid(0, 90, 16)},
    "metric": {"kind": "ratio", "reference": "bottom"},
    "tolerance": {"angle": 2.0, "height": 0.001, "draws": 8},
    "analyses": {"draws": 12, "maps": [{"x": "angle", "y": "aspect_ratio"}], "curves": [{"x": "angle"}],
                 "sensitivity": {"method": "sobol", "samples": 128}, "picks": {"count": 3, "target": 0.5}},
    "run": {"jobs": 2, "chunk_size": 500, "seed": 3, "impacts": 4},
}
SMALL = study_yaml(SMALL_STUDY)
SMALL_COUNTS = {"grid": 960, "robust": 640, "sobol": 896}


def run_text(text, folder, **kwargs):
    """Run the study ``text`` into ``folder`` from Python (no progress bar;
    one process unless ``backend`` says otherwise)."""
    kwargs.setdefault("progress", False)
    kwargs.setdefault("backend", "sequential")
    return run_study(parse_study(text), folder, text, **kwargs)


def write_study(folder, text, name="study.yaml"):
    """Write a study file into ``folder``; return its path."""
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def read_parts(folder):
    """The result table of every stage, read back from the part files."""
    tables = {}
    for path in sorted((Path(folder) / "results").glob("part-*.parquet")):
        stage = path.name.split("-")[1]
        tables.setdefault(stage, []).append(pd.read_parquet(path))
    return {stage: pd.concat(parts, ignore_index=True) for stage, parts in tables.items()}


def hopscape_command():
    """The ``hopscape`` command as a subprocess argument list
    (``python -m hopscape.cli`` of this interpreter's installation)."""
    return [sys.executable, "-m", "hopscape.cli"]


@pytest.fixture(scope="session")
def small_run(tmp_path_factory):
    """The folder of ``hopscape run`` on :data:`SMALL` (maps, ranking,
    picks, report), run once for every module that reads it."""
    base = tmp_path_factory.mktemp("small-run")
    study_path = write_study(base, SMALL, "small.yaml")
    folder = base / "run"
    code = main(["run", str(study_path), "--out", str(folder), "--quiet", "--backend", "sequential"])
    assert code == 0
    return folder


@pytest.fixture(scope="session")
def ishigami_run():
    """A Sobol' run on Ishigami at 2^12 base samples: (plan, y, indices, pairs)."""
    plan = sens.sobol_plan(ISHIGAMI_NAMES, BASE, second_order=False, seed=SEED)
    y = ishigami_outputs(plan)
    indices, pairs = sens.sobol_analyze(plan, y)
    return plan, y, indices, pairs


def example_studies():
    """The example studies the repository ships (``studies/*.yaml`` as git
    tracks them), not a user's own studies written there by ``hopscape new``."""
    import subprocess
    root = Path(__file__).resolve().parents[1]
    try:
        listed = subprocess.run(["git", "ls-files", "studies/*.yaml"], cwd=root, capture_output=True, text=True,
                                check=True).stdout.split()
    except (OSError, subprocess.CalledProcessError):   # not a git checkout: every file there
        return sorted((root / "studies").glob("*.yaml"))
    return sorted(root / name for name in listed)


def ball_text(restitution="0.8", kind="ratio"):
    """A five-line study text of a 10 mm sphere over three angles, for
    messages at a known place: line 3 is the contact, line 5 the metric."""
    return ("name: t\nbody: {shape: sphere, diameter: 0.01}\n"
            f"contact: {{restitution: {restitution}, friction: 0.2}}\n"
            "release: {height: 0.1, angle: {grid: {low: 0, high: 90, steps: 3}}}\n"
            f"metric: {{kind: {kind}, reference: centre}}\n")
