"""The README's "Calibrate from a filmed drop": its demo tracks come from
docs/demo/make_demo_tracks.py, and its commands give back the values the
engine was given (restitution 0.55, friction 0.25)."""
from __future__ import annotations

import importlib.util
import json
import re
import shlex
from pathlib import Path

import pandas as pd
import pytest

from hopscape.cli import main

ROOT = Path(__file__).resolve().parents[1]


def _script():
    spec = importlib.util.spec_from_file_location("make_demo_tracks", ROOT / "docs" / "demo" / "make_demo_tracks.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_demo_tracks_are_what_the_script_writes(tmp_path, monkeypatch):
    script = _script()
    monkeypatch.setattr(script, "HERE", tmp_path)
    script.main()
    for name in ("pin-bench-2000fps.csv", "pin-bench-pixels.csv"):
        pd.testing.assert_frame_equal(pd.read_csv(tmp_path / name), pd.read_csv(ROOT / "docs" / "demo" / name))


@pytest.mark.slow
def test_readme_fit_commands_give_back_the_demo_contact(tmp_path, monkeypatch, capsys):
    readme = (ROOT / "README.md").read_text(encoding="utf-8").replace("\\\n", " ")
    commands = re.findall(r"^hopscape (fit docs/demo/.*)$", readme, re.M)
    assert len(commands) == 2
    monkeypatch.chdir(ROOT)
    for command in commands:
        args = shlex.split(command)
        if "--out" in args:
            args[args.index("--out") + 1] = str(tmp_path / "pin-fit")
        if "--json" not in args:
            args.append("--json")
        assert main(args) == 0
        result = json.loads(capsys.readouterr().out)
        # "within a hundredth", as the README says
        assert result["restitution"] == pytest.approx(0.55, abs=0.01)
        assert result["friction"] == pytest.approx(0.25, abs=0.01)
