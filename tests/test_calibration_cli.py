"""``hopscape fit``: terminal, --json, --out, --into, and bad input (exit 2, one line)."""
from __future__ import annotations

import json
import re
from functools import lru_cache

import numpy as np
import pandas as pd
import pytest

from hopscape import sim
from hopscape.calibration.synthetic import synthetic_track
from hopscape.cli import main
from hopscape.study_file import load_study

PIN_OPTIONS = ["--shape", "capsule", "--radius", "0.002", "--length", "0.016", "--density", "7850"]


@lru_cache(maxsize=None)
def _track():
    pin = sim.Capsule(length=0.016, radius=0.002, density=7850)
    return synthetic_track(pin, sim.Release(height=0.15, angle=np.radians(30)), sim.Contact(0.6, 0.2), fps=10000,
                           impacts=6, seed=2).track


@pytest.fixture
def track_file(tmp_path):
    path = tmp_path / "pin.csv"
    _track().to_csv(path, index=False)
    return path


@pytest.mark.slow
def test_json_names_other_programs_read(track_file, capsys):
    assert main(["fit", str(track_file), *PIN_OPTIONS, "--json", "--bootstrap", "50"]) == 0
    result = json.loads(capsys.readouterr().out)
    for name in ("restitution", "restitution_low", "restitution_high", "friction", "friction_low", "friction_high",
                 "gravity", "impacts"):
        assert name in result
    assert result["restitution_low"] < result["restitution"] < result["restitution_high"]
    assert result["restitution"] == pytest.approx(0.6, abs=0.03)
    assert result["friction"] == pytest.approx(0.2, abs=0.05)
    assert result["gravity"] == pytest.approx(9.80665, rel=0.005)
    assert len(result["impacts"]) >= 4 and "restitution_apparent" in result["impacts"][0]
    # each flight predicted from the one before stays within a millimetre of the track (noise 0.1 mm)
    check = result["model_check"][0]
    assert 0 < max(check["flight_rms_height_m"]) < 1e-3 and check["follows_until_s"] > 0.3
    # the dashpot's damping ratio gives back the fitted restitution when integrated
    dash = result["compliant"]["linear_damping_ratio"]
    assert dash["check_restitution"] == pytest.approx(result["restitution"], abs=1e-3)


@pytest.mark.slow
def test_terminal_table_and_out_folder(track_file, tmp_path, capsys):
    out = tmp_path / "fit-out"
    assert main(["fit", str(track_file), *PIN_OPTIONS, "--out", str(out), "--bootstrap", "20"]) == 0
    text = capsys.readouterr().out
    assert float(re.search(r"^restitution\s+([\d.]+)\s+95%", text, re.M).group(1)) == pytest.approx(0.6, abs=0.03)
    assert float(re.search(r"^friction\s+([\d.]+)\s+95%", text, re.M).group(1)) == pytest.approx(0.2, abs=0.05)
    assert "gravity from the flights" in text
    assert "eye protection" in text
    for name in ("fit.json", "impacts.csv", "energy.png", "model.png", "restitution-angle.png", "residuals.png"):
        assert (out / name).stat().st_size > 0
    table = pd.read_csv(out / "impacts.csv")
    assert {"time", "restitution_apparent", "u_t_before", "u_t_after", "slip", "impact_angle"} <= set(table.columns)
    assert json.loads((out / "fit.json").read_text())["restitution"] == pytest.approx(0.6, abs=0.03)


@pytest.mark.slow
def test_into_writes_a_new_study_beside_the_old(track_file, tmp_path, capsys):
    study = tmp_path / "chute.yaml"
    study.write_text((__import__("pathlib").Path(__file__).parents[1] / "studies" / "capsule-chute.yaml").read_text())
    assert main(["fit", str(track_file), *PIN_OPTIONS, "--into", str(study), "--bootstrap", "0"]) == 0
    written = tmp_path / "chute-fitted.yaml"
    fitted = load_study(written)
    assert fitted.contact.restitution.normal.mean == pytest.approx(0.6, abs=0.03)
    assert fitted.contact.friction.normal.mean == pytest.approx(0.2, abs=0.05)
    assert "capsule-chute" in study.read_text()  # the original untouched
    capsys.readouterr()
    # never overwritten
    assert main(["fit", str(track_file), *PIN_OPTIONS, "--into", str(study), "--bootstrap", "0"]) == 2
    assert "chute-fitted.yaml exists; remove or rename it first" in capsys.readouterr().err


@pytest.mark.parametrize("extra, words", [
    (["--into", "nothere.yaml"], "hopscape: error: --into nothere.yaml: no such study file"),
    (["--columns", "time"], "hopscape: error: --columns: each part must be OURS=THEIRS"),
    (["--aspect-ratio", "3"], "hopscape: error: give --length or --aspect-ratio, not both"),
    (["--radius", "-1"], "hopscape: error: radius must be > 0 m, got -1"),
])
def test_bad_options_exit_2_on_one_line(track_file, extra, words, capsys):
    assert main(["fit", str(track_file), *PIN_OPTIONS, *extra]) == 2
    err = capsys.readouterr().err
    assert err.startswith(words) and err.count("\n") == 1


def test_bad_track_exits_2_naming_file_column_and_row(tmp_path, capsys):
    frame = _track().copy()
    frame.loc[16, "time"] = frame.loc[14, "time"]
    path = tmp_path / "back.csv"
    frame.to_csv(path, index=False)
    assert main(["fit", str(path), *PIN_OPTIONS]) == 2
    err = capsys.readouterr().err
    assert f"hopscape: error: {path}: column 'time' row 18: time not increasing" in err and err.count("\n") == 1
    assert main(["fit", str(tmp_path / "missing.csv"), *PIN_OPTIONS]) == 2
    assert "missing.csv: no such track file" in capsys.readouterr().err


def test_out_that_is_a_file_is_refused(track_file, tmp_path, capsys):
    blocker = tmp_path / "taken"
    blocker.write_text("x")
    assert main(["fit", str(track_file), *PIN_OPTIONS, "--out", str(blocker)]) == 2
    assert "is a file; the results go into a folder" in capsys.readouterr().err


@pytest.mark.parametrize("text, words", [
    ("name: x\nbody: [1, 2\n", "not a readable study file"),
    ("name: x\nrelease: {height: 0.1}\n", "the study has no contact section to fill"),
])
def test_into_a_study_that_cannot_take_the_fit(track_file, tmp_path, text, words, capsys):
    study = tmp_path / "bad.yaml"
    study.write_text(text)
    assert main(["fit", str(track_file), *PIN_OPTIONS, "--into", str(study), "--bootstrap", "0"]) == 2
    err = capsys.readouterr().err
    assert f"hopscape: error: {study}: {words}" in err and err.count("\n") == 1
    assert not (tmp_path / "bad-fitted.yaml").exists()


def test_millimetres_typed_as_metres_are_named_before_the_track_is_blamed(capsys):
    # a 2 mm radius typed as 2: every frame then sits "below the floor", and
    # that error alone pointed at --floor-y and --scale
    from pathlib import Path
    demo = Path(__file__).resolve().parents[1] / "docs" / "demo" / "pin-bench-2000fps.csv"
    assert main(["fit", str(demo), "--shape", "capsule", "--radius", "2", "--length", "16"]) == 2
    err = capsys.readouterr().err
    assert "--radius: 2 m is outside the usual" in err and "is it in millimetres?" in err
    assert "--length: 16 m is outside the usual" in err
