"""Captions are saved (idle, focus loss, close) and blind mode hides other people's work."""

from PySide6.QtCore import Qt
from PySide6.QtGui import QInputMethodEvent
from PySide6.QtWidgets import QApplication

from clipscribe import Project
from clipscribe.ui.workbench.queue_model import ClipIdRole

from .conftest import wait_frame


def type_by_input_method(widget, text):
    """Commit ``text`` the way an input method does (how CJK text is typed)."""
    event = QInputMethodEvent("", [])
    event.setCommitString(text)
    QApplication.sendEvent(widget, event)


def _mine(folder, who, clip):
    with Project.open(folder, user=who) as p:
        return [c.text for c in p.caption_rows(clip=clip, annotator=who)]


def test_caption_saved_after_idle_and_on_close(qtbot, sample, open_window, settings):
    w, p = open_window(sample, "annotator-3")
    wait_frame(qtbot, w)
    clip = w.clip.id
    assert _mine(sample, "annotator-3", clip) == []
    first, second = w.captions.slots[0].edit, w.captions.slots[1].edit
    first.setFocus()
    type_by_input_method(first, "Le bras soulève le cube rouge")     # accents
    qtbot.waitUntil(lambda: _mine(sample, "annotator-3", clip) == ["Le bras soulève le cube rouge"],
                    timeout=3000)                                    # saved after the idle pause
    second.setFocus()
    type_by_input_method(second, "机器人把红色方块拿起来")                # CJK, closed at once
    w.close()                                                        # nothing typed is lost
    p.close()
    texts = _mine(sample, "annotator-3", clip)
    assert texts == ["Le bras soulève le cube rouge", "机器人把红色方块拿起来"]

    w2, _ = open_window(sample, "annotator-3", settings=settings)
    wait_frame(qtbot, w2)
    assert w2.clip.id == clip                                        # reopened on the same clip
    assert [s.edit.text() for s in w2.captions.slots[:2]] == texts


def test_caption_checks_shown_live(qtbot, sample, open_window):
    w, _ = open_window(sample, "annotator-3")
    slot = w.captions.slots[0]
    qtbot.keyClicks(slot.edit, "There is  an arm")
    codes = {f.code for f in slot.extra["findings"]}
    assert {"banned_opening", "whitespace"} <= codes
    assert slot.note.isVisibleTo(w) and "There is".casefold() in slot.note.text().casefold()
    assert slot.count.text() == "4 words"


def test_clearing_a_caption_deletes_it_and_undo_brings_it_back(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-1")
    wait_frame(qtbot, w)
    clip = w.clip.id
    before = [c.text for c in p.caption_rows(clip=clip, annotator="annotator-1")]
    edit = w.captions.slots[0].edit
    edit.setFocus()
    edit.selectAll()
    qtbot.keyClick(edit, Qt.Key.Key_Delete)
    qtbot.keyClick(edit, Qt.Key.Key_Return)
    assert [c.text for c in p.caption_rows(clip=clip, annotator="annotator-1")] == before[1:]
    w.editor.undo_stack.undo()
    assert [c.text for c in p.caption_rows(clip=clip, annotator="annotator-1")] == before
    assert w.captions.slots[0].edit.text() == before[0]


def test_blind_mode_shows_only_own_work(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-1")
    assert p.settings.blind
    wait_frame(qtbot, w)
    for clip in (1, 4, 6):
        w.open_clip(clip)
        mine = p.caption_rows(clip=clip, annotator="annotator-1")
        theirs = p.caption_rows(clip=clip, annotator="annotator-2")
        shown = [s.edit.text() for s in w.captions.slots if s.edit.text()]
        assert shown == [c.text for c in mine]
        assert not set(shown) & {c.text for c in theirs}
        segs = w.segment_model.segments()
        assert segs and {g.annotator for g in segs} == {"annotator-1"}
        other_ids = {g.id for g in p.segments(clip=clip, annotator="annotator-2")}
        assert not other_ids & {g.id for g in segs}
        label = p.my_clip_label(clip, "annotator-1")
        assert w.clip_panel.current.text() == f"Your label: {label}"
    model = w.queue_model
    labels = {model.index(r, 0).data(ClipIdRole): model.index(r, 2).data() for r in range(model.rowCount())}
    assert labels == {c: l for c, who, l in p.clip_labels(annotator="annotator-1")}
    # clip 6 is "stack"; annotator-2 calls it "put down" — filtering by label must use mine only
    w.queue.label.setCurrentIndex(w.queue.label.findData("put down"))
    shown = {model.index(r, 0).data(ClipIdRole) for r in range(model.rowCount())}
    assert 6 not in shown
    assert shown == {c for c, _, l in p.clip_labels(annotator="annotator-1") if l == "put down"}


def test_caption_tied_to_segment(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-1")
    wait_frame(qtbot, w)
    slot = w.captions.slots[1]
    g = w.segment_model.segments()[0]
    slot.segment.setCurrentIndex(slot.segment.findData(g.id))
    slot.segment.activated.emit(slot.segment.currentIndex())
    row = next(c for c in p.caption_rows(clip=w.clip.id, annotator="annotator-1")
               if c.id == slot.caption_id)
    assert row.segment == g.id
