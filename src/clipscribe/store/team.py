"""Team mode on PostgreSQL: group roles, per-person logins and row-level security.

Who may see and change what is decided by the database, not by the program:

* every person gets their own login (a role that can log in), member of the group role
  ``clipscribe_annotator`` or ``clipscribe_lead``; ``annotators.db_login`` names it;
* an annotator's login reads and writes only its own clip labels, segments, captions and
  assignments (policies compare ``annotator_id`` with the annotator whose ``db_login`` is
  ``current_user``); with blind mode off (settings row ``team.blind``) it may also *read* the
  others' labels, segments and captions;
* assignments are made only by two checked functions, ``clipscribe_pull`` (the queue: a clip
  with a lease) and ``clipscribe_start`` (first work on a clip: no lease), or by a lead; an
  annotator's login may not INSERT into ``assignments`` at all;
* the edit history is append-only for everyone (no UPDATE/DELETE grants); an annotator inserts
  and reads only their own rows;
* leads (and the database owner, the admin login that ran the migrations) read everything and
  write gold; gold tables are invisible to annotators;
* check clips (``check_clips``: clips whose answer is known in advance) are lead-only: no
  grant to annotators and a lead-only policy, so an annotator's login cannot tell which clips
  are check clips; the pull mixes them in at the lead's rate.

Tables holding per-person data use FORCE ROW LEVEL SECURITY so the owner passes through the
same policies (it is let through as a lead), which keeps a definer-rights function or view from
becoming a way round them. The definer-rights functions check the caller themselves and
return no more than a clip id, a clip state word or a count. Names are never formatted into SQL by Python: identifiers go through
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
#: share of each annotator's pulled clips that are check clips (0: none handed out)
CHECK_RATE_KEY = "team.check_rate"
#: lead-only tables: no grant to annotators and a lead-only policy
LEAD_TABLES = ("check_clips",)
MAX_LOGIN_BYTES = 63  # PostgreSQL's NAMEDATALEN - 1
#: role names PostgreSQL refuses to create (besides every name starting with ``pg_``)
RESERVED_LOGINS = ("public", "none", "current_user", "session_user", "current_role", "user")

#: the schema clipscribe's tables live in (the migrations create them in the default one)
SCHEMA = "public"
#: every helper pins its search_path: the catalog first, then the project's schema, and the
#: session's temporary schema last, so no table the caller makes can stand in for ours; each
#: also names its tables with their schema
_PATH = f"SET search_path = pg_catalog, {SCHEMA}, pg_temp"

# Row-level-security helpers. They run with the caller's rights (nothing they read is hidden
# from any login), so none needs SECURITY DEFINER.
_FUNCTIONS = f"""
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_me() RETURNS integer
LANGUAGE sql STABLE {_PATH} AS $$
  SELECT a.id FROM {SCHEMA}.annotators a WHERE a.db_login = CURRENT_USER
$$;

CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_is_owner() RETURNS boolean
LANGUAGE sql STABLE {_PATH} AS $$
  SELECT coalesce((SELECT pg_catalog.pg_get_userbyid(d.datdba) = CURRENT_USER
                     FROM pg_catalog.pg_database d
                    WHERE d.datname = pg_catalog.current_database()), false)
$$;

-- Group roles are shared by every database of the server, so lead rights also need this
-- project's annotators row to say lead.
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_is_lead() RETURNS boolean
LANGUAGE sql STABLE {_PATH} AS $$
  SELECT {SCHEMA}.clipscribe_is_owner() OR (
    pg_catalog.pg_has_role(CURRENT_USER, '{LEAD_GROUP}', 'MEMBER')
    AND EXISTS (SELECT 1 FROM {SCHEMA}.annotators a
                 WHERE a.db_login = CURRENT_USER AND a.role = 'lead'))
$$;

CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_blind() RETURNS boolean
LANGUAGE sql STABLE {_PATH} AS $$
  SELECT coalesce((SELECT s.value::text FROM {SCHEMA}.settings s WHERE s.key = '{BLIND_KEY}'),
                  'true') <> 'false'
