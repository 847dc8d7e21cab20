"""Team mode on PostgreSQL: group roles, per-person logins and row-level security.

Who may see and change what is decided by the database, not by the program:

* every person gets their own login (a role that can log in), member of the group role
  ``clipscribe_annotator`` or ``clipscribe_lead``; ``annotators.db_login`` names it;
* an annotator's login reads and writes only its own clip labels, segments, captions and
  assignments (policies compare ``annotator_id`` with the annotator whose ``db_login`` is
  ``current_user``); with blind mode off (settings row ``team.blind``) it may also *read* the
  others' labels, segments and captions;
* the edit history is append-only for everyone (no UPDATE/DELETE grants); an annotator inserts
  and reads only their own rows;
* leads (and the database owner, the admin login that ran the migrations) read everything and
  write gold; gold tables are invisible to annotators.

Tables holding per-person data use FORCE ROW LEVEL SECURITY so the owner passes through the
same policies (it is let through as a lead), which keeps a definer-rights function or view from
becoming a way round them. The one definer-rights function, ``clipscribe_pull``, returns only a
clip id. Names are never formatted into SQL by Python: identifiers go through
:class:`psycopg.sql.Identifier`, passwords are hashed on the client (SCRAM) and sent as literals.
"""

from __future__ import annotations

from contextlib import contextmanager

from typing import Any

ANNOTATOR_GROUP = "clipscribe_annotator"
LEAD_GROUP = "clipscribe_lead"
GROUPS = {"annotator": ANNOTATOR_GROUP, "lead": LEAD_GROUP}

#: tables whose rows belong to one annotator (``annotator_id``); readable by others when not blind
PERSON_TABLES = ("clip_labels", "segments", "captions")
GOLD_TABLES = ("gold_labels", "gold_segments", "gold_captions")
#: readable by every login, written by leads only (no per-person rows)
SHARED_TABLES = ("settings", "labels", "annotators", "clips")
BLIND_KEY = "team.blind"
LEASE_KEY = "team.lease_seconds"
PLAN_KEY = "team.assignment_plan"
MAX_LOGIN_BYTES = 63  # PostgreSQL's NAMEDATALEN - 1

_FUNCTIONS = f"""
CREATE OR REPLACE FUNCTION clipscribe_me() RETURNS integer
LANGUAGE sql STABLE AS $$ SELECT id FROM annotators WHERE db_login = current_user $$;

CREATE OR REPLACE FUNCTION clipscribe_is_owner() RETURNS boolean
LANGUAGE sql STABLE AS $$
  SELECT pg_get_userbyid(datdba) = current_user FROM pg_database WHERE datname = current_database()
$$;

-- Group roles are shared by every database of the server, so lead rights also need this
-- project's annotators row to say lead.
CREATE OR REPLACE FUNCTION clipscribe_is_lead() RETURNS boolean
LANGUAGE sql STABLE AS $$
  SELECT clipscribe_is_owner() OR (
    pg_has_role(current_user, '{LEAD_GROUP}', 'MEMBER')
    AND EXISTS (SELECT 1 FROM annotators WHERE db_login = current_user AND role = 'lead'))
$$;

CREATE OR REPLACE FUNCTION clipscribe_blind() RETURNS boolean
LANGUAGE sql STABLE AS $$
  SELECT coalesce((SELECT value::text FROM settings WHERE key = '{BLIND_KEY}'), 'true') <> 'false'
$$;
"""

