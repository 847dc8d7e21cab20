"""Tab from one caption goes to the next caption, so typing on after a Tab writes a caption and
never reaches the single-key label and segment shortcuts (found using the workbench: a Tab
landed on the segment box, and the next caption's letters set labels and marked segments)."""

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from .conftest import wait_frame

ME = "annotator-1"


def test_tab_walks_the_captions_then_their_segment_boxes(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    wait_frame(qtbot, w)
    slots = w.captions.slots
    assert len(slots) == 3
    order = [s.edit for s in slots] + [s.segment for s in slots]
    order[0].setFocus()
    qtbot.waitUntil(order[0].hasFocus)
    for b in order[1:]:
        qtbot.keyClick(QApplication.focusWidget(), Qt.Key.Key_Tab)
        qtbot.waitUntil(b.hasFocus, timeout=2000)


def test_typing_after_a_tab_writes_the_next_caption_and_no_label(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    wait_frame(qtbot, w)
    clip = w.editor.clip
    labels_before = p.clip_labels()
    first, second = w.captions.slots[0].edit, w.captions.slots[1].edit
    first.setFocus()
    qtbot.waitUntil(first.hasFocus)
    qtbot.keyClick(first, Qt.Key.Key_Tab)
    qtbot.waitUntil(second.hasFocus)
    focused = QApplication.focusWidget()
    second.clear()
    qtbot.keyClicks(focused, "the arm picks up a red block")
    assert second.text() == "the arm picks up a red block"
    assert p.clip_labels() == labels_before
    assert w.editor.clip == clip
