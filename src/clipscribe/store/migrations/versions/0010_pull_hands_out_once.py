"""team server: the pull hands out a check clip and a planned clip by the same statements

Revision ID: 0010_pull_once
Revises: 0009_check_clips
Create Date: 2026-12-04

``clipscribe_pull`` wrote the new assignment and the clip's state in two places (one for a
check clip, one for a clip with a free place). It now picks the clip first and hands it out
once; what it returns and writes is unchanged. Rewrites the function in place
(``team.harden``) when the admin opens the project. SQLite: nothing to do.
"""
from alembic import op


revision = '0010_pull_once'
down_revision = '0009_check_clips'
branch_labels = None
depends_on = None


def upgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.harden(op.get_bind())


def downgrade() -> None:
    # the older function does the same work with the statements written twice; nothing to undo
    pass
