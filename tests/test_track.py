"""``hopscape track`` on films of simulated drops, where the truth is known.

The films are rendered by :mod:`hopscape.video.render` from the engine's
own drop (``sim.simulate`` and ``sim.history``: the state at the middle of
each exposure), with anti-aliasing, motion blur, a textured background and
sensor noise, so tracking is checked against the state the film was made
from. The per-frame geometry itself is checked against an outside
reference in ``tests/test_video_moments.py``; the angle convention is
docs/physics.md section 1 (counter-clockwise with y up), the image's
mirrored one section 11.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

cv2 = pytest.importorskip("cv2")

from hopscape import sim  # noqa: E402
from hopscape.cli import main  # noqa: E402
from hopscape.video.frames import open_frames  # noqa: E402
from hopscape.video.render import Camera, film, write_frames, write_video  # noqa: E402
from hopscape.video.track import Region, track_pixels  # noqa: E402

#: A 20 mm steel pin (capsule: 17 mm between 1.5 mm caps) released at 30 deg
#: with its centre 25 mm above a bench, filmed side on at 1,000 frames/s.
PIN = dict(length=0.017, radius=0.0015, density=7850.0)
CAMERA = Camera(width=320, height=200, px_per_m=5000.0, floor_row=185.0, left=0.02, fps=1000.0, exposure=2e-4,
                noise=2.0, seed=3)
DURATION = 0.1          # [s]: 101 frames, release to past the third impact
#: What the tracking must reach (the brief of the command: 0.2 mm and 1 deg
#: on a 20 mm body filmed at 5 pixels/mm, i.e. 1 pixel and the angle a
#: 100 px body shows with its ends 1.7 px out).
CENTRE_MM, ANGLE_DEG = 0.2, 1.0


def pin_drop(impacts=30):
    shape = sim.make_shape("capsule", **PIN)
    return shape, sim.simulate(shape, sim.Release(height=0.025, angle=np.radians(30.0)), sim.Contact(0.6, 0.3),
                               impacts=impacts)


@pytest.fixture(scope="module")
def filmed(tmp_path_factory):
    """The pin's drop as numbered PNG frames, and the truth per frame."""
    shape, result = pin_drop()
    assert result.time[0, -1] > DURATION          # the film ends before the simulated impacts run out
    truth, frames = film(result, CAMERA, DURATION)
    folder = tmp_path_factory.mktemp("film")
    assert write_frames(frames, folder) == len(truth)
    return folder, truth, shape


def angle_error(measured, true):
    """Axis angles compared modulo 180 deg [deg]."""
    return (measured - true + 90.0) % 180.0 - 90.0


def errors(track, truth):
    ex = (track["x"] - truth["x"]) * 1e3
    ey = (track["y"] - truth["y"]) * 1e3
    return np.hypot(ex, ey), angle_error(track["angle"], truth["angle"]).abs()


def test_tracked_film_of_a_drop_matches_the_simulated_truth(filmed, tmp_path, capsys):
    folder, truth, _ = filmed
    out = tmp_path / "track.csv"
    assert main(["track", str(folder), "--fps", "1000", "--out", str(out), "--scale", "5000",
                 "--floor-y", "185", "--quiet"]) == 0
    track = pd.read_csv(out)
    assert list(track.columns) == ["frame", "time", "x", "y", "angle", "quality"]
    assert np.array_equal(track["frame"], truth["frame"])
    assert np.allclose(track["time"], truth["time"])
    centre, angle = errors(track, truth)
    assert track["x"].notna().all()
    assert centre.max() < CENTRE_MM, centre.max()
    assert angle.max() < ANGLE_DEG, angle.max()
    assert track["quality"].between(0.8, 1.0).all()       # one body, same size in every frame
    printed = capsys.readouterr().out
    assert "body found in 101" in printed and "metres" in printed


