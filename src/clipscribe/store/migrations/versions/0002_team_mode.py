"""team mode: clips wanted per clip; on PostgreSQL group roles, grants and row-level security

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-01
"""
from alembic import op
import sqlalchemy as sa


revision = '0002'
down_revision = '0001'
branch_labels = None
depends_on = None


def upgrade() -> None:
    with op.batch_alter_table('clips', schema=None) as batch_op:
        batch_op.add_column(sa.Column('annotators_wanted', sa.Integer(), nullable=True))
    if op.get_bind().dialect.name == "postgresql":
        # group roles, helper functions, row-level security, triggers and grants, as frozen
        # below (a new database has no logins yet, so no per-login limits to set here)
        raw = op.get_bind().connection.driver_connection
        for block in (_GROUPS, _FUNCTIONS, _PULL, _POLICIES, _TRIGGERS, _GRANTS):
            raw.execute(block)


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        from psycopg import sql
        raw = op.get_bind().connection.driver_connection
        for t in ("clip_labels", "segments", "captions", "assignments", "gold_labels",
                  "gold_segments", "gold_captions", "review_comments", "edits"):
            for (pol,) in raw.execute("SELECT policyname FROM pg_policies WHERE tablename = %s",
                                      (t,)).fetchall():
                raw.execute(sql.SQL("DROP POLICY {} ON {}").format(sql.Identifier(pol),
                                                                   sql.Identifier(t)))
            raw.execute(f"ALTER TABLE {t} NO FORCE ROW LEVEL SECURITY")
            raw.execute(f"ALTER TABLE {t} DISABLE ROW LEVEL SECURITY")
        raw.execute(_UNINSTALL)
        for fn in ("clipscribe_me()", "clipscribe_is_lead()", "clipscribe_is_owner()",
                   "clipscribe_blind()"):
            raw.execute(f"DROP FUNCTION IF EXISTS public.{fn}")
    with op.batch_alter_table('clips', schema=None) as batch_op:
        batch_op.drop_column('annotators_wanted')


# ---- the server set-up as this revision made it, frozen (never edit: a later change to
# ---- clipscribe.store.team belongs in a new revision, as 0004 and 0005 do) ------------------

_GROUPS = """
DO $$ BEGIN
  IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles WHERE rolname = 'clipscribe_annotator') THEN
    CREATE ROLE clipscribe_annotator NOLOGIN;
  END IF;
  IF NOT EXISTS (SELECT 1 FROM pg_catalog.pg_roles WHERE rolname = 'clipscribe_lead') THEN
    CREATE ROLE clipscribe_lead NOLOGIN;
  END IF;
END $$;
-- Only logins granted CONNECT one by one may reach this project's database.
DO $$ BEGIN
  EXECUTE pg_catalog.format('REVOKE CONNECT ON DATABASE %I FROM PUBLIC', pg_catalog.current_database());
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the database owner, CONNECT stays open to PUBLIC';
END $$;
"""

_FUNCTIONS = """
CREATE OR REPLACE FUNCTION public.clipscribe_me() RETURNS integer
LANGUAGE sql STABLE SET search_path = pg_catalog, public, pg_temp AS $$
  SELECT a.id FROM public.annotators a WHERE a.db_login = CURRENT_USER
$$;

CREATE OR REPLACE FUNCTION public.clipscribe_is_owner() RETURNS boolean
LANGUAGE sql STABLE SET search_path = pg_catalog, public, pg_temp AS $$
  SELECT coalesce((SELECT pg_catalog.pg_get_userbyid(d.datdba) = CURRENT_USER
                     FROM pg_catalog.pg_database d
                    WHERE d.datname = pg_catalog.current_database()), false)
$$;

-- Group roles are shared by every database of the server, so lead rights also need this
-- project's annotators row to say lead.
CREATE OR REPLACE FUNCTION public.clipscribe_is_lead() RETURNS boolean
LANGUAGE sql STABLE SET search_path = pg_catalog, public, pg_temp AS $$
  SELECT public.clipscribe_is_owner() OR (
    pg_catalog.pg_has_role(CURRENT_USER, 'clipscribe_lead', 'MEMBER')
    AND EXISTS (SELECT 1 FROM public.annotators a
                 WHERE a.db_login = CURRENT_USER AND a.role = 'lead'))
$$;

CREATE OR REPLACE FUNCTION public.clipscribe_blind() RETURNS boolean
LANGUAGE sql STABLE SET search_path = pg_catalog, public, pg_temp AS $$
  SELECT coalesce((SELECT s.value::text FROM public.settings s WHERE s.key = 'team.blind'),
                  'true') <> 'false'
$$;
"""

