"""explore/plausibility.py: legal values typed in the wrong unit are warned
about, where they were given, and --strict refuses them.

The plausible ranges are judgements of the trade (a pill or pin is well
under 0.5 m across; hand and jig drops are under 10 m; spins of hand-flicked
parts are some hundreds of rad/s), not published values; the tests check
that each rule fires on the mistake it is for and stays quiet on the
example studies.
"""
from pathlib import Path

import pandas as pd
import pytest

from conftest import example_studies
from hopscape.batch import run_batch
from hopscape.cli import main
from hopscape.study import load_study, parse_study

ROOT = Path(__file__).resolve().parents[1]

# a 23 mm pill (7 mm across) falling onto a plate
PILL = """\
name: pill
body:
  shape: capsule
  diameter: 0.007
  length: 0.016
contact: {restitution: 0.8, friction: 0.3}
release:
  height: HEIGHT
  angle: ANGLE
  spin: SPIN
tolerance: {height: TOLERANCE}
analyses: {robustness: false}
metric: {kind: ratio, reference: centre}
"""
PLAIN = {"HEIGHT": "0.1", "ANGLE": "{grid: {low: 0, high: 90, steps: 3}}", "SPIN": "0", "TOLERANCE": "0.002"}


def warnings_of(**changes):
    text = PILL
    for key, value in {**PLAIN, **changes}.items():
        text = text.replace(key, value)
    return parse_study(text, "pill.yaml").warnings


def test_a_plausible_study_has_no_warning():
    assert warnings_of() == ()


@pytest.mark.parametrize("name", [p.stem for p in example_studies()])
def test_the_example_studies_have_no_warning(name):
    assert load_study(ROOT / "studies" / f"{name}.yaml").warnings == ()


def test_heights_in_millimetres_typed_as_metres():
    # 20-80 "m" for a 23 mm pill: both over 2 m and over 200 body sizes
    (first, second) = warnings_of(HEIGHT="{uniform: {low: 20, high: 80}}")
    assert first.startswith("pill.yaml:8:3: release.height: 20 m is outside the usual 0.0001 to 2 m")
    assert first.endswith("is it in millimetres?")
    assert second.startswith("pill.yaml:8:3: release.height: 80 m is 3,478 times the body's size (0.023 m)")


def test_tolerance_larger_than_the_height():
    (warning,) = warnings_of(TOLERANCE="0.5")
    assert warning.startswith("pill.yaml:11:13: tolerance.height: the height tolerance +-0.5 m is larger than "
                              "the release height 0.1 m")


def test_angles_in_radians_typed_as_degrees():
    (warning,) = warnings_of(ANGLE="{grid: {low: 0, high: 1.5708, steps: 3}}")
    assert warning == ("pill.yaml:9:3: release.angle: the angle spans only 0 to 1.5708 deg; is it in radians? "
                       "(angles are in degrees)")


def test_a_drop_of_millimetres_typed_as_metres_is_caught():
    # 3-8 "m" for a 23 mm pill: the likeliest slip (3-8 mm meant)
    (first, second) = warnings_of(HEIGHT="{uniform: {low: 3, high: 8}}")
    assert "release.height: 3 m is outside the usual 0.0001 to 2 m" in first
    assert "release.height: 8 m is 348 times the body's size (0.023 m)" in second


def test_a_single_small_angle_is_not_a_unit_mistake():
    assert warnings_of(ANGLE="3") == ()


def test_spin_in_rpm():
    (warning,) = warnings_of(SPIN="30000")
    assert "release.spin: 30000 rad/s is outside the usual -10000 to 10000 rad/s; is it in rpm" in warning


def test_a_body_in_millimetres():
    text = PILL.replace("diameter: 0.007", "diameter: 0.7")
    for key, value in {**PLAIN, "HEIGHT": "2.0"}.items():
        text = text.replace(key, value)
    warnings = parse_study(text, "pill.yaml").warnings
    assert warnings[0].startswith("pill.yaml:4:3: body.diameter: 0.7 m is outside the usual 0.0001 to 0.5 m")


def write_study(tmp_path, **changes):
    text = PILL
    for key, value in {**PLAIN, **changes}.items():
        text = text.replace(key, value)
    path = tmp_path / "pill.yaml"
    path.write_text(text, encoding="utf-8")
    return path


def test_check_warns_and_passes_but_strict_refuses(tmp_path, capsys):
    path = write_study(tmp_path, SPIN="30000")
    assert main(["check", str(path)]) == 0
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith(f"hopscape: warning: {path}:10:3: release.spin: ")
    assert main(["check", str(path), "--strict"]) == 2
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith(f"hopscape: error: {path}:10:3: release.spin: ")
    assert err[0].endswith("(--strict)")


def test_drop_names_the_option(capsys):
    assert main(["drop", "--height", "40", "--radius", "0.003", "--length", "0.01", "--impacts", "1",
                 "--no-plots"]) == 0
    err = capsys.readouterr().err.splitlines()
    assert err[0].startswith("hopscape: warning: --height: 40 m is outside the usual 0.0001 to 2 m")
    assert main(["drop", "--height", "40", "--no-plots", "--strict"]) == 2


def test_batch_names_the_column_and_the_rows():
    frame = pd.DataFrame({"shape": ["capsule", "capsule", "sphere"], "length": [0.01, 0.01, None],
                          "radius": [0.003, 0.003, 0.003], "density": [1100.0] * 3, "height": [0.1, 25.0, 30.0],
                          "angle": [30.0] * 3, "restitution": [0.8] * 3, "friction": [0.3] * 3})
    seen = []
    table = run_batch(frame, warn=seen.extend)
    assert (table["error"] == "").all()     # warnings never stop a row
    heights = [line for line in seen if line.startswith("column height: ") and "outside the usual" in line]
    rare = "drops from above 2 m are rare on a drop rig or a line; is it in millimetres?"
    assert heights == [f"column height: 1 capsule row (first: drop 1): 25 m is outside the usual 0.0001 to 2 m; {rare}",
                       f"column height: 1 sphere row (first: drop 2): 30 m is outside the usual 0.0001 to 2 m; {rare}"]


def test_drop_warns_before_the_error_the_mistake_causes(capsys):
    # a body in millimetres puts it inside the floor: the warnings that
    # explain why come first, then the error
    assert main(["drop", "--shape", "capsule", "--radius", "3", "--length", "24", "--height", "6",
                 "--no-plots"]) == 2
    err = capsys.readouterr().err.splitlines()
    assert [line.split(":")[1].strip() for line in err] == ["warning"] * 3 + ["error"]
    assert any("--radius: 3 m is outside" in line for line in err)
    assert "inside the floor" in err[-1]