$$;
"""

# Runs with the owner's rights; checks the caller itself (session_user: the login, whatever
# role it has SET) and answers only yes or no.
_CALLER_IS_LEAD = f"""(
  session_user = (SELECT pg_catalog.pg_get_userbyid(d.datdba) FROM pg_catalog.pg_database d
                   WHERE d.datname = pg_catalog.current_database())
  OR (pg_catalog.pg_has_role(session_user, '{LEAD_GROUP}', 'MEMBER')
      AND EXISTS (SELECT 1 FROM {SCHEMA}.annotators n
                   WHERE n.db_login = session_user AND n.role = 'lead')))"""

# Whether assignment ``a`` holds one of its clip's places: live, and either handed out by the
# pull (it has a lease) or with the person's work on the clip. An assignment someone made
# for themself and left empty holds no place, so making such rows wholesale cannot empty the
# others' queues.
_HOLDS = f"""(a.state NOT IN ('expired', 'skipped') AND (a.expires_at IS NOT NULL
  OR EXISTS (SELECT 1 FROM {SCHEMA}.clip_labels w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)
  OR EXISTS (SELECT 1 FROM {SCHEMA}.segments w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)
  OR EXISTS (SELECT 1 FROM {SCHEMA}.captions w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)))"""

# Pull the next clip for one annotator, atomically. Runs with the owner's rights because the
# caller cannot see other people's assignments; it checks the caller itself (session_user)
# and returns nothing but a clip id. The count is checked again after the clip row is locked,
# in a fresh statement (a fresh snapshot under READ COMMITTED), so two pulls racing for the
# last free place of a clip cannot both win.
# The first clip the pull may give ``p_annotator``: not settled, not a check clip, not theirs
# already, with a free place in the plan (its FROM and WHERE; the pull adds the locking).
_FREE_PLACE = f"""{SCHEMA}.clips c
     WHERE c.state <> 'settled'
       AND NOT EXISTS (SELECT 1 FROM {SCHEMA}.check_clips k WHERE k.clip_id = c.id)
       AND NOT EXISTS (SELECT 1 FROM {SCHEMA}.assignments a WHERE a.clip_id = c.id
                       AND a.annotator_id = p_annotator)
       AND (SELECT count(*) FROM {SCHEMA}.assignments a WHERE a.clip_id = c.id
            AND {_HOLDS}) < coalesce(c.annotators_wanted, 1)
     ORDER BY c.id LIMIT 1"""

_PULL = f"""
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_pull(p_annotator integer, p_lease_seconds double precision)
RETURNS integer LANGUAGE plpgsql SECURITY DEFINER {_PATH} AS $$
DECLARE
  v_now timestamptz := pg_catalog.clock_timestamp();
  v_lease interval := pg_catalog.make_interval(secs => p_lease_seconds);
  v_clip integer;
  v_rate double precision;
  v_mine bigint;
  v_checks bigint;
