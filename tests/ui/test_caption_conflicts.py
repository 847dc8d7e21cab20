"""A caption changed or deleted elsewhere while someone types is never overwritten silently, and
the person's own text is never lost: the slot is marked, and they keep theirs or take the stored
one (or the deletion)."""

from PySide6.QtCore import Qt, QTimer
from PySide6.QtWidgets import QApplication

from clipscribe import Project
from clipscribe.ui.workbench.captions import IDLE_SAVE_MS

from .conftest import wait_frame

ME = "annotator-1"  # has captions on the sample's clips


def _stored(folder, caption_id):
    with Project.open(folder, user=ME) as p:
        return next(c.text for c in p.caption_rows(annotator=ME) if c.id == caption_id)


def _change_behind_its_back(folder, caption_id, text):
    with Project.open(folder, user=ME) as other:  # a second window, a script
        other.update_caption(caption_id, text)


def _first_changed_elsewhere(qtbot, w, folder, text):
    """The window's first caption, changed to ``text`` elsewhere: (slot, caption id)."""
    wait_frame(qtbot, w)
    slot = w.captions.slots[0]
    _change_behind_its_back(folder, slot.caption_id, text)
    return slot, slot.caption_id


def _status_count(w, words):
    """How often ``words`` shows in the status bar: its message and its save state."""
    return w.statusBar().currentMessage().count(words) + w.save_state.text().count(words)


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
    assert _status_count(w, "caption 1 was changed elsewhere") == 1  # said once, not twice
    assert w.save_state.text().startswith("Not saved: caption 1 was changed elsewhere")
    qtbot.wait(IDLE_SAVE_MS + 300)                                    # no save by itself
    w.captions.flush()
    assert _stored(sample, cid) == "The arm sets the cube down on the left."
    w.actions_["save_captions"].trigger()                             # Ctrl+S: keep mine
    assert _stored(sample, cid) == mine
    assert not slot.bar.isVisibleTo(w) and not w.captions.conflicts
    assert w.save_state.text().startswith("Saved ")