def test_pixel_track_is_in_the_image_frame_and_says_what_the_fit_needs(filmed, tmp_path, capsys):
    folder, truth, _ = filmed
    out = tmp_path / "pixels.csv"
    assert main(["track", str(folder), "--fps", "1000", "--out", str(out)]) == 0
    track = pd.read_csv(out)
    # pixels: x = column, y = row (downwards); the angle in the same mirrored frame
    assert np.abs(track["x"] - CAMERA.columns(truth["x"] - CAMERA.left)).max() < CENTRE_MM * 5
    assert np.abs(track["y"] - CAMERA.rows(truth["y"])).max() < CENTRE_MM * 5
    assert angle_error(track["angle"], -truth["angle"]).abs().max() < ANGLE_DEG
    printed = capsys.readouterr()
    assert "--scale PX_PER_M --y-down" in printed.out and "--floor-y" in printed.out
    assert "tracking:" in printed.err and "/101 " in printed.err and "background:" in printed.err   # progress bars


def test_scale_from_the_body_length(filmed, tmp_path, capsys):
    folder, truth, shape = filmed
    out = tmp_path / "track.csv"
    length = float(shape.overall_length)
    assert main(["track", str(folder), "--fps", "1000", "--out", str(out), "--body-length", str(length),
                 "--floor-y", "185", "--quiet"]) == 0
    printed = capsys.readouterr().out
    scale = float(printed.split(" pixels/m")[0].split()[-1].replace(",", ""))
    # the ends found to a fraction of a pixel (half contrast along the axis):
    # 0.3% is 0.3 px over the 100 px pin, motion blur included
    assert scale == pytest.approx(CAMERA.px_per_m, rel=0.003)
    track = pd.read_csv(out)
    # heights of up to 31 mm then agree within 0.3% + the centre tolerance
    assert np.abs(track["y"] - truth["y"]).max() * 1e3 < CENTRE_MM + 0.003 * 31


def test_frames_touching_the_edge_or_outside_are_left_empty(filmed):
    """Track only the top of the picture (rows 0-109, heights above 15 mm):
    the pin starts inside, falls through the region's lower edge and lies
    below it; frames cut by the edge are empty, never guessed."""
    folder, truth, shape = filmed
    region = Region(0, 0, CAMERA.width, 110)
    table = track_pixels(open_frames(folder, fps=1000.0), region)
    depth = shape.depth(np.radians(truth["angle"].to_numpy()))
    lowest_row = CAMERA.rows(truth["y"] - depth)
    top_row = CAMERA.rows(truth["y"] + depth)
    inside = lowest_row < region.height - 2            # clear of the edge by 2 px (the blurred rim)
    cut = (top_row < region.height - 2) & (lowest_row > region.height + 2)
    below = top_row > region.height + 2
    assert inside.sum() > 10 and cut.sum() > 3 and below.sum() > 10
    assert table.loc[inside, "x"].notna().all()
    assert (table.loc[cut, "why"] == "edge").all() and table.loc[cut, "x"].isna().all()
    assert (table.loc[below, "why"] == "lost").all() and table.loc[below, "angle"].isna().all()
    metres = (table["x"] + 0.5) / CAMERA.px_per_m
    assert np.abs(metres[inside] - truth["x"][inside]).max() * 1e3 < CENTRE_MM


@pytest.mark.slow
def test_video_file_carries_its_own_rate(tmp_path, capsys):
    """An MJPG .avi (lossy) written at 1,000 frames/s: no --fps needed, and
    the centre still within the tolerance after compression."""
    _, result = pin_drop()
    truth, frames = film(result, CAMERA, DURATION)
    video = tmp_path / "drop.avi"
    assert write_video(frames, video, fps=1000.0) == len(truth)
    out = tmp_path / "track.csv"
    assert main(["track", str(video), "--out", str(out), "--scale", "5000", "--floor-y", "185", "--quiet"]) == 0
    track = pd.read_csv(out)
    assert np.allclose(track["time"], truth["time"])
    centre, angle = errors(track, truth)
    assert centre.max() < CENTRE_MM and angle.max() < ANGLE_DEG
    # a playback rate in the file gets a warning, and --fps overrides it
    slow = tmp_path / "playback.avi"
    write_video(film(result, CAMERA, DURATION)[1], slow, fps=30.0)
    assert main(["track", str(slow), "--out", str(out), "--quiet"]) == 0
    assert "high-speed cameras often store a playback rate" in capsys.readouterr().err
    assert main(["track", str(slow), "--out", str(out), "--quiet", "--fps", "1000"]) == 0
    assert "playback rate" not in capsys.readouterr().err
    assert pd.read_csv(out)["time"].iloc[1] == pytest.approx(1e-3)


