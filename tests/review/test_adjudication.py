"""Settling on the review desk changes gold, is recorded with who and when, undoes, and is what
the export policy uses."""

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel

from clipscribe.export.inputs import CaptionInput
from clipscribe.export.policy import decide_captions, decide_label
from clipscribe.ui.review.page import ReviewPage
from clipscribe.ui.review.desk import ReviewDesk

import pytest


def wait_frame(qtbot, desk):
    qtbot.waitUntil(lambda: desk.viewer.frame_number is not None, timeout=5000)


def test_desk_opens_on_the_most_disputed_clip(qtbot, window):
    w, p = window()
    page = w.review_desk
    assert isinstance(page, ReviewPage) and w.stack.currentWidget().isAncestorOf(page)
    desk = page.desk
    assert desk.cmp.clip.id == p.most_disputed_clip()
    wait_frame(qtbot, desk)
    # one track per annotator plus gold; every annotator's captions side by side
    assert [t[0] for t in desk.tracks.tracks] == desk.cmp.annotators + ["gold"]
    assert desk.caption_model.names == desk.cmp.annotators
    # the work view's shortcuts are off while the desk shows, and come back
    assert not w.actions_["play"].isEnabled()
    w.show_view("work")
    assert w.actions_["play"].isEnabled()


def test_label_segments_captions_and_comment_into_gold_with_undo(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    clip, lead = desk.cmp.clip.id, p.user
    before = len(p.history())
    # one click on annotator-1's label
    votes = desk.settle._vote_buttons
    qtbot.mouseClick(votes[0], Qt.MouseButton.LeftButton)
    chosen = desk.cmp.labels["annotator-1"]
    assert p.gold_labels()[clip] == chosen
    e = p.history()[-1]
    assert (e.who, e.entity, e.after["label_id"] is not None) == (lead, "gold_label", True)
    assert e.at is not None and len(p.history()) > before
    # undo and redo through the desk's stack
    desk.undo_action.trigger()
    assert clip not in p.gold_labels()
    desk.redo_action.trigger()
    assert p.gold_labels()[clip] == chosen
    # copy annotator-2's track into gold
    desk.copy_track("annotator-2")
    want = [(g.label, g.start, g.end) for g in p.segments(clip=clip, annotator="annotator-2")]
    assert [(l, s, e) for _, l, s, e in p.gold_segments(clip)] == sorted(want, key=lambda g: g[1])
    # edit a gold segment's last frame in the table (one earlier: the stored end moves with it)
    m = desk.segment_model
    assert m.setData(m.index(0, 2), want[0][2] - 2)
    assert p.gold_segments(clip)[0][3] == want[0][2] - 1
    assert not m.setData(m.index(0, 0), "no such label")
    # accept one caption, accept another with an edit, then reject the first again
    cm = desk.caption_model
    first, second = cm.caption_at(0, 0), cm.caption_at(0, 1)
    assert cm.setData(cm.index(0, 0), Qt.CheckState.Checked.value, Qt.ItemDataRole.CheckStateRole)
    assert cm.setData(cm.index(0, 1), "The arm sets the red block down.", Qt.ItemDataRole.EditRole)
    rows = p.gold_caption_rows(clip)
    assert [(g.text, g.source) for g in rows] == [
        (first.text, first.id), ("The arm sets the red block down.", second.id)]
    assert p.captions(clip=clip, annotator=second.annotator)[0][2] == second.text  # untouched
    assert cm.toggle(cm.index(0, 0))
    assert p.gold_captions(clip)[clip] == ["The arm sets the red block down."]
    # a comment for annotator-2
    desk.settle.text.setPlainText("Stacking on a block is 'stack', not 'put down'.")
    desk.settle.to.setCurrentIndex(desk.settle.to.findData("annotator-2"))
    desk.settle._send()
    assert p.comments(clip)[-1] == (clip, "annotator-2", lead,
                                    "Stacking on a block is 'stack', not 'put down'.")
    assert desk.settle.text.toPlainText() == ""
    # the export policy sees the gold: gold label wins over the annotators' majority
    labels = [l for c, a, l in p.clip_labels() if c == clip]
    decision = decide_label(labels, p.gold_labels().get(clip))
    assert (decision.label, decision.source) == (chosen, "gold")
    majority = decide_label(labels)
    assert majority.label != chosen or majority.source == "majority"
    caps = decide_captions([CaptionInput(t, a) for c, a, t in p.captions(clip=clip)],
                           p.gold_captions(clip).get(clip))
    assert caps.source == "gold" and [t for t, _ in caps.captions] == [
        "The arm sets the red block down."]


def test_settling_a_label_the_majority_did_not_pick_wins_in_export(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    clip = desk.cmp.clip.id
    labels = [l for c, a, l in p.clip_labels() if c == clip]
    minority = min(set(labels), key=labels.count)
    assert labels.count(minority) < len(labels) / 2
    desk.editor.settle_label(minority)
    assert decide_label(labels, p.gold_labels()[clip]).label == minority
    assert decide_label(labels).label != minority  # without gold the majority would win


def test_non_lead_gets_a_message_not_the_desk(qtbot, window, sample):
    w, p = window(user="annotator-1")
    page = w.review_desk
    assert isinstance(page, QLabel) and page.objectName() == "reviewRefused"
    assert "for leads" in page.text() and "annotator-1" in page.text()
    with pytest.raises(Exception, match="for leads"):
        ReviewDesk(p)


def test_undo_of_segments_and_captions_and_refusal_after_a_newer_decision(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    clip, lead = desk.cmp.clip.id, p.user
    desk.copy_track("annotator-1")
    assert p.gold_segments(clip)
    cm = desk.caption_model
    cm.toggle(cm.index(0, 0))
    assert p.gold_captions(clip)
    desk.undo_action.trigger()               # the caption decision
    assert p.gold_captions(clip) == {}
    desk.undo_action.trigger()               # the segment decision
    assert p.gold_segments(clip) == []
    desk.redo_action.trigger()
    assert len(p.gold_segments(clip)) == len(p.segments(clip=clip, annotator="annotator-1"))
    # a newer decision made elsewhere (a script, another lead): undo must not overwrite it
    desk.editor.settle_label("idle")
    p.set_gold_label(clip, "push", lead=lead)
    messages = []
    desk.editor.notSaved.connect(messages.append)
    desk.undo_action.trigger()
    assert p.gold_labels()[clip] == "push" and "changed since" in messages[-1]
    undo = [e for e in p.history(clip=clip) if e.entity.startswith("gold_")]
    assert {e.who for e in undo} == {lead}   # every decision, and every undo, names the lead


def test_gui_export_runs_in_the_background(qtbot, window, tmp_path):
    w, _ = window()
    page = w.review_desk
    said = []
    page.desk.status.connect(said.append)
    page.export(str(tmp_path / "gui-report"))
    assert said == ["Writing the agreement report…"]  # returns at once; the job works on
    qtbot.waitUntil(lambda: any("Report written" in s for s in said), timeout=30000)
    assert said[0].startswith("Writing") and (tmp_path / "gui-report" / "report.html").exists()


def test_dragging_a_gold_edge_moves_it_to_a_frame_boundary_with_undo(qtbot, window):
    from PySide6.QtCore import QPoint

    from clipscribe.ui.review.tracks import ROW_H, GAP
    w, p = window()
    desk = w.review_desk.desk
    clip = desk.cmp.clip.id
    desk.copy_track("annotator-1")
    (label, start, end), *rest = [(l, s, e) for _, l, s, e in p.gold_segments(clip)]
    t = desk.tracks
    row = [name for name, _ in t.tracks].index("gold")
    y = row * (ROW_H + GAP) + 2 + ROW_H // 2
    grab = QPoint(round(t.x_of(end)), y)
    assert t.edge_at(grab.x(), y) == (0, "end")
    target = max(start + 1, end - 3)                    # three frames shorter (or as short as can be)
    drop = QPoint(round(t.x_of(target)), y)
    assert t.boundary_at(drop.x()) == target
    n = len(p.history())
    qtbot.mousePress(t, Qt.MouseButton.LeftButton, pos=grab)
    qtbot.mouseMove(t, drop)
    assert t.tracks[row][1][0] == (label, start, target)  # previewed while dragging
    assert p.gold_segments(clip)[0][3] == end               # nothing written before the release
    qtbot.mouseRelease(t, Qt.MouseButton.LeftButton, pos=drop)
    assert [(l, s, e) for _, l, s, e in p.gold_segments(clip)][0] == (label, start, target)
    assert len(p.history()) > n and p.history()[-1].entity == "gold_segment"
    assert desk.tracks.tracks[row][1][0] == (label, start, target)
    # an edge never crosses its other edge: dragged past the start, it stops one frame after
    qtbot.mousePress(t, Qt.MouseButton.LeftButton, pos=QPoint(round(t.x_of(target)), y))
    qtbot.mouseMove(t, QPoint(round(t.x_of(0)) - 20, y))
    qtbot.mouseRelease(t, Qt.MouseButton.LeftButton, pos=QPoint(round(t.x_of(0)) - 20, y))
    assert [(l, s, e) for _, l, s, e in p.gold_segments(clip)][0] == (label, start, start + 1)
    desk.undo_action.trigger()
    desk.undo_action.trigger()
    assert [(l, s, e) for _, l, s, e in p.gold_segments(clip)][0] == (label, start, end)


def test_a_refused_gold_drag_puts_the_tracks_back(qtbot, window, monkeypatch):
    w, p = window()
    desk = w.review_desk.desk
    clip = desk.cmp.clip.id
    desk.copy_track("annotator-1")
    shown = list(desk.tracks.tracks[-1][1])
    monkeypatch.setattr(desk.editor, "settle_segments", lambda segs, what="": None)  # refused
    label, start, end = shown[0]
    desk.drag_gold([(label, start, end + 1)] + shown[1:])
    assert desk.tracks.tracks[-1][1] == shown
    assert [(l, s, e) for _, l, s, e in p.gold_segments(clip)] == shown
