"""Lead comments on a server: an annotator's own login reads the comments addressed to them,
marks them read (the read state is on their own assignment row, which row-level security
already lets them write), and never sees a comment addressed to someone else."""

from __future__ import annotations

import pytest

from clipscribe import Project

from .conftest import add_clips

pytestmark = pytest.mark.postgres


def test_annotator_login_reads_and_marks_only_their_comments(server_project, uid, tmp_path):
    p = server_project
    (c1,) = add_clips(p, 1)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.set_clip_label(c1, ann, "stack")
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        b.set_clip_label(c1, bob, "pick up")
    p.add_comment(c1, "for ann only", annotator=ann)
    p.comment_to_annotators(c1, "for both of you")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        assert [n.text for n in a.my_comments(c1)] == ["for ann only", "for both of you"]
        assert a.unread_comments() == {c1: 2}
        assert a.mark_comments_read(c1) == 2
        assert a.unread_comments() == {}
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        assert [n.text for n in b.my_comments(c1)] == ["for both of you"]
        assert b.unread_comments() == {c1: 1}  # ann's reading is hers alone
        assert [t for *_, t in b.comments()] == ["for both of you"]  # the server filters
    out = tmp_path / "all.jsonl"
    p.export_records(out)  # the lead's dump holds every comment
    text = out.read_text()
    assert text.count('"type": "comment"') == 3 and "for ann only" in text
