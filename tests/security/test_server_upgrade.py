"""A team database set up by an older clipscribe (helpers without a fixed search_path, TEMP
open to every login, clips.state writable by annotators) is brought to the current rules
when the admin opens it; an annotator opening it first is told to ask the admin."""

from __future__ import annotations

import psycopg
import pytest

from clipscribe import Project
from clipscribe.errors import ProjectError
from clipscribe.store import db, team as team_sql

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres

OLD_BLIND = """
CREATE OR REPLACE FUNCTION clipscribe_blind() RETURNS boolean
LANGUAGE sql STABLE AS $$
  SELECT coalesce((SELECT value::text FROM settings WHERE key = 'team.blind'), 'true') <> 'false'
$$;
RESET search_path;
"""


def _make_old(pg, database: str) -> None:
    """Put back what an older clipscribe left on the server."""
    pg.sql(OLD_BLIND + "ALTER FUNCTION clipscribe_blind() RESET search_path;", dbname=database)
    pg.sql(f"GRANT TEMPORARY ON DATABASE {database} TO PUBLIC", dbname=database)
    pg.sql(f"GRANT UPDATE (state) ON clips TO {team_sql.ANNOTATOR_GROUP}", dbname=database)
    pg.sql("ALTER TABLE assignments DROP COLUMN comments_read", dbname=database)  # from 0005
    pg.sql("UPDATE alembic_version SET version_num = '0003'", dbname=database)


def _attack(p, ann: str) -> tuple[bool, int]:
    """(blind as the helper sees it under a temp settings table, clips whose state changed)."""
    with connect_as(p, ann, "pw-ann") as conn:
        try:
            conn.execute("CREATE TEMP TABLE settings (key varchar(100), value json)")
            conn.execute("INSERT INTO settings VALUES ('team.blind', 'false')")
        except psycopg.errors.InsufficientPrivilege:
            pass
        blind = conn.execute("SELECT public.clipscribe_blind()").fetchone()[0]
        try:
            n = conn.execute("UPDATE public.clips SET state = 'done'").rowcount
        except psycopg.errors.InsufficientPrivilege:
            n = 0
    return blind, n


def test_old_team_database_is_hardened_when_the_admin_opens_it(server_project, pg, uid):
    p = server_project
    add_clips(p, 2)
    ann = f"ann_{uid}"
    p.add_annotator(ann, password="pw-ann")
    database = p.engine.url.database
    p.close()
    _make_old(pg, database)
    assert _attack(p, ann) == (False, 2)  # the old server: both attacks work
    pg.sql("UPDATE clips SET state = 'new'", dbname=database)

    with pytest.raises(ProjectError, match="ask the admin") as err:
        Project.open(p.folder, user=ann, password="pw-ann")
    assert "\n" not in str(err.value)
    with Project.open(p.folder) as admin:  # the admin's login, password from ~/.pgpass
        assert db.current_revision(admin.engine) == db.head_revision()
    assert _attack(p, ann) == (True, 0)
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        assert a.next_clip() is not None
