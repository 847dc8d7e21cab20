"""segments may have no label yet ("unlabelled")

Revision ID: 0007_day2rest
Revises: 0006_assign
Create Date: 2026-12-04

A segment marked before its annotator set the clip label is stored with no label
(``segments.label_id`` NULL) instead of silently taking the first label of the set. SQLite
cannot drop a NOT NULL in place: the table is rebuilt in batch mode (keeping AUTOINCREMENT, see
revision 0003). PostgreSQL drops the constraint in place; the table's row-level security
policies and grants are untouched. Going back refuses while unlabelled segments exist (they
would have no label to take): give them one first.
"""
import sqlalchemy as sa
from alembic import op


revision = '0007_day2rest'
down_revision = '0006_assign'
branch_labels = None
depends_on = None


def _label_nullable(nullable: bool) -> None:
    sqlite = op.get_bind().dialect.name == "sqlite"
    with op.batch_alter_table("segments", recreate="always" if sqlite else "auto",
                              table_kwargs={"sqlite_autoincrement": True} if sqlite else {}) as b:
        b.alter_column("label_id", existing_type=sa.Integer(), nullable=nullable)


def upgrade() -> None:
    _label_nullable(True)


def downgrade() -> None:
    n = op.get_bind().scalar(sa.text("SELECT count(*) FROM segments WHERE label_id IS NULL"))
    if n:
        raise RuntimeError(f"{n} segment(s) have no label; give them one before going back "
                           f"to revision 0006_assign")
    _label_nullable(False)
