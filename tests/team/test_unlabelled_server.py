"""Unlabelled segments on a team server: an annotator's own login marks one with no label and
fills it by setting the clip label, under the row-level security of ``segments``; another
annotator still sees none of it, and the lead sees it unlabelled until it is filled."""

from __future__ import annotations

import pytest

from clipscribe import Project

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres


def test_an_annotator_marks_and_fills_an_unlabelled_segment_under_row_security(server_project, uid):
    p = server_project
    [clip] = add_clips(p, 1)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        sid = a.add_segment(clip, ann, None, 1, 6)
        assert [(g.id, g.label) for g in a.segments(clip=clip)] == [(sid, None)]
    assert [(g.annotator, g.label) for g in p.segments(clip=clip)] == [(ann, None)]
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        assert b.segments(clip=clip) == []                        # blind: not bob's to see
    with connect_as(p, bob, "pw-bob") as conn:                     # nor by raw SQL
        assert conn.execute("SELECT count(*) FROM segments WHERE label_id IS NULL").fetchone()[0] == 0
        conn.execute("UPDATE segments SET label_id = (SELECT min(id) FROM labels)")
    assert [g.label for g in p.segments(clip=clip)] == [None]      # bob's update touched nothing
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        with a.recording() as ids:
            a.set_clip_label(clip, ann, "stack")
        assert [g.label for g in a.segments(clip=clip)] == ["stack"]
        a.revert(ids)                                              # one step takes both back
        assert a.my_clip_label(clip, ann) is None
        assert [g.label for g in a.segments(clip=clip)] == [None]
        a.set_clip_label(clip, ann, "stack")
    assert [(g.annotator, g.label) for g in p.segments(clip=clip)] == [(ann, "stack")]
