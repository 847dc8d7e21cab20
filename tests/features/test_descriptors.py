"""Descriptors against facts of synthetic data: known translations, known directions, known colours."""

from __future__ import annotations

import cv2
import numpy as np
import pytest

from clipscribe import features as F

from .synth import shifted, texture


@pytest.mark.parametrize("dx, dy", [(1.5, -0.7), (3.0, 2.0), (-2.3, 0.4), (0.3, 0.2), (-4.0, -3.5)])
def test_flow_recovers_a_known_translation(dx, dy):
    a = texture(180, 320, seed=int(10 * dx + dy) % 97)
    b = shifted(a, dx, dy)
    flow = F.dense_flow(a, b)
    m = 16  # pixels near the border have no match in the other frame
    err = np.hypot(flow[m:-m, m:-m, 0] - dx, flow[m:-m, m:-m, 1] - dy)
    assert err.mean() < 0.2


def test_flow_of_still_frames_is_zero():
    a = texture(90, 160, seed=3)
    assert np.abs(F.dense_flow(a, a)).max() < 1e-3


def test_flow_refuses_frames_of_different_size():
    with pytest.raises(ValueError, match="one size"):
        F.dense_flow(np.zeros((10, 12), np.uint8), np.zeros((12, 10), np.uint8))


def _uniform(dx: float, dy: float, h: int = 40, w: int = 60) -> np.ndarray:
    flow = np.empty((h, w, 2), np.float32)
    flow[..., 0], flow[..., 1] = dx, dy
    return flow


@pytest.mark.parametrize("k", range(8))
def test_hof_puts_uniform_motion_into_its_direction_bin(k):
    angle = np.radians(22.5 + 45 * k)  # the centre of bin k
    h = F.hof(_uniform(3 * np.cos(angle), 3 * np.sin(angle))).reshape(4, 9)
    expected = np.zeros(9)
    expected[k] = 1.0
    # OpenCV's angles are good to about 0.3 degrees: up to 0.3/45 of a vote may spill over
    np.testing.assert_allclose(h, np.tile(expected, (4, 1)), atol=0.01)


def test_hof_splits_motion_between_the_two_nearest_bins():
    h = F.hof(_uniform(2.0, 0.0)).reshape(4, 9)  # 0 degrees: half-way between bins 7 and 0
    np.testing.assert_allclose(h[:, [0, 7]], 0.5, atol=0.01)


def test_hof_counts_slow_pixels_as_still():
    h = F.hof(_uniform(0.1, -0.2)).reshape(4, 9)
    np.testing.assert_allclose(h[:, 8], 1.0)


def test_mbh_is_empty_for_uniform_motion_and_finds_a_vertical_boundary():
    assert F.mbh(_uniform(2.0, 1.0)).sum() == 0
    flow = _uniform(0.0, 0.0)
    flow[:, 30:, 0] = 3.0  # right half moves right: dx grows along x at column 30
    m = F.mbh(flow).reshape(2, 4, 8)
    mbh_x = m[0].sum(axis=0)
    assert mbh_x[[0, 7]].sum() / mbh_x.sum() > 0.99  # gradient of dx points along +x
    assert m[1].sum() == 0  # dy is zero everywhere: no boundary in it


def test_hog_of_vertical_stripes_votes_for_horizontal_gradients():
    img = np.zeros((80, 144), np.uint8)
    img[:, ::8] = 255
    img = cv2.GaussianBlur(img, (0, 0), 1.0)
    blocks = F.hog(img).reshape(-1, 4, 9)
    # gradient angle 0 lies between the centres of bins 8 (170 deg) and 0 (10 deg)
    assert blocks[..., [0, 8]].sum() / blocks.sum() > 0.95
    assert F.hog(img).shape == (144,)


def test_hog_quarters_average_unit_length_blocks():
    rng = np.random.default_rng(1)
    quarters = F.hog(rng.integers(0, 255, (90, 160, 3), dtype=np.uint8)).reshape(-1, 36)
    # a mean of unit vectors is at most 1 long, and noise blocks point much the same way
    assert np.all(np.linalg.norm(quarters, axis=1) <= 1.0 + 1e-9)
    assert np.all(np.linalg.norm(quarters, axis=1) > 0.8)
    assert F.hog(np.zeros((64, 128), np.uint8)).max() == 0  # a flat picture has no edges


@pytest.mark.parametrize("colour, bin_", [((0, 0, 255), (0, 3, 3)), ((255, 0, 0), (5, 3, 3)),
                                          ((0, 0, 0), (0, 0, 0))])
def test_hsv_histogram_of_a_flat_colour_is_one_bin(colour, bin_):
    frame = np.zeros((20, 30, 3), np.uint8)
    frame[:] = colour  # BGR: red (hue 0), blue (hue 120 of 180: bin 5), black
    h = F.hsv_histogram(frame).reshape(8, 4, 4)
    assert h[bin_] == pytest.approx(1.0)
    assert h.sum() == pytest.approx(1.0)


def test_descriptor_lengths_match_the_declared_sizes():
    frame = np.full((50, 80, 3), 128, np.uint8)
    assert F.appearance(frame).shape == (F.APPEARANCE_DIMS,)
    assert F.motion(_uniform(1.0, 1.0)).shape == (F.MOTION_DIMS,)
