"""On a real PostgreSQL server an annotator's login cannot find out which clips are check
clips: like the gold tables, no row passes the lead-only policy (not even a count), no write
right (and the policy refuses should one come back), and the queue still hands the check
clips out through the pull."""

from __future__ import annotations

import psycopg
import pytest

from clipscribe import Project

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres


@pytest.fixture
def checked(server_project, uid):
    p = server_project
    clips = add_clips(p, 3)
    p.mark_check_clip(clips[0], "stack")
    ann = f"ann_{uid}"
    p.add_annotator(ann, password="pw-ann")
    return p, ann, clips


def test_annotator_login_cannot_read_check_clips(checked, pg):
    p, ann, clips = checked
    with connect_as(p, ann, "pw-ann") as conn:
        # like the gold tables: readable, but no row passes the lead-only policy
        assert conn.execute("SELECT clip_id FROM public.check_clips").fetchall() == []
        assert conn.execute("SELECT count(*) FROM public.check_clips").fetchone() == (0,)
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("INSERT INTO public.check_clips (clip_id, label_id, lead_id, marked_at) "
                         "VALUES (%s, 1, 1, now())", (clips[1],))
    # should a write right come back, the policy still lets no row in
    pg.sql("GRANT INSERT ON public.check_clips TO clipscribe_annotator",
           dbname=p.engine.url.database)
    with connect_as(p, ann, "pw-ann") as conn:
        with pytest.raises(psycopg.errors.InsufficientPrivilege, match="row-level security"):
            conn.execute("INSERT INTO public.check_clips (clip_id, label_id, lead_id, marked_at) "
                         "VALUES (%s, 1, 1, now())", (clips[1],))
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        assert a._peers.analysis.known_answers() == {}
    assert p.check_clips() == {clips[0]: "stack"}   # the lead sees them


def test_the_pull_still_hands_check_clips_out(checked):
    p, ann, clips = checked
    p.assign(per_clip=1, check_rate=0.5)
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        first = a.next_clip()
        a.set_clip_state(first, ann, "submitted")
        second = a.next_clip()
    assert (first, second) == (clips[1], clips[0])