_PULL = """
CREATE OR REPLACE FUNCTION public.clipscribe_pull(p_annotator integer, p_lease_seconds double precision)
RETURNS integer LANGUAGE plpgsql SECURITY DEFINER SET search_path = pg_catalog, public, pg_temp AS $$
DECLARE
  v_now timestamptz := pg_catalog.clock_timestamp();
  v_lease interval := pg_catalog.make_interval(secs => p_lease_seconds);
  v_clip integer;
BEGIN
  IF NOT EXISTS (SELECT 1 FROM public.annotators WHERE id = p_annotator AND db_login = session_user)
     AND NOT (
  session_user = (SELECT pg_catalog.pg_get_userbyid(d.datdba) FROM pg_catalog.pg_database d
                   WHERE d.datname = pg_catalog.current_database())
  OR (pg_catalog.pg_has_role(session_user, 'clipscribe_lead', 'MEMBER')
      AND EXISTS (SELECT 1 FROM public.annotators n
                   WHERE n.db_login = session_user AND n.role = 'lead'))) THEN
    RAISE EXCEPTION 'login % may not pull clips for annotator %', session_user, p_annotator
      USING ERRCODE = '42501';
  END IF;

  WITH gone AS (
    UPDATE public.assignments a SET state = 'expired', updated_at = v_now, version = a.version + 1
     WHERE a.state = 'open' AND a.expires_at IS NOT NULL AND a.expires_at < v_now
       AND NOT EXISTS (SELECT 1 FROM public.edits e WHERE e.clip_id = a.clip_id
                       AND e.annotator_id = a.annotator_id AND e.at > v_now - v_lease)
    RETURNING a.id, a.clip_id, a.annotator_id)
  INSERT INTO public.edits (at, annotator_id, action, entity, entity_id, clip_id, before, after)
  SELECT v_now, NULL, 'expire', 'assignment_lease', g.id, g.clip_id,
         pg_catalog.json_build_object('state', 'open', 'annotator_id', g.annotator_id),
         pg_catalog.json_build_object('state', 'expired', 'annotator_id', g.annotator_id)
    FROM gone g;

  SELECT a.clip_id INTO v_clip FROM public.assignments a
   WHERE a.annotator_id = p_annotator AND a.state = 'open'
   ORDER BY a.assigned_at, a.id LIMIT 1;
  IF v_clip IS NOT NULL THEN
    UPDATE public.assignments SET expires_at = v_now + v_lease
     WHERE clip_id = v_clip AND annotator_id = p_annotator;
    RETURN v_clip;
  END IF;

  LOOP
    SELECT c.id INTO v_clip FROM public.clips c
     WHERE c.state <> 'settled'
       AND NOT EXISTS (SELECT 1 FROM public.assignments a WHERE a.clip_id = c.id
                       AND a.annotator_id = p_annotator)
       AND (SELECT count(*) FROM public.assignments a WHERE a.clip_id = c.id
            AND (a.state NOT IN ('expired', 'skipped') AND (a.expires_at IS NOT NULL
  OR EXISTS (SELECT 1 FROM public.clip_labels w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)
  OR EXISTS (SELECT 1 FROM public.segments w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)
  OR EXISTS (SELECT 1 FROM public.captions w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)))) < coalesce(c.annotators_wanted, 1)
     ORDER BY c.id LIMIT 1
     FOR UPDATE OF c SKIP LOCKED;
    IF v_clip IS NULL THEN
      RETURN NULL;
    END IF;
    IF (SELECT count(*) FROM public.assignments a WHERE a.clip_id = v_clip AND (a.state NOT IN ('expired', 'skipped') AND (a.expires_at IS NOT NULL
  OR EXISTS (SELECT 1 FROM public.clip_labels w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)
  OR EXISTS (SELECT 1 FROM public.segments w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id)
  OR EXISTS (SELECT 1 FROM public.captions w WHERE w.clip_id = a.clip_id AND w.annotator_id = a.annotator_id))))
       < (SELECT coalesce(annotators_wanted, 1) FROM public.clips WHERE id = v_clip) THEN
      INSERT INTO public.assignments (clip_id, annotator_id, state, assigned_at, expires_at,
                                        updated_at, version)
      VALUES (v_clip, p_annotator, 'open', v_now, v_now + v_lease, v_now, 1);
      UPDATE public.clips SET state = 'in_progress' WHERE id = v_clip AND state = 'new';
      RETURN v_clip;
    END IF;
  END LOOP;
END
$$;
REVOKE ALL ON FUNCTION public.clipscribe_pull(integer, double precision) FROM PUBLIC;

-- A clip's state from everybody's assignments (an annotator's own login sees only theirs):
-- settled with a gold label; done when every live assignment is submitted or skipped;
-- in progress while any is live; else new. Returns only the state word.
CREATE OR REPLACE FUNCTION public.clipscribe_clip_state(p_clip integer)
RETURNS text LANGUAGE sql STABLE SECURITY DEFINER SET search_path = pg_catalog, public, pg_temp AS $$
  SELECT CASE
    WHEN EXISTS (SELECT 1 FROM public.gold_labels WHERE clip_id = p_clip) THEN 'settled'
    WHEN NOT EXISTS (SELECT 1 FROM public.assignments WHERE clip_id = p_clip
                     AND state <> 'expired') THEN 'new'
    WHEN bool_and(state IN ('submitted', 'skipped')) THEN 'done'
    ELSE 'in_progress' END
  FROM public.assignments WHERE clip_id = p_clip AND state <> 'expired'
$$;
REVOKE ALL ON FUNCTION public.clipscribe_clip_state(integer) FROM PUBLIC;

-- The one way an annotator changes a clip's state: the state is worked out from everybody's
-- assignments (never taken from the caller), and only for a clip the caller has an
-- assignment on (any lead or the owner for any clip). Returns the state it wrote.
CREATE OR REPLACE FUNCTION public.clipscribe_refresh_clip_state(p_clip integer)
RETURNS text LANGUAGE plpgsql SECURITY DEFINER SET search_path = pg_catalog, public, pg_temp AS $$
DECLARE
  v_state text;
BEGIN
  IF NOT EXISTS (SELECT 1 FROM public.assignments a JOIN public.annotators n
                   ON n.id = a.annotator_id
                  WHERE a.clip_id = p_clip AND n.db_login = session_user)
     AND NOT (
  session_user = (SELECT pg_catalog.pg_get_userbyid(d.datdba) FROM pg_catalog.pg_database d
                   WHERE d.datname = pg_catalog.current_database())
  OR (pg_catalog.pg_has_role(session_user, 'clipscribe_lead', 'MEMBER')
      AND EXISTS (SELECT 1 FROM public.annotators n
                   WHERE n.db_login = session_user AND n.role = 'lead'))) THEN
    RAISE EXCEPTION 'login % has no assignment on clip %', session_user, p_clip
      USING ERRCODE = '42501';
  END IF;
  v_state := public.clipscribe_clip_state(p_clip);
  UPDATE public.clips SET state = v_state WHERE id = p_clip AND state IS DISTINCT FROM v_state;
  RETURN v_state;
END
$$;
REVOKE ALL ON FUNCTION public.clipscribe_refresh_clip_state(integer) FROM PUBLIC;
"""