BEGIN
  IF NOT EXISTS (SELECT 1 FROM {SCHEMA}.annotators WHERE id = p_annotator AND db_login = session_user)
     AND NOT {_CALLER_IS_LEAD} THEN
    RAISE EXCEPTION 'login % may not pull clips for annotator %', session_user, p_annotator
      USING ERRCODE = '42501';
  END IF;

  WITH gone AS (
    UPDATE {SCHEMA}.assignments a SET state = 'expired', updated_at = v_now, version = a.version + 1
     WHERE a.state = 'open' AND a.expires_at IS NOT NULL AND a.expires_at < v_now
       AND NOT EXISTS (SELECT 1 FROM {SCHEMA}.edits e WHERE e.clip_id = a.clip_id
                       AND e.annotator_id = a.annotator_id AND e.at > v_now - v_lease)
    RETURNING a.id, a.clip_id, a.annotator_id)
  INSERT INTO {SCHEMA}.edits (at, annotator_id, action, entity, entity_id, clip_id, before, after)
  SELECT v_now, NULL, 'expire', 'assignment_lease', g.id, g.clip_id,
         pg_catalog.json_build_object('state', 'open', 'annotator_id', g.annotator_id),
         pg_catalog.json_build_object('state', 'expired', 'annotator_id', g.annotator_id)
    FROM gone g;

  SELECT a.clip_id INTO v_clip FROM {SCHEMA}.assignments a
   WHERE a.annotator_id = p_annotator AND a.state = 'open'
   ORDER BY a.assigned_at, a.id LIMIT 1;
  IF v_clip IS NOT NULL THEN
    UPDATE {SCHEMA}.assignments SET expires_at = v_now + v_lease
     WHERE clip_id = v_clip AND annotator_id = p_annotator;
    RETURN v_clip;
  END IF;

  -- check clips (known answers, lead-only table) come in at the lead's rate: the next one
  -- when one more keeps the person's share of check clips at most the rate
  v_rate := coalesce((SELECT (s.value::text)::double precision FROM {SCHEMA}.settings s
                       WHERE s.key = '{CHECK_RATE_KEY}'), 0);
  IF v_rate > 0 THEN
    SELECT count(*), count(k.clip_id) INTO v_mine, v_checks
      FROM {SCHEMA}.assignments a LEFT JOIN {SCHEMA}.check_clips k ON k.clip_id = a.clip_id
     WHERE a.annotator_id = p_annotator AND a.state <> 'expired';
    IF v_checks + 1 <= v_rate * (v_mine + 1) + 1e-9 THEN
      SELECT k.clip_id INTO v_clip FROM {SCHEMA}.check_clips k
       WHERE NOT EXISTS (SELECT 1 FROM {SCHEMA}.assignments a WHERE a.clip_id = k.clip_id
                         AND a.annotator_id = p_annotator)
       ORDER BY k.clip_id LIMIT 1;
    END IF;
  END IF;

  -- no check clip due (or none left): a clip with a free place in the plan
  WHILE v_clip IS NULL LOOP
    SELECT c.id INTO v_clip FROM {_FREE_PLACE}
     FOR UPDATE OF c SKIP LOCKED;
    IF v_clip IS NULL THEN
      -- Every clip with a free place may only be held for a moment by another pull (SKIP
      -- LOCKED passes over it): wait for the first such clip instead of answering "no work",
      -- then count its places again. Only when no clip has a free place is there no work.
      SELECT c.id INTO v_clip FROM {_FREE_PLACE}
       FOR UPDATE OF c;
      IF v_clip IS NULL THEN
        RETURN NULL;
      END IF;
    END IF;
    IF (SELECT count(*) FROM {SCHEMA}.assignments a WHERE a.clip_id = v_clip AND {_HOLDS})
       >= (SELECT coalesce(annotators_wanted, 1) FROM {SCHEMA}.clips WHERE id = v_clip) THEN
      v_clip := NULL;  -- its last place went to the pull that held it: look again
    END IF;
  END LOOP;

  INSERT INTO {SCHEMA}.assignments (clip_id, annotator_id, state, assigned_at, expires_at,
                                    updated_at, version)
  VALUES (v_clip, p_annotator, 'open', v_now, v_now + v_lease, v_now, 1);
  UPDATE {SCHEMA}.clips SET state = 'in_progress' WHERE id = v_clip AND state = 'new';
  RETURN v_clip;
END
$$;
REVOKE ALL ON FUNCTION {SCHEMA}.clipscribe_pull(integer, double precision) FROM PUBLIC;

