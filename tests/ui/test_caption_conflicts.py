"""A caption changed elsewhere while someone types is never overwritten silently, and the
person's own text is never lost: the slot is marked, and they keep theirs or take the stored one."""

from PySide6.QtCore import Qt, QTimer
from PySide6.QtWidgets import QApplication

from clipscribe import Project
from clipscribe.ui.captions import IDLE_SAVE_MS

from .conftest import wait_frame

ME = "annotator-1"  # has captions on the sample's clips


def _stored(folder, caption_id):
    with Project.open(folder, user=ME) as p:
        return next(c.text for c in p.caption_rows(annotator=ME) if c.id == caption_id)


def _change_behind_its_back(folder, caption_id, text):
    with Project.open(folder, user=ME) as other:  # a second window, a script
        other.update_caption(caption_id, text)


def _type_and_finish(qtbot, edit, text):
    edit.setFocus()
    edit.end(False)
    qtbot.keyClicks(edit, text)
    qtbot.keyClick(edit, Qt.Key.Key_Return)  # editingFinished: saves at once


def test_conflict_keeps_my_text_marks_the_slot_and_keep_mine_saves_it(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    wait_frame(qtbot, w)
    slot = w.captions.slots[0]
    cid, base = slot.caption_id, slot.edit.text()
    assert cid is not None and base
    _change_behind_its_back(sample, cid, "The arm sets the cube down on the left.")
    _type_and_finish(qtbot, slot.edit, " Then it waits")
    mine = base + " Then it waits"
    assert slot.edit.text() == mine                                   # never overwritten
    assert _stored(sample, cid) == "The arm sets the cube down on the left."
    assert slot.bar.isVisibleTo(w) and "changed elsewhere" in slot.bar_text.text()
    assert "The arm sets the cube down" in slot.bar_text.text()        # theirs is quoted
    assert slot.edit.property("conflict") is True
    assert w.save_state.text().startswith("Not saved: caption 1 was changed elsewhere")
    assert "Ctrl+S" in w.statusBar().currentMessage()
    qtbot.wait(IDLE_SAVE_MS + 300)                                    # no save by itself
    w.captions.flush()
    assert _stored(sample, cid) == "The arm sets the cube down on the left."
    w.actions_["save_captions"].trigger()                             # Ctrl+S: keep mine
    assert _stored(sample, cid) == mine
    assert not slot.bar.isVisibleTo(w) and not w.captions.conflicts
    assert w.save_state.text().startswith("Saved ")


def test_take_theirs_replaces_my_text_with_the_stored_one(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    wait_frame(qtbot, w)
    slot = w.captions.slots[0]
    cid = slot.caption_id
    _change_behind_its_back(sample, cid, "A hand pushes the block away.")
    _type_and_finish(qtbot, slot.edit, " quickly")
    assert w.captions.conflicts == [slot]
    w.actions_["reload_captions"].trigger()                           # Ctrl+R: take theirs
    assert slot.edit.text() == "A hand pushes the block away."
    assert not w.captions.conflicts and not slot.dirty
    _type_and_finish(qtbot, slot.edit, " Twice.")                     # now based on theirs
    assert _stored(sample, cid) == "A hand pushes the block away. Twice."


def test_a_refresh_while_typing_does_not_hide_the_change_made_elsewhere(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    wait_frame(qtbot, w)
    slot = w.captions.slots[0]
    cid = slot.caption_id
    slot.edit.setFocus()
    slot.edit.end(False)
    qtbot.keyClicks(slot.edit, " still typing")                       # not saved yet
    _change_behind_its_back(sample, cid, "Stored by the other window.")
    w.editor.set_label("stack")                                       # re-reads the clip
    assert slot.edit.text().endswith(" still typing")
    w.captions.flush()
    assert _stored(sample, cid) == "Stored by the other window."      # not overwritten
    assert w.captions.conflicts == [slot]
    w.captions.keep_mine()
    assert _stored(sample, cid).endswith(" still typing")


def test_leaving_the_clip_asks_and_staying_keeps_everything(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    wait_frame(qtbot, w)
    here, slot = w.clip.id, w.captions.slots[0]
    cid = slot.caption_id
    _change_behind_its_back(sample, cid, "Changed in another window.")
    _type_and_finish(qtbot, slot.edit, " mine")
    mine = slot.edit.text()
    answered = []

    def answer(text):
        box = QApplication.activeModalWidget()
        if box is not None:
            answered.append(box.text())
            next(b for b in box.buttons() if b.text() == text).click()

    QTimer.singleShot(200, lambda: answer("Stay here"))
    w.step_clip(1)
    assert answered and "changed elsewhere" in answered[0]
    assert w.clip.id == here and slot.edit.text() == mine and w.captions.conflicts
    QTimer.singleShot(200, lambda: answer("Keep mine"))
    w.step_clip(1)
    assert w.clip.id != here and not w.captions.conflicts
    assert _stored(sample, cid) == mine
