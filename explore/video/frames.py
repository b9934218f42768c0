"""Frames of a filmed drop: a video file or a folder of numbered PNG frames.

Both come out the same way, as grey images (``uint8``, rows x columns) with
their frame numbers, so the tracker never asks where they came from. Every
problem a user can fix is an :class:`hopscape.errors.InputError` naming the
file and what was found.
"""
from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import InputError, shown

#: Frame rates below this, read from a video file, are probably the playback
#: rate a high-speed camera wrote into the file, not its recording rate
#: (from memory: high-speed camera software commonly saves at 25-60 frames
#: per second for viewing). [1/s]
PLAYBACK_RATE_BELOW = 200.0

# FFmpeg and OpenCV print their own complaints about a damaged file on stderr
# before we can say it in one line; keep them quiet unless the user asked.
os.environ.setdefault("OPENCV_FFMPEG_LOGLEVEL", "-8")
os.environ.setdefault("OPENCV_LOG_LEVEL", "ERROR")

_LAST_NUMBER = re.compile(r"(\d+)(?!.*\d)")


@dataclass
class Frames:
    """Where the frames are and what the tracker needs to know about them.

    Attributes
    ----------
    source : pathlib.Path
        The video file or the folder of frames.
    numbers : numpy.ndarray
        Frame numbers (the number in each PNG's name; 0, 1, ... in a video).
    fps : float
        Recording rate [1/s].
    height, width : int
        Frame size [pixels].
    files : list of pathlib.Path
        The PNG files in frame order (empty for a video file).
    notes : list of str
        Warnings about the film (a probable playback rate).
    shift : int
        Bits dropped from 16-bit PNG frames to make them 8-bit (one fixed
        shift for the whole film, so the background stays comparable).
    """

    source: Path
    numbers: np.ndarray
    fps: float
    height: int
    width: int
    files: list = field(default_factory=list)
    notes: list = field(default_factory=list)
    shift: int = 0

    @property
    def count(self):
        """Frames in the film."""
        return int(self.numbers.size)

    def numbers_at(self, positions):
        """Frame numbers of the frames :meth:`read` gave at ``positions``."""
        positions = np.asarray(positions, dtype=int)
        return self.numbers[positions] if self.files else positions

    def times(self, numbers=None):
        """Time of each frame (of :attr:`numbers`, or those given) since the
        film's first frame. [s]"""
        numbers = self.numbers if numbers is None else np.asarray(numbers)
        return (numbers - self.numbers[0]) / self.fps

    def read(self, positions=None):
        """Grey frames in order: all, or those at ``positions`` (sorted
        indices into :attr:`numbers`). Yields ``(position, image)``.

        A video is decoded in order, skipping the frames not wanted without
        converting them (seeking was slower: 4.8 s for 51 positions in a
        200-frame 1280 x 1024 MJPG file that decodes whole in 0.34 s)."""
        wanted = range(self.count) if positions is None else positions
        if self.files:
            for i in wanted:
                image = _eight_bits(_read_png(self.files[i]), self.shift)
                if image.shape != (self.height, self.width):
                    raise InputError(f"{self.files[i]}: {image.shape[1]}x{image.shape[0]} pixels, but the first "
                                     f"frame is {self.width}x{self.height}; every frame must have the same size")
                yield i, image
            return
        yield from _read_video(self.source, None if positions is None else wanted)


def open_frames(path, fps=None):
    """Open a video file or a folder of numbered PNG frames.

    Parameters
    ----------
    path : str or pathlib.Path
        A video file OpenCV can decode, or a folder of PNG files whose names
        end in their frame number (``drop_00012.png``).
    fps : float, optional
        Recording rate [1/s]; required for a folder, and overrides the rate a
        video file carries (high-speed cameras often store a playback rate).

    Returns
    -------
    Frames

    Raises
    ------
    InputError
        A missing path, a folder without PNG frames, a folder without ``fps``,
        a file OpenCV cannot read, a video without frames, frames of
        different sizes.
    """
    path = Path(path)
    if not path.exists():
        raise InputError(f"{path}: no such video file or folder of frames")
    if path.is_dir():
        return _open_folder(path, fps)
    return _open_video(path, fps)


