"""hopscape.study_file: hostile or broken study files end quickly with one
clear line each (file:line:col, exit 2), never a hang, a traceback or a
message as long as the input."""
import time
from pathlib import Path

import pytest

from hopscape.cli import main
from hopscape.study_file import MAX_BYTES, MAX_DEPTH, MAX_TOKENS

ROOT = Path(__file__).resolve().parents[1]
QUICK = (ROOT / "studies" / "quick.yaml").read_text(encoding="utf-8")


def check_file(tmp_path, capsys, text=None, data=None):
    """``hopscape check`` on a file: (exit code, stderr lines, seconds)."""
    path = tmp_path / "study.yaml"
    if data is not None:
        path.write_bytes(data)
    else:
        path.write_text(text, encoding="utf-8")
    start = time.perf_counter()
    code = main(["check", str(path)])
    seconds = time.perf_counter() - start
    return code, capsys.readouterr().err.splitlines(), path, seconds


def one_error(tmp_path, capsys, **given):
    code, err, path, seconds = check_file(tmp_path, capsys, **given)
    assert code == 2, err
    assert len(err) == 1 and err[0].startswith(f"hopscape: error: {path}:"), err
    assert "Traceback" not in err[0] and len(err[0]) < 400
    return err[0], seconds


@pytest.mark.parametrize("yaml_text, where", [
    ("name: t\ndescription: &loop [*loop]\n", ":2:14:"),                   # a list holding itself
    ("name: t\nbody:\n  diameter: &d {value: *d}\n", ":3:13:"),           # a mapping holding itself
    ("a: &a [x, x, x, x, x, x, x, x, x]\nb: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a]\n"
     "c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]\nd: &d [*c, *c, *c, *c, *c, *c, *c, *c, *c]\n"
     "e: &e [*d, *d, *d, *d, *d, *d, *d, *d, *d]\nf: [*e, *e, *e, *e, *e, *e, *e, *e, *e]\n", ":1:4:"),  # 9^6 laughs
])
def test_anchors_and_aliases_are_refused_at_once(tmp_path, capsys, yaml_text, where):
    line, seconds = one_error(tmp_path, capsys, text=yaml_text)
    assert where in line and "anchors and aliases (& and *) are not allowed" in line
    assert seconds < 2.0   # it was: never finished, 5.4 GB