-- A clip's state from everybody's assignments (an annotator's own login sees only theirs):
-- settled with a gold label; done when every live assignment is submitted or skipped;
-- in progress while any is live; else new. Returns only the state word.
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_clip_state(p_clip integer)
RETURNS text LANGUAGE sql STABLE SECURITY DEFINER {_PATH} AS $$
  SELECT CASE
    WHEN EXISTS (SELECT 1 FROM {SCHEMA}.gold_labels WHERE clip_id = p_clip) THEN 'settled'
    WHEN NOT EXISTS (SELECT 1 FROM {SCHEMA}.assignments WHERE clip_id = p_clip
                     AND state <> 'expired') THEN 'new'
    WHEN bool_and(state IN ('submitted', 'skipped')) THEN 'done'
    ELSE 'in_progress' END
  FROM {SCHEMA}.assignments WHERE clip_id = p_clip AND state <> 'expired'
$$;
REVOKE ALL ON FUNCTION {SCHEMA}.clipscribe_clip_state(integer) FROM PUBLIC;

-- The one way an annotator changes a clip's state: the state is worked out from everybody's
-- assignments (never taken from the caller), and only for a clip the caller has an
-- assignment on (any lead or the owner for any clip). Returns the state it wrote.
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_refresh_clip_state(p_clip integer)
RETURNS text LANGUAGE plpgsql SECURITY DEFINER {_PATH} AS $$
DECLARE
  v_state text;
BEGIN
  IF NOT EXISTS (SELECT 1 FROM {SCHEMA}.assignments a JOIN {SCHEMA}.annotators n
                   ON n.id = a.annotator_id
                  WHERE a.clip_id = p_clip AND n.db_login = session_user)
     AND NOT {_CALLER_IS_LEAD} THEN
    RAISE EXCEPTION 'login % has no assignment on clip %', session_user, p_clip
      USING ERRCODE = '42501';
  END IF;
  v_state := {SCHEMA}.clipscribe_clip_state(p_clip);
  UPDATE {SCHEMA}.clips SET state = v_state WHERE id = p_clip AND state IS DISTINCT FROM v_state;
  RETURN v_state;
END
$$;
REVOKE ALL ON FUNCTION {SCHEMA}.clipscribe_refresh_clip_state(integer) FROM PUBLIC;
"""

# The one way an annotator's login makes an assignment besides the pull: the row it makes is
# always open, without a lease, stamped with the server's clock, for the caller's own person
# (a lead or the owner: for anyone), and only on a clip where that person has work (a label,
# segment or caption), a lead's comment addressed to them, or a free place in the plan. A row
# already there is left as it is. Returns how many rows it made. The row-level policy and the
# grants refuse every other INSERT into assignments by an annotator's login.
_START = f"""
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_start(p_clips integer[], p_annotators integer[])
RETURNS integer LANGUAGE plpgsql SECURITY DEFINER {_PATH} AS $$
DECLARE
  v_now timestamptz := pg_catalog.clock_timestamp();
  v_me integer;
  v_bad integer;
  v_made integer;
BEGIN
  IF pg_catalog.cardinality(p_clips) IS DISTINCT FROM pg_catalog.cardinality(p_annotators) THEN
    RAISE EXCEPTION 'clipscribe_start: % clips but % people', pg_catalog.cardinality(p_clips),
      pg_catalog.cardinality(p_annotators) USING ERRCODE = '22023';
  END IF;
  IF NOT {_CALLER_IS_LEAD} THEN
    SELECT n.id INTO v_me FROM {SCHEMA}.annotators n WHERE n.db_login = session_user;
    IF v_me IS NULL OR EXISTS (SELECT 1 FROM pg_catalog.unnest(p_annotators) AS w(a)
                                WHERE w.a IS DISTINCT FROM v_me) THEN
      RAISE EXCEPTION 'login % may start work on a clip only for itself', session_user
        USING ERRCODE = '42501';
    END IF;
    SELECT w.c INTO v_bad FROM pg_catalog.unnest(p_clips) AS w(c)
     WHERE NOT EXISTS (SELECT 1 FROM {SCHEMA}.assignments a
                        WHERE a.clip_id = w.c AND a.annotator_id = v_me)
       AND NOT EXISTS (SELECT 1 FROM {SCHEMA}.clips c WHERE c.id = w.c AND (
             EXISTS (SELECT 1 FROM {SCHEMA}.clip_labels x WHERE x.clip_id = c.id AND x.annotator_id = v_me)
          OR EXISTS (SELECT 1 FROM {SCHEMA}.segments x WHERE x.clip_id = c.id AND x.annotator_id = v_me)
          OR EXISTS (SELECT 1 FROM {SCHEMA}.captions x WHERE x.clip_id = c.id AND x.annotator_id = v_me)
          OR EXISTS (SELECT 1 FROM {SCHEMA}.review_comments x WHERE x.clip_id = c.id AND x.annotator_id = v_me)
          OR (c.state <> 'settled'
              AND (SELECT count(*) FROM {SCHEMA}.assignments a WHERE a.clip_id = c.id AND {_HOLDS})
                  < coalesce(c.annotators_wanted, 1))))
     LIMIT 1;
    IF v_bad IS NOT NULL THEN
      RAISE EXCEPTION 'login % has no work on clip % and the clip has no free place: take the next clip from the queue instead',
        session_user, v_bad USING ERRCODE = '42501';
    END IF;
  END IF;
  INSERT INTO {SCHEMA}.assignments (clip_id, annotator_id, state, assigned_at, expires_at,
                                    updated_at, version)
  SELECT DISTINCT w.c, w.a, 'open', v_now, NULL::timestamptz, v_now, 1
    FROM ROWS FROM (pg_catalog.unnest(p_clips), pg_catalog.unnest(p_annotators)) AS w(c, a)
  ON CONFLICT (clip_id, annotator_id) DO NOTHING;
  GET DIAGNOSTICS v_made = ROW_COUNT;
  RETURN v_made;
END
$$;
REVOKE ALL ON FUNCTION {SCHEMA}.clipscribe_start(integer[], integer[]) FROM PUBLIC;
"""

# A foreign key is checked with the table owner's rights, past row-level security, so a
# caption pointing at a segment the caller cannot see would tell them whether that segment
# exists (and tie their caption to someone else's segment). This check runs first, with the
# caller's rights: a hidden segment and a missing one get the same refusal.
_TRIGGERS = f"""
CREATE OR REPLACE FUNCTION {SCHEMA}.clipscribe_check_caption_segment() RETURNS trigger
LANGUAGE plpgsql {_PATH} AS $$
BEGIN
  IF NEW.segment_id IS NOT NULL
     AND NOT EXISTS (SELECT 1 FROM {SCHEMA}.segments s WHERE s.id = NEW.segment_id) THEN
    RAISE EXCEPTION 'segment %: no such segment among those this login may see', NEW.segment_id
      USING ERRCODE = '23503';
  END IF;
  RETURN NEW;
END
$$;
DROP TRIGGER IF EXISTS clipscribe_caption_segment ON {SCHEMA}.captions;
CREATE TRIGGER clipscribe_caption_segment BEFORE INSERT OR UPDATE OF segment_id
  ON {SCHEMA}.captions FOR EACH ROW EXECUTE FUNCTION {SCHEMA}.clipscribe_check_caption_segment();
"""

_ME = f"(SELECT {SCHEMA}.clipscribe_me())"
_LEAD = f"((SELECT {SCHEMA}.clipscribe_is_lead()))"
#: the tables an annotator's login adds rows to (their id sequences need USAGE for nextval);
#: not assignments: those only the pull and ``clipscribe_start`` make
ANNOTATOR_INSERTS = (*PERSON_TABLES, "edits")
#: the columns of an assignment an annotator's login may change (no table-wide UPDATE, no
#: DELETE: either would also let it LOCK the table in a mode that stops everyone; no lease:
#: only the pull gives one)
ASSIGNMENT_COLUMNS = ("state", "reason", "updated_at", "version", "comments_read")
#: server-side limits per login in this database (``ALTER ROLE … IN DATABASE … SET``): a
#: statement waiting longer than lock_timeout for a lock fails instead of hanging, and a
#: session left idle inside a transaction is ended (with its locks)
TIMEOUTS = {
    "annotator": {"lock_timeout": "10s", "statement_timeout": "2min",
                  "idle_in_transaction_session_timeout": "1min"},
    "lead": {"lock_timeout": "10s", "idle_in_transaction_session_timeout": "10min"},
}


def _q(table: str) -> str:
    return f"{SCHEMA}.{table}"


def _policies() -> str:
    a, l = ANNOTATOR_GROUP, LEAD_GROUP
    out = [f"GRANT {l} TO CURRENT_USER;"]
    for t in SHARED_TABLES:
        out.append(f"GRANT SELECT ON {_q(t)} TO {a}, {l};")
        out.append(f"GRANT INSERT, UPDATE, DELETE ON {_q(t)} TO {l};")
    out.append(f"GRANT SELECT ON {_q('alembic_version')} TO {a}, {l};")
    for t in (*PERSON_TABLES, "assignments"):
        grant = "SELECT" if t == "assignments" else "SELECT, INSERT, UPDATE, DELETE"
        out += [
            f"ALTER TABLE {_q(t)} ENABLE ROW LEVEL SECURITY;",
            f"ALTER TABLE {_q(t)} FORCE ROW LEVEL SECURITY;",
            f"GRANT {grant} ON {_q(t)} TO {a};",
            f"GRANT SELECT, INSERT, UPDATE, DELETE ON {_q(t)} TO {l};",
            f"CREATE POLICY own_rows ON {_q(t)} TO {a} USING (annotator_id = {_ME}) "
            f"WITH CHECK (annotator_id = {_ME});",
            f"CREATE POLICY lead_rows ON {_q(t)} USING {_LEAD} WITH CHECK {_LEAD};",
        ]
    for t in PERSON_TABLES:
        out.append(f"CREATE POLICY open_reading ON {_q(t)} FOR SELECT TO {a} "
                   f"USING (NOT (SELECT {SCHEMA}.clipscribe_blind()));")
    for t in GOLD_TABLES:
        out += [
            f"ALTER TABLE {_q(t)} ENABLE ROW LEVEL SECURITY;",
            f"ALTER TABLE {_q(t)} FORCE ROW LEVEL SECURITY;",
            f"GRANT SELECT ON {_q(t)} TO {a};",  # readable, but no row passes a policy
            f"GRANT SELECT, INSERT, UPDATE, DELETE ON {_q(t)} TO {l};",
            f"CREATE POLICY lead_rows ON {_q(t)} USING {_LEAD} WITH CHECK {_LEAD};",
        ]
    rc, ed = _q("review_comments"), _q("edits")
    out += [
        f"ALTER TABLE {rc} ENABLE ROW LEVEL SECURITY;",
        f"ALTER TABLE {rc} FORCE ROW LEVEL SECURITY;",
        f"GRANT SELECT ON {rc} TO {a};",
        f"GRANT SELECT, INSERT, UPDATE, DELETE ON {rc} TO {l};",
        f"CREATE POLICY addressed_to_me ON {rc} FOR SELECT TO {a} "
        f"USING (annotator_id = {_ME});",
        f"CREATE POLICY lead_rows ON {rc} USING {_LEAD} WITH CHECK {_LEAD};",
        # the edit history: append-only for every login, own rows only for annotators
        f"ALTER TABLE {ed} ENABLE ROW LEVEL SECURITY;",
        f"ALTER TABLE {ed} FORCE ROW LEVEL SECURITY;",
        f"GRANT SELECT, INSERT ON {ed} TO {a}, {l};",
        f"CREATE POLICY own_read ON {ed} FOR SELECT TO {a} USING (annotator_id = {_ME});",
        f"CREATE POLICY own_insert ON {ed} FOR INSERT TO {a} WITH CHECK (annotator_id = {_ME});",
        f"CREATE POLICY lead_read ON {ed} FOR SELECT USING {_LEAD};",
        f"CREATE POLICY lead_insert ON {ed} FOR INSERT WITH CHECK {_LEAD};",
        # tables added by later migrations: readable by leads only until they say otherwise
        f"ALTER DEFAULT PRIVILEGES IN SCHEMA {SCHEMA} GRANT SELECT ON TABLES TO {l};",
        f"INSERT INTO {_q('settings')} (key, value) VALUES ('{BLIND_KEY}', 'true') "
        "ON CONFLICT DO NOTHING;",
    ]
    return "\n".join(out)


def _grants(assignment_columns: tuple[str, ...] = ASSIGNMENT_COLUMNS) -> str:
    """Grants and revocations that may be applied again to a database already set up (they
    bring one made by an older clipscribe to the current rules). ``assignment_columns``: those
    of :data:`ASSIGNMENT_COLUMNS` the table has at this point of the migrations."""
    a, l = ANNOTATOR_GROUP, LEAD_GROUP
    cols = ", ".join(assignment_columns)
    out = [
        # clips.state changes only through clipscribe_refresh_clip_state; without any UPDATE
        # right on clips an annotator can neither LOCK it nor SELECT … FOR UPDATE its rows
        f"REVOKE UPDATE, DELETE, INSERT, TRUNCATE ON {_q('clips')} FROM {a};",
        # assignments are made by clipscribe_pull (with a lease) and clipscribe_start (checked,
        # no lease) only, never by an annotator's own INSERT: no grant, and a policy that lets
        # no row through should the grant come back
        f"REVOKE INSERT, UPDATE, DELETE, TRUNCATE ON {_q('assignments')} FROM {a};",
        f"GRANT UPDATE ({cols}) ON {_q('assignments')} TO {a};",
        f"DROP POLICY IF EXISTS no_own_lease ON {_q('assignments')};",
        f"DROP POLICY IF EXISTS no_own_insert ON {_q('assignments')};",
        f"CREATE POLICY no_own_insert ON {_q('assignments')} AS RESTRICTIVE FOR INSERT TO {a} "
        "WITH CHECK (false);",
        # sequences: no SELECT (last_value) for annotators, USAGE (nextval) only where they
        # insert; leads see every row anyway
        f"REVOKE ALL ON ALL SEQUENCES IN SCHEMA {SCHEMA} FROM {a};",
        f"GRANT USAGE, SELECT ON ALL SEQUENCES IN SCHEMA {SCHEMA} TO {l};",
    ]
    for t in ANNOTATOR_INSERTS:
        out.append(f"DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO {a}', "
                   f"pg_catalog.pg_get_serial_sequence('{_q(t)}', 'id')); END $$;")
    out += [
        f"GRANT EXECUTE ON FUNCTION {SCHEMA}.clipscribe_pull(integer, double precision) TO {a}, {l};",
        f"GRANT EXECUTE ON FUNCTION {SCHEMA}.clipscribe_start(integer[], integer[]) TO {a}, {l};",
        f"GRANT EXECUTE ON FUNCTION {SCHEMA}.clipscribe_clip_state(integer) TO {a}, {l};",
        f"GRANT EXECUTE ON FUNCTION {SCHEMA}.clipscribe_refresh_clip_state(integer) TO {a}, {l};",
        # no temporary tables (they could stand in for ours in an unqualified name) and no
        # new schemas or tables anywhere for anyone but the owner
        f"""DO $$ BEGIN
  EXECUTE pg_catalog.format('REVOKE TEMPORARY, CREATE ON DATABASE %I FROM PUBLIC, {a}, {l}',
                            pg_catalog.current_database());
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the database owner, TEMPORARY stays open to PUBLIC';
END $$;""",
        f"""DO $$ BEGIN
  REVOKE CREATE ON SCHEMA {SCHEMA} FROM PUBLIC;
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the owner of schema {SCHEMA}, cannot revoke CREATE from PUBLIC';
END $$;""",
    ]
    return "\n".join(out)


_GROUPS_SQL = f"""
DO $$ BEGIN
  IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles WHERE rolname = '{ANNOTATOR_GROUP}') THEN
    CREATE ROLE {ANNOTATOR_GROUP} NOLOGIN;
  END IF;
  IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles WHERE rolname = '{LEAD_GROUP}') THEN
    CREATE ROLE {LEAD_GROUP} NOLOGIN;
  END IF;
