"""What an annotator's login may still do with raw SQL on a real PostgreSQL server: change the
state of clips that are not theirs, read how many rows hide behind a sequence, or take locks
that stop everyone else. Each test runs the attack and asserts the refusal; where PostgreSQL
cannot refuse (documented in docs/team-server.md), the test pins down what it allows."""

from __future__ import annotations

import psycopg
import pytest
from psycopg import sql

from clipscribe import Project

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres

# PostgreSQL documentation, LOCK: ACCESS SHARE needs SELECT, ROW EXCLUSIVE needs INSERT, UPDATE,
# DELETE or TRUNCATE, every stronger mode needs table-level UPDATE, DELETE or TRUNCATE.
STRONG_MODES = ("SHARE", "SHARE ROW EXCLUSIVE", "EXCLUSIVE", "ACCESS EXCLUSIVE")


@pytest.fixture
def crew(server_project, uid):
    p = server_project
    clips = add_clips(p, 4)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.set_clip_label(clips[0], ann, "stack")
        a.add_caption(clips[0], ann, "a hand stacks two cups")
    return p, ann, bob, clips


def test_annotator_cannot_set_the_state_of_any_clip_directly(crew):
    p, ann, _bob, clips = crew
    with connect_as(p, ann, "pw-ann") as conn:
        for stmt in ("UPDATE public.clips SET state = 'done'",
                     "UPDATE public.clips SET state = 'settled' WHERE id = %s" % clips[1],
                     "DELETE FROM public.clips"):
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute(stmt)
        # the checked function: only for a clip with the caller's assignment, and the state
        # it writes is worked out from the assignments, never taken from the caller
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("SELECT public.clipscribe_refresh_clip_state(%s)", (clips[1],))
        assert conn.execute("SELECT public.clipscribe_refresh_clip_state(%s)",
                            (clips[0],)).fetchone()[0] == "in_progress"
    states = {c.id: c.state for c in p.clips()}
    assert states == {clips[0]: "in_progress", clips[1]: "new", clips[2]: "new", clips[3]: "new"}


def test_the_queue_cannot_be_starved_and_work_still_moves_clips_on(crew):
    p, ann, bob, clips = crew
    with connect_as(p, ann, "pw-ann") as conn:
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("UPDATE public.clips SET state = 'settled'")
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("DELETE FROM public.assignments")
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        got = b.next_clip()
        assert got is not None and got != clips[0]
        b.set_clip_label(got, bob, "put down")
        b.set_clip_state(got, bob, "submitted")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.set_clip_state(clips[0], ann, "submitted")
    states = {c.id: c.state for c in p.clips()}
    assert states[clips[0]] == "done" and states[got] == "done"


def test_annotator_reads_no_sequence_position(crew):
    p, ann, _bob, _clips = crew
    with connect_as(p, ann, "pw-ann") as conn:
        seqs = [r[0] for r in conn.execute(
            "SELECT c.oid::regclass::text FROM pg_catalog.pg_class c JOIN pg_catalog.pg_namespace n "
            "ON n.oid = c.relnamespace WHERE c.relkind = 'S' AND n.nspname = 'public'").fetchall()]
        assert len(seqs) >= 8
        for seq in seqs:
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute(sql.SQL("SELECT last_value FROM {}").format(sql.SQL(seq)))
        # counters of tables the annotator never adds to cannot even be advanced
        for table in ("gold_labels", "gold_captions", "review_comments", "clips", "annotators"):
            seq = conn.execute("SELECT pg_catalog.pg_get_serial_sequence(%s, 'id')",
                               (f"public.{table}",)).fetchone()[0]
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute("SELECT nextval(%s)", (seq,))
            # the catalog view shows no position for them either
            row = conn.execute("SELECT last_value FROM pg_catalog.pg_sequences "
                               "WHERE schemaname || '.' || sequencename = %s", (seq,)).fetchone()
            assert row is None or row[0] is None


