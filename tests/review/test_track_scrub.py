"""Dragging along the review desk's tracks moves the playhead frame by frame (scrubbing); a
click without a drag stays one seek, and a press on a gold edge still drags the edge."""

from __future__ import annotations

from PySide6.QtCore import QPoint, Qt

from clipscribe.ui.review.tracks import GAP, ROW_H, SCRUB_PX, TrackStack


def _stack(qtbot) -> TrackStack:
    t = TrackStack()
    qtbot.addWidget(t)
    t.resize(760, 200)
    t.set_tracks([("annotator-1", [("stack", 10, 40)]), ("gold", [("stack", 20, 30)])], 60)
    t.show()
    return t


def test_a_drag_in_an_empty_stretch_seeks_to_every_frame_it_passes(qtbot):
    t = _stack(qtbot)
    seeks: list[int] = []
    t.seekRequested.connect(seeks.append)
    y = ROW_H // 2                                  # the annotator's row, left of its segment
    start = QPoint(round(t.x_of(3)) + 1, y)
    qtbot.mousePress(t, Qt.MouseButton.LeftButton, pos=start)
    assert seeks == [3]                             # the press itself seeks
    qtbot.mouseMove(t, QPoint(start.x() + SCRUB_PX - 2, y))
    assert seeks == [3]                             # a shaky click is not a drag
    for f in (5, 8, 12, 50):
        t.playhead = seeks[-1]                      # the desk moves the playhead as frames show
        qtbot.mouseMove(t, QPoint(round(t.x_of(f)) + 1, y))
    qtbot.mouseRelease(t, Qt.MouseButton.LeftButton, pos=QPoint(round(t.x_of(50)) + 1, y))
    assert seeks == [3, 5, 8, 12, 50]
    qtbot.mouseMove(t, QPoint(round(t.x_of(20)) + 1, y))
    assert seeks[-1] == 50                          # released: moving no longer seeks


def test_a_click_on_a_segment_seeks_to_its_first_frame_once(qtbot):
    t = _stack(qtbot)
    seeks: list[int] = []
    t.seekRequested.connect(seeks.append)
    at = QPoint(round(t.x_of(25)), ROW_H // 2)
    qtbot.mouseClick(t, Qt.MouseButton.LeftButton, pos=at)
    assert seeks == [10]


def test_a_press_on_a_gold_edge_drags_the_edge_and_not_the_playhead(qtbot):
    t = _stack(qtbot)
    seeks: list[int] = []
    t.seekRequested.connect(seeks.append)
    y = (ROW_H + GAP) + ROW_H // 2                  # the gold row
    qtbot.mousePress(t, Qt.MouseButton.LeftButton, pos=QPoint(round(t.x_of(30)), y))
    qtbot.mouseMove(t, QPoint(round(t.x_of(36)), y))
    assert seeks == [] and t.tracks[1][1][0] == ("stack", 20, 36)
    qtbot.mouseRelease(t, Qt.MouseButton.LeftButton, pos=QPoint(round(t.x_of(36)), y))
