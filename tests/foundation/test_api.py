"""The scripting API exactly as documented (README, "Scripting"; docs/architecture.md)."""

from __future__ import annotations

import os

import pytest

from clipscribe import Project, RecordError


def test_contract_round(tmp_path, make_video):
    with Project.create(tmp_path / "p") as p:
        p.define_labels(["pick up", "put down"])
        p.add_annotator("annotator-1", role="annotator")
        p.add_annotator("boss", role="lead")
        clip = p.add_clip(make_video(p.media_root / "a.mp4"), group="g")
        p.set_clip_label(clip, "annotator-1", "pick up")
        p.set_clip_label(str(clip), "annotator-1", "put down")  # str(id) works
        cap = p.add_caption("a.mp4", "annotator-1", "The arm picks up a block.")  # relative path works
        assert isinstance(cap, int)
        assert p.clip_labels() == [(clip, "annotator-1", "put down")]
        assert p.captions() == [(clip, "annotator-1", "The arm picks up a block.")]
    with Project.open(tmp_path / "p") as p:
        assert p.clip_labels() == [(clip, "annotator-1", "put down")]


def test_record_error_is_value_error():
    assert issubclass(RecordError, ValueError)


def test_unknown_label_and_annotator(project):
    with pytest.raises(RecordError, match="not in the label set"):
        project.set_clip_label(1, "ann-a", "juggle")
    with pytest.raises(RecordError, match="no such annotator"):
        project.set_clip_label(1, "nobody", "push")
    with pytest.raises(RecordError, match="no such clip"):
        project.set_clip_label(77, "ann-a", "push")


def test_add_clip_outside_media_root_refused(project, tmp_path, make_video):
    outside = make_video(tmp_path / "elsewhere.mp4")
    with pytest.raises(RecordError, match="outside the media root"):
        project.add_clip(outside)
    with pytest.raises(RecordError, match="outside the media root"):
        project.add_clip(project.media_root / ".." / ".." / "elsewhere.mp4")
    link = project.media_root / "sneaky.mp4"
    os.symlink(outside, link)
    with pytest.raises(RecordError, match="outside the media root"):
        project.add_clip(link)


def test_ingest_skips_corrupt_and_derives_groups(project, make_video):
    root = project.media_root
    make_video(root / "personA" / "take1.mp4", seed=5)
    (root / "personA" / "broken.mp4").write_bytes(b"\x00\x00\x00 ftypisom garbage" * 10)
    (root / "personB").mkdir()
    (root / "personB" / "empty.webm").write_bytes(b"")
    (root / "personB" / "notes.txt").write_text("not media")
    rep = project.add_media(root, group_pattern=r"^(?P<group>person\w)/")
    assert len(rep.added) == 1
    skipped = dict(rep.skipped)
    assert set(skipped) == {"personA/broken.mp4", "personB/empty.webm"}
    assert "empty" in skipped["personB/empty.webm"]
    assert len(rep.already_present) == 3
    assert project.clip(rep.added[0]).group == "personA"


def test_ingest_groups_from_csv(project, tmp_path, make_video):
    make_video(project.media_root / "x" / "one.mp4", seed=9)
    csv = tmp_path / "groups.csv"
    csv.write_text("path,group\nx/one.mp4,scene-7\n")
    rep = project.add_media(project.media_root / "x", group_csv=csv)
    assert project.clip(rep.added[0]).group == "scene-7"


def test_bad_group_pattern(project):
    with pytest.raises(RecordError, match="named group"):
        project.add_media(project.media_root, group_pattern=r"(\w+)")


def test_segments_overlap_and_bounds(project):
    project.add_segment(1, "ann-a", "push", 0, 5)
    with pytest.raises(RecordError, match="overlaps"):
        project.add_segment(1, "ann-a", "push", 4, 8)
    project.add_segment(1, "ann-b", "push", 4, 8)  # another annotator may
    with pytest.raises(RecordError, match="only 12 frames"):
        project.add_segment(1, "ann-a", "push", 6, 13)
    with pytest.raises(RecordError, match="start < end"):
        project.add_segment(1, "ann-a", "push", 6, 6)


def test_undo_redo_from_history(project):
    seg = project.add_segment(1, "ann-a", "push", 0, 5)
    add_ids = project.last_edit_ids
    project.update_segment(seg, end=9)
    change_ids = project.last_edit_ids
    undo = project.revert(change_ids)
    assert [(g.start, g.end) for g in project.segments(clip=1)] == [(0, 5)]
    project.revert(undo)  # redo
    assert [(g.start, g.end) for g in project.segments(clip=1)] == [(0, 9)]
    with pytest.raises(RecordError, match="changed since"):
        project.revert(add_ids)  # the row moved on since the add
    cap = project.add_caption(1, "ann-a", "The arm pushes a block.")
    project.delete_caption(cap)
    project.revert(project.last_edit_ids)
    assert project.captions(clip=1) == [(1, "ann-a", "The arm pushes a block.")]
    actions = [(e.action, e.entity) for e in project.history(clip=1)]
    assert ("undo", "caption") in actions and ("delete", "caption") in actions


