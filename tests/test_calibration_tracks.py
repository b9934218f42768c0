"""The track reader: the contract's variants and every one-line error.

Conventions checked against docs/physics.md section 1 (angle from +x to the
axis, counter-clockwise; y up, floor at y = 0).
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from hopscape.calibration.tracks import parse_columns, read_track, track_from_table
from hopscape.errors import InputError


def _frames(n=20, fps=1000.0):
    """A body falling from rest at 0.1 m, axis at 30 deg, turning slowly."""
    t = np.arange(n) / fps
    return pd.DataFrame({"time": t, "x": 0.001 * t, "y": 0.1 - 0.5 * 9.80665 * t ** 2, "angle": 30 + 100 * t})


def test_metres_and_degrees_become_engine_units():
    frame = _frames()
    track = track_from_table(frame, "t.csv")
    np.testing.assert_allclose(track.angle, np.radians(frame["angle"]))
    np.testing.assert_allclose(track.y, frame["y"])
    assert track.frame_interval == pytest.approx(1e-3)


def test_frame_column_with_fps_gives_time():
    frame = _frames().drop(columns="time").assign(frame=np.arange(20))
    track = track_from_table(frame, "t.csv", fps=2000.0)
    np.testing.assert_allclose(track.time, np.arange(20) / 2000.0)


def test_two_ends_give_centre_and_angle():
    # ends of a 20 mm axis at 30 deg about (0.01, 0.05): centre and angle by hand
    half = 0.01 * np.array([np.cos(np.radians(30)), np.sin(np.radians(30))])
    rows = pd.DataFrame({"time": np.arange(10) * 1e-3, "x1": 0.01 - half[0], "y1": 0.05 - half[1],
                         "x2": 0.01 + half[0], "y2": 0.05 + half[1]})
    track = track_from_table(rows, "ends.csv")
    np.testing.assert_allclose(track.x, 0.01)
    np.testing.assert_allclose(track.y, 0.05)
    np.testing.assert_allclose(track.angle, np.radians(30))
    np.testing.assert_allclose(track.length, 0.02)


def test_pixels_with_rows_down_and_floor_line():
    # 1000 px per metre; the floor at row 800; a body 50 mm above the floor is at row 750;
    # an axis drawn at +30 deg in image axes (rows down) is -30 deg with y up
    rows = pd.DataFrame({"time": np.arange(10) * 1e-3, "x": 100.0, "y": 750.0, "angle": 30.0})
    track = track_from_table(rows, "px.csv", scale=1000.0, y_down=True, floor_y=800.0)
    np.testing.assert_allclose(track.y, 0.05)
    np.testing.assert_allclose(track.x, 0.1)
    np.testing.assert_allclose(track.angle, np.radians(-30))


def test_half_turn_symmetry_is_unwrapped_and_lost_frames_skipped():
    # a body spinning at 300 deg/s seen within (-90, 90] deg, with empty cells
    t = np.arange(40) * 2e-3
    true = 80 + 300 * t * 10
    seen = 90 - np.mod(90 - true, 180)
    frame = pd.DataFrame({"time": t, "x": 0.0, "y": 0.1, "angle": seen})
    frame.loc[[5, 6, 20], "angle"] = np.nan
    frame.loc[11, "x"] = np.nan
    track = track_from_table(frame, "spin.csv")
    assert track.lost == 4
    np.testing.assert_allclose(np.degrees(track.angle), np.delete(true, [5, 6, 11, 20]), atol=1e-9)


def test_columns_mapping_reads_other_names(tmp_path):
    frame = _frames().rename(columns={"time": "t", "x": "X", "y": "Y", "angle": "theta"})
    path = tmp_path / "other.csv"
    frame.to_csv(path, index=False)
    track = read_track(path, columns=parse_columns("time=t, x=X,y=Y,angle=theta"))
    np.testing.assert_allclose(track.y, frame["Y"])


def test_parquet_reads_like_csv(tmp_path):
    frame = _frames()
    frame.to_parquet(tmp_path / "t.parquet")
    np.testing.assert_allclose(read_track(tmp_path / "t.parquet").y, frame["y"])


@pytest.mark.parametrize("change, words", [
    (lambda f: f.drop(columns="time"), "t.csv: no column 'time' (nor 'frame' with --fps); columns found: x, y, angle"),
    (lambda f: f.drop(columns="time").assign(frame=np.arange(20)), "t.csv: the track gives 'frame' but no 'time'"),
    (lambda f: f.drop(columns="angle"), "t.csv: no columns x, y, angle (nor x1, y1, x2, y2)"),
    (lambda f: f.assign(y=f["y"].astype(object).where(f.index != 15, "abc")),
     "t.csv: column 'y' row 17: y is not a number, got 'abc'"),
    (lambda f: f.assign(time=np.where(f.index == 15, 0.0123, f["time"])),
     "t.csv: column 'time' row 17: time not increasing (0.0123 s after 0.014 s)"),
    (lambda f: f.iloc[:5], "t.csv: only 5 frame(s) where the body was seen; a fit needs at least 8"),
    (lambda f: f.iloc[:0], "t.csv: the track holds no frames (only a header?)"),
])
def test_every_track_error_is_one_line(change, words):
    with pytest.raises(InputError) as err:
        track_from_table(change(_frames()), "t.csv")
    assert len(err.value.messages) == 1
    assert err.value.messages[0].startswith(words)


def test_time_going_back_names_the_row():
    # row numbers as a spreadsheet shows them: header row 1, first frame row 2
    frame = _frames()
    frame.loc[16, "time"] = frame.loc[14, "time"]
    with pytest.raises(InputError, match=r"column 'time' row 18: time not increasing \(0.014 s after 0.015 s\)"):
        track_from_table(frame, "t.csv")


@pytest.mark.parametrize("text, words", [
    ("time", "--columns: each part must be OURS=THEIRS (e.g. time=t), got 'time'"),
    ("speed=v", "--columns: 'speed' is not a track column"),
])
def test_columns_option_errors(text, words):
    with pytest.raises(InputError) as err:
        parse_columns(text)
    assert err.value.messages[0].startswith(words)


def test_mapped_column_missing_and_bad_scale_and_fps():
    with pytest.raises(InputError, match=r"t.csv: --columns time=t: no column 't' in the track"):
        track_from_table(_frames(), "t.csv", columns={"time": "t"})
    with pytest.raises(InputError, match=r"--scale must be > 0 pixels per metre, got -3"):
        track_from_table(_frames(), "t.csv", scale=-3.0)
    with pytest.raises(InputError, match=r"--fps must be > 0 frames per second, got 0"):
        track_from_table(_frames().drop(columns="time").assign(frame=1), "t.csv", fps=0.0)


def test_missing_and_unreadable_files(tmp_path):
    with pytest.raises(InputError, match=r"nothere.csv: no such track file"):
        read_track(tmp_path / "nothere.csv")
    broken = tmp_path / "broken.parquet"
    broken.write_text("not parquet")
    with pytest.raises(InputError, match=r"broken.parquet: cannot read the track as Parquet"):
        read_track(broken)
