"""Who makes assignments on a real PostgreSQL server: the queue's pull and the checked
``clipscribe_start`` (first work on a clip), or a lead. An annotator's login that INSERTs
assignment rows itself is refused by the database, however the rows look, while first edits,
an annotator's own import, skipping, reading comments and the queue keep working."""

from __future__ import annotations

import json

import psycopg
import pytest

from clipscribe import Project
from clipscribe.errors import PermissionRefused
from clipscribe.store import db, team as team_sql

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres

#: the statement of the audit: every clip, no lease, for the caller
GRAB_ALL = ("INSERT INTO public.assignments (clip_id, annotator_id, state, assigned_at, expires_at, "
            "updated_at, version) SELECT id, public.clipscribe_me(), 'open', now(), NULL, now(), 1 "
            "FROM public.clips")


@pytest.fixture
def crew(server_project, uid):
    p = server_project
    clips = add_clips(p, 4)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    p.assign(per_clip=1)
    return p, ann, bob, clips


def _assignments(p: Project) -> dict[tuple[int, str], tuple[str, bool]]:
    """(clip, person) -> (state, has a lease), as the lead sees them."""
    names = {a.id: a.name for a in p.annotators()}
    with p.engine.connect() as conn:
        rows = conn.exec_driver_sql("SELECT clip_id, annotator_id, state, expires_at IS NOT NULL "
                                    "FROM assignments").all()
    return {(c, names[a]): (st, lease) for c, a, st, lease in rows}


def test_the_audit_insert_is_refused_and_makes_no_row(crew):
    p, ann, bob, _clips = crew
    with connect_as(p, ann, "pw-ann") as conn:
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute(GRAB_ALL)
        with pytest.raises(psycopg.errors.InsufficientPrivilege):  # no id to draw either
            conn.execute("SELECT nextval(pg_get_serial_sequence('public.assignments', 'id'))")
    assert _assignments(p) == {}
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        assert b.next_clip() is not None  # nothing was taken from bob's queue


def test_the_row_policy_refuses_the_insert_even_with_the_grant_back(crew, pg):
    p, ann, _bob, _clips = crew
    database = p.engine.url.database
    pg.sql(f"GRANT INSERT ON public.assignments TO {team_sql.ANNOTATOR_GROUP}", dbname=database)
    pg.sql("DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator', "
           "pg_get_serial_sequence('public.assignments', 'id')); END $$", dbname=database)
    with connect_as(p, ann, "pw-ann") as conn:
        with pytest.raises(psycopg.errors.InsufficientPrivilege, match="row-level security"):
            conn.execute(GRAB_ALL)
    assert _assignments(p) == {}


def test_the_checked_function_makes_only_the_callers_open_rows_without_a_lease(crew):
    p, ann, bob, clips = crew
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        taken = b.next_clip()  # bob holds the one place of this clip
    ids = {a.name: a.id for a in p.annotators()}
    free = [c for c in clips if c != taken]
    with connect_as(p, ann, "pw-ann") as conn:
        start = "SELECT public.clipscribe_start(%s::integer[], %s::integer[])"
        with pytest.raises(psycopg.errors.InsufficientPrivilege, match="only for itself"):
            conn.execute(start, ([free[0]], [ids[bob]]))
        with pytest.raises(psycopg.errors.InsufficientPrivilege, match="no free place"):
            conn.execute(start, ([taken], [ids[ann]]))
        with pytest.raises(psycopg.errors.InsufficientPrivilege, match="no free place"):
            conn.execute(start, ([10_000], [ids[ann]]))  # no such clip: the same refusal
        with pytest.raises(psycopg.errors.InvalidParameterValue):
            conn.execute(start, ([free[0], free[1]], [ids[ann]]))
        # a free clip: one open row without a lease; asking again makes nothing
        assert conn.execute(start, ([free[0]], [ids[ann]])).fetchone()[0] == 1
        assert conn.execute(start, ([free[0]], [ids[ann]])).fetchone()[0] == 0
    got = _assignments(p)
    assert got == {(taken, bob): ("open", True), (free[0], ann): ("open", False)}


