"""The workbench asks for an override when captions miss the guideline, shows a reopened
clip, and Set up project sets the at-submit choice and changes clip facts."""

from __future__ import annotations

from PySide6.QtCore import Qt

from clipscribe import Project
from clipscribe.ui.workbench.submit_check import SubmitCheckDialog

from .conftest import wait_frame

CTRL = Qt.KeyboardModifier.ControlModifier


def _warn(folder, at="warn"):
    with Project.open(folder) as p:
        p.set_caption_rules(at_submit=at)


def test_submit_with_missing_captions_asks_and_records_the_override(qtbot, sample, open_window):
    _warn(sample)
    w, p = open_window(sample, "annotator-3")
    wait_frame(qtbot, w)
    clip = w.clip.id
    asked = []
    w.ask_override = lambda missing, blocking: asked.append((missing, blocking)) or None
    w.submit_clip()                                       # "go back": nothing submitted
    assert asked and not asked[0][1] and any("captions the guideline asks for" in m
                                             for m in asked[0][0])
    assert p.clip_state(clip)[0] != "submitted" and w.clip.id == clip
    w.ask_override = lambda missing, blocking: "no second take exists"
    w.submit_clip()
    assert p.clip_state(clip)[0] == "submitted"
    e = p.history(clip=clip)[-1]
    assert (e.action, e.after["reason"]) == ("override", "no second take exists")


def test_the_dialog_needs_a_reason_and_a_block_offers_no_override(qtbot):
    d = SubmitCheckDialog(["1 of the 5 captions the guideline asks for"], blocking=False)
    qtbot.addWidget(d)
    assert d.items.count() == 1 and not d.anyway.isEnabled()
    qtbot.keyClicks(d.reason_edit, "only one thing happens")
    assert d.anyway.isEnabled()
    d.anyway.click()
    assert d.reason() == "only one thing happens"
    b = SubmitCheckDialog(["caption 1: starts with “there is”"], blocking=True)
    qtbot.addWidget(b)
    assert b.anyway is None and not b.reason_edit.isVisibleTo(b)
    b.back.click()
    assert b.reason() is None


def test_editing_a_submitted_clip_shows_it_reopened(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    wait_frame(qtbot, w)
    clip = w.clip.id
    w.editor.set_state("submitted")
    assert "submitted" in w.clip_panel.state.text()
    label = next(lab.name for lab in p.labels() if lab.name != p.my_clip_label(clip))
    w.editor.set_label(label)
    assert p.clip_state(clip)[0] == "open"
    assert w.clip_panel.state.text() == "Your state: open"
    assert "reopened" in w.statusBar().currentMessage()
    w.editor.undo_stack.undo()                            # undo puts the submit back too
    assert p.clip_state(clip)[0] == "submitted"


def test_setup_saves_the_at_submit_choice_and_changes_clip_facts(qtbot, sample):
    from clipscribe.ui.dialogs.clip_facts import ClipFactsDialog
    from clipscribe.ui.dialogs.setup import ProjectSetup
    with Project.open(sample) as p:
        d = ProjectSetup(p, pick=lambda caption: "", ask=lambda what: "discard")
        qtbot.addWidget(d)
        assert d.at_submit.currentData() == "off" and not d.rules_unsaved
        d.at_submit.setCurrentIndex(d.at_submit.findData("block"))
        assert d.rules_unsaved and d.save_caption_rules()
        assert p.settings.caption_guideline.at_submit == "block"
        assert "refuse" in d.rules_note.text()
        f = ClipFactsDialog(p, d)
        qtbot.addWidget(f)
        assert not f.save_button.isEnabled()
        first = p.clips()[0]
        f.which.setText(str(first.id))
        f.load()
        assert f.group.text() == (first.group or "") and f.save_button.isEnabled()
        f.licence.setText("CC-BY-4.0")
        f.consent.setCurrentIndex(f.consent.findText("yes"))
        f.whole_group.setChecked(True)
        f.save()
        qtbot.waitUntil(lambda: f.note.text().startswith("Saved"), timeout=10000)
        same = p.clips(group=first.group)
        assert len(same) > 1 and all(c.licence == "CC-BY-4.0" and c.consent for c in same)
        assert f"{len(same)} of {len(same)}" in f.note.text()
        assert sum(e.action == "facts" for e in p.history()) == len(same)