def test_a_file_over_the_size_limit_is_refused_before_parsing(tmp_path, capsys):
    text = QUICK + "# a comment line that pads the file to well over the limit\n" * (2 * MAX_BYTES // 50)
    line, seconds = one_error(tmp_path, capsys, text=text)
    assert ":1:1: the study file is " in line and f"at most {MAX_BYTES:,}" in line
    assert seconds < 1.0   # 8 MB took 114 s


def test_a_legal_study_near_the_size_limit_is_read_quickly(tmp_path, capsys):
    text = QUICK + "# padding\n" * ((MAX_BYTES - len(QUICK)) // 11)
    code, err, _, seconds = check_file(tmp_path, capsys, text=text)
    assert code == 0 and seconds < 5.0


def test_deep_nesting_is_refused(tmp_path, capsys):
    text = "name: t\ndescription: " + "[" * 100_000 + "]" * 100_000 + "\n"
    line, seconds = one_error(tmp_path, capsys, text=text)
    assert f"nested more than {MAX_DEPTH} levels deep" in line and ":2:" in line
    assert seconds < 5.0


def test_a_control_character_is_reported_with_its_line(tmp_path, capsys):
    line, _ = one_error(tmp_path, capsys, data=QUICK.replace("steps: 26", "steps: 2\x006").encode())
    assert "control character '\\x00'" in line and ":14:" in line


def test_a_long_value_is_shortened_in_its_message(tmp_path, capsys):
    long = "x" * 98_000
    code, err, path, _ = check_file(tmp_path, capsys, text=QUICK.replace("density: 1150", f"density: {long}"))
    assert code == 2 and len(err) == 1
    assert err[0].startswith(f"hopscape: error: {path}:15:3: body.density: ") and len(err[0]) < 400
    assert "(98,002 characters)" in err[0]


def test_a_long_list_under_an_unknown_key_is_one_short_line(tmp_path, capsys):
    # 8 MB of list took 409 s and 3.5 GB; 140 kB of it now stops at the
    # token limit; a short unknown list is still named as an unknown field
    text = QUICK.replace("metric:\n", "colours: [" + ", ".join(["red"] * 20_000) + "]\nmetric:\n")
    line, seconds = one_error(tmp_path, capsys, text=text)
    assert f"holds over {MAX_TOKENS:,} YAML keys, values and brackets" in line and seconds < 2.0
    line, _ = one_error(tmp_path, capsys, text=QUICK.replace("metric:\n", "colours: [red, green]\nmetric:\n"))
    assert "colours: unknown field" in line


@pytest.mark.parametrize("old, new, field, words", [
    ("diameter: 0.006", "diameter: {value: true}", "body.diameter.value", "must be a number, got True"),
    ("diameter: 0.006", "diameter: true", "body.diameter", "must be a number"),
    ("aspect_ratio: {grid: {low: 2.0,", "aspect_ratio: {grid: {low: '2.0',", "body.aspect_ratio.grid.low",
     "must be a number, got '2.0'"),
    ("seed: 7", "seed: true", "run.seed", "must be a whole number, got True"),
    ("jobs: 2", "jobs: true", "run.jobs", "must be a whole number, got True"),
    ("robustness: true", "robustness: 1", "analyses.robustness", "must be true or false, got 1"),
])
def test_a_bool_or_text_is_not_a_number_in_any_form(tmp_path, capsys, old, new, field, words):
    assert old in QUICK
    line, _ = one_error(tmp_path, capsys, text=QUICK.replace(old, new))
    assert f": {field}: " in line and words in line


# --- check is the promise of run: what run would die on, check refuses ---------

@pytest.mark.parametrize("old, new, field, words", [
    ("restitution: {uniform: {low: 0.8, high: 0.95}}", "restitution: {normal: {mean: 0.9, sd: .inf}}",
     "contact.restitution.normal.sd", "must be a finite number, got inf"),
    ("seed: 7", "seed: 7\n  impacts: 1", "metric.bounce", "a later bounce needs at least 2 impacts"),
])
def test_settings_run_would_die_on_are_refused_by_check(tmp_path, capsys, old, new, field, words):
    assert old in QUICK
    code, err, path, _ = check_file(tmp_path, capsys, text=QUICK.replace(old, new))
    assert code == 2
    assert any(f": {field}: " in line and words in line for line in err), err


def test_the_size_limit_counts_every_stage(tmp_path, capsys):
    # 2001 x 2001 = 4,004,001 cells: the robust stage is 4,004,001 x 4096
    # = 16,400,388,096 drops (it was left out of the limit)
    text = QUICK.replace("steps: 26", "steps: 2001").replace("steps: 61", "steps: 2001") \
                .replace("draws: 32", "draws: 4096").replace("draws: 48", "draws: 1")
    line, seconds = one_error(tmp_path, capsys, text=text)
    assert ": tolerance.draws: the study needs " in line and "robust 16,400,388,096" in line
    assert seconds < 5.0


def test_every_drop_inside_the_floor_is_refused(tmp_path, capsys):
    text = QUICK.replace("height_of: bottom", "height_of: centre") \
                .replace("height: {uniform: {low: 0.003, high: 0.008}}", "height: 0.001")
    line, _ = one_error(tmp_path, capsys, text=text)
    assert ": release.height: every drop of the grid starts touching or inside the floor" in line


def test_a_share_of_drops_inside_the_floor_is_a_warning(tmp_path, capsys):
    code, err, path, _ = check_file(tmp_path, capsys, text=QUICK.replace("height_of: bottom", "height_of: centre"))
    assert code == 0
    assert any(line.startswith(f"hopscape: warning: {path}:") and "of the grid's drops start touching or inside"
               in line for line in err), err


def test_a_normal_draw_is_kept_inside_the_shape_range():
    # a capsule's aspect ratio is at least 1 (it is at least a sphere); a
    # normal around 1.2 with sd 0.5 would put a third of its draws below
    from hopscape.plan import grid_frame
    from hopscape.study import parse_study
    text = QUICK.replace("aspect_ratio: {grid: {low: 2.0, high: 7.0, steps: 26}}",
                         "aspect_ratio: {normal: {mean: 1.2, sd: 0.5}}")
    text = text.replace("    - {x: angle, y: aspect_ratio}\n", "")
    study = parse_study(text.replace("maps:\n", "maps: []\n"), "q.yaml")
    assert study.allowed("aspect_ratio").describe() == "in [1, 50]"
    draws = grid_frame(study)["aspect_ratio"].to_numpy()
    assert draws.min() >= 1.0 and (draws < 1.2).mean() > 0.1


def test_check_and_run_refuse_a_study_this_machine_cannot_hold(tmp_path, capsys, monkeypatch):
    # the estimate (hopscape.plan.resource_estimate) against a machine of
    # 1 GB: quick's 184,224 drops need about 0.43 GB, a 2001 x 2001 grid 12 GB
    import hopscape.commands
    monkeypatch.setattr(hopscape.commands, "machine_room", lambda folder: (1e9, 1e12))
    code, err, path, _ = check_file(tmp_path, capsys, text=QUICK)
    assert code == 0
    big = QUICK.replace("steps: 61", "steps: 2001").replace("steps: 26", "steps: 2001")
    line, _ = one_error(tmp_path, capsys, text=big.replace("draws: 48", "draws: 2").replace("draws: 32", "draws: 2"))
    assert "needs about 12 GB of memory (this machine: 1 GB)" in line and "use fewer grid steps" in line
    path = tmp_path / "study.yaml"
    assert main(["run", str(path), "--out", str(tmp_path / "run")]) == 2
    assert "more than this machine's memory allows" in capsys.readouterr().err
    assert not (tmp_path / "run").exists()                      # nothing was allocated or written