# Pull the next clip for one annotator, atomically. Runs with the owner's rights because the
# caller cannot see other people's assignments; it checks the caller itself (session_user)
# and returns nothing but a clip id. The count is checked again after the clip row is locked,
# in a fresh statement (a fresh snapshot under READ COMMITTED), so two pulls racing for the
# last free place of a clip cannot both win.
_PULL = """
CREATE OR REPLACE FUNCTION clipscribe_pull(p_annotator integer, p_lease_seconds double precision)
RETURNS integer LANGUAGE plpgsql SECURITY DEFINER SET search_path = public, pg_temp AS $$
DECLARE
  v_now timestamptz := clock_timestamp();
  v_lease interval := make_interval(secs => p_lease_seconds);
  v_clip integer;
BEGIN
  IF NOT EXISTS (SELECT 1 FROM annotators WHERE id = p_annotator AND db_login = session_user)
     AND NOT EXISTS (SELECT 1 FROM annotators WHERE db_login = session_user AND role = 'lead')
     AND session_user <> (SELECT pg_get_userbyid(datdba) FROM pg_database
                          WHERE datname = current_database()) THEN
    RAISE EXCEPTION 'login % may not pull clips for annotator %', session_user, p_annotator
      USING ERRCODE = '42501';
  END IF;

  WITH gone AS (
    UPDATE assignments a SET state = 'expired', updated_at = v_now, version = a.version + 1
     WHERE a.state = 'open' AND a.expires_at IS NOT NULL AND a.expires_at < v_now
       AND NOT EXISTS (SELECT 1 FROM edits e WHERE e.clip_id = a.clip_id
                       AND e.annotator_id = a.annotator_id AND e.at > v_now - v_lease)
    RETURNING a.id, a.clip_id, a.annotator_id)
  INSERT INTO edits (at, annotator_id, action, entity, entity_id, clip_id, before, after)
  SELECT v_now, NULL, 'expire', 'assignment_lease', g.id, g.clip_id,
         json_build_object('state', 'open', 'annotator_id', g.annotator_id),
         json_build_object('state', 'expired', 'annotator_id', g.annotator_id)
    FROM gone g;

  SELECT a.clip_id INTO v_clip FROM assignments a
   WHERE a.annotator_id = p_annotator AND a.state = 'open'
   ORDER BY a.assigned_at, a.id LIMIT 1;
  IF v_clip IS NOT NULL THEN
    UPDATE assignments SET expires_at = v_now + v_lease
     WHERE clip_id = v_clip AND annotator_id = p_annotator;
    RETURN v_clip;
  END IF;

  LOOP
    SELECT c.id INTO v_clip FROM clips c
     WHERE c.state <> 'settled'
       AND NOT EXISTS (SELECT 1 FROM assignments a WHERE a.clip_id = c.id
                       AND a.annotator_id = p_annotator)
       AND (SELECT count(*) FROM assignments a WHERE a.clip_id = c.id
            AND a.state NOT IN ('expired', 'skipped')) < coalesce(c.annotators_wanted, 1)
     ORDER BY c.id LIMIT 1
     FOR UPDATE OF c SKIP LOCKED;
    IF v_clip IS NULL THEN
      RETURN NULL;
    END IF;
    IF (SELECT count(*) FROM assignments a WHERE a.clip_id = v_clip
        AND a.state NOT IN ('expired', 'skipped'))
       < (SELECT coalesce(annotators_wanted, 1) FROM clips WHERE id = v_clip) THEN
      INSERT INTO assignments (clip_id, annotator_id, state, assigned_at, expires_at,
                               updated_at, version)
      VALUES (v_clip, p_annotator, 'open', v_now, v_now + v_lease, v_now, 1);
      UPDATE clips SET state = 'in_progress' WHERE id = v_clip AND state = 'new';
      RETURN v_clip;
    END IF;
  END LOOP;
END
$$;
REVOKE ALL ON FUNCTION clipscribe_pull(integer, double precision) FROM PUBLIC;

-- A clip's state from everybody's assignments (an annotator's own login sees only theirs):
-- settled with a gold label; done when every live assignment is submitted or skipped;
-- in progress while any is live; else new. Returns only the state word.
CREATE OR REPLACE FUNCTION clipscribe_clip_state(p_clip integer)
RETURNS text LANGUAGE sql STABLE SECURITY DEFINER SET search_path = public, pg_temp AS $$
  SELECT CASE
    WHEN EXISTS (SELECT 1 FROM gold_labels WHERE clip_id = p_clip) THEN 'settled'
    WHEN NOT EXISTS (SELECT 1 FROM assignments WHERE clip_id = p_clip AND state <> 'expired') THEN 'new'
    WHEN bool_and(state IN ('submitted', 'skipped')) THEN 'done'
    ELSE 'in_progress' END
  FROM assignments WHERE clip_id = p_clip AND state <> 'expired'
$$;
REVOKE ALL ON FUNCTION clipscribe_clip_state(integer) FROM PUBLIC;
"""

_ME = "(SELECT clipscribe_me())"
_LEAD = "((SELECT clipscribe_is_lead()))"