_POLICIES = """GRANT clipscribe_lead TO CURRENT_USER;
GRANT SELECT ON public.settings TO clipscribe_annotator, clipscribe_lead;
GRANT INSERT, UPDATE, DELETE ON public.settings TO clipscribe_lead;
GRANT SELECT ON public.labels TO clipscribe_annotator, clipscribe_lead;
GRANT INSERT, UPDATE, DELETE ON public.labels TO clipscribe_lead;
GRANT SELECT ON public.annotators TO clipscribe_annotator, clipscribe_lead;
GRANT INSERT, UPDATE, DELETE ON public.annotators TO clipscribe_lead;
GRANT SELECT ON public.clips TO clipscribe_annotator, clipscribe_lead;
GRANT INSERT, UPDATE, DELETE ON public.clips TO clipscribe_lead;
GRANT SELECT ON public.alembic_version TO clipscribe_annotator, clipscribe_lead;
ALTER TABLE public.clip_labels ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.clip_labels FORCE ROW LEVEL SECURITY;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.clip_labels TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.clip_labels TO clipscribe_lead;
CREATE POLICY own_rows ON public.clip_labels TO clipscribe_annotator USING (annotator_id = (SELECT public.clipscribe_me())) WITH CHECK (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY lead_rows ON public.clip_labels USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.segments ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.segments FORCE ROW LEVEL SECURITY;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.segments TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.segments TO clipscribe_lead;
CREATE POLICY own_rows ON public.segments TO clipscribe_annotator USING (annotator_id = (SELECT public.clipscribe_me())) WITH CHECK (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY lead_rows ON public.segments USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.captions ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.captions FORCE ROW LEVEL SECURITY;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.captions TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.captions TO clipscribe_lead;
CREATE POLICY own_rows ON public.captions TO clipscribe_annotator USING (annotator_id = (SELECT public.clipscribe_me())) WITH CHECK (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY lead_rows ON public.captions USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.assignments ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.assignments FORCE ROW LEVEL SECURITY;
GRANT SELECT, INSERT ON public.assignments TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.assignments TO clipscribe_lead;
CREATE POLICY own_rows ON public.assignments TO clipscribe_annotator USING (annotator_id = (SELECT public.clipscribe_me())) WITH CHECK (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY lead_rows ON public.assignments USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
CREATE POLICY open_reading ON public.clip_labels FOR SELECT TO clipscribe_annotator USING (NOT (SELECT public.clipscribe_blind()));
CREATE POLICY open_reading ON public.segments FOR SELECT TO clipscribe_annotator USING (NOT (SELECT public.clipscribe_blind()));
CREATE POLICY open_reading ON public.captions FOR SELECT TO clipscribe_annotator USING (NOT (SELECT public.clipscribe_blind()));
ALTER TABLE public.gold_labels ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.gold_labels FORCE ROW LEVEL SECURITY;
GRANT SELECT ON public.gold_labels TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.gold_labels TO clipscribe_lead;
CREATE POLICY lead_rows ON public.gold_labels USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.gold_segments ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.gold_segments FORCE ROW LEVEL SECURITY;
GRANT SELECT ON public.gold_segments TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.gold_segments TO clipscribe_lead;
CREATE POLICY lead_rows ON public.gold_segments USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.gold_captions ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.gold_captions FORCE ROW LEVEL SECURITY;
GRANT SELECT ON public.gold_captions TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.gold_captions TO clipscribe_lead;
CREATE POLICY lead_rows ON public.gold_captions USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.review_comments ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.review_comments FORCE ROW LEVEL SECURITY;
GRANT SELECT ON public.review_comments TO clipscribe_annotator;
GRANT SELECT, INSERT, UPDATE, DELETE ON public.review_comments TO clipscribe_lead;
CREATE POLICY addressed_to_me ON public.review_comments FOR SELECT TO clipscribe_annotator USING (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY lead_rows ON public.review_comments USING ((SELECT public.clipscribe_is_lead())) WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER TABLE public.edits ENABLE ROW LEVEL SECURITY;
ALTER TABLE public.edits FORCE ROW LEVEL SECURITY;
GRANT SELECT, INSERT ON public.edits TO clipscribe_annotator, clipscribe_lead;
CREATE POLICY own_read ON public.edits FOR SELECT TO clipscribe_annotator USING (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY own_insert ON public.edits FOR INSERT TO clipscribe_annotator WITH CHECK (annotator_id = (SELECT public.clipscribe_me()));
CREATE POLICY lead_read ON public.edits FOR SELECT USING ((SELECT public.clipscribe_is_lead()));
CREATE POLICY lead_insert ON public.edits FOR INSERT WITH CHECK ((SELECT public.clipscribe_is_lead()));
ALTER DEFAULT PRIVILEGES IN SCHEMA public GRANT SELECT ON TABLES TO clipscribe_lead;
INSERT INTO public.settings (key, value) VALUES ('team.blind', 'true') ON CONFLICT DO NOTHING;"""