def test_frame_numbers_in_the_names_keep_their_gaps(tmp_path):
    image = np.full((40, 60), 128, np.uint8)
    for number in (7, 9, 10):
        cv2.imwrite(str(tmp_path / f"shot-{number:03d}.png"), image)
    frames = open_frames(tmp_path, fps=500.0)
    assert list(frames.numbers) == [7, 9, 10]
    assert np.allclose(frames.times(), [0.0, 0.004, 0.006])


def test_half_hidden_body_is_left_empty(tmp_path):
    """A blob of under half the body's usual area (part of it hidden) is not
    trusted: quality below 0.5, centre empty."""
    image = np.full((60, 120), 200, np.uint8)
    for number in range(9):
        frame = image.copy()
        cv2.ellipse(frame, (20 + 8 * number, 30), (12, 4), 10, 0, 360, 40, -1)
        if number == 4:
            frame[:, : 20 + 8 * number + 4] = 200             # two thirds of it hidden
        cv2.imwrite(str(tmp_path / f"f{number}.png"), frame)
    table = track_pixels(open_frames(tmp_path, fps=100.0))
    assert table.loc[4, "why"] == "quality" and np.isnan(table.loc[4, "x"])
    assert table.loc[4, "quality"] < 0.5
    others = table.drop(index=4)
    assert others["x"].notna().all()
    # an ellipse drawn at whole pixels: centre within 0.15 px (tests/test_video_moments.py)
    assert np.abs(others["x"] - (20 + 8 * others["frame"])).max() < 0.15
    assert np.abs(others["angle"] - 10.0).max() < 2.0      # a 12 x 4 px ellipse: whole-pixel outline


# --- bad input: one line, exit 2 ------------------------------------------------------------


def _png_folder(folder, count=3, size=(40, 60)):
    folder.mkdir(exist_ok=True)
    for number in range(count):
        cv2.imwrite(str(folder / f"frame_{number:04d}.png"), np.full(size, 128, np.uint8))
    return folder


def _refused(argv, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("hopscape: error: ")
    assert "Traceback" not in err[0]
    return err[0]


def test_missing_video(tmp_path, capsys):
    line = _refused(["track", str(tmp_path / "none.avi"), "--out", str(tmp_path / "t.csv")], capsys)
    assert line.endswith("none.avi: no such video file or folder of frames")


def test_unreadable_video(tmp_path, capsys):
    junk = tmp_path / "junk.mp4"
    junk.write_text("not a video")
    line = _refused(["track", str(junk), "--out", str(tmp_path / "t.csv")], capsys)
    assert "OpenCV cannot read this file as a video" in line


def test_video_without_frames(tmp_path, capsys):
    empty = tmp_path / "empty.avi"
    cv2.VideoWriter(str(empty), cv2.VideoWriter_fourcc(*"MJPG"), 1000.0, (64, 48), True).release()
    line = _refused(["track", str(empty), "--out", str(tmp_path / "t.csv")], capsys)
    assert "holds no frames" in line


def test_video_without_a_rate_needs_fps(tmp_path, capsys, monkeypatch):
    video = tmp_path / "drop.avi"
    write_video([np.full((48, 64), 128, np.uint8)] * 3, video, fps=1000.0)
    real = cv2.VideoCapture

    class NoRate:                       # a file whose header gives no frame rate
        def __init__(self, *args):
            self._capture = real(*args)

        def get(self, prop):
            return 0.0 if prop == cv2.CAP_PROP_FPS else self._capture.get(prop)

        def __getattr__(self, name):
            return getattr(self._capture, name)

    monkeypatch.setattr(cv2, "VideoCapture", NoRate)
    line = _refused(["track", str(video), "--out", str(tmp_path / "t.csv")], capsys)
    assert "--fps:" in line and "does not say its frame rate" in line


def test_folder_without_png_frames(tmp_path, capsys):
    (tmp_path / "notes.txt").write_text("x")
    line = _refused(["track", str(tmp_path), "--fps", "1000", "--out", str(tmp_path / "t.csv")], capsys)
    assert "no PNG frames in this folder" in line


def test_folder_of_frames_needs_fps(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    line = _refused(["track", str(folder), "--out", str(tmp_path / "t.csv")], capsys)
    assert line.startswith("hopscape: error: --fps:") and "folder of frames carries no frame rate" in line


def test_frame_without_a_number(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    cv2.imwrite(str(folder / "last.png"), np.full((40, 60), 128, np.uint8))
    line = _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path / "t.csv")], capsys)
    assert "last.png" in line and "must end in its frame number" in line


