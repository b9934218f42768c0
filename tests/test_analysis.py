"""explore.analysis.analyse on tiny real runs: what each sensitivity method produces.

The outside check is the same one tests/test_physics_studies.py uses for a
full Sobol study: uniform density cancels out of rigid-body impact
dynamics (mass and moment of inertia both scale with it, so every impulse
scales with it and no velocity change does; W. J. Stronge, *Impact
Mechanics*, Cambridge University Press 2000, where the impulse equations
involve only 1/m and r^2/I; docs/physics.md section 4). Every index of
density must therefore vanish to rounding, in every method's tables, while
the restitution and the release angle clearly matter.
"""
import numpy as np
import pandas as pd
import pytest

from hopscape import sensitivity
from hopscape.files import LOCK_FILE
from hopscape.analysis import FIGURE_FOLDER, PICKS_FILE, SAFE_REGIONS_FILE, analyse, output_names
from hopscape.cli import main
from hopscape.runner import run_study
from hopscape.study import parse_study

TINY = """\
name: tiny
body: {shape: cylinder, diameter: 0.005, aspect_ratio: 4.0, density: {uniform: {low: 800, high: 2500}}}
contact: {law: energetic, restitution: {uniform: {low: 0.5, high: 0.9}}, friction: 0.3}
release: {height: 0.03, angle: {uniform: {low: 5, high: 85}}}
metric: {kind: ratio, bounce: later, reference: centre}
analyses: {robustness: false, sensitivity: SETTINGS}
run: {jobs: 1, seed: 11, impacts: 4}
"""
SOBOL = TINY.replace("SETTINGS", "{method: sobol, samples: 64}")
SOBOL_PAIRS = TINY.replace("SETTINGS", "{method: sobol, samples: 64, second_order: true}")
MORRIS = TINY.replace("SETTINGS", "{method: morris, samples: 16, levels: 4}")
PARAMETERS = ["angle", "density", "restitution"]

# Rounding only: with density cancelling, each Saltelli or elementary-effect
# difference is ~1e-16 of the metric (an O(1) rebound ratio), so variance
# shares are ~1e-16 (S1, S2) or ~1e-30 (ST, a mean of squares). 1e-9 is far
# above rounding and far below any real dependence (the other two indices
# here are above 0.1).
ROUNDING = 1e-9


def analysed(text, folder):
    outcome = run_study(parse_study(text), folder, text, backend="sequential", progress=False)
    return outcome, analyse(outcome)


def files_in(folder):
    """What a run wrote: its outputs, not its parts nor the folder's lock (hopscape.files.LOCK_FILE)."""
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*") if p.is_file()
                  and p.parent.name != "results" and p.name != LOCK_FILE)


@pytest.fixture(scope="module")
def sobol_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sobol")
    return folder, *analysed(SOBOL, folder)


@pytest.fixture(scope="module")
def sobol_pairs_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sobol-pairs")
    return folder, *analysed(SOBOL_PAIRS, folder)


@pytest.fixture(scope="module")
def morris_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("morris")
    return folder, *analysed(MORRIS, folder)


def test_sobol_writes_ranking_convergence_and_charts(sobol_run):
    folder, outcome, art = sobol_run
    assert art.method == "sobol" and outcome.plan.method == "sobol"
    assert files_in(folder) == ["fingerprint.json", "maps/ranking-convergence.png", "maps/ranking.png",
                                "sensitivity-convergence.csv", "sensitivity.csv", "study.yaml"]
    assert list(art.ranking.columns) == list(sensitivity.SOBOL_COLUMNS)
    assert list(art.ranking["rank"]) == [1, 2, 3]
    assert set(art.sensitivity_tables) == {"convergence"}
    assert art.ranking_charts == [folder / FIGURE_FOLDER / "ranking.png",
                                  folder / FIGURE_FOLDER / "ranking-convergence.png"]
    # the files hold the tables (CSV keeps every digit of a float64)
    pd.testing.assert_frame_equal(pd.read_csv(folder / "sensitivity.csv"), art.ranking, check_exact=True)
    convergence = pd.read_csv(folder / "sensitivity-convergence.csv")
    pd.testing.assert_frame_equal(convergence, art.sensitivity_tables["convergence"], check_exact=True)


def test_sobol_ranking_is_the_methods_analysis_of_the_run(sobol_run):
    _, outcome, art = sobol_run
    y = outcome.tables["sobol"].sort_values("sample")["value"].to_numpy()
    indices, pairs = sensitivity.sobol_analyze(outcome.plan, y)
    assert pairs is None
    expected = indices.sort_values("rank").reset_index(drop=True)
    pd.testing.assert_frame_equal(art.ranking, expected, check_exact=True)
    # the last convergence level is the full analysis itself, bit for bit
    convergence = art.sensitivity_tables["convergence"]
    assert sorted(convergence["base_samples"].unique()) == [16, 32, 64]
    full = convergence[convergence["base_samples"] == 64].set_index("parameter")
    ranked = art.ranking.set_index("parameter")
    np.testing.assert_array_equal(full.loc[PARAMETERS, "ST"], ranked.loc[PARAMETERS, "ST"])


