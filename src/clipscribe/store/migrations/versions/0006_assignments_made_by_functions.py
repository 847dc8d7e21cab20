"""team server: assignments are made only by checked functions (or a lead)

Revision ID: 0006_assign
Revises: 0005
Create Date: 2026-12-04

An annotator's login loses its INSERT right on ``assignments`` (and the id sequence's USAGE);
a restrictive policy refuses any row it would insert should the right come back. Its first
work on a clip gets its assignment from ``clipscribe_start`` (a definer-rights function that
makes only an open row without a lease, for the caller, on a clip with their work, a comment
addressed to them or a free place); the queue's ``clipscribe_pull`` is unchanged. Runs when the
admin (the database owner) opens the project. SQLite: nothing to do.
"""
from alembic import op


revision = '0006_assign'
down_revision = '0005'
branch_labels = None
depends_on = None


def upgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.harden(op.get_bind())


# What revision 0005 left, as its clipscribe needs it (it inserts an annotator's assignment
# from their own login): frozen here, not taken from the live module.
_BEFORE = """
DROP POLICY IF EXISTS no_own_insert ON public.assignments;
DROP POLICY IF EXISTS no_own_lease ON public.assignments;
CREATE POLICY no_own_lease ON public.assignments AS RESTRICTIVE FOR INSERT TO clipscribe_annotator
  WITH CHECK (expires_at IS NULL);
GRANT INSERT ON public.assignments TO clipscribe_annotator;
DO $$ BEGIN EXECUTE format('GRANT USAGE ON SEQUENCE %s TO clipscribe_annotator',
  pg_catalog.pg_get_serial_sequence('public.assignments', 'id')); END $$;
DROP FUNCTION IF EXISTS public.clipscribe_start(integer[], integer[]);
"""


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        op.execute(_BEFORE)