def test_frame_number_twice(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    cv2.imwrite(str(folder / "frame_1.png"), np.full((40, 60), 128, np.uint8))
    line = _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path / "t.csv")], capsys)
    assert "frame number 1 appears twice" in line


def test_frames_of_different_sizes(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    cv2.imwrite(str(folder / "frame_0009.png"), np.full((30, 60), 128, np.uint8))
    line = _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path / "t.csv")], capsys)
    assert "frame_0009.png: 60x30 pixels, but the first frame is 60x40" in line


def test_unreadable_png(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    (folder / "frame_0005.png").write_bytes(b"not a png")
    line = _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path / "t.csv")], capsys)
    assert "frame_0005.png: not a readable PNG image" in line


def test_no_body_in_any_frame(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    line = _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path / "t.csv")], capsys)
    assert "body was not found whole in any of 3 frames" in line


@pytest.mark.parametrize("roi, words", [("1,2,3", "--roi must be X,Y,W,H in whole pixels"),
                                        ("a,b,c,d", "--roi must be X,Y,W,H in whole pixels"),
                                        ("10,10,60,20", "must lie inside the 60x40 frame"),
                                        ("0,0,4,4", "at least 8x8 pixels")])
def test_bad_region(tmp_path, capsys, roi, words):
    folder = _png_folder(tmp_path / "frames")
    line = _refused(["track", str(folder), "--fps", "1000", "--roi", roi, "--out", str(tmp_path / "t.csv")], capsys)
    assert words in line and roi in line


def test_out_is_the_input(tmp_path, capsys):
    video = tmp_path / "drop.csv"            # a misnamed input: the output would overwrite it
    video.write_text("x")
    line = _refused(["track", str(video), "--out", str(video)], capsys)
    assert "is the input file" in line and "nothing was overwritten" in line
    assert video.read_text() == "x"


def test_out_is_a_folder_or_not_a_table(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    assert "is a folder" in _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path)], capsys)
    line = _refused(["track", str(folder), "--fps", "1000", "--out", str(tmp_path / "t.txt")], capsys)
    assert "written as .csv or .parquet" in line


@pytest.mark.parametrize("option, value, words", [("--fps", "0", "--fps: must be > 0, got 0"),
                                                  ("--scale", "-5", "--scale: must be > 0, got -5"),
                                                  ("--body-length", "abc", "--body-length: must be a number")])
def test_bad_numbers(tmp_path, capsys, option, value, words):
    folder = _png_folder(tmp_path / "frames")
    argv = ["track", str(folder), "--out", str(tmp_path / "t.csv"), option, value]
    line = _refused(argv + (["--fps", "1000"] if option != "--fps" else []), capsys)
    assert words in line and value in line


