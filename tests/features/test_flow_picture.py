"""Flow pictures: direction as hue, speed as brightness, a legend that uses the same code, and
the viewer's motion look computed off the UI thread."""

from __future__ import annotations

import cv2
import numpy as np
import pytest
from PySide6.QtCore import Qt

from clipscribe.features.flow_picture import colour_wheel, flow_colours, flow_picture

from .synth import sliding_clip


def _hue_deg(bgr_pixel) -> float:
    hsv = cv2.cvtColor(np.uint8([[bgr_pixel]]), cv2.COLOR_BGR2HSV)[0, 0]
    return 2.0 * float(hsv[0])


@pytest.mark.parametrize("dx, dy, hue", [(1, 0, 0), (0, 1, 90), (-1, 0, 180), (0, -1, 270)])
def test_direction_is_hue_and_speed_is_brightness(dx, dy, hue):
    flow = np.zeros((8, 8, 2), np.float32)
    flow[:4] = (dx, dy)
    flow[4:] = (dx / 2, dy / 2)
    img, scale = flow_colours(flow, scale=1.0)
    assert scale == 1.0
    assert _hue_deg(img[0, 0]) == pytest.approx(hue, abs=2)
    v = cv2.cvtColor(img, cv2.COLOR_BGR2HSV)[..., 2]
    assert v[0, 0] == 255 and v[7, 7] == pytest.approx(127, abs=1)
    still, _ = flow_colours(np.zeros((4, 4, 2), np.float32), scale=1.0)
    assert still.max() == 0


def test_the_legend_wheel_uses_the_same_code():
    wheel = colour_wheel(65)
    c = 32
    flow = np.float32([[[1, 0], [0, 1]]])
    expected, _ = flow_colours(flow, scale=1.0)
    assert np.abs(wheel[c, 64].astype(int) - expected[0, 0]).max() <= 8   # right: moving right
    assert np.abs(wheel[64, c].astype(int) - expected[0, 1]).max() <= 8   # down: moving down
    assert wheel[0, 0].max() == 0                                         # outside the disc


def test_flow_picture_of_a_clip_sliding_right(tmp_path):
    clip = sliding_clip(tmp_path / "right.avi", dx=2, dy=0, size=(96, 64), seed=3)
    pic = flow_picture(clip, 10)
    v = cv2.cvtColor(pic.image, cv2.COLOR_BGR2HSV)
    bright = v[..., 2] > 128
    assert bright.mean() > 0.5
    hues = 2.0 * v[..., 0][bright].astype(float)
    right = np.minimum(hues, 360 - hues)  # distance from 0 degrees (to the right)
    assert np.median(right) < 20
    first = flow_picture(clip, 0)  # compared with itself: no motion
    assert first.image.max() == 0


def test_viewer_toggles_flow_in_place_then_over_the_picture(qtbot, open_window, tmp_path):
    from clipscribe import Project
    folder = tmp_path / "p"
    with Project.create(folder) as p:
        p.define_labels(["left", "right"])
        clip = p.add_clip(sliding_clip(folder / "media" / "right.avi", dx=2, dy=0, seed=5))
    w, p = open_window(folder, None)
    w.open_clip(clip)
    qtbot.waitUntil(lambda: w.viewer.frame_number is not None, timeout=10000)
    w.player.seek(6)
    qtbot.waitUntil(lambda: w.viewer.frame_number == 6, timeout=10000)
    assert w.viewer.overlay is None
    w.viewer.setFocus()
    qtbot.keyClick(w.viewer, Qt.Key.Key_F, Qt.KeyboardModifier.ControlModifier
                   | Qt.KeyboardModifier.ShiftModifier)
    qtbot.waitUntil(lambda: w.viewer.overlay is not None, timeout=20000)
    mode, image, frame, scale, legend = w.viewer.overlay
    assert (mode, frame) == ("flow", 6) and scale >= 1 and not legend.isNull()
    assert w.actions_["flow"].isChecked()
    w.toggle_flow()
    qtbot.waitUntil(lambda: w.viewer.overlay[0] == "blend", timeout=20000)
    w.toggle_flow()
    assert w.viewer.overlay is None and not w.actions_["flow"].isChecked()