def test_first_work_makes_the_annotators_assignment_through_the_function(crew):
    p, ann, bob, clips = crew
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        taken = b.next_clip()
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.set_clip_label(clips[1], ann, "stack")            # first edit: a label
        a.add_caption(clips[2], ann, "a hand stacks two cups")  # a caption
        a.add_segment(clips[3], ann, "stack", 1, 5)             # a segment
        # her own work justifies a row even on a clip whose one place bob holds
        a.set_clip_label(taken, ann, "pick up")
        assert a.clip_state(clips[1], ann) == ("open", None)
        a.set_clip_state(clips[1], ann, "submitted")
    got = _assignments(p)
    assert {k: v for k, v in got.items() if k[1] == ann} == {
        (clips[1], ann): ("submitted", False), (clips[2], ann): ("open", False),
        (clips[3], ann): ("open", False), (taken, ann): ("open", False)}
    states = {c.id: c.state for c in p.clips()}
    assert states[clips[1]] == "done" and states[clips[2]] == "in_progress"


def test_skipping_an_untouched_clip_needs_a_free_place(crew):
    p, ann, bob, clips = crew
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        taken = b.next_clip()
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        free = next(c for c in clips if c != taken)
        a.set_clip_state(free, ann, "skipped", "the clip is black")
        assert a.clip_state(free, ann) == ("skipped", "the clip is black")
        with pytest.raises(PermissionRefused, match="no free place.*next clip from the queue"):
            a.set_clip_state(taken, ann, "skipped", "not mine")
    assert (taken, ann) not in _assignments(p)


def test_an_annotator_imports_her_own_work_and_takes_work_from_the_queue(crew, tmp_path):
    p, ann, _bob, clips = crew
    src = tmp_path / "mine.jsonl"
    src.write_text("".join(json.dumps(r) + "\n" for r in [
        {"type": "label", "clip": str(clips[0]), "annotator": ann, "label": "stack"},
        {"type": "caption", "clip": str(clips[1]), "annotator": ann, "text": "a cup is put down"},
    ]))
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        counts = a.import_records(src)
        assert (counts["label"], counts["caption"]) == (1, 1)
        # the imported clips are her open work: the queue hands them out first, then a new one
        assert a.next_clip() == clips[0]
        a.set_clip_state(clips[0], ann, "submitted")
        a.set_clip_state(clips[1], ann, "submitted")
        assert a.next_clip() == clips[2]
    got = _assignments(p)
    assert got == {(clips[0], ann): ("submitted", True), (clips[1], ann): ("submitted", False),
                   (clips[2], ann): ("open", True)}


def test_an_older_team_database_loses_the_annotators_insert_when_the_admin_opens_it(crew, pg):
    p, ann, _bob, clips = crew
    database = p.engine.url.database
    p.close()
    # what the previous schema revision left: INSERT granted, only a no-lease policy
    pg.sql(f"""GRANT INSERT ON public.assignments TO {team_sql.ANNOTATOR_GROUP};
DROP POLICY no_own_insert ON public.assignments;
CREATE POLICY no_own_lease ON public.assignments AS RESTRICTIVE FOR INSERT
  TO {team_sql.ANNOTATOR_GROUP} WITH CHECK (expires_at IS NULL);
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO {team_sql.ANNOTATOR_GROUP}',
  pg_get_serial_sequence('public.assignments', 'id')); END $$;
DROP FUNCTION public.clipscribe_start(integer[], integer[]);
UPDATE alembic_version SET version_num = '0005';""", dbname=database)
    with connect_as(p, ann, "pw-ann") as conn:
        assert conn.execute(GRAB_ALL).rowcount == len(clips)  # the old gap
    pg.sql("DELETE FROM assignments", dbname=database)
    with Project.open(p.folder) as admin:  # the admin's login, password from ~/.pgpass
        assert db.current_revision(admin.engine) == db.head_revision()
    with connect_as(p, ann, "pw-ann") as conn:
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute(GRAB_ALL)
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.set_clip_label(clips[0], ann, "stack")
    assert _assignments(p) == {(clips[0], ann): ("open", False)}