def test_scale_and_body_length_exclude_each_other(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    line = _refused(["track", str(folder), "--fps", "1000", "--scale", "5000", "--body-length", "0.02",
                     "--out", str(tmp_path / "t.csv")], capsys)
    assert "--body-length" in line and "not allowed with argument --scale" in line


def test_floor_outside_the_frame_is_a_warning_and_strict_refuses_it(tmp_path, capsys):
    folder = _png_folder(tmp_path / "frames")
    argv = ["track", str(folder), "--fps", "1000", "--floor-y", "400", "--out", str(tmp_path / "t.csv")]
    line = _refused(argv + ["--strict"], capsys)
    assert "--floor-y 400 is outside the frame (rows 0 to 40)" in line and "(--strict)" in line
    main(argv)          # without --strict: the warning, then the empty frames' own error
    err = capsys.readouterr().err
    assert "hopscape: warning: --floor-y 400 is outside the frame" in err


def test_body_that_mostly_stands_still_gets_a_warning(tmp_path, capsys):
    """The body rests in 7 of 9 frames: the median background holds it, and
    the command says why most frames are empty."""
    for number in range(9):
        frame = np.full((60, 120), 200, np.uint8)
        centre = 30 if number < 7 else 30 + 25 * (number - 6)
        cv2.ellipse(frame, (centre, 30), (12, 4), 10, 0, 360, 40, -1)
        cv2.imwrite(str(tmp_path / f"f{number}.png"), frame)
    assert main(["track", str(tmp_path), "--fps", "100", "--out", str(tmp_path / "t.csv")]) == 0
    assert "becomes part of the median background" in capsys.readouterr().err


def test_film_refuses_times_the_simulation_does_not_know():
    """After its last simulated impact a drop's history would fall through
    the floor; a film past it would be a false truth."""
    _, result = pin_drop(impacts=2)
    with pytest.raises(ValueError, match="duration must be at most"):
        film(result, CAMERA, 0.5)


def test_parquet_track(filmed, tmp_path):
    """The same table as Parquet, chosen by the file ending."""
    folder, truth, _ = filmed
    out = tmp_path / "track.parquet"
    assert main(["track", str(folder), "--fps", "1000", "--out", str(out), "--scale", "5000", "--floor-y", "185",
                 "--quiet", "--roi", "0,0,320,200"]) == 0
    track = pd.read_parquet(out)
    assert list(track.columns) == ["frame", "time", "x", "y", "angle", "quality"]
    assert errors(track, truth)[0].max() < CENTRE_MM


@pytest.mark.slow
def test_fit_of_the_tracked_demo_film_gives_back_its_contact(tmp_path, capsys):
    """End to end: the demo film (docs/demo/make_demo_video.py: restitution
    0.6, friction 0.3, energetic law) tracked, then fitted by ``hopscape
    fit``; the issue's tolerance for a fit from video is 0.05. Runs where
    the checkout has the fit command."""
    import importlib.util
    import json
    from pathlib import Path

    from hopscape import commands
    from hopscape.cli import build_parser

    build_parser()
    if "fit" not in commands.HANDLERS:
        pytest.skip("this checkout has no 'hopscape fit' command")
    script = Path(__file__).resolve().parents[1] / "docs" / "demo" / "make_demo_video.py"
    spec = importlib.util.spec_from_file_location("make_demo_video", script)
    demo = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(demo)
    track = tmp_path / "track.csv"
    assert main(["track", str(script.parent / "pin_drop.mp4"), "--out", str(track), "--body-length", "0.02",
                 "--floor-y", str(demo.CAMERA.floor_row), "--quiet"]) == 0
    capsys.readouterr()
    assert main(["fit", str(track), "--shape", "capsule", "--radius", str(demo.PIN["radius"]), "--length",
                 str(demo.PIN["length"]), "--density", str(demo.PIN["density"]), "--json"]) == 0
    fitted = json.loads(capsys.readouterr().out)
    assert fitted["restitution"] == pytest.approx(float(demo.CONTACT.restitution), abs=0.05)
    assert fitted["friction"] == pytest.approx(float(demo.CONTACT.friction), abs=0.05)
    # the scale from the body's length, within 0.3% (test_scale_from_the_body_length)
    assert fitted["gravity"] == pytest.approx(9.80665, rel=0.005)


def test_round_blob_gives_a_centre_but_no_angle(tmp_path):
    """A disc (a body seen end on, a sphere) has no axis: its centre is
    given, its angle left empty rather than made up from pixel noise."""
    for number in range(5):
        frame = np.full((60, 120), 200, np.uint8)
        cv2.circle(frame, (20 + 20 * number, 30), 8, 40, -1)
        cv2.imwrite(str(tmp_path / f"f{number}.png"), frame)
    table = track_pixels(open_frames(tmp_path, fps=100.0))
    assert table["x"].notna().all() and table["angle"].isna().all()
    assert np.abs(table["x"] - (20 + 20 * table["frame"])).max() < 0.15    # whole-pixel disc, as the ellipse


def test_sixteen_bit_frames_of_a_twelve_bit_camera(tmp_path):
    """12-bit data in 16-bit PNGs (values up to 4095): read at full
    contrast, not divided by 256 into near-black."""
    for number in range(6):
        frame = np.full((60, 120), 3200, np.uint16)
        cv2.ellipse(frame, (20 + 15 * number, 30), (12, 4), -20, 0, 360, 500, -1)
        cv2.imwrite(str(tmp_path / f"f{number}.png"), frame)
    frames = open_frames(tmp_path, fps=100.0)
    assert frames.shift == 4                        # 3200 needs 12 bits: keep the top 8
    _, first = next(frames.read())
    assert (first.min(), first.max()) == (500 >> 4, 3200 >> 4)     # 31 and 200: the full contrast
    table = track_pixels(frames)
    assert table["x"].notna().all()
    assert np.abs(table["x"] - (20 + 15 * table["frame"])).max() < 0.15
    # cv2.ellipse's -20 deg is in the image's frame, as the pixel track's angle
    assert np.abs(table["angle"] + 20.0).max() < 2.0


def _moving_ellipse_video(path, count=9):
    frames = []
    for number in range(count):
        frame = np.full((60, 120), 200, np.uint8)
        cv2.ellipse(frame, (20 + 9 * number, 30), (12, 4), 10, 0, 360, 40, -1)
        frames.append(frame)
    write_video(frames, path, fps=500.0)


@pytest.mark.parametrize("header_count", [True, False])
def test_video_frames_are_all_tracked_whether_or_not_the_header_counts_them(tmp_path, monkeypatch, header_count):
    video = tmp_path / "drop.avi"
    _moving_ellipse_video(video)
    if not header_count:
        real = cv2.VideoCapture

        class NoCount:                  # a container that does not say how many frames it holds
            def __init__(self, *args):
                self._capture = real(*args)

            def get(self, prop):
                return 0.0 if prop == cv2.CAP_PROP_FRAME_COUNT else self._capture.get(prop)

            def __getattr__(self, name):
                return getattr(self._capture, name)

        monkeypatch.setattr(cv2, "VideoCapture", NoCount)
    frames = open_frames(video)
    assert frames.count == 9 and frames.fps == 500.0
    table = track_pixels(frames)
    assert list(table["frame"]) == list(range(9))
    assert np.allclose(table["time"], np.arange(9) / 500.0)
    # MJPG blurs the edge a little: centre within a third of a pixel
    assert np.abs(table["x"] - (20 + 9 * table["frame"])).max() < 0.35


def test_body_length_of_a_hollow_silhouette_is_refused(tmp_path, capsys):
    """A ring has no material on its axis through the centroid: no length,
    so no scale from it."""
    for number in range(5):
        frame = np.full((60, 120), 200, np.uint8)
        cv2.ellipse(frame, (20 + 20 * number, 30), (14, 7), 0, 0, 360, 40, 2)
        cv2.imwrite(str(tmp_path / f"f{number}.png"), frame)
    line = _refused(["track", str(tmp_path), "--fps", "100", "--body-length", "0.02", "--out",
                     str(tmp_path / "t.csv")], capsys)
    assert "--body-length: the body's length along its axis could not be measured" in line


def test_needle_two_pixels_wide_is_tracked(tmp_path):
    """A thin rod (2 px across: a 0.4 mm needle at 5 px/mm) is kept whole:
    no morphological opening erases it."""
    for number in range(6):
        frame = np.full((60, 120), 200, np.uint8)
        x = 20 + 15 * number
        cv2.line(frame, (x - 12, 36), (x + 12, 24), 40, 2)      # rises to the right: +26.6 deg with y up
        cv2.imwrite(str(tmp_path / f"f{number}.png"), frame)
    table = track_pixels(open_frames(tmp_path, fps=100.0))
    assert table["x"].notna().all()
    assert np.abs(table["x"] - (20 + 15 * table["frame"])).max() < 0.3
    # image frame: from +x towards +row, so the rising rod is at -26.6 deg there
    assert np.abs(table["angle"] - np.degrees(np.arctan2(-12, 24))).max() < 1.5
