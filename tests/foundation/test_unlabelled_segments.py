"""A segment marked before its annotator chose a label is stored unlabelled (label None), is
filled by the annotator's next clip label in the same undo step, survives a dump and an import,
and is left out of the export with a count in the manifest."""

from __future__ import annotations

import json

from alembic import command

from clipscribe import Project
from clipscribe.schema.records import parse_record
from clipscribe.store import db


def _labels(p: Project, clip, who) -> list:
    return [(g.label, g.start, g.end) for g in p.segments(clip=clip, annotator=who)]


def test_a_segment_without_a_label_is_stored_with_none(project):
    clip = project.clips()[0].id
    sid = project.add_segment(clip, "ann-a", None, 2, 6)
    [g] = project.segments(clip=clip)
    assert (g.id, g.label, g.start, g.end) == (sid, None, 2, 6)
    project.update_segment(sid, label="push")                   # choosing one for the segment
    assert _labels(project, clip, "ann-a") == [("push", 2, 6)]


def test_the_clip_label_fills_only_that_annotators_unlabelled_segments_as_one_step(project):
    clip, other = project.clips()[0].id, project.clips()[1].id
    project.add_segment(clip, "ann-a", None, 0, 3)
    project.add_segment(clip, "ann-a", None, 5, 8)
    project.add_segment(clip, "ann-a", "push", 9, 11)           # labelled: kept as it is
    project.add_segment(clip, "ann-b", None, 0, 4)              # someone else's: untouched
    project.add_segment(other, "ann-a", None, 0, 4)             # another clip: untouched
    with project.recording() as ids:
        project.set_clip_label(clip, "ann-a", "pick up")
    assert _labels(project, clip, "ann-a") == [("pick up", 0, 3), ("pick up", 5, 8), ("push", 9, 11)]
    assert _labels(project, clip, "ann-b") == [(None, 0, 4)]
    assert _labels(project, other, "ann-a") == [(None, 0, 4)]
    edits = [e for e in project.history() if e.id in ids]
    assert [(e.entity, e.action) for e in edits] == [("clip_label", "set"), ("segment", "change"),
                                                     ("segment", "change")]
    # one undo step on the writer's trail takes back the label and the filled segments
    what, step = project.undo_trail(clip, project.user)[-1]
    assert sorted(step) == sorted(ids) and what == "Label clip"
    project.revert(step)
    assert project.my_clip_label(clip, "ann-a") is None
    assert _labels(project, clip, "ann-a") == [(None, 0, 3), (None, 5, 8), ("push", 9, 11)]


def test_changing_or_clearing_the_clip_label_leaves_labelled_segments_alone(project):
    clip = project.clips()[0].id
    project.set_clip_label(clip, "ann-a", "push")
    project.add_segment(clip, "ann-a", "push", 0, 3)
    project.add_segment(clip, "ann-a", None, 4, 6)              # by script, with no label
    project.set_clip_label(clip, "ann-a", "put down")
    assert _labels(project, clip, "ann-a") == [("push", 0, 3), ("put down", 4, 6)]
    project.add_segment(clip, "ann-a", None, 7, 9)
    project.set_clip_label(clip, "ann-a", "put down")           # the same label again fills too
    assert _labels(project, clip, "ann-a")[-1] == ("put down", 7, 9)
    project.set_clip_label(clip, "ann-a", None)
    assert [g[0] for g in _labels(project, clip, "ann-a")] == ["push", "put down", "put down"]


