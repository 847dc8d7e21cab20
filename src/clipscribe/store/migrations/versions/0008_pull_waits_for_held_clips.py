"""team server: pulling the next clip waits for a clip another pull holds for a moment

Revision ID: 0008_pull_waits
Revises: 0007_day2rest
Create Date: 2026-12-04

``clipscribe_pull`` passed over clips locked by another pull in flight (SKIP LOCKED) and, when
those were the only clips with a free place left, answered "no work" although a place remained
once the other pull committed. It now waits for such a clip and counts its places again.
Rewrites the function in place (``team.harden``) when the admin opens the project. SQLite:
nothing to do.
"""
from alembic import op


revision = '0008_pull_waits'
down_revision = '0007_day2rest'
branch_labels = None
depends_on = None


def upgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.harden(op.get_bind())


def downgrade() -> None:
    # the older function differs only in answering "no work" sooner; nothing to undo
    pass
