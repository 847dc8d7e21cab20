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
        from clipscribe.store import team
        team.install(op.get_bind())


def downgrade() -> None:
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.uninstall(op.get_bind())
    with op.batch_alter_table('clips', schema=None) as batch_op:
        batch_op.drop_column('annotators_wanted')