_TRIGGERS = """
CREATE OR REPLACE FUNCTION public.clipscribe_check_caption_segment() RETURNS trigger
LANGUAGE plpgsql SET search_path = pg_catalog, public, pg_temp AS $$
BEGIN
  IF NEW.segment_id IS NOT NULL
     AND NOT EXISTS (SELECT 1 FROM public.segments s WHERE s.id = NEW.segment_id) THEN
    RAISE EXCEPTION 'segment %: no such segment among those this login may see', NEW.segment_id
      USING ERRCODE = '23503';
  END IF;
  RETURN NEW;
END
$$;
DROP TRIGGER IF EXISTS clipscribe_caption_segment ON public.captions;
CREATE TRIGGER clipscribe_caption_segment BEFORE INSERT OR UPDATE OF segment_id
  ON public.captions FOR EACH ROW EXECUTE FUNCTION public.clipscribe_check_caption_segment();
"""

_GRANTS = """REVOKE UPDATE, DELETE, INSERT, TRUNCATE ON public.clips FROM clipscribe_annotator;
REVOKE UPDATE, DELETE, TRUNCATE ON public.assignments FROM clipscribe_annotator;
GRANT UPDATE (state, reason, updated_at, version) ON public.assignments TO clipscribe_annotator;
DROP POLICY IF EXISTS no_own_lease ON public.assignments;
CREATE POLICY no_own_lease ON public.assignments AS RESTRICTIVE FOR INSERT TO clipscribe_annotator WITH CHECK (expires_at IS NULL);
REVOKE ALL ON ALL SEQUENCES IN SCHEMA public FROM clipscribe_annotator;
GRANT USAGE, SELECT ON ALL SEQUENCES IN SCHEMA public TO clipscribe_lead;
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator', pg_catalog.pg_get_serial_sequence('public.clip_labels', 'id')); END $$;
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator', pg_catalog.pg_get_serial_sequence('public.segments', 'id')); END $$;
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator', pg_catalog.pg_get_serial_sequence('public.captions', 'id')); END $$;
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator', pg_catalog.pg_get_serial_sequence('public.assignments', 'id')); END $$;
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator', pg_catalog.pg_get_serial_sequence('public.edits', 'id')); END $$;
GRANT EXECUTE ON FUNCTION public.clipscribe_pull(integer, double precision) TO clipscribe_annotator, clipscribe_lead;
GRANT EXECUTE ON FUNCTION public.clipscribe_clip_state(integer) TO clipscribe_annotator, clipscribe_lead;
GRANT EXECUTE ON FUNCTION public.clipscribe_refresh_clip_state(integer) TO clipscribe_annotator, clipscribe_lead;
DO $$ BEGIN
  EXECUTE pg_catalog.format('REVOKE TEMPORARY, CREATE ON DATABASE %I FROM PUBLIC, clipscribe_annotator, clipscribe_lead',
                            pg_catalog.current_database());
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the database owner, TEMPORARY stays open to PUBLIC';
END $$;
DO $$ BEGIN
  REVOKE CREATE ON SCHEMA public FROM PUBLIC;
EXCEPTION WHEN insufficient_privilege THEN
  RAISE WARNING 'clipscribe: not the owner of schema public, cannot revoke CREATE from PUBLIC';
END $$;"""

_UNINSTALL = """
DROP TRIGGER IF EXISTS clipscribe_caption_segment ON public.captions;
DROP FUNCTION IF EXISTS public.clipscribe_check_caption_segment();
DROP FUNCTION IF EXISTS public.clipscribe_pull(integer, double precision);
DROP FUNCTION IF EXISTS public.clipscribe_refresh_clip_state(integer);
DROP FUNCTION IF EXISTS public.clipscribe_clip_state(integer);
"""
