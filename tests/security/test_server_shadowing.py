"""Shadowing attacks on the row-level-security helper functions, run as a hostile annotator on
a real PostgreSQL server.

PostgreSQL looks up an unqualified table name in the session's temporary schema first (and
in any schema the session puts on its own ``search_path``), so a helper function that reads
``settings`` or ``annotators`` by bare name can be handed a table the caller made up. The
functions must pin their ``search_path`` and name every table with its schema; annotators must
not be able to make temporary tables at all. Each attack below is also run by a login that
was given TEMP on purpose (as a superuser might), to show the functions stay immune.
(PostgreSQL documentation, "Writing SECURITY DEFINER Functions Safely" and "search_path".)
"""

from __future__ import annotations

import re

import psycopg
import pytest
from psycopg import sql

from team.test_rls import SECRET, team  # noqa: F401  (a fixture)

from .conftest import connect_as

pytestmark = pytest.mark.postgres
HELPERS = ("clipscribe_me()", "clipscribe_is_lead()", "clipscribe_is_owner()", "clipscribe_blind()")


@pytest.fixture
def shadow_team(team, pg):
    """The team of the row-level-security tests (bob's work carries SECRET; blind mode on),
    with ann's login given TEMP on this database on purpose: the attacks need it, and a team
    server must not grant it (see test_annotators_and_leads_cannot_make_temporary_tables)."""
    p, ann, bob, ids = team
    p.set_blind(True)
    pg.sql(f"GRANT TEMPORARY ON DATABASE {p.engine.url.database} TO {ann}")
    return p, ann, bob, ids, [c.id for c in p.clips()]


def _secrets_seen(conn) -> list[str]:
    seen = []
    for t in ("public.captions", "public.clip_labels", "public.segments"):
        rows = conn.execute(f"SELECT * FROM {t}").fetchall()
        seen += [t for r in rows if SECRET in repr(r)]
    return seen


def _others_rows(conn, other_id: int) -> int:
    return sum(conn.execute(f"SELECT count(*) FROM public.{t} WHERE annotator_id = %s",
                            (other_id,)).fetchone()[0]
               for t in ("captions", "clip_labels", "segments"))


def _helpers(conn) -> tuple:
    return tuple(conn.execute(f"SELECT public.{h}").fetchone()[0] for h in HELPERS)


def test_annotators_and_leads_cannot_make_temporary_tables(server_project, uid):
    p = server_project
    p.add_annotator(f"ann_{uid}", password="pw-a")
    p.add_annotator(f"lead_{uid}", role="lead", password="pw-l")
    for login, pw in ((f"ann_{uid}", "pw-a"), (f"lead_{uid}", "pw-l")):
        with connect_as(p, login, pw) as conn:
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute("CREATE TEMP TABLE settings (key text, value json)")
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute("CREATE TABLE public.settings2 (key text)")
            # no table of their own anywhere else they could put on the search path
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute("CREATE SCHEMA mine")


def test_temp_settings_with_blind_off_reveals_nothing(shadow_team):
    p, ann, bob, ids, _ = shadow_team
    with connect_as(p, ann, "pw-ann") as conn:
        assert _secrets_seen(conn) == [] and _others_rows(conn, ids[bob]) == 0
        conn.execute("CREATE TEMP TABLE settings (key varchar(100) PRIMARY KEY, value json)")
        conn.execute("INSERT INTO settings VALUES ('team.blind', 'false')")
        for path in ("DEFAULT", "pg_temp, public", "pg_temp, pg_catalog, public", "public"):
            conn.execute(f"SET search_path = {path}")
            assert conn.execute("SELECT public.clipscribe_blind()").fetchone()[0] is True, path
            assert _secrets_seen(conn) == [], path
            assert _others_rows(conn, ids[bob]) == 0, path


def test_temp_annotators_does_not_impersonate(shadow_team):
    p, ann, bob, ids, (c1, _) = shadow_team
    with connect_as(p, ann, "pw-ann") as conn:
        conn.execute("CREATE TEMP TABLE annotators AS SELECT * FROM public.annotators")
        conn.execute("UPDATE annotators SET db_login = NULL")
        conn.execute("UPDATE annotators SET db_login = current_user, role = 'lead' WHERE id = %s",
                     (ids[bob],))
        for path in ("DEFAULT", "pg_temp, public", "pg_temp, pg_catalog, public"):
            conn.execute(f"SET search_path = {path}")
            assert conn.execute("SELECT public.clipscribe_me()").fetchone()[0] == ids[ann], path
            assert conn.execute("SELECT public.clipscribe_is_lead()").fetchone()[0] is False, path
            n = conn.execute("UPDATE public.captions SET text = 'forged' WHERE annotator_id = %s",
                             (ids[bob],)).rowcount
            assert n == 0, path
            assert conn.execute("DELETE FROM public.clip_labels WHERE annotator_id = %s",
                                (ids[bob],)).rowcount == 0, path
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute("INSERT INTO public.captions (clip_id, annotator_id, position, text, "
                             "updated_at, version) VALUES (%s, %s, 9, 'forged', now(), 1)",
                             (c1, ids[bob]))
            with pytest.raises(psycopg.errors.InsufficientPrivilege):
                conn.execute("INSERT INTO public.edits (at, annotator_id, action, entity) "
                             "VALUES (now(), %s, 'add', 'caption')", (ids[bob],))
    # bob's work is as he left it
    texts = [t for c, a, t in p.captions() if a == bob]
    assert texts == [f"{SECRET} a hand stacks two cups"]


