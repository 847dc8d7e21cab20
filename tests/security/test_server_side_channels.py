"""Side channels of a team server. What can be closed is closed (a caption may not point at a
segment its author cannot see, so a foreign key no longer tells whether a hidden segment
exists); what PostgreSQL shows every login regardless is pinned here and listed in the threat
model of docs/team-server.md, so the document stays true."""

from __future__ import annotations

from pathlib import Path

import psycopg
import pytest

from clipscribe import Project

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres
DOC = Path(__file__).parents[2] / "docs" / "team-server.md"


@pytest.fixture
def pair(server_project, uid):
    p = server_project
    c1, = add_clips(p, 1)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        seg = b.add_segment(c1, bob, "stack", 1, 5)
        for i in range(5):
            b.add_caption(c1, bob, f"bob's caption {i}")
    p.set_blind(True)
    ids = {a.name: a.id for a in p.annotators()}
    return p, ann, bob, c1, seg, ids


def _caption_on_segment(conn, clip: int, me: int, segment: int) -> str:
    try:
        conn.execute("INSERT INTO public.captions (clip_id, annotator_id, position, text, segment_id, "
                     "updated_at, version) VALUES (%s, %s, 0, 'probe', %s, now(), 1)",
                     (clip, me, segment))
        return "accepted"
    except psycopg.errors.ForeignKeyViolation as exc:
        return str(exc).splitlines()[0].replace(str(segment), "N")


def test_a_hidden_segment_and_a_missing_one_look_the_same(pair):
    p, ann, _bob, c1, seg, ids = pair
    with connect_as(p, ann, "pw-ann") as conn:
        hidden = _caption_on_segment(conn, c1, ids[ann], seg)
        missing = _caption_on_segment(conn, c1, ids[ann], seg + 1000)
    assert hidden == missing != "accepted"
    # the app's own path still ties a caption to the author's own segment
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        mine = a.add_segment(c1, ann, "stack", 2, 6)
        a.add_caption(c1, ann, "a hand stacks cups", segment=mine)


def test_what_postgresql_shows_every_login_is_documented(pair, pg):
    p, ann, _bob, _c1, _seg, _ids = pair
    doc = DOC.read_text(encoding="utf-8")
    threat = doc[doc.index("## 9. Threat model"):]
    pg.sql("ANALYZE captions", dbname=p.engine.url.database)
    with connect_as(p, ann, "pw-ann") as conn:
        assert conn.execute("SELECT count(*) FROM public.captions").fetchone()[0] == 0
        # row estimates of every table, for every login (pg_class is readable by all)
        est = conn.execute("SELECT reltuples FROM pg_catalog.pg_class "
                           "WHERE oid = 'public.captions'::regclass").fetchone()[0]
        assert est == 5 and "reltuples" in threat
        # EXPLAIN ANALYZE counts the rows the policies filtered away
        plan = "\n".join(r[0] for r in conn.execute(
            "EXPLAIN (ANALYZE, COSTS OFF, TIMING OFF) SELECT * FROM public.captions").fetchall())
        assert "Rows Removed by Filter: 5" in plan and "Rows Removed by Filter" in threat
        # the position of a sequence the annotator inserts with (USAGE is enough for the view)
        pos = conn.execute("SELECT last_value FROM pg_catalog.pg_sequences "
                           "WHERE sequencename = 'captions_id_seq'").fetchone()[0]
        assert pos == 5 and "pg_sequences" in threat
    for words in ("pg_stat_user_tables", "nextval", "TLS", "scram-sha-256", "lock_timeout",
                  "idle_in_transaction_session_timeout", "statement_timeout"):
        assert words in threat, words
