"""Roles enforced by the database: an annotator's own login, using raw SQL on every table and
view the catalog lists, cannot see another annotator's work in blind mode, cannot forge it,
cannot rewrite history, and cannot touch gold."""

from __future__ import annotations

import psycopg
import pytest
from psycopg import sql

from clipscribe import Project
from clipscribe.errors import PermissionRefused as TeamPermissionError

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres
SECRET = "SECRET-of-the-other-annotator"


@pytest.fixture
def team(server_project, uid):
    """Lead ``boss``; annotators ann and bob, each with work; bob's carries SECRET."""
    p = server_project
    c1, c2 = add_clips(p, 2)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        b.set_clip_label(c1, bob, "stack")
        b.add_segment(c1, bob, "stack", 1, 5)
        b.add_caption(c1, bob, f"{SECRET} a hand stacks two cups")
        b.set_clip_state(c1, bob, "submitted")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.set_clip_label(c1, ann, "pick up")
        a.add_caption(c1, ann, "a hand picks up a cup")
    p.set_gold_label(c1, "stack")
    p.set_gold_captions(c1, [f"{SECRET} gold caption"])
    p.add_comment(c1, f"{SECRET} note for bob", annotator=bob)
    ids = {a.name: a.id for a in p.annotators()}
    return p, ann, bob, ids


def _relations(conn: psycopg.Connection) -> list[tuple[str, str, str]]:
    """Every table, view, materialized view and foreign table outside the system schemas."""
    return conn.execute(
        "SELECT n.nspname, c.relname, c.relkind FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace "
        "WHERE c.relkind IN ('r', 'p', 'v', 'm', 'f') AND n.nspname NOT IN ('pg_catalog', 'information_schema') "
        "AND n.nspname NOT LIKE 'pg_toast%' ORDER BY 1, 2").fetchall()


def _readable_rows(conn, schema: str, name: str):
    try:
        cur = conn.execute(sql.SQL("SELECT * FROM {}.{}").format(sql.Identifier(schema), sql.Identifier(name)))
    except psycopg.errors.InsufficientPrivilege:
        return None, []
    cols = [d.name for d in cur.description]
    return cols, cur.fetchall()


def test_blind_annotator_sees_nothing_of_another_by_any_query(team):
    p, ann, bob, ids = team
    with connect_as(p, ann, "pw-ann") as conn:
        rels = _relations(conn)
        names = {r[1] for r in rels}
        assert {"captions", "clip_labels", "segments", "edits", "gold_captions"} <= names
        seen_own = 0
        for schema, name, _kind in rels:
            cols, rows = _readable_rows(conn, schema, name)
            for row in rows:
                assert SECRET not in repr(row), f"{schema}.{name} shows the other's text"
                if cols and "annotator_id" in cols:
                    who = row[cols.index("annotator_id")]
                    assert who != ids[bob], f"{schema}.{name} shows a row of the other annotator"
                    seen_own += who == ids[ann]
            if name.startswith("gold_"):
                assert rows == [], f"{name}: annotators must not see gold"
        assert seen_own >= 4  # own label, caption, assignment, edits: the policies let those through
        # filters or joins do not get round the policies either
        n = conn.execute(sql.SQL("SELECT count(*) FROM captions c JOIN annotators a ON a.id = c.annotator_id "
                                 "WHERE a.name = %s"), (bob,)).fetchone()[0]
        assert n == 0


def test_open_mode_lets_annotators_read_but_not_write_others(team):
    p, ann, bob, ids = team
    p.set_blind(False)
    with connect_as(p, ann, "pw-ann") as conn:
        texts = [r[0] for r in conn.execute("SELECT text FROM captions")]
        assert any(SECRET in t for t in texts)
        cur = conn.execute("UPDATE captions SET text = 'overwritten' WHERE annotator_id = %s", (ids[bob],))
        assert cur.rowcount == 0
        cur = conn.execute("DELETE FROM clip_labels WHERE annotator_id = %s", (ids[bob],))
        assert cur.rowcount == 0
        assert conn.execute("SELECT count(*) FROM gold_labels").fetchone()[0] == 0
        assert conn.execute("SELECT count(*) FROM edits WHERE annotator_id = %s", (ids[bob],)).fetchone()[0] == 0
    p.set_blind(True)
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        assert {who for _, who, _ in a.captions()} == {ann}


@pytest.mark.parametrize("statement", [
    "INSERT INTO captions (clip_id, annotator_id, position, text, updated_at, version) "
    "VALUES (1, {bob}, 9, 'forged', now(), 1)",
    "INSERT INTO edits (at, annotator_id, action, entity) VALUES (now(), {bob}, 'add', 'caption')",
    "UPDATE edits SET action = 'rewritten'",
    "DELETE FROM edits",
    "INSERT INTO gold_labels (clip_id, label_id, lead_id, decided_at, version) VALUES (2, 1, {ann}, now(), 1)",
    "UPDATE annotators SET role = 'lead'",
    "UPDATE clips SET path = 'elsewhere.avi'",
    "DELETE FROM labels",
    "UPDATE settings SET value = 'false'",
    "CREATE TABLE public.mine (x int)",
    "CREATE ROLE sneaky LOGIN",
])
def test_annotator_login_is_refused(team, statement):
    p, ann, bob, ids = team
    with connect_as(p, ann, "pw-ann") as conn:
        with pytest.raises((psycopg.errors.InsufficientPrivilege, psycopg.errors.InvalidSchemaName)):
            conn.execute(statement.format(bob=ids[bob], ann=ids[ann]))


def test_history_is_append_only_even_for_leads(team, uid):
    p, *_ = team
    p.add_annotator(f"lead_{uid}", role="lead", password="pw-l")
    with connect_as(p, f"lead_{uid}", "pw-l") as conn:
        assert conn.execute("SELECT count(*) FROM edits").fetchone()[0] > 5  # leads read everything
        for statement in ("UPDATE edits SET action = 'x'", "DELETE FROM edits"):
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute(statement)


def test_only_leads_export(team, tmp_path):
    p, ann, bob, ids = team
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        a.user = "boss"  # claiming to be the lead does not help: the database decides
        with pytest.raises(TeamPermissionError):
            a.export_records(tmp_path / "out.jsonl")
        with pytest.raises(TeamPermissionError):
            a.export_labels_csv(tmp_path / "out.csv")
        a.user = ann
        assert a.gold_labels() == {} and a.gold_captions() == {}
    assert p.export_records(tmp_path / "out.jsonl") > 0
    assert SECRET in (tmp_path / "out.jsonl").read_text()


def test_annotator_cannot_reach_another_projects_database(team, pg):
    p, ann, *_ = team
    other = pg.new_database()
    from sqlalchemy.engine import make_url
    from .pg_cluster import ADMIN_PASSWORD
    with Project.create(p.folder.parent / "other", database_url=make_url(other).set(
            password=ADMIN_PASSWORD).render_as_string(hide_password=False), user="boss2"):
        pass
    url = make_url(other)
    with pytest.raises(psycopg.OperationalError, match="permission denied|CONNECT"):
        psycopg.connect(host=url.host, port=url.port, dbname=url.database, user=ann, password="pw-ann")
