"""Every example study in studies/ shows what it is for.

Each runs here small (every grid at 11 steps, 8 draws per cell, one
process; the maps alone, or a short ranking where there is no map) and must show its event in part of each map and not
in all of it: a map where the event never happens (or always does) answers
no question. A study without a map must show it in some drops and not all.
The full-size studies are timed and counted in the README's table.
"""

import numpy as np
import pandas as pd
import pytest

import hopscape
from conftest import example_studies
from hopscape.quantities import QUANTITIES

STUDIES = example_studies()

#: Grid steps, draws per cell and tolerance draws of the small runs.
STEPS, DRAWS, TOLERANCE_DRAWS, SOBOL_SAMPLES = 11, 8, 4, 256


def small_changes(study):
    """Changes (dotted paths, for :func:`hopscape.load_study`) that make ``study`` small."""
    changes = {f"{QUANTITIES[name].section}.{name}.grid.steps": STEPS for name in study.gridded()}
    changes.update({"analyses.draws": DRAWS, "tolerance.draws": TOLERANCE_DRAWS, "run.jobs": 1,
                    "run.backend": "sequential"})
    if study.analyses.maps:   # the maps are what is judged: no ranking, robustness or picks
        changes.update({"analyses.sensitivity": None, "analyses.robustness": False, "analyses.picks": None})
    elif study.analyses.sensitivity is not None:
        changes["analyses.sensitivity.samples"] = SOBOL_SAMPLES
    return changes


@pytest.fixture(scope="module", params=STUDIES, ids=[path.stem for path in STUDIES])
def small_example(request, tmp_path_factory):
    full = hopscape.load_study(request.param)
    study = hopscape.load_study(request.param, changes=small_changes(full))
    return hopscape.run_study(study, tmp_path_factory.mktemp(full.name))


def test_examples_are_found():
    assert {path.stem for path in STUDIES} >= {"quick", "capsule-chute", "tablet-flick", "rod-glass"}


@pytest.mark.slow
def test_event_happens_in_part_of_every_map(small_example):
    maps = sorted((small_example.folder / "maps").glob("map-*.csv"))
    assert len(maps) == len(small_example.study.analyses.maps)
    for path in maps:
        probability = pd.read_csv(path)["event_probability"].dropna()
        assert len(probability) == STEPS ** 2, path.name
        assert (probability > 0).any(), f"{path.name}: the event never happens"
        assert (probability < 1).any(), f"{path.name}: the event always happens"
    if not maps:   # a ranking-only study: the event in some drops, not in all
        share = small_example.table()["event"].mean()
        assert 0 < share < 1


@pytest.mark.slow
def test_no_impact_creates_energy(small_example):
    # the energetic law never creates energy (Stronge 1991; docs/physics.md
    # section 4), nor do the two-contact pairs of the default model (damping
    # and friction only take it away, section 7.1)
    if small_example.study.contact.law != "energetic":
        pytest.skip("other laws can create energy with slip reversal")
    assert not small_example.table()["energy_gain"].any()


@pytest.mark.slow
def test_the_centre_never_beats_its_energy_bound(small_example):
    # docs/physics.md section 6: under the energetic law impacts never create
    # energy, so no bounce of the centre rises above h0 + I omega0^2 / (2 m g)
    # (plus the kinetic energy of a throw): ratio <= the energy bound ratio.
    study = small_example.study
    if study.metric.reference != "centre" or study.contact.law != "energetic":
        pytest.skip("the bound is stated for the centre under the energetic law")
    table = small_example.table()
    ratios = table.filter(regex=r"^ratio_\d+$").to_numpy()
    bound = table["energy_bound_ratio"].to_numpy()[:, None]
    assert np.all(np.nan_to_num(ratios) <= bound * (1 + 1e-9))


def test_description_names_what_the_metric_measures():
    # a study that asks about beating the first bounce must measure that, and
    # one that asks about the release height must not measure the first
    for path in STUDIES:
        study = hopscape.load_study(path)
        about_first = "first" in study.description
        measures_first = study.metric.kind in ("beats_first", "later_over_first")
        assert about_first == measures_first, f"{path.name}: '{study.description}' vs kind {study.metric.kind}"