def _policies() -> str:
    a, l = ANNOTATOR_GROUP, LEAD_GROUP
    out = [f"GRANT {l} TO CURRENT_USER;"]
    for t in SHARED_TABLES:
        out.append(f"GRANT SELECT ON {t} TO {a}, {l};")
        out.append(f"GRANT INSERT, UPDATE, DELETE ON {t} TO {l};")
    out.append(f"GRANT UPDATE (state) ON clips TO {a};")
    out.append(f"GRANT SELECT ON alembic_version TO {a}, {l};")
    for t in (*PERSON_TABLES, "assignments"):
        out += [
            f"ALTER TABLE {t} ENABLE ROW LEVEL SECURITY;",
            f"ALTER TABLE {t} FORCE ROW LEVEL SECURITY;",
            f"GRANT SELECT, INSERT, UPDATE, DELETE ON {t} TO {a}, {l};",
            f"CREATE POLICY own_rows ON {t} TO {a} USING (annotator_id = {_ME}) "
            f"WITH CHECK (annotator_id = {_ME});",
            f"CREATE POLICY lead_rows ON {t} USING {_LEAD} WITH CHECK {_LEAD};",
        ]
    for t in PERSON_TABLES:
        out.append(f"CREATE POLICY open_reading ON {t} FOR SELECT TO {a} "
                   f"USING (NOT (SELECT clipscribe_blind()));")
    for t in GOLD_TABLES:
        out += [
            f"ALTER TABLE {t} ENABLE ROW LEVEL SECURITY;",
            f"ALTER TABLE {t} FORCE ROW LEVEL SECURITY;",
            f"GRANT SELECT ON {t} TO {a};",  # readable, but no row passes a policy
            f"GRANT SELECT, INSERT, UPDATE, DELETE ON {t} TO {l};",
            f"CREATE POLICY lead_rows ON {t} USING {_LEAD} WITH CHECK {_LEAD};",
        ]
    out += [
        "ALTER TABLE review_comments ENABLE ROW LEVEL SECURITY;",
        "ALTER TABLE review_comments FORCE ROW LEVEL SECURITY;",
        f"GRANT SELECT ON review_comments TO {a};",
        f"GRANT SELECT, INSERT, UPDATE, DELETE ON review_comments TO {l};",
        f"CREATE POLICY addressed_to_me ON review_comments FOR SELECT TO {a} "
        f"USING (annotator_id = {_ME});",
        f"CREATE POLICY lead_rows ON review_comments USING {_LEAD} WITH CHECK {_LEAD};",
        # the edit history: append-only for every login, own rows only for annotators
        "ALTER TABLE edits ENABLE ROW LEVEL SECURITY;",
        "ALTER TABLE edits FORCE ROW LEVEL SECURITY;",
        f"GRANT SELECT, INSERT ON edits TO {a}, {l};",
        f"CREATE POLICY own_read ON edits FOR SELECT TO {a} USING (annotator_id = {_ME});",
        f"CREATE POLICY own_insert ON edits FOR INSERT TO {a} WITH CHECK (annotator_id = {_ME});",
        f"CREATE POLICY lead_read ON edits FOR SELECT USING {_LEAD};",
        f"CREATE POLICY lead_insert ON edits FOR INSERT WITH CHECK {_LEAD};",
        f"GRANT USAGE, SELECT ON ALL SEQUENCES IN SCHEMA public TO {a}, {l};",
        f"GRANT EXECUTE ON FUNCTION clipscribe_pull(integer, double precision) TO {a}, {l};",
        f"GRANT EXECUTE ON FUNCTION clipscribe_clip_state(integer) TO {a}, {l};",
        # tables added by later migrations: readable by leads only until they say otherwise
        f"ALTER DEFAULT PRIVILEGES IN SCHEMA public GRANT SELECT ON TABLES TO {l};",
        f"INSERT INTO settings (key, value) VALUES ('{BLIND_KEY}', 'true') ON CONFLICT DO NOTHING;",
    ]
    return "\n".join(out)


_GROUPS_SQL = f"""
DO $$ BEGIN
  IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = '{ANNOTATOR_GROUP}') THEN
    CREATE ROLE {ANNOTATOR_GROUP} NOLOGIN;
  END IF;
  IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = '{LEAD_GROUP}') THEN
    CREATE ROLE {LEAD_GROUP} NOLOGIN;
  END IF;
END $$;
-- Only logins granted CONNECT one by one may reach this project's database.
DO $$ BEGIN
  EXECUTE format('REVOKE CONNECT ON DATABASE %I FROM PUBLIC', current_database());
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the database owner, CONNECT stays open to PUBLIC';
END $$;
"""

_UNINSTALL = """
DROP FUNCTION IF EXISTS clipscribe_pull(integer, double precision);
DROP FUNCTION IF EXISTS clipscribe_clip_state(integer);
"""


def _driver(conn: Any):
    """The psycopg connection under a SQLAlchemy Connection or Session (same transaction)."""
    if hasattr(conn, "connection") and hasattr(conn.connection, "driver_connection"):
        return conn.connection.driver_connection
    return conn


def install(conn: Any) -> None:
    """Create group roles, helper functions, grants and row-level security policies.

    ``conn`` is the SQLAlchemy connection a migration runs on, logged in as the admin (the
    database owner, who needs CREATEROLE). Everything runs in the migration's transaction.
    """
    raw = _driver(conn)
    for block in (_GROUPS_SQL, _FUNCTIONS, _PULL, _policies()):
        raw.execute(block)


