"""Study files: every mistake is reported before anything is simulated.

The contract (explore/study.py): problems come all at once, one line each,
as ``file:line:col: field.path: message``, on stderr behind
``hopscape: error:``, with exit code 2 and never a traceback. The line and
column numbers are checked against the test YAML itself: ``where`` finds the
line holding a unique snippet and the column of the key on that line, so a
test fails if a message points anywhere else.
"""
import re
import subprocess

import pytest

from conftest import PIN, changed, grid, hopscape_command, study_yaml, uniform, write_study
import hopscape.metrics
import hopscape.runner
from hopscape import sim
from hopscape.cli import main
from hopscape.study import parse_study

# A valid, small study. Every test below breaks it in one or more places.
GOOD_STUDY = {
    "name": "probe",
    "description": "a small valid study the tests break on purpose",
    "body": {**PIN, "aspect_ratio": grid(2.0, 5.0, 4), "density": 1150},
    "contact": {"restitution": uniform(0.8, 0.95), "friction": 0.2},
    "release": {"height": 0.02, "angle": grid(0, 90, 5)},
    "metric": {"kind": "ratio", "reference": "centre"},
    "analyses": {"draws": 4, "maps": [{"x": "angle", "y": "aspect_ratio"}]},
    "run": {"jobs": 1, "impacts": 3},
}
GOOD = study_yaml(GOOD_STUDY)


def where(text, snippet, key=None):
    """(line, col), 1-based, of ``key`` on the one line of ``text`` that
    contains ``snippet`` (the start of the line's content when key is None)."""
    lines = [i for i, line in enumerate(text.splitlines()) if snippet in line]
    assert len(lines) == 1, f"test YAML: {snippet!r} must be on exactly one line"
    line = text.splitlines()[lines[0]]
    col = line.index(key) if key is not None else len(line) - len(line.lstrip())
    return lines[0] + 1, col + 1


def check(path, capsys):
    """Run ``hopscape check`` in-process: (exit code, stdout, stderr lines)."""
    code = main(["check", str(path)])
    out, err = capsys.readouterr()
    return code, out, err.splitlines()


def assert_clean_errors(err_lines, expected_count=None):
    """Every stderr line is a one-line error; no traceback."""
    assert err_lines, "expected error lines on stderr"
    for line in err_lines:
        assert line.startswith("hopscape: error: "), line
    assert not any("Traceback" in line for line in err_lines)
    if expected_count is not None:
        assert len(err_lines) == expected_count, "\n".join(err_lines)


def message_at(err_lines, path, line, col, field):
    """The one message reported at file:line:col for ``field``."""
    prefix = f"hopscape: error: {path}:{line}:{col}: {field}: "
    hits = [e for e in err_lines if e.startswith(prefix)]
    assert len(hits) == 1, f"no single message starting {prefix!r} in:\n" + "\n".join(err_lines)
    return hits[0][len(prefix):]


def assert_says(err_lines, path, text, snippet, key, field, words):
    """The message for ``field`` sits at ``key`` on the line of ``text``
    holding ``snippet`` and contains every one of ``words``."""
    line, col = where(text, snippet, key)
    msg = message_at(err_lines, path, line, col, field)
    for word in words:
        assert word in msg, msg


def only_error(tmp_path, capsys, text, snippet, key, field):
    """Check a study file with exactly one mistake: exit code 2, one clean
    line, placed at ``key`` on the line holding ``snippet``; its message."""
    path = write_study(tmp_path, text)
    code, _, err = check(path, capsys)
    assert code == 2
    assert_clean_errors(err, 1)
    line, col = where(text, snippet, key)
    return message_at(err, path, line, col, field)


# --------------------------------------------------------------------------
# the good study, and the template
# --------------------------------------------------------------------------

def test_good_study_is_accepted_and_counted(tmp_path, capsys):
    # 4 aspect ratios x 5 angles = 20 cells; 4 draws over the distributed
    # restitution -> 80 grid drops; robustness is on by default with 32
    # toleranced draws per cell -> 640 robust drops.
    path = write_study(tmp_path, GOOD)
    code, out, err = check(path, capsys)
    assert code == 0 and err == []
    assert "ok - study 'probe'" in out
    assert re.search(r"grid:\s+80 drops", out)
    assert re.search(r"robust:\s+640 drops", out)
    assert "total: 720 drops x up to 3 impacts" in out