def test_take_theirs_replaces_my_text_with_the_stored_one(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    slot, cid = _first_changed_elsewhere(qtbot, w, sample, "A hand pushes the block away.")
    _type_and_finish(qtbot, slot.edit, " quickly")
    assert w.captions.conflicts == [slot]
    w.actions_["reload_captions"].trigger()                           # Ctrl+R: take theirs
    assert slot.edit.text() == "A hand pushes the block away."
    assert not w.captions.conflicts and not slot.dirty
    _type_and_finish(qtbot, slot.edit, " Twice.")                     # now based on theirs
    assert _stored(sample, cid) == "A hand pushes the block away. Twice."


def _refreshed_while_typing(qtbot, w, elsewhere):
    """Type into the first caption without saving it, let ``elsewhere(caption id)`` act on the
    caption meanwhile, re-read the clip, then save: (slot, caption id)."""
    wait_frame(qtbot, w)
    slot = w.captions.slots[0]
    cid = slot.caption_id
    slot.edit.setFocus()
    slot.edit.end(False)
    qtbot.keyClicks(slot.edit, " still typing")                       # not saved yet
    elsewhere(cid)
    w.editor.set_label("stack")                                       # re-reads the clip
    assert slot.edit.text().endswith(" still typing")
    w.captions.flush()
    return slot, cid


def test_a_refresh_while_typing_does_not_hide_the_change_made_elsewhere(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    slot, cid = _refreshed_while_typing(
        qtbot, w, lambda cid: _change_behind_its_back(sample, cid, "Stored by the other window."))
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


def _delete_behind_its_back(folder, caption_id):
    with Project.open(folder, user=ME) as other:  # another session of the same person
        other.delete_caption(caption_id)


def _mine_stored(folder, clip):
    with Project.open(folder, user=ME) as p:
        return {c.id: (c.position, c.text) for c in p.caption_rows(clip=clip, annotator=ME)}


def _saved_then_deleted_elsewhere(qtbot, w, sample):
    """A caption typed into the first empty slot and saved, then deleted by another session
    while more is typed: (slot index, slot, deleted caption id, the text on screen)."""
    i, slot = len(w.captions.slots) - 1, w.captions.slots[-1]
    _delete_behind_its_back(sample, slot.caption_id)                  # the sample fills every slot
    w.refresh()
    assert slot.caption_id is None and slot.edit.text() == ""
    _type_and_finish(qtbot, slot.edit, "The arm lifts the green block")
    cid = slot.caption_id
    assert cid is not None and _stored(sample, cid) == "The arm lifts the green block"
    _delete_behind_its_back(sample, cid)
    _type_and_finish(qtbot, slot.edit, " and holds it")
    return i, slot, cid, "The arm lifts the green block and holds it"


def test_caption_deleted_elsewhere_keeps_my_text_and_keep_mine_adds_it_anew(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    wait_frame(qtbot, w)
    said = []
    w.editor.notSaved.connect(said.append)
    i, slot, cid, mine = _saved_then_deleted_elsewhere(qtbot, w, sample)
    assert slot.edit.text() == mine                                   # never thrown away
    assert w.captions.conflicts == [slot] and slot.edit.property("conflict") is True
    assert slot.bar.isVisibleTo(w) and "deleted elsewhere" in slot.bar_text.text()
    assert _status_count(w, f"caption {i + 1} was deleted elsewhere") == 1
    with qtbot.waitSignal(slot.timer.timeout, timeout=5000):          # the pause that used to retry
        qtbot.keyClicks(slot.edit, ".")
    w.captions.flush()
    mine += "."
    assert said == [f"caption {i + 1} was deleted elsewhere; yours is kept — Ctrl+S saves it "
                    "as a new caption, Ctrl+R lets it go"]            # once, no "no such caption"
    assert all(t != mine for _, t in _mine_stored(sample, w.clip.id).values())
    w.actions_["save_captions"].trigger()                             # Ctrl+S: keep mine
    stored = _mine_stored(sample, w.clip.id)
    new = [k for k, (pos, t) in stored.items() if t == mine]
    assert len(new) == 1 and stored[new[0]][0] == i                   # one caption, same place
    with Project.open(sample, user=ME) as p:
        last = p.history(clip=w.clip.id)[-1]
    assert (last.action, last.entity, last.entity_id) == ("add", "caption", new[0])  # added anew
    assert last.after["text"] == mine
    assert slot.caption_id == new[0] and not w.captions.conflicts and not slot.bar.isVisibleTo(w)
    assert w.save_state.text().startswith("Saved ")
    assert w.editor.undo_stack.undoText() == "Add caption"            # one edit in the history
    w.editor.undo_stack.undo()
    assert new[0] not in _mine_stored(sample, w.clip.id)


def test_take_theirs_accepts_the_deletion_made_elsewhere(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    wait_frame(qtbot, w)
    i, slot, cid, mine = _saved_then_deleted_elsewhere(qtbot, w, sample)
    before = _mine_stored(sample, w.clip.id)
    assert w.captions.conflicts == [slot]
    w.actions_["reload_captions"].trigger()                           # Ctrl+R: take theirs
    assert slot.edit.text() == "" and slot.caption_id is None
    assert not w.captions.conflicts and not slot.dirty and not slot.bar.isVisibleTo(w)
    w.captions.flush()
    assert _mine_stored(sample, w.clip.id) == before and cid not in before  # stays deleted


def test_a_refresh_while_typing_does_not_add_back_a_caption_deleted_elsewhere(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    slot, cid = _refreshed_while_typing(qtbot, w, lambda cid: _delete_behind_its_back(sample, cid))
    assert w.captions.conflicts == [slot] and slot.gone
    assert all(not t.endswith(" still typing") for _, t in _mine_stored(sample, w.clip.id).values())
    w.captions.take_theirs()
    assert slot.edit.text() == "" and cid not in _mine_stored(sample, w.clip.id)


def test_clearing_a_caption_changed_elsewhere_keeps_their_text(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    slot, cid = _first_changed_elsewhere(qtbot, w, sample, "The arm drops the cube on the right.")
    slot.edit.setFocus()
    slot.edit.selectAll()
    qtbot.keyClick(slot.edit, Qt.Key.Key_Backspace)
    qtbot.keyClick(slot.edit, Qt.Key.Key_Return)                      # a delete, based on the old version
    assert _stored(sample, cid) == "The arm drops the cube on the right."  # not thrown away
    assert w.captions.conflicts == [slot] and not slot.gone
    assert "The arm drops the cube" in slot.bar_text.text()
    assert _status_count(w, "caption 1 was changed elsewhere, so it was not deleted") == 1
    w.actions_["reload_captions"].trigger()                           # Ctrl+R: take theirs
    assert slot.edit.text() == "The arm drops the cube on the right."
    assert not w.captions.conflicts