def _open_folder(folder, fps):
    files = [p for p in folder.iterdir() if p.suffix.lower() == ".png" and p.is_file()]
    if not files:
        raise InputError(f"{folder}: no PNG frames in this folder (expected numbered files such as "
                         "frame_00001.png)")
    unnumbered = [p.name for p in files if not _LAST_NUMBER.search(p.stem)]
    if unnumbered:
        raise InputError(f"{folder / unnumbered[0]}: a frame's name must end in its frame number "
                         f"(such as frame_00001.png), got {shown(unnumbered[0])}")
    numbers = np.array([int(_LAST_NUMBER.search(p.stem).group(1)) for p in files])
    order = np.argsort(numbers, kind="stable")
    files, numbers = [files[i] for i in order], numbers[order]
    repeated = np.flatnonzero(np.diff(numbers) == 0)
    if repeated.size:
        i = repeated[0]
        raise InputError(f"{folder}: frame number {numbers[i]} appears twice ({files[i].name}, {files[i + 1].name})")
    if fps is None:
        raise InputError(f"--fps: a folder of frames carries no frame rate; give the camera's recording rate "
                         f"(--fps F [1/s]) for {folder}")
    first = _read_png(files[0])
    # 16-bit frames often hold 10-14 significant bits (a camera's sensor
    # depth): keep the top 8 of the bits the first frame uses
    shift = max(int(first.max()).bit_length() - 8, 0) if first.dtype == np.uint16 else 0
    return Frames(folder, numbers, float(fps), first.shape[0], first.shape[1], files, shift=shift)


def _eight_bits(image, shift):
    """A frame as 8-bit grey levels (16-bit frames shifted right, saturated)."""
    if image.dtype == np.uint8:
        return image
    return np.minimum(image >> shift, 255).astype(np.uint8)


def _read_png(path):
    import cv2

    image = cv2.imread(str(path), cv2.IMREAD_GRAYSCALE | cv2.IMREAD_ANYDEPTH)
    if image is None:
        raise InputError(f"{path}: not a readable PNG image")
    return image


def _open_video(path, fps):
    import cv2

    capture = cv2.VideoCapture(str(path))
    try:
        if not capture.isOpened():
            raise InputError(f"{path}: OpenCV cannot read this file as a video (unknown format or damaged)")
        ok, image = capture.read()
        if not ok or image is None:
            raise InputError(f"{path}: the video holds no frames OpenCV can decode")
        stored = float(capture.get(cv2.CAP_PROP_FPS) or 0.0)
    finally:
        capture.release()
    # headers miscount (an MJPG AVI written by OpenCV said 62 of its 200
    # frames); counting costs one decoding pass without colour conversion
    count = _count_video_frames(path)
    notes = []
    if fps is None:
        if not stored > 0:
            raise InputError(f"--fps: {path} does not say its frame rate; give the camera's recording rate "
                             "(--fps F [1/s])")
        fps = stored
        if stored < PLAYBACK_RATE_BELOW:
            notes.append(f"{path} says {stored:g} frames/s; high-speed cameras often store a playback rate: "
                         "give the recording rate with --fps if it differs (times would be off by their ratio)")
    return Frames(path, np.arange(count), float(fps), image.shape[0], image.shape[1], notes=notes)


def _count_video_frames(path):
    import cv2

    capture = cv2.VideoCapture(str(path))
    try:
        count = 0
        while capture.grab():
            count += 1
        return count
    finally:
        capture.release()


def _read_video(path, positions=None):
    """Decode ``path`` in order; yield ``(position, grey image)`` for the
    wanted positions (sorted; all when None), skipping the others cheaply."""
    import cv2

    capture = cv2.VideoCapture(str(path))
    wanted = None if positions is None else iter(positions)
    target = None if wanted is None else next(wanted, None)
    position = 0
    try:
        while wanted is None or target is not None:
            if wanted is not None and position != target:
                if not capture.grab():           # decodes without converting: the cheap skip
                    return
                position += 1
                continue
            ok, image = capture.read()
            if not ok:
                return
            yield position, cv2.cvtColor(image, cv2.COLOR_BGR2GRAY) if image.ndim == 3 else image
            position += 1
            if wanted is not None:
                target = next(wanted, None)
    finally:
        capture.release()
