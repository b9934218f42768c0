"""The Python API in ``hopscape/__init__.py`` (the repository's explore/__init__.py).

What it promises: ``import hopscape`` is light; each function gives what
the matching command gives (same defaults, same tables, degrees at the
edge); the README's "From Python" example runs as written; one default
number of impacts everywhere.
"""
import inspect
import re
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import hopscape
from conftest import SMALL, SMALL_COUNTS, write_study
from hopscape import sim
from hopscape.batch import OUTPUT_COLUMNS, run_batch
from hopscape.cli import build_parser, main
from hopscape.errors import InputError
from hopscape.study import RunSettings, parse_study, template_text

ROOT = Path(__file__).resolve().parents[1]

#: The README's 30 mm pin tipping off a 6 mm step, as API keywords and as options.
PIN = {"radius": 0.003, "length": 0.024, "height": 0.006, "height_of": "bottom", "angle": 50.0,
       "restitution": 0.9, "friction": 0.1}
PIN_OPTIONS = ["--radius", "0.003", "--length", "0.024", "--height", "0.006", "--height-of", "bottom",
               "--angle", "50", "--restitution", "0.9", "--friction", "0.1"]


def readme_example():
    """The Python block of the README's "From Python" section."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## From Python", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```python\n(.*?)```", section, flags=re.S)
    assert len(blocks) == 1, "the section holds one Python block"
    return blocks[0]


# --------------------------------------------------------------------------
# the surface
# --------------------------------------------------------------------------

def test_import_hopscape_loads_nothing_heavy():
    code = ("import sys, hopscape; print(' '.join(m for m in ('numpy', 'pandas', 'pydantic', 'matplotlib', "
            "'ruamel', 'scipy', 'joblib') if m in sys.modules))")
    loaded = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert loaded.strip() == ""


def test_lazy_names_resolve_to_the_modules_own_objects():
    from hopscape.errors import InputError as error_class
    from hopscape.study import Study

    assert hopscape.sim is sim
    assert hopscape.Study is Study
    assert hopscape.InputError is error_class
    assert set(hopscape.__all__) <= set(dir(hopscape))
    with pytest.raises(AttributeError, match="no attribute 'nonsense'"):
        hopscape.nonsense  # noqa: B018


@pytest.mark.parametrize("function", [hopscape.load_study, hopscape.run_study, hopscape.simulate_drops,
                                      hopscape.drop, hopscape.StudyRun.table, hopscape.Drop.history])
def test_every_function_documents_its_parameters_and_returns(function):
    doc = inspect.getdoc(function)
    assert "Parameters\n----------" in doc and "Returns\n-------" in doc
    documented = set(re.findall(r"^(\w+)(?:, (\w+))? :", doc, flags=re.M))
    named = {name for pair in documented for name in pair if name}
    wanted = [p for p in inspect.signature(function).parameters if p not in ("self", "dimensions")]
    assert set(wanted) <= named, f"undocumented: {set(wanted) - named}"


def test_drop_states_its_units():
    doc = inspect.getdoc(hopscape.drop)
    for unit in ("[m]", "[deg]", "[rad/s]", "[m/s]", "[kg/m^3]", "[ms]"):
        assert unit in doc


def test_one_default_number_of_impacts_everywhere():
    parser = build_parser()
    defaults = {
        "hopscape drop": parser.parse_args(["drop"]).impacts,
        "hopscape batch": parser.parse_args(["batch", "in.csv", "--out", "out.csv"]).impacts,
        "run.impacts": RunSettings().impacts,
        "the template": parse_study(template_text("t")).run.impacts,
        "run_batch": inspect.signature(run_batch).parameters["impacts"].default,
        "hopscape.drop": inspect.signature(hopscape.drop).parameters["impacts"].default,
        "hopscape.simulate_drops": inspect.signature(hopscape.simulate_drops).parameters["impacts"].default,
    }
    assert defaults == dict.fromkeys(defaults, 8)
    assert hopscape.DEFAULT_IMPACTS == 8
    assert "**8 impacts**" in (ROOT / "README.md").read_text(encoding="utf-8")


# --------------------------------------------------------------------------
# one drop
# --------------------------------------------------------------------------

def _command_impacts(tmp_path, capsys, options):
    path = tmp_path / "impacts.csv"
    assert main(["drop", "--no-plots", "--csv", str(path), *options]) == 0
    capsys.readouterr()
    return pd.read_csv(path, keep_default_na=False, na_values=[""])


#: A steep drop onto a floor inclined by 20 deg, bounces as a 60 frames/s camera sees them.
INCLINE = {"height": 0.05, "angle": 70.0, "floor_angle": 20.0, "camera_fps": 60.0}
INCLINE_OPTIONS = ["--height", "0.05", "--angle", "70", "--floor-angle", "20", "--fps", "60"]


#: Released flat while sliding: both ends land at once, resolved with the materials' E*
#: by the default model (docs/physics.md section 7.1), or under the middle by impulse.
FLAT = {"height": 0.01, "angle": 0.0, "vx": 0.5, "body_material": "nylon", "floor_material": "steel"}
FLAT_OPTIONS = ["--height", "0.01", "--angle", "0", "--vx", "0.5", "--body-material", "nylon",
                "--floor-material", "steel"]


@pytest.mark.parametrize("options, keywords", [([], {}), (PIN_OPTIONS, PIN), (INCLINE_OPTIONS, INCLINE),
                                               (FLAT_OPTIONS, FLAT),
                                               (FLAT_OPTIONS + ["--model", "impulse"], {**FLAT, "model": "impulse"})],
                         ids=["defaults", "pin", "incline", "flat", "flat-impulse"])
def test_drop_gives_the_commands_impact_table(tmp_path, capsys, options, keywords):
    ours = hopscape.drop(**keywords).impacts
    theirs = _command_impacts(tmp_path, capsys, options)
    assert list(ours.columns) == list(OUTPUT_COLUMNS)
    assert len(ours) == len(theirs) > 0
    for column in ("time", "angle", "vx", "vy", "spin", "peak_centre", "peak_bottom", "energy_after"):
        # the CSV keeps 17 significant digits; the arithmetic is the same
        assert np.allclose(ours[column], theirs[column], rtol=1e-12, atol=1e-15), column
    assert list(ours["slip"]) == list(theirs["slip"])
    assert list(ours["bounce"]) == list(theirs["bounce"])


def test_history_before_the_first_impact_is_free_flight():
    # Before the first impact the body flies freely: the centre falls as
    # h0 - g t^2 / 2, the angle turns at the release spin, and the total
    # energy stays m g h0 + I omega^2 / 2 (free fall under constant gravity:
    # Halliday, Resnick & Walker, Fundamentals of Physics, the chapter on
    # motion in one dimension; from memory). Degrees at the edge: the release
    # angle is 30.
    height, angle, spin = 0.3, 30.0, 5.0
    one = hopscape.drop(height=height, angle=angle, spin=spin)
    first = one.impacts["time"].iloc[0]
    times = np.linspace(0.0, 0.95 * first, 20)
    path = one.history(times)
    assert np.allclose(path["y"], height - 0.5 * sim.GRAVITY * times ** 2, rtol=0, atol=1e-12)
    assert np.allclose(path["angle"], angle + np.degrees(spin) * times, rtol=0, atol=1e-9)
    mass, inertia = one.shape.mass, one.shape.inertia
    assert np.allclose(path["total"], mass * sim.GRAVITY * height + 0.5 * inertia * spin ** 2, rtol=1e-12)
    assert one.energy_bound == pytest.approx(height + inertia * spin ** 2 / (2 * mass * sim.GRAVITY), rel=1e-12)


def test_bounces_of_a_sphere_rise_to_e_squared_of_the_fall():
    # A sphere dropped without spin onto a frictionless floor rebounds at e
    # times its impact speed and climbs e^2 times the height it fell
    # (Newton's restitution for a central impact: W. J. Stronge, Impact
    # Mechanics, CUP 2000, ch. 1; docs/physics.md section 4):
    # the centre peaks at r + e^2 (h0 - r).
    radius, height, e = 0.01, 0.2, 0.7
    ball = hopscape.drop("sphere", radius=radius, height=height, angle=0.0, restitution=e, friction=0.0,
                         impacts=3)
    bounces = ball.bounces
    expected = radius + e ** 2 * (height - radius) * e ** (2 * np.arange(len(bounces)))
    assert np.allclose(bounces["height_centre"], expected, rtol=1e-9)
    assert np.allclose(bounces["ratio_centre"], expected / height, rtol=1e-9)


def test_bounce_window_is_merge_ms_or_one_camera_frame():
    # the rule of sim/bounces.py: an impact joins the bounce before it when
    # the flight between them is shorter than the window (10 ms by default,
    # one frame interval with a camera's frame rate)
    for window, seconds in (({"merge_ms": 1.0}, 0.001), ({}, 0.010), ({"camera_fps": 25.0}, 0.040)):
        impacts = hopscape.drop(**PIN, **window).impacts
        starts_a_bounce = np.concatenate([[True], impacts["flight"].to_numpy()[:-1] >= seconds])
        assert list(impacts["bounce"]) == list(np.cumsum(starts_a_bounce)), window
    assert hopscape.drop(**PIN, merge_ms=10.0).impacts.equals(hopscape.drop(**PIN).impacts)
    with pytest.raises(InputError, match="give merge_ms or camera_fps, not both"):
        hopscape.drop(merge_ms=5.0, camera_fps=100.0)
    with pytest.raises(InputError, match=r"camera_fps must be in \(0, 1e\+07\], got 0"):
        hopscape.simulate_drops(DROPS, camera_fps=0.0)
    with pytest.raises(InputError, match=r"merge_ms must be in \[0, 1000\], got -1"):
        hopscape.drop(merge_ms=-1.0)


def test_bounce_window_is_bounded_alike_in_a_study_the_cli_and_the_api(tmp_path, capsys):
    # one declaration (run.merge_ms, run.camera_fps in the study schema);
    # the command line and the Python API used to accept any upper value
    from conftest import SMALL_STUDY, changed, study_yaml
    path = write_study(tmp_path, study_yaml(changed(SMALL_STUDY, run={"merge_ms": 2000})))
    assert main(["check", str(path)]) == 2
    assert "run.merge_ms" in capsys.readouterr().err
    with pytest.raises(InputError, match=r"merge_ms must be in \[0, 1000\], got 2000"):
        hopscape.drop(merge_ms=2000.0)
    assert main(["drop", "--merge-ms", "2000"]) == 2
    assert "--merge-ms must be in [0, 1000], got 2000" in capsys.readouterr().err
    assert main(["drop", "--fps", "2e7"]) == 2
    assert "--fps must be in (0, 1e+07], got 2e+07" in capsys.readouterr().err
    with pytest.raises(ValueError, match="floor_angle must be in"):
        hopscape.drop(floor_angle=75.0)


def test_drop_bad_value_names_the_field():
    with pytest.raises(ValueError, match=r"restitution must be in \[0, 1\], got 1.5"):
        hopscape.drop(restitution=1.5)
    with pytest.raises(ValueError, match="shape must be one of"):
        hopscape.drop("cube", aspect_ratio=3)


# --------------------------------------------------------------------------
# many drops
# --------------------------------------------------------------------------

DROPS = pd.DataFrame({"shape": ["capsule", "spheroid", "capsule"], "length": [0.014, 0.02, 0.014],
                      "radius": [0.0035, 0.004, 0.0035], "density": 1200.0, "height": [0.05, 0.08, 0.05],
                      "angle": [30.0, 60.0, 30.0], "spin": [0.0, 5.0, 0.0], "restitution": [0.8, 0.7, 1.5],
                      "friction": 0.3})


def test_simulate_drops_gives_the_batch_commands_table(tmp_path, capsys):
    source, out = tmp_path / "drops.csv", tmp_path / "impacts.csv"
    DROPS.to_csv(source, index=False)
    assert main(["batch", str(source), "--out", str(out)]) == 0
    capsys.readouterr()
    theirs = pd.read_csv(out, keep_default_na=False, na_values=[""])
    ours = hopscape.simulate_drops(DROPS)
    assert list(ours.columns) == list(OUTPUT_COLUMNS)
    assert list(ours["drop"]) == list(theirs["drop"])
    assert list(ours["error"]) == list(theirs["error"].fillna(""))
    good = ours["error"] == ""
    assert np.allclose(ours.loc[good, "peak_centre"], theirs.loc[good, "peak_centre"], rtol=1e-12)
    # the bad row (restitution 1.5) is reported, not raised
    assert ours.loc[ours["drop"] == 2, "error"].item() == "restitution must be in [0, 1], got 1.5"


def test_simulate_drops_takes_columns_and_warns_about_units():
    columns = {"shape": ["capsule"], "length": [0.014], "radius": [0.0035], "density": [1200.0],
               "height": [50.0], "angle": [30.0], "restitution": [0.8], "friction": [0.3]}
    with pytest.warns(UserWarning, match="column height: 1 capsule row .*millimetres"):
        table = hopscape.simulate_drops(columns, impacts=2)
    assert list(table["impact"]) == [1, 2]
    with pytest.raises(InputError, match="lacks the column"):
        hopscape.simulate_drops({"shape": ["capsule"]})


# --------------------------------------------------------------------------
# studies
# --------------------------------------------------------------------------

def test_load_study_by_name_file_or_text_with_changes(monkeypatch):
    monkeypatch.chdir(ROOT)
    by_name = hopscape.load_study("quick")
    assert by_name == hopscape.load_study(ROOT / "studies" / "quick.yaml")
    assert hopscape.load_study(SMALL) == parse_study(SMALL)
    changed = hopscape.load_study("quick", changes={"analyses.draws": 4, "release.angle.grid.steps": 7,
                                                    "analyses.sensitivity": None})
    assert changed.analyses.draws == 4 and changed.release.angle.grid.steps == 7
    assert changed.analyses.sensitivity is None
    assert changed.body == by_name.body                         # everything else as in the file


def test_load_study_changes_are_checked_like_the_file(monkeypatch):
    monkeypatch.chdir(ROOT)
    with pytest.raises(InputError, match=r"studies/quick.yaml \(with changes\):\d+:\d+: contact.restitution: "
                                         r"must be in \[0, 1\], got 1.5"):
        hopscape.load_study("quick", changes={"contact.restitution": 1.5})
    with pytest.raises(InputError, match="changes: body.diameter.value: value is inside a value"):
        hopscape.load_study("quick", changes={"body.diameter.value": 0.01})
    with pytest.raises(InputError, match="no such study file"):
        hopscape.load_study("no-such-study")


def test_run_study_tables_per_stage_and_combined(tmp_path):
    run = hopscape.run_study(write_study(tmp_path, SMALL), tmp_path / "run", backend="sequential", analyse=False)
    assert (run.folder / "study.yaml").read_text(encoding="utf-8") == SMALL    # the file as written
    assert {stage: len(table) for stage, table in run.tables.items()} == SMALL_COUNTS
    assert run.report is None and run.ranking is None
    every = run.table()
    assert every["stage"].value_counts().to_dict() == SMALL_COUNTS
    pd.testing.assert_frame_equal(run.table("grid"), run.tables["grid"])
    assert (run.table("sobol")["stage"] == "sobol").all()
    with pytest.raises(InputError, match="stage must be one of grid, robust, sobol .* got 'morris'"):
        run.table("morris")
    # the parts on disk carry the stage too, so one read of the folder keeps them apart
    # (pyarrow takes the first part's columns: a grid part's, here)
    on_disk = pd.read_parquet(run.folder / "results")
    assert on_disk["stage"].value_counts().to_dict() == SMALL_COUNTS
    with pytest.raises(InputError, match="jobs must be >= 1, got 0"):
        hopscape.run_study(run.study, tmp_path / "other", jobs=0)


@pytest.mark.slow
def test_readme_example_runs_as_written(tmp_path, monkeypatch):
    # the example names studies by name and writes runs/: give it a folder of its own
    shutil.copytree(ROOT / "studies", tmp_path / "studies")
    monkeypatch.chdir(tmp_path)
    code = readme_example()
    names = {}
    exec(compile(code, "README.md (From Python)", "exec"), names)  # noqa: S102
    # the comments in the example say what it prints; hold them to it
    said = float(re.search(r"bounce 3: ([\d.]+) x its release height", code).group(1))
    assert round(names["pin"].bounces["ratio_bottom"].iloc[2], 2) == said
    total = names["path"]["total"].to_numpy()
    assert np.all(np.diff(total) <= 1e-12 * total[0])    # the energetic law never creates energy
    run = names["run"]
    from hopscape.plan import count_drops
    assert run.table()["stage"].value_counts().to_dict() == count_drops(run.study)
    assert run.report == Path("runs/quick-first-look/report.html") and run.report.exists()
    assert names["impacts"]["drop"].unique().tolist() == [0, 1, 2]


def test_version_is_the_installed_one(capsys):
    from importlib.metadata import version
    assert main(["--version"]) == 0
    assert capsys.readouterr().out.strip() == f"hopscape {version('hopscape')}"


def test_every_option_of_every_command_says_what_it_does():
    import argparse
    parser = build_parser()
    commands = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    silent = [f"{name} {action.dest}" for name, sub in commands.choices.items() for action in sub._actions
              if not isinstance(action, argparse._HelpAction) and not action.help]
    assert silent == []