def test_temp_pg_database_does_not_make_a_lead(shadow_team):
    p, ann, bob, ids, _ = shadow_team
    with connect_as(p, ann, "pw-ann") as conn:
        me_oid = conn.execute("SELECT oid FROM pg_catalog.pg_roles WHERE rolname = current_user").fetchone()[0]
        conn.execute("CREATE TEMP TABLE pg_database AS SELECT current_database()::name AS datname, "
                     "%s::oid AS datdba", (me_oid,))
        for path in ("pg_temp, pg_catalog, public", "pg_temp, public, pg_catalog", "DEFAULT"):
            conn.execute(f"SET search_path = {path}")
            assert conn.execute("SELECT public.clipscribe_is_owner()").fetchone()[0] is False, path
            assert conn.execute("SELECT public.clipscribe_is_lead()").fetchone()[0] is False, path
            assert conn.execute("SELECT count(*) FROM public.gold_labels").fetchone()[0] == 0, path
            assert _secrets_seen(conn) == [], path


def _relations_read_by_helpers(conn) -> set[tuple[str, str]]:
    """(schema, name) of every table or catalog view whose name appears in the body of a
    clipscribe_* function: the names a temporary table could try to stand in for."""
    bodies = " ".join(r[0] for r in conn.execute(
        "SELECT prosrc FROM pg_catalog.pg_proc WHERE proname LIKE 'clipscribe%'").fetchall())
    words = set(re.findall(r"[a-z_][a-z0-9_]*", bodies.lower()))
    rels = conn.execute(
        "SELECT n.nspname, c.relname FROM pg_catalog.pg_class c JOIN pg_catalog.pg_namespace n "
        "ON n.oid = c.relnamespace WHERE c.relkind IN ('r', 'v') "
        "AND n.nspname IN ('public', 'pg_catalog')").fetchall()
    return {(s, n) for s, n in rels if n in words}


def test_every_relation_a_helper_reads_can_be_shadowed_without_effect(shadow_team):
    """For every table and catalog a helper function names, a temporary table of that name
    (copied from the real one, then emptied or turned hostile) changes no helper's answer and
    no row the annotator can see, whatever search_path the session sets."""
    p, ann, bob, ids, _ = shadow_team
    with connect_as(p, ann, "pw-ann") as conn:
        names = _relations_read_by_helpers(conn)
        assert {("public", "annotators"), ("public", "settings"), ("pg_catalog", "pg_database")} <= names
        base_helpers = _helpers(conn)
        base_rows = {t: conn.execute(f"SELECT count(*) FROM public.{t}").fetchone()[0]
                     for t in ("captions", "clip_labels", "segments", "assignments", "edits",
                               "gold_labels", "review_comments")}
        assert base_helpers == (ids[ann], False, False, True)
        changed = []
        for schema, name in sorted(names):
            for hostile in ("empty", "lead"):
                conn.execute("RESET search_path")
                conn.execute(sql.SQL("CREATE TEMP TABLE {} AS SELECT * FROM {}.{}").format(
                    sql.Identifier(name), sql.Identifier(schema), sql.Identifier(name)))
                cols = [r[0] for r in conn.execute(
                    "SELECT attname FROM pg_catalog.pg_attribute WHERE attrelid = %s::regclass "
                    "AND attnum > 0", (f"pg_temp.{name}",)).fetchall()]
                tmp = sql.SQL("pg_temp.{}").format(sql.Identifier(name))
                conn.execute(sql.SQL("DELETE FROM {}").format(tmp))
                if hostile == "lead":
                    _make_hostile(conn, tmp, name, cols, ids, bob)
                for path in ("pg_temp, pg_catalog, public", "pg_temp, public", "DEFAULT"):
                    conn.execute(f"SET search_path = {path}")
                    got = _helpers(conn)
                    rows = {t: conn.execute(f"SELECT count(*) FROM public.{t}").fetchone()[0]
                            for t in base_rows}
                    if got != base_helpers or rows != base_rows:
                        changed.append((name, hostile, path, got, rows))
                conn.execute("RESET search_path")
                conn.execute(sql.SQL("DROP TABLE {}").format(tmp))
        assert changed == []


def _make_hostile(conn, tmp, name: str, cols: list[str], ids: dict, bob: str) -> None:
    """Fill the stand-in with the rows that would help an attacker most."""
    if name == "settings":
        conn.execute(sql.SQL("INSERT INTO {} (key, value) VALUES ('team.blind', 'false')").format(tmp))
    elif name == "annotators":
        conn.execute(sql.SQL("INSERT INTO {} SELECT * FROM public.annotators WHERE id = %s").format(tmp),
                     (ids[bob],))
        conn.execute(sql.SQL("UPDATE {} SET db_login = current_user, role = 'lead'").format(tmp))
    elif name == "pg_database":
        conn.execute(sql.SQL("INSERT INTO {} SELECT * FROM pg_catalog.pg_database "
                             "WHERE datname = current_database()").format(tmp))
        conn.execute(sql.SQL("UPDATE {} SET datdba = (SELECT oid FROM pg_catalog.pg_roles "
                             "WHERE rolname = current_user)").format(tmp))
    elif "annotator_id" in cols:
        conn.execute(sql.SQL("INSERT INTO {} SELECT * FROM public.{} ").format(tmp, sql.Identifier(name)))