def test_annotator_cannot_take_strong_locks_except_on_their_own_work_tables(crew):
    p, ann, _bob, _clips = crew
    with connect_as(p, ann, "pw-ann") as conn:
        conn.autocommit = False
        refused, allowed = [], []
        for table in ("clips", "assignments", "edits", "settings", "labels", "annotators",
                      "gold_labels", "gold_segments", "gold_captions", "review_comments",
                      "captions", "segments", "clip_labels"):
            for mode in STRONG_MODES:
                try:
                    conn.execute(f"LOCK TABLE public.{table} IN {mode} MODE NOWAIT")
                    allowed.append(table)
                except psycopg.errors.InsufficientPrivilege:
                    refused.append(table)
                conn.rollback()
            try:
                conn.execute(f"SELECT 1 FROM public.{table} FOR UPDATE NOWAIT")
                if table not in ("captions", "segments", "clip_labels", "assignments"):
                    allowed.append(f"{table} FOR UPDATE")
            except psycopg.errors.InsufficientPrivilege:
                pass
            conn.rollback()
        # annotators edit and delete their own labels, segments and captions; PostgreSQL lets
        # any login with DELETE lock the table (see the threat model); the rest is closed
        assert sorted(set(allowed)) == ["captions", "clip_labels", "segments"]


def test_logins_get_server_side_timeouts(crew, uid):
    p, ann, _bob, _clips = crew
    p.add_annotator(f"lee_{uid}", role="lead", password="pw-lee")
    with connect_as(p, ann, "pw-ann") as conn:
        got = {k: conn.execute(f"SHOW {k}").fetchone()[0]
               for k in ("lock_timeout", "statement_timeout", "idle_in_transaction_session_timeout")}
    assert got == {"lock_timeout": "10s", "statement_timeout": "2min",
                   "idle_in_transaction_session_timeout": "1min"}
    with connect_as(p, f"lee_{uid}", "pw-lee") as conn:
        assert conn.execute("SHOW idle_in_transaction_session_timeout").fetchone()[0] == "10min"
    # a promotion swaps the annotator's limits for a lead's
    p.set_role(ann, "lead")
    with connect_as(p, ann, "pw-ann") as conn:
        assert conn.execute("SHOW statement_timeout").fetchone()[0] == "0"
        assert conn.execute("SHOW idle_in_transaction_session_timeout").fetchone()[0] == "10min"


def test_assignments_made_wholesale_do_not_empty_the_queue(crew):
    p, ann, bob, clips = crew
    p.assign(per_clip=1)
    with connect_as(p, ann, "pw-ann") as conn:
        # a lease on every clip: refused (only the pull hands out leases)
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("INSERT INTO public.assignments (clip_id, annotator_id, state, assigned_at, "
                         "expires_at, updated_at, version) SELECT id, public.clipscribe_me(), 'open', "
                         "now(), now() + interval '100 years', now(), 1 FROM public.clips")
        # no lease either: refused too (only the checked functions make assignments)
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("INSERT INTO public.assignments (clip_id, annotator_id, state, assigned_at, "
                         "expires_at, updated_at, version) SELECT c.id, public.clipscribe_me(), "
                         "'submitted', now(), NULL, now(), 1 FROM public.clips c WHERE NOT EXISTS "
                         "(SELECT 1 FROM public.assignments a WHERE a.clip_id = c.id)")
        with pytest.raises(psycopg.errors.InsufficientPrivilege):
            conn.execute("UPDATE public.assignments SET expires_at = now() + interval '100 years'")
    got = []
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        while (clip := b.next_clip()) is not None:
            got.append(clip)
            b.set_clip_label(clip, bob, "stack")
            b.set_clip_state(clip, bob, "submitted")
    # clip 1 holds ann's real work (a label), so its one place is taken; the rest are bob's
    assert got == clips[1:]
