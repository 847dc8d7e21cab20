"""Labelling by keys, segments by keys and mouse, undo and redo, the skip prompt."""

from PySide6.QtCore import QPoint, Qt
from PySide6.QtTest import QTest

from .conftest import wait_frame

LEAD_FREE_CLIP = 1  # the lead (local user) has done nothing in the sample project


def ready(qtbot, w):
    qtbot.waitExposed(w)
    w.activateWindow()
    w.viewer.setFocus()
    qtbot.waitUntil(lambda: w.isActiveWindow(), timeout=3000)
    wait_frame(qtbot, w)


def test_label_clip_by_key_and_undo_redo(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    clip = w.clip.id
    assert p.my_clip_label(clip) is None
    qtbot.keyClick(w.viewer, Qt.Key.Key_K)           # "stack"
    assert p.my_clip_label(clip) == "stack"
    assert w.clip_panel.label_buttons["stack"].isChecked()
    assert w.save_state.text().startswith("Saved ")
    qtbot.keyClick(w.viewer, Qt.Key.Key_P)           # "pick up"
    assert p.my_clip_label(clip) == "pick up"
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)
    assert p.my_clip_label(clip) == "stack"
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)
    assert p.my_clip_label(clip) is None
    w.editor.undo_stack.redo()
    assert p.my_clip_label(clip) == "stack"


def test_segment_by_keys_drag_edge_undo_redo(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    clip, me = w.clip.id, "annotator-3"
    before = p.segments(clip=clip, annotator=me)
    w.player.seek(10)
    qtbot.keyClick(w.viewer, Qt.Key.Key_B)                       # Mark start
    for _ in range(9):
        qtbot.keyClick(w.viewer, Qt.Key.Key_Right)               # to frame 19
    qtbot.keyClick(w.viewer, Qt.Key.Key_Right, Qt.KeyboardModifier.ShiftModifier)  # +1 s = 15
    assert w.player.frame == 34
    qtbot.keyClick(w.viewer, Qt.Key.Key_E)                       # Mark end (34 included)
    added = [g for g in p.segments(clip=clip, annotator=me) if g not in before]
    assert [(g.start, g.end) for g in added] == [(10, 35)]
    seg = added[0]

    tl = w.timeline
    y = 15
    x_end = round(tl.x_of(35))
    x_new = round(tl.x_of(45))
    QTest.mousePress(tl, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, QPoint(x_end, y))
    QTest.mouseMove(tl, QPoint((x_end + x_new) // 2, y))
    QTest.mouseMove(tl, QPoint(x_new, y))
    QTest.mouseRelease(tl, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.NoModifier, QPoint(x_new, y))
    moved = next(g for g in p.segments(clip=clip, annotator=me) if g.id == seg.id)
    assert (moved.start, moved.end) == (10, tl.frame_at(x_new)) and moved.end in (44, 45, 46)

    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)   # undo drag
    g = next(g for g in p.segments(clip=clip, annotator=me) if g.id == seg.id)
    assert (g.start, g.end) == (10, 35)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier)   # undo add
    assert seg.id not in [g.id for g in p.segments(clip=clip, annotator=me)]
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, Qt.KeyboardModifier.ControlModifier
                   | Qt.KeyboardModifier.ShiftModifier)                           # redo add
    assert [(g.start, g.end) for g in p.segments(clip=clip, annotator=me) if g.id == seg.id] == [(10, 35)]
    w.editor.undo_stack.redo()                                                    # redo drag
    g = next(g for g in p.segments(clip=clip, annotator=me) if g.id == seg.id)
    assert (g.start, g.end) == (moved.start, moved.end)
    assert w.segment_model.by_id(seg.id).end == moved.end   # the timeline re-read it


def test_split_merge_delete_and_overlap_refused(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    clip, me = w.clip.id, "annotator-3"
    for g in p.segments(clip=clip, annotator=me):
        p.delete_segment(g.id)
    w.refresh()
    w.editor.add_segment("push", 5, 30)
    w.player.seek(12)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Slash)                   # split at 12
    assert [(g.start, g.end) for g in p.segments(clip=clip, annotator=me)] == [(5, 12), (12, 30)]
    w.timeline.set_selected(w.segment_model.segments()[0].id)
    qtbot.keyClick(w.viewer, Qt.Key.Key_M)                       # merge back
    assert [(g.start, g.end) for g in p.segments(clip=clip, annotator=me)] == [(5, 30)]
    w.player.seek(20)
    qtbot.keyClick(w.viewer, Qt.Key.Key_B)
    w.player.seek(40)
    qtbot.keyClick(w.viewer, Qt.Key.Key_E)                       # [20, 41) overlaps [5, 30)
    assert len(p.segments(clip=clip, annotator=me)) == 1
    assert w.save_state.text().startswith("Not saved:") and "overlap" in w.save_state.text()
    qtbot.keyClick(w.viewer, Qt.Key.Key_I, Qt.KeyboardModifier.ShiftModifier)   # relabel idle
    w.player.seek(10)
    assert [g.label for g in p.segments(clip=clip, annotator=me)] == ["idle"]
    w.timeline.set_selected(None)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Delete)
    assert p.segments(clip=clip, annotator=me) == []


def test_skip_needs_a_reason_inline(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    clip = w.clip.id
    qtbot.keyClick(w.viewer, Qt.Key.Key_J, Qt.KeyboardModifier.ControlModifier)
    assert w.clip_panel.skip_box.isVisible()
    box = w.clip_panel.skip_reason
    qtbot.keyClick(box, Qt.Key.Key_Return)                       # empty: refused, stays open
    assert w.clip_panel.skip_box.isVisible() and p.clip_state(clip)[0] == "open"
    qtbot.keyClicks(box, "too dark to see")
    qtbot.keyClick(box, Qt.Key.Key_Return)
    assert p.clip_state(clip) == ("skipped", "too dark to see")
    assert not w.clip_panel.skip_box.isVisible()


def test_flag_unsure_and_submit_moves_on(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    first = w.clip.id
    qtbot.keyClick(w.viewer, Qt.Key.Key_U, Qt.KeyboardModifier.ControlModifier)
    assert p.clip_state(first)[0] == "unsure"
    qtbot.keyClick(w.viewer, Qt.Key.Key_Return, Qt.KeyboardModifier.ControlModifier)
    assert p.clip_state(first)[0] == "submitted"
    assert w.clip.id == p.next_unfinished_clip(after=first) != first