def test_sobol_ranks_density_at_zero(sobol_run):
    _, _, art = sobol_run
    ranked = art.ranking.set_index("parameter")
    assert sorted(ranked.index) == PARAMETERS
    assert abs(ranked.loc["density", "S1"]) < ROUNDING and abs(ranked.loc["density", "ST"]) < ROUNDING
    assert ranked.loc["density", "rank"] == 3
    assert (ranked.loc[["angle", "restitution"], "ST"] > 0.1).all()
    convergence = art.sensitivity_tables["convergence"]
    density = convergence[convergence["parameter"] == "density"]
    assert (density[["S1", "ST"]].abs() < ROUNDING).all(axis=None)


def test_second_order_adds_the_pair_table(sobol_pairs_run):
    folder, outcome, art = sobol_pairs_run
    assert outcome.plan.second_order and len(outcome.tables["sobol"]) == 64 * (2 * 3 + 2)
    assert set(art.sensitivity_tables) == {"second_order", "convergence"}
    pairs = art.sensitivity_tables["second_order"]
    assert list(pairs.columns) == list(sensitivity.SECOND_ORDER_COLUMNS)
    pd.testing.assert_frame_equal(pd.read_csv(folder / "sensitivity-second-order.csv"), pairs, check_exact=True)
    # three parameters, three pairs in plan order; a pair with density has no
    # interaction share (its S2 estimate reduces to the partner's S1 estimate
    # minus itself, so it vanishes to rounding too)
    by_pair = pairs.set_index(["parameter_1", "parameter_2"])["S2"]
    names = outcome.plan.names
    assert list(by_pair.index) == [(names[0], names[1]), (names[0], names[2]), (names[1], names[2])]
    assert all(abs(value) < ROUNDING for pair, value in by_pair.items() if "density" in pair)


def test_morris_writes_the_ranking_alone(morris_run):
    folder, outcome, art = morris_run
    assert art.method == "morris" and outcome.plan.method == "morris"
    assert files_in(folder) == ["fingerprint.json", "sensitivity.csv", "study.yaml"]
    assert art.sensitivity_tables == {} and art.ranking_charts == []
    assert list(art.ranking.columns) == list(sensitivity.MORRIS_COLUMNS)
    y = outcome.tables["morris"].sort_values("sample")["value"].to_numpy()
    expected = sensitivity.morris_analyze(outcome.plan, y).sort_values("rank").reset_index(drop=True)
    pd.testing.assert_frame_equal(art.ranking, expected, check_exact=True)
    pd.testing.assert_frame_equal(pd.read_csv(folder / "sensitivity.csv"), art.ranking, check_exact=True)
    ranked = art.ranking.set_index("parameter")
    assert ranked.loc["density", "mu_star"] < ROUNDING and ranked.loc["density", "sigma"] < ROUNDING
    assert ranked.loc["density", "rank"] == 3
    assert (ranked.loc[["angle", "restitution"], "mu_star"] > 0.1).all()


def test_output_names_cover_every_method_and_the_figures():
    assert output_names() == (FIGURE_FOLDER, PICKS_FILE, SAFE_REGIONS_FILE, "sensitivity.csv", "sensitivity-second-order.csv",
                              "sensitivity-convergence.csv")


def test_fresh_rerun_leaves_no_file_of_the_earlier_run(tmp_path, capsys):
    # a Sobol run with pairs and convergence, then a Morris run into the same
    # folder: --fresh must leave exactly what a Morris run into an empty
    # folder leaves (the user's own files aside)
    sobol_file, morris_file = tmp_path / "sobol.yaml", tmp_path / "morris.yaml"
    sobol_file.write_text(SOBOL_PAIRS, encoding="utf-8")
    morris_file.write_text(MORRIS, encoding="utf-8")
    folder, clean = tmp_path / "run", tmp_path / "clean"
    common = ["--quiet", "--backend", "sequential"]
    assert main(["run", str(sobol_file), "--out", str(folder), *common]) == 0
    before = files_in(folder)
    assert {"sensitivity-second-order.csv", "sensitivity-convergence.csv", "maps/ranking.png"} <= set(before)
    (folder / "notes.txt").write_text("mine", encoding="utf-8")
    capsys.readouterr()
    assert main(["run", str(morris_file), "--out", str(folder), "--fresh", *common]) == 0
    # the command line names the ranking column of the method that ran
    assert "(mu_star " in capsys.readouterr().out
    assert main(["run", str(morris_file), "--out", str(clean), *common]) == 0
    assert files_in(folder) == sorted(files_in(clean) + ["notes.txt"])
    assert not (folder / "maps").exists()
    assert '"sensitivity_method": "morris"' in (folder / "run.json").read_text(encoding="utf-8")