def uninstall(conn: Any) -> None:
    raw = _driver(conn)
    tables = (*PERSON_TABLES, "assignments", *GOLD_TABLES, "review_comments", "edits")
    for t in tables:
        for pol in raw.execute("SELECT policyname FROM pg_policies WHERE tablename = %s",
                               (t,)).fetchall():
            from psycopg import sql
            raw.execute(sql.SQL("DROP POLICY {} ON {}").format(sql.Identifier(pol[0]), sql.Identifier(t)))
        raw.execute(f"ALTER TABLE {t} NO FORCE ROW LEVEL SECURITY")
        raw.execute(f"ALTER TABLE {t} DISABLE ROW LEVEL SECURITY")
    raw.execute(_UNINSTALL)
    for fn in ("clipscribe_me()", "clipscribe_is_lead()", "clipscribe_is_owner()", "clipscribe_blind()"):
        raw.execute(f"DROP FUNCTION IF EXISTS {fn}")


# ---- logins -------------------------------------------------------------------------------

def login_name(person: str) -> str:
    """The login of a person: their name in lower case (what ``Project.open(user=...)`` uses)."""
    login = person.strip().lower()
    if not login or len(login.encode("utf-8")) > MAX_LOGIN_BYTES or "\x00" in login:
        raise ValueError(f"{person!r}: a login name must be 1 to {MAX_LOGIN_BYTES} bytes")
    return login


def role_exists(conn: Any, login: str) -> bool:
    raw = _driver(conn)
    return raw.execute("SELECT 1 FROM pg_roles WHERE rolname = %s", (login,)).fetchone() is not None


def create_login(conn: Any, login: str, password: str, role: str) -> None:
    """Create a login in the group of ``role`` and let it connect to this database.

    The password is hashed here with SCRAM-SHA-256 (libpq's ``PQencryptPasswordConn``), so the
    plain text never reaches the server or its logs.
    """
    from psycopg import sql
    raw = _driver(conn)
    hashed = _hash(raw, login, password)
    with _privileged():
        raw.execute(sql.SQL("CREATE ROLE {} LOGIN PASSWORD {} IN ROLE {}").format(
            sql.Identifier(login), sql.Literal(hashed), sql.Identifier(GROUPS[role])))
        raw.execute(sql.SQL("GRANT CONNECT ON DATABASE {} TO {}").format(
            sql.Identifier(raw.info.dbname), sql.Identifier(login)))


def set_password(conn: Any, login: str, password: str) -> None:
    from psycopg import sql
    raw = _driver(conn)
    with _privileged():
        raw.execute(sql.SQL("ALTER ROLE {} PASSWORD {}").format(
            sql.Identifier(login), sql.Literal(_hash(raw, login, password))))


@contextmanager
def _privileged():
    """Statements on roles, sent on the raw driver connection: the server's refusal there is
    not wrapped by SQLAlchemy, so it becomes a PermissionError (its first line) here."""
    import psycopg
    try:
        yield
    except psycopg.errors.InsufficientPrivilege as exc:
        raise PermissionError(str(exc).strip().splitlines()[0]) from None


def grant_group(conn: Any, login: str, role: str) -> None:
    from psycopg import sql
    raw = _driver(conn)
    raw.execute(sql.SQL("GRANT {} TO {}").format(sql.Identifier(GROUPS[role]), sql.Identifier(login)))
    raw.execute(sql.SQL("GRANT CONNECT ON DATABASE {} TO {}").format(
        sql.Identifier(raw.info.dbname), sql.Identifier(login)))


def move_group(conn: Any, login: str, role: str) -> None:
    """Move ``login`` into the group of ``role`` and out of every other clipscribe group.

    Changing memberships needs CREATEROLE (PostgreSQL 15) or ADMIN OPTION on both groups
    (16 and later, where a REVOKE also removes only the grants the revoking login made).
    Raises PermissionError when the server refuses, ValueError when the login still belongs
    to another group afterwards (a grant made by someone else, or through a third role).
    """
    from psycopg import sql
    raw = _driver(conn)
    others = [g for r, g in GROUPS.items() if r != role]
    with _privileged():
        for group in others:
            raw.execute(sql.SQL("REVOKE {} FROM {}").format(sql.Identifier(group), sql.Identifier(login)))
        grant_group(conn, login, role)
    kept = [g for g in others if raw.execute("SELECT pg_has_role(%s, %s, 'MEMBER')",
                                             (login, g)).fetchone()[0]]
    if kept:
        raise ValueError(f"login {login!r} still belongs to {', '.join(kept)} through a grant "
                         "this login cannot revoke; revoke it as the role that granted it")


def database_owner(conn: Any) -> str:
    return _driver(conn).execute("SELECT pg_get_userbyid(datdba) FROM pg_database "
                                 "WHERE datname = current_database()").fetchone()[0]


def current_login(conn: Any) -> str:
    return _driver(conn).execute("SELECT current_user").fetchone()[0]


def _hash(raw: Any, login: str, password: str) -> str:
    if not password:
        raise ValueError("the password is empty")
    return raw.pgconn.encrypt_password(password.encode("utf-8"), login.encode("utf-8"),
                                       b"scram-sha-256").decode("ascii")