@pytest.mark.parametrize("text", ["2024-05-01T10:00:00", "2024-05-01T10:00:00+00:00"])
def test_undo_keeps_text_that_looks_like_a_time(project, text):
    """Regression: undo decoded every ISO-looking string as a time, so a caption whose text was
    a timestamp came back as ``2024-05-01 10:00:00``; values now decode by column type."""
    cap = project.add_caption(1, "ann-a", text)
    project.update_caption(cap, text="Edited.")
    project.revert(project.last_edit_ids)
    assert project.captions(clip=1) == [(1, "ann-a", text)]
    project.delete_caption(cap)
    project.revert(project.last_edit_ids)  # the row comes back from its history copy
    assert project.captions(clip=1) == [(1, "ann-a", text)]


def test_split_and_merge(project):
    seg = project.add_segment(2, "ann-a", "push", 2, 10)
    right = project.split_segment(seg, 6)
    assert [(g.start, g.end) for g in project.segments(clip=2)] == [(2, 6), (6, 10)]
    project.merge_segments(seg, right)
    assert [(g.start, g.end) for g in project.segments(clip=2)] == [(2, 10)]


def test_clip_states(project):
    project.set_clip_label(1, "ann-a", "push")
    assert project.clip(1).state == "in_progress"
    with pytest.raises(RecordError, match="needs a reason"):
        project.set_clip_state(1, "ann-a", "skipped")
    project.set_clip_state(1, "ann-a", "submitted")
    assert project.clip(1).state == "done"
    project.set_gold_label(1, "push", lead="lead")
    assert project.clip(1).state == "settled"
    with pytest.raises(RecordError, match="not a lead"):
        project.set_gold_label(1, "push", lead="ann-a")


def test_caption_segment_must_belong_to_its_clip(project):
    other = project.add_segment(2, "ann-a", "push", 0, 4)
    cap = project.add_caption(1, "ann-a", "The arm pushes a block.")
    with pytest.raises(RecordError, match="not a segment of clip 1"):
        project.update_caption(cap, segment=other)
    with pytest.raises(RecordError, match="not a segment of clip 1"):
        project.add_caption(1, "ann-a", "Another one.", segment=other)


def test_gold_decisions_can_be_undone(project):
    """Regression: reverting gold captions was refused as 'changed since' on SQLite, because
    stored times came back without a time zone and no longer matched the history row."""
    project.set_gold_captions(1, ["The arm pushes the block."], lead="lead")
    ids = project.last_edit_ids
    project.revert(ids)
    assert project.gold_captions(1) == {}
    project.set_gold_label(1, "push", lead="lead")
    project.revert(project.last_edit_ids)
    assert project.gold_labels() == {}


def test_recording_collects_the_edit_ids_of_the_writes_inside_only(project):
    """``Project.recording()`` gives the edit ids of the block's writes (for an undo step),
    nested blocks pass theirs outwards, and writes outside the block are not in it."""
    clip = project.clips()[0].id
    project.set_clip_label(clip, None, "pick up")          # outside: not recorded
    with project.recording() as outer:
        project.set_clip_label(clip, None, "put down")
        with project.recording() as inner:
            cap = project.add_caption(clip, None, "a hand lifts a cup")
        assert inner == project.last_edit_ids and len(inner) == 1
    assert outer[-1:] == inner and len(outer) == 2
    assert [e.id for e in project.history()][-2:] == outer
    project.revert(outer)
    assert project.captions() == [] and project.clip_labels()[0][2] == "pick up"
    assert cap not in [c.id for c in project.caption_rows()]


def test_a_composite_read_sees_one_state_while_another_writer_commits(project):
    """Reads inside one snapshot (as ``iter_records`` and ``export_inputs`` run) do not see a
    write another connection commits between them; the next read outside does."""
    clip = project.clips()[0].id
    with Project.open(project.folder, user="ann-a") as other:
        with project._uow.snapshot():
            before = project.clip_labels()
            other.set_clip_label(clip, "ann-a", "push")        # committed meanwhile
            assert project.clip_labels() == before == []
        assert project.clip_labels() == [(clip, "ann-a", "push")]
        records = project.iter_records()                      # one snapshot, whole and consistent
    assert [r.label for r in records if r.type == "label"] == ["push"]
