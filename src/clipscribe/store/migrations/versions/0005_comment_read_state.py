"""Per annotator and clip: up to which lead comment they have read

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-03

One nullable column on ``assignments`` (the annotator's own row for the clip): the id of the
newest comment addressed to them on that clip that they have seen. Comment ids only grow (no
id reuse since 0003), so the comments addressed to them with a larger id are unread. Kept on
the assignment rather than in a table of its own so that the row-level security already on
``assignments`` (annotators read and write their own rows only) covers it unchanged; on a
team server the annotators' column grant on ``assignments`` is renewed to include it.
"""
import sqlalchemy as sa
from alembic import op


revision = '0005'
down_revision = '0004'
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.add_column('assignments', sa.Column('comments_read', sa.Integer(), nullable=True))
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.harden(op.get_bind())  # annotators may update the new column of their own rows


def downgrade() -> None:
    with op.batch_alter_table('assignments') as batch_op:
        batch_op.drop_column('comments_read')
