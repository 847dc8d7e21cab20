"""Blind mode off: the workbench shows the other annotators' labels, captions and segments,
read only and apart from one's own; blind mode on shows none of it."""

import os

from clipscribe import Project

from .conftest import wait_frame

CLIP = 6  # in the sample, annotator-1 calls clip 6 "stack" and annotator-2 "put down"


def _theirs(folder, clip, who="annotator-2"):
    with Project.open(folder, user=who) as p:
        label = p.my_clip_label(clip, who)
        return label, [c.text for c in p.caption_rows(clip=clip, annotator=who)], \
            p.segments(clip=clip, annotator=who)


def test_blind_off_shows_others_read_only(qtbot, sample, open_window, tmp_path):
    label, texts, segs = _theirs(sample, CLIP)
    assert label and texts and segs  # the sample gives annotator-2 work on this clip
    with Project.open(sample) as p:  # the sample's lead: settings are a lead's to change
        p.update_settings(blind=False)
    w, p = open_window(sample, "annotator-1")
    assert not p.blind_mode()
    wait_frame(qtbot, w)
    w.open_clip(CLIP)
    others = w.clip_panel.others
    assert others.isVisibleTo(w)
    assert f"annotator-2 {label}" in others.text()
    assert "annotator-1" not in others.text()          # one's own label is not repeated there
    box = w.others_captions
    assert box.isVisibleTo(w) and set(texts) <= set(box.texts)
    mine = p.caption_rows(clip=CLIP, annotator="annotator-1")
    assert not {c.id for c in mine} & set(box.caption_ids)
    # one's own caption slots still hold only one's own captions
    assert {s.caption_id for s in w.captions.slots if s.caption_id} == {c.id for c in mine}
    # the others' segments are on their own thin tracks, not in the editable model
    tracks = dict(w.timeline.others)
    assert {g.id for g in tracks["annotator-2"]} == {g.id for g in segs}
    assert {g.annotator for g in w.segment_model.segments()} == {"annotator-1"}
    box.toggle.setChecked(False)                         # the list folds away
    assert not box.body.isVisibleTo(w) and box.isVisibleTo(w)
    box.toggle.setChecked(True)
    qtbot.wait(800)  # let the layout settle and the frame arrive; only for the picture
    shot = os.environ.get("CLIPSCRIBE_SHOT") or str(tmp_path / "others.png")
    w.grab().save(shot)
    assert os.path.getsize(shot) > 0


def test_blind_on_shows_nothing_of_others(qtbot, sample, open_window):
    label, texts, _ = _theirs(sample, CLIP)
    w, p = open_window(sample, "annotator-1")
    assert p.blind_mode()
    wait_frame(qtbot, w)
    w.open_clip(CLIP)
    assert not w.clip_panel.others.isVisibleTo(w)
    assert "annotator-2" not in w.clip_panel.others.text()
    assert not w.others_captions.isVisibleTo(w) and w.others_captions.texts == []
    assert w.timeline.others == []
    assert p.others_work(CLIP).empty