END $$;
-- Only logins granted CONNECT one by one may reach this project's database.
DO $$ BEGIN
  EXECUTE pg_catalog.format('REVOKE CONNECT ON DATABASE %I FROM PUBLIC', pg_catalog.current_database());
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the database owner, CONNECT stays open to PUBLIC';
END $$;
"""

_UNINSTALL = f"""
DROP TRIGGER IF EXISTS clipscribe_caption_segment ON {SCHEMA}.captions;
DROP FUNCTION IF EXISTS {SCHEMA}.clipscribe_check_caption_segment();
DROP FUNCTION IF EXISTS {SCHEMA}.clipscribe_pull(integer, double precision);
DROP FUNCTION IF EXISTS {SCHEMA}.clipscribe_start(integer[], integer[]);
DROP FUNCTION IF EXISTS {SCHEMA}.clipscribe_refresh_clip_state(integer);
DROP FUNCTION IF EXISTS {SCHEMA}.clipscribe_clip_state(integer);
"""


def protect_check_clips(conn: Any) -> None:
    """Make ``check_clips`` lead-only, like the gold tables: row-level security (forced, so
    the owner passes the same policy as a lead) with a lead policy only, so an annotator's
    SELECT finds no row; no write right for annotators (the table is keyed by clip id: no
    sequence to read). Annotators learn nothing about check clips, not even how many."""
    a, l = ANNOTATOR_GROUP, LEAD_GROUP
    out = []
    for t in LEAD_TABLES:
        out += [
            f"REVOKE ALL ON {_q(t)} FROM PUBLIC, {a};",
            f"GRANT SELECT ON {_q(t)} TO {a};",  # readable, but no row passes a policy
            f"ALTER TABLE {_q(t)} ENABLE ROW LEVEL SECURITY;",
            f"ALTER TABLE {_q(t)} FORCE ROW LEVEL SECURITY;",
            f"GRANT SELECT, INSERT, UPDATE, DELETE ON {_q(t)} TO {l};",
            f"DROP POLICY IF EXISTS lead_rows ON {_q(t)};",
            f"CREATE POLICY lead_rows ON {_q(t)} USING {_LEAD} WITH CHECK {_LEAD};",
        ]
    _driver(conn).execute("\n".join(out))


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
    for block in (_GROUPS_SQL, _FUNCTIONS, _PULL, _START, _policies()):
        raw.execute(block)
    harden(conn)


def harden(conn: Any) -> None:
    """(Re)write the helper functions and apply the current grants and per-login limits.

    Safe to run again on a database set up by an older clipscribe: functions are replaced in
    place (the policies refer to them, not to their text), grants and revocations repeat.
    """
    raw = _driver(conn)
    present = {r[0] for r in raw.execute(
        "SELECT column_name FROM information_schema.columns "
        f"WHERE table_schema = '{SCHEMA}' AND table_name = 'assignments'").fetchall()}
    columns = tuple(c for c in ASSIGNMENT_COLUMNS if c in present)
    for block in (_FUNCTIONS, _PULL, _START, _TRIGGERS, _grants(columns)):
        raw.execute(block)
    for login, role in raw.execute(
            f"SELECT a.db_login, a.role FROM {_q('annotators')} a JOIN pg_catalog.pg_roles r "
            "ON r.rolname = a.db_login WHERE a.db_login <> current_user").fetchall():
        set_timeouts(conn, login, role)


def set_timeouts(conn: Any, login: str, role: str) -> None:
    """Give ``login`` this database's server-side limits for ``role``, replacing any it had
    here. Needs CREATEROLE (the admin); a refused setting is skipped, the rest still apply."""
    from psycopg import sql
    raw = _driver(conn)
    reset = sql.SQL("ALTER ROLE {} IN DATABASE {} RESET ALL").format(
        sql.Identifier(login), sql.Identifier(raw.info.dbname))
    for stmt in [reset, *(
            sql.SQL("ALTER ROLE {} IN DATABASE {} SET {} = {}").format(
                sql.Identifier(login), sql.Identifier(raw.info.dbname), sql.Identifier(name),
                sql.Literal(value)) for name, value in TIMEOUTS[role].items())]:
        try:
            with raw.transaction():  # a savepoint: a refusal leaves the rest standing
                raw.execute(stmt)
        except Exception:  # noqa: BLE001 - lacking CREATEROLE is not fatal here
            continue


def uninstall(conn: Any) -> None:
    raw = _driver(conn)
    present = {r[0] for r in raw.execute(
        "SELECT table_name FROM information_schema.tables WHERE table_schema = %s",
        (SCHEMA,)).fetchall()}
    tables = (*PERSON_TABLES, "assignments", *GOLD_TABLES, "review_comments", "edits",
              *(t for t in LEAD_TABLES if t in present))
    for t in tables:
        for pol in raw.execute("SELECT policyname FROM pg_policies WHERE tablename = %s",
                               (t,)).fetchall():
            from psycopg import sql
            raw.execute(sql.SQL("DROP POLICY {} ON {}").format(sql.Identifier(pol[0]), sql.Identifier(t)))
        raw.execute(f"ALTER TABLE {t} NO FORCE ROW LEVEL SECURITY")
        raw.execute(f"ALTER TABLE {t} DISABLE ROW LEVEL SECURITY")
    raw.execute(_UNINSTALL)
    for fn in ("clipscribe_me()", "clipscribe_is_lead()", "clipscribe_is_owner()", "clipscribe_blind()"):
        raw.execute(f"DROP FUNCTION IF EXISTS {SCHEMA}.{fn}")


# ---- logins -------------------------------------------------------------------------------

def login_name(person: str) -> str:
    """The login of a person: their name in lower case (what ``Project.open(user=...)`` uses)."""
    login = person.strip().lower()
    shown = person if len(person) <= 40 else person[:40] + "…"
    if not login or len(login.encode("utf-8")) > MAX_LOGIN_BYTES or "\x00" in login:
        raise ValueError(f"{shown!r}: a login name must be 1 to {MAX_LOGIN_BYTES} bytes "
                         f"(this one is {len(login.encode('utf-8'))}); choose a shorter name")
    if login.startswith("pg_") or login in RESERVED_LOGINS:
        raise ValueError(f"{shown!r}: the login name {login!r} is reserved by PostgreSQL "
                         "(names starting pg_, and public, none); choose another name")
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
    set_timeouts(conn, login, role)


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
    except (psycopg.errors.ReservedName, psycopg.errors.InvalidName,
            psycopg.errors.DuplicateObject) as exc:
        raise ValueError(str(exc).strip().splitlines()[0]) from None


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
    set_timeouts(conn, login, role)
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
