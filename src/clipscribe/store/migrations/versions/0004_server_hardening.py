"""team server hardening: helper functions with a fixed search_path and schema-qualified
names, clip states changed only through a checked function, no temporary tables, no sequence
reading, per-login timeouts

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-03

A team database set up by an older clipscribe gets the same functions and grants a new one
gets (``team.harden`` is safe to run again). The migration runs when the admin (the database
owner) opens the project; other logins are told to ask the admin. SQLite: nothing to do.
"""
from alembic import op


revision = '0004'
down_revision = '0003'
branch_labels = None
depends_on = None


def upgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.harden(op.get_bind())


def downgrade() -> None:
    pass  # the hardened functions and grants also serve the older schema
