"""The planner (explore.plan): stage tables and counts for every sensitivity method, and no plotting.

Checks written from the planner's own contract: ``count_drops`` (what
``hopscape check`` shows) must agree with the tables ``build_stages``
builds, and planning must not load matplotlib (the chunk workers and
``hopscape check`` need no plotting).
"""
import subprocess
import sys
from pathlib import Path

import pytest

from explore.plan import _STREAM, STAGES, build_stages, count_drops
from explore.sensitivity import METHODS
from explore.study import COLUMN, parse_study

ROOT = Path(__file__).resolve().parents[1]

# 3 x 4 grid cells x 2 draws = 24 grid drops; four quantities vary
STUDY = """\
name: plan
body: {shape: capsule, diameter: 0.006, density: 1150, aspect_ratio: {grid: {low: 2.0, high: 6.0, steps: 3}}}
contact: {restitution: {uniform: {low: 0.8, high: 0.95}}, friction: 0.2}
release: {height: {normal: {mean: 0.05, sd: 0.01}}, angle: {grid: {low: 0, high: 90, steps: 4}}}
analyses: {draws: 2, robustness: false, sensitivity: SETTINGS}
run: {seed: 3}
"""


def loaded_modules(module):
    """Top-level packages loaded by importing ``module`` in a fresh interpreter."""
    code = (f"import sys, {module}; "
            "print(' '.join(sorted({name.split('.')[0] for name in sys.modules})))")
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True)
    return set(done.stdout.split())


def test_planning_imports_no_plotting():
    loaded = loaded_modules("explore.plan")
    assert "explore" in loaded and "SALib" in loaded     # the check sees what was imported
    assert "matplotlib" not in loaded


def test_distributions_import_neither_plotting_nor_salib():
    loaded = loaded_modules("explore.distributions")
    assert "scipy" in loaded
    assert not {"matplotlib", "SALib"} & loaded


@pytest.mark.parametrize("settings, rows", [
    # Saltelli: N (D + 2) rows, N (2 D + 2) with second order; Morris: r (D + 1);
    # D = 4 varying quantities (aspect_ratio, restitution, height, angle)
    ("{method: sobol, samples: 16}", 16 * 6),
    ("{method: sobol, samples: 16, second_order: true}", 16 * 10),
    ("{method: morris, samples: 6, levels: 4}", 6 * 5),
])
def test_counts_agree_with_the_stage_tables(settings, rows):
    study = parse_study(STUDY.replace("SETTINGS", settings))
    stages, plan = build_stages(study)
    method = study.analyses.sensitivity.method
    assert plan.method == method and plan.rows == rows
    assert {stage: len(table) for stage, table in stages.items()} == count_drops(study) == {"grid": 24, method: rows}
    table = stages[method]
    assert list(table["sample"]) == list(range(rows))
    # the study's normal height is truncated to the allowed range of heights
    # (1e-5 to 100 m), so even the Morris grid's ends u = 0 and 1 give finite values
    assert table[COLUMN["height"]].between(1e-5, 100.0).all()


def test_stage_streams_keep_their_numbers():
    # the numbers every earlier study's draws were made with
    assert _STREAM == {"grid": 1, "robust": 2, "sobol": 3, "morris": 4}
    assert STAGES == ("grid", "robust", *METHODS) and len(set(_STREAM.values())) == len(STAGES)