def test_new_writes_a_template_that_check_accepts(tmp_path, capsys):
    out_path = tmp_path / "sub" / "mine.yaml"
    assert main(["new", "mine", "--out", str(out_path)]) == 0
    capsys.readouterr()
    text = out_path.read_text(encoding="utf-8")
    assert "name: mine" in text and "name: NAME" not in text
    code, out, err = check(out_path, capsys)
    assert code == 0 and err == []
    assert "ok - study 'mine'" in out
    # the template grids aspect ratio (26 steps) x angle (46 steps) = 1196
    # cells, 16 draws each; 32 toleranced draws per cell; Sobol with 1024
    # base samples over 4 varying quantities = 1024 x (4 + 2) rows.
    assert re.search(r"grid:\s+19,136 drops", out)
    assert re.search(r"robust:\s+38,272 drops", out)
    assert re.search(r"sobol:\s+6,144 drops", out)


def test_new_refuses_to_overwrite(tmp_path, capsys):
    out_path = tmp_path / "mine.yaml"
    out_path.write_text("precious: true\n", encoding="utf-8")
    code = main(["new", "mine", "--out", str(out_path)])
    _, err = capsys.readouterr()
    assert code == 2
    assert_clean_errors(err.splitlines(), 1)
    assert "exists" in err and "nothing was overwritten" in err
    assert out_path.read_text(encoding="utf-8") == "precious: true\n"


def test_new_without_out_writes_into_studies_and_refuses_a_bad_name(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["new", "fresh-one"]) == 0
    assert (tmp_path / "studies" / "fresh-one.yaml").is_file()
    capsys.readouterr()
    assert main(["new", "has space"]) == 2
    _, err = capsys.readouterr()
    assert_clean_errors(err.splitlines(), 1)
    assert "'has space'" in err
    assert not (tmp_path / "studies" / "has space.yaml").exists()


