"""Frame conversion, the viewer's aspect-correct placement, playback with a loop."""

import numpy as np

from clipscribe.ui.images import bgr_to_qimage
from clipscribe.ui.viewer import FrameView

from .conftest import wait_frame


def test_bgr_to_qimage_exact_pixels_odd_width():
    # width 7: rows of 21 bytes are not 4-byte aligned, so bytesPerLine must be honoured
    frame = np.zeros((5, 7, 3), np.uint8)
    frame[..., 0], frame[..., 1], frame[..., 2] = 10, 20, 30      # B, G, R
    frame[4, 6] = (200, 100, 50)
    img = bgr_to_qimage(frame)
    assert (img.width(), img.height()) == (7, 5)
    assert img.pixelColor(0, 0).getRgb()[:3] == (30, 20, 10)
    assert img.pixelColor(6, 4).getRgb()[:3] == (50, 100, 200)


def test_viewer_letterboxes_keeping_aspect(qtbot):
    view = FrameView()
    qtbot.addWidget(view)
    view.resize(800, 400)
    view.show_frame(0, bgr_to_qimage(np.zeros((240, 320, 3), np.uint8)))
    r = view.target_rect()
    assert abs(r.width() / r.height() - 320 / 240) < 1e-6
    assert r.height() == 400 and abs(r.center().x() - 400) < 1e-6
    view.grab()  # paints without error


def test_loop_plays_inside_the_segment(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-1")
    wait_frame(qtbot, w)
    g = w.segment_model.segments()[0]
    w.timeline.set_selected(g.id)
    w.player.set_speed(2.0)
    w.toggle_loop()
    seen = []
    w.player.playheadMoved.connect(seen.append)
    qtbot.waitUntil(lambda: len(seen) > (g.end - g.start) + 5, timeout=15000)
    w.toggle_loop()
    assert not w.player.playing
    assert all(g.start <= f < g.end for f in seen)
    assert g.start in seen[1:]          # it wrapped round to the start
