"""Per-frame geometry of ``hopscape track`` against an outside reference:
filled ellipses drawn by OpenCV's own ``cv2.ellipse`` with a known centre,
semi-axes and angle.

The closed forms checked (image moments; Hu, "Visual pattern recognition by
moment invariants", IRE Trans. Inf. Theory IT-8:179, 1962, and Prokop &
Reeves, CVGIP: Graphical Models and Image Processing 54:438, 1992; recalled
from memory, and re-derived here in the comments):

- the centroid is ``(m10/m00, m01/m00)`` and is the ellipse's centre;
- the principal axis is at ``0.5 atan2(2 mu11, mu20 - mu02)`` from +x
  (towards +y, the image's rows), the ellipse's own rotation angle;
- a uniform ellipse of semi-axes ``a``, ``b`` has the variances ``a^2/4``
  and ``b^2/4`` along and across its axis (integrate ``x^2`` over the
  ellipse: ``pi a^3 b / 4``, divided by its area ``pi a b``), so
  ``a = 2 sqrt(lambda_1 / m00)`` with ``lambda_1`` the larger eigenvalue
  of ``[[mu20, mu11], [mu11, mu02]]``; its area is ``pi a b``.
"""
from __future__ import annotations

import numpy as np
import pytest

cv2 = pytest.importorskip("cv2")

from hopscape.video.silhouette import blob_moments  # noqa: E402

SHIFT = 4           # fractional bits: cv2.ellipse takes the centre and axes in 1/16 pixel
SUPERSAMPLE = 16    # linear: the edge's coverage in 1/256 of a pixel
SIZE = (240, 320)   # rows, columns


def drawn_ellipse(centre, semi_axes, angle_deg, supersample=1):
    """A filled ellipse drawn by cv2.ellipse; with ``supersample`` > 1 drawn
    that much finer and averaged back (each pixel's covered fraction).

    cv2.ellipse draws a polygon through whole-degree steps and rounds its
    rotation to whole degrees (its ellipse2Poly), so the angles below are
    whole degrees."""
    s = supersample
    image = np.zeros((SIZE[0] * s, SIZE[1] * s), np.uint8)
    unit = 1 << SHIFT
    # pixel p of the coarse image covers fine pixels s p .. s p + s - 1, centred on s (p + 0.5) - 0.5
    cx, cy = ((c + 0.5) * s - 0.5 for c in centre)
    cv2.ellipse(image, (round(cx * unit), round(cy * unit)),
                (round(semi_axes[0] * s * unit), round(semi_axes[1] * s * unit)), angle_deg, 0, 360, 1,
                thickness=-1, lineType=cv2.LINE_8, shift=SHIFT)
    if s == 1:
        return image
    return cv2.resize(image.astype(np.float32), SIZE[::-1], interpolation=cv2.INTER_AREA)


ANGLES = [0, 17, 45, 72, 90, 131, -28]
CENTRE, A, B = (161.3125, 119.75), 90.0, 24.0


def axis_difference(orientation, angle_deg):
    """Axis angles agree modulo 180 deg [deg]."""
    return (np.degrees(orientation) - angle_deg + 90.0) % 180.0 - 90.0


@pytest.mark.parametrize("angle_deg", ANGLES)
def test_moments_of_an_ellipse_give_its_centre_axis_and_semi_axes(angle_deg):
    """Pixel coverage of the ellipse (drawn 16 times finer): the moments are
    those of the continuous ellipse up to the 1/16-pixel drawing."""
    found = blob_moments(drawn_ellipse(CENTRE, (A, B), angle_deg, SUPERSAMPLE))
    # centroid = centre; 0.01 px: the drawing's 1/16 px steps, averaged over the edge
    assert found["x"] == pytest.approx(CENTRE[0], abs=0.01)
    assert found["y"] == pytest.approx(CENTRE[1], abs=0.01)
    # cv2.ellipse rotates from +x towards +y, as the moment formula measures;
    # 0.02 deg: the drawing's polygon of whole-degree steps
    assert abs(axis_difference(found["orientation"], angle_deg)) < 0.02
    # a = 2 sqrt(lambda_1 / m00), b likewise, area pi a b: within 0.3%
    # (OpenCV's fill takes in the outline's own fine pixels: +1/32 px all round)
    assert 2 * found["along"] == pytest.approx(A, rel=0.003)
    assert 2 * found["across"] == pytest.approx(B, rel=0.003)
    assert found["area"] == pytest.approx(np.pi * A * B, rel=0.003)
    assert -np.pi / 2 < found["orientation"] <= np.pi / 2


@pytest.mark.parametrize("angle_deg", ANGLES)
def test_moments_of_a_whole_pixel_mask_of_an_ellipse(angle_deg):
    """The tracker's own case: a 0/1 mask, every pixel in or out."""
    found = blob_moments(drawn_ellipse(CENTRE, (A, B), angle_deg))
    # 0.15 px: whole-pixel edges do not cancel exactly on the two sides
    assert found["x"] == pytest.approx(CENTRE[0], abs=0.15)
    assert found["y"] == pytest.approx(CENTRE[1], abs=0.15)
    assert abs(axis_difference(found["orientation"], angle_deg)) < 0.1
    # OpenCV's fill includes the pixels the outline passes through, which
    # grows a filled shape by about half a pixel all round
    assert 2 * found["along"] == pytest.approx(A + 0.5, abs=0.3)
    assert 2 * found["across"] == pytest.approx(B + 0.5, abs=0.3)


def test_fitted_ellipse_of_opencv_agrees_on_the_same_blob():
    """A second, independent estimate of the same blob: OpenCV's
    least-squares ellipse fit to its outline (cv2.fitEllipse, Fitzgibbon's
    direct fit) gives the same centre and full axes."""
    image = drawn_ellipse((160.0, 120.0), (80.0, 30.0), 33)
    found = blob_moments(image)
    contours, _ = cv2.findContours(image, cv2.RETR_EXTERNAL, cv2.CHAIN_APPROX_NONE)
    (cx, cy), (width, height), _ = cv2.fitEllipse(contours[0])
    assert found["x"] == pytest.approx(cx, abs=0.1)
    assert found["y"] == pytest.approx(cy, abs=0.1)
    # the fit passes through the outer pixel centres: half a pixel inside the edge
    assert 4 * found["along"] == pytest.approx(max(width, height) + 1.0, abs=1.0)
    assert 4 * found["across"] == pytest.approx(min(width, height) + 1.0, abs=1.0)


def test_empty_image_has_no_blob():
    found = blob_moments(np.zeros((20, 20), np.uint8))
    assert np.isnan(found["x"]) and np.isnan(found["orientation"])


def test_median_image_is_numpys_median():
    """The bit-by-bit per-pixel median against numpy.median (odd counts:
    the same values; even: the upper of the two middle values)."""
    from hopscape.video.silhouette import median_image

    rng = np.random.default_rng(5)
    for count in (1, 3, 51):
        stack = rng.integers(0, 256, (count, 30, 40), dtype=np.uint8)
        assert np.array_equal(median_image(stack), np.median(stack, axis=0).astype(np.uint8))
    stack = rng.integers(0, 256, (6, 30, 40), dtype=np.uint8)
    assert np.array_equal(median_image(stack), np.sort(stack, axis=0)[3])
    with pytest.raises(ValueError, match="1 to 255 frames"):
        median_image([])
