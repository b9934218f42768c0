"""hopscape.files and the outputs around it: written whole or not at all,
never over their own input."""
import os

import pandas as pd
import pytest

from hopscape.batch import write_table
from hopscape.cli import main
from hopscape.files import atomic_write

DROPS = "shape,length,radius,density,height,angle,restitution,friction\ncapsule,0.01,0.003,1100,0.05,30,0.8,0.3\n"


def test_a_failed_write_leaves_the_earlier_file_and_no_temporary(tmp_path):
    path = tmp_path / "out.csv"
    path.write_text("earlier\n")
    with pytest.raises(OSError):
        with atomic_write(path) as tmp:
            tmp.write_text("half a tab")
            raise OSError(28, "No space left on device")   # what a full disk raises
    assert path.read_text() == "earlier\n"
    assert os.listdir(tmp_path) == ["out.csv"]


def test_interrupting_a_write_leaves_nothing_behind(tmp_path):
    with pytest.raises(KeyboardInterrupt):
        with atomic_write(tmp_path / "out.parquet") as tmp:
            pd.DataFrame({"a": [1]}).to_parquet(tmp)
            raise KeyboardInterrupt
    assert os.listdir(tmp_path) == []


def test_a_table_is_written_by_its_ending(tmp_path):
    frame = pd.DataFrame({"drop": [0, 1], "time": [0.1, 0.2]})
    write_table(frame, tmp_path / "a.parquet")
    write_table(frame, tmp_path / "sub" / "a.csv")
    pd.testing.assert_frame_equal(pd.read_parquet(tmp_path / "a.parquet"), frame)
    pd.testing.assert_frame_equal(pd.read_csv(tmp_path / "sub" / "a.csv"), frame)
    assert sorted(os.listdir(tmp_path)) == ["a.parquet", "sub"]


def test_batch_refuses_to_write_over_its_input(tmp_path, capsys):
    source = tmp_path / "drops.csv"
    source.write_text(DROPS)
    assert main(["batch", str(source), "--out", str(source)]) == 2
    assert "is the input file" in capsys.readouterr().err
    assert source.read_text() == DROPS          # untouched
    assert main(["batch", str(source), "--out", str(tmp_path)]) == 2
    assert "is a folder" in capsys.readouterr().err


def test_a_header_only_batch_is_bad_input(tmp_path, capsys):
    source = tmp_path / "drops.csv"
    source.write_text(DROPS.splitlines()[0] + "\n")
    assert main(["batch", str(source), "--out", str(tmp_path / "out.csv")]) == 2
    assert "holds no drops" in capsys.readouterr().err
    assert not (tmp_path / "out.csv").exists()


@pytest.mark.parametrize("args, words", [
    (["drop", "--impacts", "1000000", "--no-plots"], "--impacts: must be in [1, 50], got 1000000"),
    (["batch", "x.csv", "--out", "y.csv", "--impacts", "0"], "--impacts: must be in [1, 50], got 0"),
    (["bench", "--jobs", "100000"], "--jobs: must be in [1, 512], got 100000"),
    (["bench", "--drops", "99999999"], "--drops: must be in [1, 2000000], got 99999999"),
    (["run", "quick", "--jobs", "0"], "--jobs: must be in [1, 512], got 0"),
])
def test_command_line_bounds_are_the_study_file_bounds(capsys, args, words):
    assert main(args) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and words in err[0]


def test_a_run_folder_that_is_a_file_is_refused(tmp_path, capsys):
    out = tmp_path / "not-a-folder"
    out.write_text("x")
    assert main(["run", "quick", "--out", str(out)]) == 2
    assert "is a file; the run folder must be a folder" in capsys.readouterr().err
    assert out.read_text() == "x"


@pytest.mark.slow
def test_a_disk_that_fills_during_the_analysis_leaves_the_earlier_outputs(tmp_path, capsys, monkeypatch):
    # a rerun whose pictures and tables cannot be written (the disk fills
    # half way through a file) must leave the first run's outputs whole
    import shutil

    import matplotlib.figure
    from conftest import SMALL, write_study
    study = write_study(tmp_path, SMALL, "small.yaml")
    folder = tmp_path / "run"
    assert main(["run", str(study), "--out", str(folder), "--quiet", "--backend", "sequential"]) == 0
    capsys.readouterr()
    before = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and "results" not in p.parts
              and p.name != ".hopscape-lock"}
    real_savefig, real_to_csv = matplotlib.figure.Figure.savefig, pd.DataFrame.to_csv

    def fills_up(write):
        def half_then_full(self, target, *args, **kwargs):
            write(self, target, *args, **kwargs)
            with open(target, "r+b") as handle:           # keep half of what was written
                handle.truncate(max(1, os.path.getsize(target) // 2))
            raise OSError(28, "No space left on device")
        return half_then_full

    monkeypatch.setattr(matplotlib.figure.Figure, "savefig", fills_up(real_savefig))
    monkeypatch.setattr(pd.DataFrame, "to_csv", fills_up(real_to_csv))
    assert main(["run", str(study), "--out", str(folder), "--quiet", "--backend", "sequential"]) == 1
    after = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and "results" not in p.parts
             and p.name != ".hopscape-lock"}
    assert after == before                                  # nothing truncated, nothing half-written added
    assert not [p for p in folder.rglob("*tmp*")]
    shutil.rmtree(folder)


@pytest.mark.slow
def test_a_busy_folder_is_refused_and_a_killed_run_leaves_no_stuck_lock(tmp_path, capsys):
    # a second run into a folder another run holds is refused at once,
    # naming the first; flock is released by the operating system when its
    # holder dies, even by kill -9, so the next run then takes the folder
    import signal
    import subprocess
    import sys
    import time

    from hopscape.files import folder_lock
    code = ("import time; from hopscape.files import folder_lock\n"
            f"with folder_lock({str(tmp_path / 'run')!r}):\n    print('held', flush=True); time.sleep(60)\n")
    holder = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    assert holder.stdout.readline().strip() == "held"
    assert main(["run", "quick", "--out", str(tmp_path / "run")]) == 2
    err = capsys.readouterr().err
    assert "is busy: hopscape run (process " in err and f"{holder.pid}" in err
    holder.send_signal(signal.SIGKILL)
    holder.wait(timeout=10)
    time.sleep(0.1)
    with folder_lock(tmp_path / "run"):
        with folder_lock(tmp_path / "run"):        # the same process may nest its holds
            pass


def test_write_csv_keeps_a_file_that_holds_the_same_table(tmp_path):
    # a run resumed without change writes the same picks.csv: its time must
    # stay, or a rig plan made from it is reported out of date
    import os
    import pandas as pd
    from hopscape.files import write_csv
    path = tmp_path / "picks.csv"
    table = pd.DataFrame({"rank": [1, 2], "angle_deg": [49.5, 51.0]})
    write_csv(table, path, keep_same=True)
    os.utime(path, (1_000_000, 1_000_000))
    write_csv(table, path, keep_same=True)
    assert path.stat().st_mtime == 1_000_000
    write_csv(table.assign(angle_deg=[49.5, 52.5]), path, keep_same=True)
    assert path.stat().st_mtime > 1_000_000 and "52.5" in path.read_text()