def test_run_by_name_finds_studies_folder_of_the_working_directory(tmp_path, monkeypatch, capsys):
    # A tiny study (one grid axis of 3 angles, nothing random, no robustness).
    text = study_yaml(changed(GOOD_STUDY, name="tiny", body={"aspect_ratio": 3.0}, contact={"restitution": 0.9},
                              release={"angle": grid(0, 90, 3)}, analyses={"maps": None, "robustness": False}))
    (tmp_path / "studies").mkdir()
    (tmp_path / "studies" / "tiny.yaml").write_text(text, encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    assert main(["run", "tiny", "--quiet"]) == 0
    out, err = capsys.readouterr()
    assert "tiny: 3 drops (3 simulated now)" in out
    folder = tmp_path / "runs" / "tiny"          # the default --out
    assert (folder / "study.yaml").read_text(encoding="utf-8") == text
    assert (folder / "report.html").is_file()
    assert sorted(p.name for p in (folder / "results").glob("part-*.parquet")) == ["part-grid-00000.parquet"]


def test_run_by_name_that_does_not_exist_is_bad_input(tmp_path, monkeypatch, capsys):
    (tmp_path / "studies").mkdir()
    monkeypatch.chdir(tmp_path)
    assert main(["run", "nosuch", "--quiet"]) == 2
    _, err = capsys.readouterr()
    assert_clean_errors(err.splitlines(), 1)
    assert "nosuch: no such study file" in err and "studies/nosuch.yaml" in err
    assert not (tmp_path / "runs").exists()


# --------------------------------------------------------------------------
# field mistakes: all reported at once, at the right line and column
# --------------------------------------------------------------------------

MANY_MISTAKES = """\
name: probe
colour: red
body:
  shape: capsule
  diameter: 0.006
  aspect_ratio: {grid: {low: 5.0, high: 2.0, steps: 4}}
  density: 1150
  density: 1200
contact:
  restitution: 1.5
  friction: 0.2
  friction: 0.3
release:
  height: 0.01
  angle: {grid: {low: 0, high: 90, steps: many}}
metric: {kind: ratio, reference: centre}
analyses:
  draws: 4
  sensitivity: {method: sobol, samples: 1000}
run:
  impacts: 3
  seed: two
"""


@pytest.fixture
def many(tmp_path, capsys):
    path = write_study(tmp_path, MANY_MISTAKES, "many.yaml")
    code, out, err = check(path, capsys)
    return path, code, out, err


def test_all_field_mistakes_reported_at_once_with_exit_2(many):
    path, code, out, err = many
    assert code == 2
    assert out == ""
    # 2 duplicates + unknown key + low>high + out of range + wrong type
    # (steps) + Sobol samples + wrong type (seed) = 8 problems, 8 lines.
    assert_clean_errors(err, 8)
    assert all(line.startswith(f"hopscape: error: {path}:") for line in err)


@pytest.mark.parametrize("snippet, key, field, words", [
    pytest.param("colour: red", None, "colour", ["unknown field"], id="unknown_key"),
    # a duplicate key's message names the field path
    pytest.param("friction: 0.3", None, "contact.friction", [], id="duplicate_key_field_path"),
    pytest.param("steps: many", "steps", "release.angle.grid.steps", ["must be a whole number", "'many'"],
                 id="wrong_type_in_a_flow_mapping"),
    pytest.param("seed: two", None, "run.seed", ["must be a whole number", "'two'"], id="wrong_type_in_a_block_mapping"),
    # out of range: names the allowed range and the value
    pytest.param("restitution: 1.5", None, "contact.restitution", ["[0, 1]", "1.5"], id="value_out_of_range"),
    pytest.param("high: 2.0", "grid", "body.aspect_ratio.grid", ["low must be below high", "5.0", "2.0"],
                 id="low_above_high"),
    pytest.param("samples: 1000", "sensitivity", "analyses.sensitivity", ["power of two", "1000", "use 512 or 1024"],
                 id="sobol_samples_not_a_power_of_two"),
])
def test_field_mistake_is_reported_at_its_place(many, snippet, key, field, words):
    path, _, _, err = many
    assert_says(err, path, MANY_MISTAKES, snippet, key, field, words)


def test_two_duplicate_keys_are_both_reported(many):
    path, _, _, err = many
    text = MANY_MISTAKES
    for key, first, second in (("density", "density: 1150", "density: 1200"),
                               ("friction", "friction: 0.2", "friction: 0.3")):
        line, col = where(text, second)
        first_line, _ = where(text, first)
        hits = [e for e in err if e.startswith(f"hopscape: error: {path}:{line}:{col}: ")]
        assert len(hits) == 1, err
        assert f"{key}: duplicate key (first given on line {first_line})" in hits[0]


def test_setting_out_of_range_names_the_violated_bound_and_the_value(tmp_path, capsys):
    msg = only_error(tmp_path, capsys, GOOD + "tolerance: {angle: 120}\n", "angle: 120", "angle: 120",
                     "tolerance.angle")
    assert "90" in msg and "120" in msg


def test_setting_out_of_range_names_both_ends_of_the_range(tmp_path, capsys):
    path = write_study(tmp_path, GOOD + "tolerance: {angle: 120}\n")
    _, _, err = check(path, capsys)
    assert re.search(r"\b0\b", err[0].split("tolerance.angle:")[1]), err[0]


def test_range_of_a_grid_quantity_checks_both_ends(tmp_path, capsys):
    text = study_yaml(changed(GOOD_STUDY, release={"angle": grid(0, 400, 5)}))
    msg = only_error(tmp_path, capsys, text, "high: 400", "angle", "release.angle")
    assert "[-360, 360] deg" in msg and "400" in msg


def test_missing_required_field_points_at_its_section(tmp_path, capsys):
    text = study_yaml(changed(GOOD_STUDY, contact={"friction": None}))
    assert "required field is missing" in only_error(tmp_path, capsys, text, "contact:", None, "contact.friction")


def test_wrong_bounce_is_one_message_under_its_field_path(tmp_path, capsys):
    text = study_yaml(changed(GOOD_STUDY, metric={"bounce": "second"}))
    msg = only_error(tmp_path, capsys, text, "bounce: second", "bounce", "metric.bounce")
    assert "'second'" in msg


# --------------------------------------------------------------------------
# contradicting settings
# --------------------------------------------------------------------------

CONTRADICTIONS = """\
name: probe
body:
  shape: sphere
  diameter: 0.006
  aspect_ratio: 3.0
contact:
  restitution: 0.9
  friction: 0.2
release:
  height: 0.01
  angle: {grid: {low: 0, high: 90, steps: 5}}
  spin: {uniform: {low: 0, high: 10}}
metric:
  kind: ratio
  reference: centre
  bounce: 5
analyses:
  maps:
    - {x: angle, y: spin}
run:
  impacts: 3
  scheduler: tcp://127.0.0.1:8786
"""


@pytest.fixture
def contradictions(tmp_path, capsys):
    path = write_study(tmp_path, CONTRADICTIONS, "contra.yaml")
    return (path,) + check(path, capsys)


def test_all_contradictions_reported_at_once(contradictions):
    path, code, out, err = contradictions
    assert code == 2 and out == ""
    assert_clean_errors(err, 4)


@pytest.mark.parametrize("snippet, key, field, words", [
    pytest.param("{x: angle, y: spin}", "y: spin", "analyses.maps[0].y",
                 ["spin is not swept on a grid", "gridded here: angle"], id="map_axis_not_gridded"),
    pytest.param("aspect_ratio: 3.0", None, "body.aspect_ratio", ["a sphere has no aspect_ratio"],
                 id="sphere_with_aspect_ratio"),
    pytest.param("scheduler: tcp", None, "run.scheduler", ["needs backend: dask"], id="scheduler_without_dask"),
    pytest.param("bounce: 5", None, "metric.bounce", ["bounce 5", "run.impacts 3"], id="bounce_above_impacts"),
])
def test_contradiction_is_reported_at_its_place(contradictions, snippet, key, field, words):
    path, _, _, err = contradictions
    assert_says(err, path, CONTRADICTIONS, snippet, key, field, words)


def test_scheduler_with_dask_backend_is_fine(tmp_path, capsys):
    # the same setting is accepted once the backend agrees (nothing connects
    # to the address during check)
    text = study_yaml(changed(GOOD_STUDY, run={"backend": "dask", "scheduler": "tcp://127.0.0.1:8786"}))
    code, _, err = check(write_study(tmp_path, text), capsys)
    assert code == 0 and err == []


def test_field_mistakes_and_contradictions_reported_together(tmp_path, capsys):
    text = study_yaml(changed(GOOD_STUDY, run={"scheduler": "tcp://127.0.0.1:8786"}, contact={"colour": "red"}))
    path = write_study(tmp_path, text)
    _, _, err = check(path, capsys)
    assert any("contact.colour: unknown field" in e for e in err)
    assert any("run.scheduler: a scheduler address needs backend: dask" in e for e in err)


# --------------------------------------------------------------------------
# files that are not studies at all
# --------------------------------------------------------------------------

@pytest.mark.parametrize("text", ["", "# only a comment\n\n"])
def test_empty_file(tmp_path, capsys, text):
    path = write_study(tmp_path, text)
    code, out, err = check(path, capsys)
    assert code == 2 and out == ""
    assert_clean_errors(err, 1)
    assert err[0] == f"hopscape: error: {path}:1:1: the study file is empty; start from `hopscape new NAME`"


def test_file_that_is_a_list(tmp_path, capsys):
    path = write_study(tmp_path, "- name: a\n- name: b\n")
    code, out, err = check(path, capsys)
    assert code == 2 and out == ""
    assert_clean_errors(err, 1)
    assert err[0].startswith(f"hopscape: error: {path}:1:1: a study file must be a mapping")


def test_file_that_is_a_list_says_list(tmp_path, capsys):
    _, _, err = check(write_study(tmp_path, "- name: a\n- name: b\n"), capsys)
    assert "CommentedSeq" not in err[0] and "list" in err[0]


SYNTAX = """\
name: probe
body:
  shape: [capsule
  diameter: 0.006
"""


def test_yaml_syntax_error(tmp_path, capsys):
    # The flow sequence opened on line 3 is never closed; the parser finds
    # the ':' after 'diameter' on line 4 where it expected ',' or ']'.
    path = write_study(tmp_path, SYNTAX)
    code, out, err = check(path, capsys)
    assert code == 2 and out == ""
    assert_clean_errors(err, 1)
    line, col = where(SYNTAX, "diameter: 0.006", ":")
    assert err[0].startswith(f"hopscape: error: {path}:{line}:{col}: YAML syntax error: ")
    assert "expected ',' or ']'" in err[0]


def test_yaml_syntax_error_tab_indent(tmp_path, capsys):
    text = "name: probe\nbody:\n\tshape: capsule\n"
    path = write_study(tmp_path, text)
    code, _, err = check(path, capsys)
    assert code == 2
    assert_clean_errors(err, 1)
    assert err[0].startswith(f"hopscape: error: {path}:3:1: YAML syntax error: ")


def test_missing_file(tmp_path, capsys):
    path = tmp_path / "nothere.yaml"
    code, out, err = check(path, capsys)
    assert code == 2 and out == ""
    assert_clean_errors(err, 1)
    assert f"{path}: no such study file" in err[0]


# --------------------------------------------------------------------------
# before any simulation, and no traceback from the real command
# --------------------------------------------------------------------------

def test_bad_study_is_refused_before_any_simulation(tmp_path, capsys, monkeypatch):
    calls = []

    def forbidden(*args, **kwargs):
        calls.append(args)
        raise AssertionError("simulated a drop of an invalid study")

    monkeypatch.setattr(hopscape.metrics, "simulate_frame", forbidden)
    monkeypatch.setattr(hopscape.runner, "simulate_frame", forbidden)
    monkeypatch.setattr(sim, "simulate", forbidden)
    path = write_study(tmp_path, MANY_MISTAKES, "many.yaml")
    out_dir = tmp_path / "out"
    code = main(["run", str(path), "--out", str(out_dir), "--quiet"])
    _, err = capsys.readouterr()
    assert code == 2
    assert_clean_errors(err.splitlines(), 8)
    assert calls == []
    assert not out_dir.exists()


@pytest.mark.slow      # a new Python process imports the whole package
def test_real_command_reports_without_traceback(tmp_path):
    text = MANY_MISTAKES + "name: again\nx: 1\n"
    path = write_study(tmp_path, text, "many.yaml")
    proc = subprocess.run(hopscape_command() + ["check", str(path)], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert proc.stdout == ""
    lines = proc.stderr.splitlines()
    assert "Traceback" not in proc.stderr
    # 8 mistakes of MANY_MISTAKES, a duplicate 'name' and an unknown 'x'
    assert len(lines) == 10, proc.stderr
    assert all(re.match(rf"hopscape: error: {re.escape(str(path))}:\d+:\d+: ", line) for line in lines)
    line, col = where(text, "x: 1")
    assert f"{path}:{line}:{col}: x: unknown field" in proc.stderr


def test_floor_angle_outside_its_range_is_refused_at_its_place(tmp_path, capsys):
    # explore.quantities: floor_angle in [-60, 60] deg
    text = study_yaml(changed(GOOD_STUDY, release={"floor_angle": grid(-10, 70, 5)}))
    msg = only_error(tmp_path, capsys, text, "high: 70", "floor_angle", "release.floor_angle")
    assert "[-60, 60] deg" in msg and "70" in msg


def test_floor_angle_is_a_study_quantity_that_can_be_gridded(tmp_path, capsys):
    study = parse_study(study_yaml(changed(GOOD_STUDY, release={"floor_angle": grid(0, 30, 4)})))
    assert "floor_angle" in study.gridded()
    assert parse_study(study_yaml(GOOD_STUDY)).quantity("floor_angle") is None  # absent: a level floor


def test_a_study_without_a_metric_is_refused(tmp_path, capsys):
    # no silent default of the centre's ratio: what counts must be said
    text = study_yaml(changed(GOOD_STUDY, metric=None))
    msg = only_error(tmp_path, capsys, text, "name: probe", None, "metric")
    assert "the study has no metric section" in msg and "kind (ratio | " in msg
    text = study_yaml(changed(GOOD_STUDY, metric={"kind": None}))
    msg = only_error(tmp_path, capsys, text, "metric:", None, "metric.kind")
    assert "required field is missing" in msg


def test_a_study_without_a_body_is_one_clear_message(tmp_path, capsys):
    msg = only_error(tmp_path, capsys, study_yaml(changed(GOOD_STUDY, body=None)), "name: probe", None, "body")
    assert "the study has no body section" in msg and "shape (capsule | " in msg
