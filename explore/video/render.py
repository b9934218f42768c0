"""Synthetic films of a simulated drop, for tests and the demo.

A side-on camera looking along the floor: the body's outline
(:func:`sim.geometry.outline`) drawn as a dark silhouette, anti-aliased by
drawing it at :data:`SUPERSAMPLE` times the resolution and averaging
blocks (pixel coverage), smeared over the exposure (motion blur: the mean
coverage of :attr:`Camera.blur_samples` instants), laid over a textured
background with a darker bench below the floor line, plus Gaussian sensor
noise. The true state is that at the middle of each exposure.
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from hopscape import sim

#: Linear supersampling of the silhouette (16 coverage levels per pixel edge).
SUPERSAMPLE = 8
#: Fractional bits of the polygon vertices given to OpenCV's fillPoly.
_SHIFT = 4


@dataclass(frozen=True)
class Camera:
    """Where the camera looks and how it records.

    Parameters
    ----------
    width, height : int
        Frame size [pixels].
    px_per_m : float
        Scale [pixels/m].
    floor_row : float
        Pixel row of the floor line (y = 0) [pixels].
    left : float
        Distance from the frame's left edge to x = 0 of the drop [m].
    fps : float
        Recording rate [1/s].
    exposure : float
        Shutter time [s]; motion blur spans it.
    noise : float
        Standard deviation of the sensor noise [grey levels].
    blur_samples : int
        Instants averaged over the exposure.
    seed : int
        Seed of the background texture and the noise.
    """

    width: int = 480
    height: int = 320
    px_per_m: float = 5000.0
    floor_row: float = 300.0
    left: float = 0.03
    fps: float = 2000.0
    exposure: float = 1e-4
    noise: float = 2.0
    blur_samples: int = 5
    seed: int = 1

    def columns(self, x):
        """Pixel column (OpenCV: pixel centres at whole numbers) of x [m]."""
        return (self.left + np.asarray(x)) * self.px_per_m - 0.5

    def rows(self, y):
        """Pixel row of height y [m] above the floor."""
        return self.floor_row - np.asarray(y) * self.px_per_m


def scene(camera):
    """The still background: a lit wall with a smooth texture above the
    floor line, a darker textured bench below it (``float32`` grey levels)."""
    import cv2

    rng = np.random.default_rng(camera.seed)
    texture = cv2.GaussianBlur(rng.normal(0.0, 1.0, (camera.height, camera.width)).astype(np.float32), (0, 0), 3)
    texture *= 12.0 / max(float(texture.std()), 1e-9)
    rows = np.arange(camera.height, dtype=np.float32)[:, None]
    cols = np.arange(camera.width, dtype=np.float32)[None, :]
    wall = 170.0 + 30.0 * cols / camera.width + texture
    bench = 100.0 + 0.5 * texture
    return np.where(rows < camera.floor_row, wall, bench).astype(np.float32)


def coverage(profile, x, y, theta, camera):
    """Fraction of each pixel the body covers, averaged over the given
    instants (arrays ``x``, ``y`` [m], ``theta`` [rad]); ``float32``."""
    import cv2

    out = np.zeros((camera.height, camera.width), np.float32)
    outlines = [_pixel_outline(profile, xi, yi, ti, camera) for xi, yi, ti in zip(x, y, theta)]
    points = np.concatenate(outlines)
    c0, r0 = np.floor(points.min(axis=0)).astype(int) - 2
    c1, r1 = np.ceil(points.max(axis=0)).astype(int) + 3
    c0, r0 = max(c0, 0), max(r0, 0)
    c1, r1 = min(c1, camera.width), min(r1, camera.height)
    if c1 <= c0 or r1 <= r0:
        return out                                   # out of view
    s = SUPERSAMPLE
    fine = np.zeros(((r1 - r0) * s, (c1 - c0) * s), np.float32)
    for outline in outlines:
        layer = np.zeros(fine.shape, np.uint8)
        # a coarse pixel p covers fine pixels s p .. s p + s - 1, centred on s (p + 0.5) - 0.5
        local = (outline - [c0, r0] + 0.5) * s - 0.5
        cv2.fillPoly(layer, [np.round(local * (1 << _SHIFT)).astype(np.int32)], 1, lineType=cv2.LINE_8,
                     shift=_SHIFT)
        fine += layer
    fine /= len(outlines)
    out[r0:r1, c0:c1] = cv2.resize(fine, (c1 - c0, r1 - r0), interpolation=cv2.INTER_AREA)
    return out


def _pixel_outline(profile, x, y, theta, camera, points=180):
    bx, by = sim.geometry.outline(profile, points)
    c, s = np.cos(theta), np.sin(theta)
    return np.column_stack([camera.columns(x + c * bx - s * by), camera.rows(y + s * bx + c * by)])


def film(result, camera, duration, drop=0, body_grey=30.0):
    """Frames of drop ``drop`` of a :class:`sim.DropResult` from its release.

    Parameters
    ----------
    result : sim.DropResult
    camera : Camera
    duration : float
        Length of the film [s].
    drop : int
    body_grey : float
        Grey level of the body (a dark silhouette: a back-lit rig).

    Returns
    -------
    truth : pandas.DataFrame
        ``frame``, ``time`` [s], ``x`` [m from the frame's left edge], ``y``
        [m above the floor], ``angle`` [deg in (-90, 90]] of the centre at
        the middle of each exposure.
    frames : generator of numpy.ndarray
        The grey frames (``uint8``), made as they are read.
    """
    known = _known_until(result, drop)
    if duration > known:
        raise ValueError(f"duration must be at most {known:.4f} s: the drop's state is known up to the end of its "
                         f"last simulated flight (simulate more impacts), got {duration:g} s")
    count = int(np.floor(duration * camera.fps)) + 1
    times = np.arange(count) / camera.fps
    middle = sim.history(result, drop, times)
    truth = pd.DataFrame({"frame": np.arange(count), "time": times, "x": camera.left + middle["x"],
                          "y": middle["y"], "angle": 90.0 - np.mod(90.0 - np.degrees(middle["theta"]), 180.0)})
    profile = tuple(float(p[drop]) for p in result.profile)

    def frames():
        rng = np.random.default_rng(camera.seed + 1)
        still = scene(camera)
        offsets = (np.linspace(-0.5, 0.5, camera.blur_samples) if camera.blur_samples > 1 else np.zeros(1))
        for t in times:
            # the exposure starts at release at the earliest (history holds no state before it)
            instants = np.maximum(t + offsets * camera.exposure, 0.0)
            state = sim.history(result, drop, instants)
            cover = coverage(profile, state["x"], state["y"], state["theta"], camera)
            image = still * (1 - cover) + body_grey * cover + rng.normal(0.0, camera.noise, still.shape)
            yield np.clip(np.round(image), 0, 255).astype(np.uint8)

    return truth, frames()


def _known_until(result, drop):
    """Time up to which :func:`sim.history` follows the drop [s]: the end of
    the flight after its last simulated impact (after it, history would
    let the body fall through the floor)."""
    count = int(result.count[drop])
    if count == 0:
        return float("inf") if result.status[drop] == sim.drop.RAN_ALL else 0.0
    last = float(result.time[drop, count - 1])
    flight = float(result.flight[drop, count - 1])
    return last + (flight if np.isfinite(flight) else 0.0)


def write_frames(frames, folder, stem="frame"):
    """Write grey frames as ``folder/stem_00000.png`` ... ; returns the count."""
    import cv2

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    count = 0
    for count, image in enumerate(frames, start=1):
        cv2.imwrite(str(folder / f"{stem}_{count - 1:05d}.png"), image)
    return count


#: Codec by file ending (OpenCV's FOURCC codes): Motion-JPEG in AVI, MPEG-4 part 2 in MP4.
CODECS = {".avi": "MJPG", ".mp4": "mp4v"}


def write_video(frames, path, fps):
    """Write grey frames as a video file (``.avi`` or ``.mp4``, lossy); returns the count."""
    import cv2

    path = Path(path)
    writer, count = None, 0
    try:
        for image in frames:
            if writer is None:
                writer = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*CODECS[path.suffix.lower()]), fps,
                                         (image.shape[1], image.shape[0]), True)
            writer.write(cv2.cvtColor(image, cv2.COLOR_GRAY2BGR))
            count += 1
    finally:
        if writer is not None:
            writer.release()
    return count