def test_dump_writes_no_label_and_import_reads_it_back(project, tmp_path):
    clip = project.clips()[0]
    project.add_segment(clip.id, "ann-a", None, 1, 4)
    project.add_segment(clip.id, "ann-a", "push", 5, 9)
    project.set_clip_label(clip.id, "ann-b", "pick up")
    project.add_segment(clip.id, "ann-b", None, 2, 3)         # by script, after the clip label
    out = tmp_path / "all.jsonl"
    project.export_records(out)
    rows = [json.loads(l) for l in out.read_text().splitlines()]
    segs = sorted((r for r in rows if r["type"] == "segment" and r["annotator"] == "ann-a"),
                  key=lambda r: r["start"])
    assert "label" not in segs[0] and segs[1]["label"] == "push"
    assert parse_record(segs[0]).label is None
    assert parse_record({**segs[0], "label": None}).label is None  # null reads the same

    with Project.create(tmp_path / "again", user="lead") as q:
        q.define_labels(["pick up", "put down", "push"])
        q.add_annotator("ann-a")
        q.add_annotator("ann-b")
        (q.media_root / "g1").mkdir(parents=True)
        for f in (project.media_root / "g1").iterdir():
            (q.media_root / "g1" / f.name).write_bytes(f.read_bytes())
        counts = q.import_records(out)
        assert counts["segment"] == 3
        cid = next(c.id for c in q.clips() if c.path == clip.path)
        assert _labels(q, cid, "ann-a") == [(None, 1, 4), ("push", 5, 9)]
        assert _labels(q, cid, "ann-b") == [(None, 2, 3)]     # an import fills nothing
        assert q.import_records(out)["segment"] == 0              # the same file again: nothing new


def test_export_leaves_unlabelled_segments_out_and_counts_them(sample_copy, tmp_path):
    with Project.open(sample_copy) as p:
        clip = p.clips()[0].id
        for who in ("annotator-1", "annotator-2", "annotator-3"):
            for g in p.segments(clip=clip, annotator=who):
                p.delete_segment(g.id)
        p.add_segment(clip, "annotator-3", None, 0, 10)
        p.add_segment(clip, "annotator-3", None, 12, 20)
        inputs = {c.clip_id: c for c in p.export_inputs()}
        assert inputs[str(clip)].unlabelled_segments == 2
        assert all(g.label is not None for _, segs in inputs[str(clip)].annotator_segments
                   for g in segs)
        plan = p.plan_export(seed=1)
        assert str(clip) in plan.decisions and plan.unlabelled_segments == 2
        assert plan.segments_of(next(c for c in plan.clips if c.clip_id == str(clip))).segments == ()
        p.write_export(tmp_path / "out", plan)
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["unlabelled_segments"] == 2
    assert "no label" in manifest["recipes"]["unlabelled_segments"]


def test_migration_makes_the_label_optional_and_going_back_refuses_unlabelled(project):
    clip = project.clips()[0].id
    kept = project.add_segment(clip, "ann-a", "push", 0, 4)
    cfg = db.alembic_config(project.engine)
    command.downgrade(cfg, "0006_assign")
    cols = {c["name"]: c for c in _columns(project)}
    assert cols["label_id"]["nullable"] is False
    command.upgrade(cfg, "head")
    assert {c["name"]: c for c in _columns(project)}["label_id"]["nullable"] is True
    assert [g.id for g in project.segments()] == [kept]
    project.add_segment(clip, "ann-a", None, 5, 9)
    command.downgrade(cfg, "0007_day2rest")  # later revisions step back first
    try:
        command.downgrade(cfg, "0006_assign")
    except RuntimeError as exc:
        assert "1 segment(s) have no label" in str(exc)
    else:
        raise AssertionError("going back with an unlabelled segment was not refused")
    assert db.current_revision(project.engine) == "0007_day2rest"
    assert len(project.segments()) == 2


def _columns(p: Project) -> list[dict]:
    from sqlalchemy import inspect
    return inspect(p.engine).get_columns("segments")


def test_the_agreement_report_takes_unlabelled_segments_and_counts_them(sample_copy):
    with Project.open(sample_copy) as p:
        clip = p.clips()[0].id
        p.add_segment(clip, "annotator-3", None, 0, 10)
        seg = p.agreement_report(n_boot=20, captions=False).segments
        with3 = [m for m in seg.pairs if "annotator-3" in (m.annotator_a, m.annotator_b)]
        assert with3 and all(m.recipe.option("unlabelled") == "1" for m in with3)
        assert seg.frame_alpha.recipe.option("unlabelled_frames") == "10"
