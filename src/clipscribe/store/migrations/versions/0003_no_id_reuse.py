"""SQLite: tables of edited rows become AUTOINCREMENT, so a deleted row's id is never reused

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02

SQLite cannot change a table's AUTOINCREMENT in place: each table is rebuilt (Alembic's batch
mode copies the rows into a new table and renames it). env.py turns foreign keys off for the
rebuild, so dropping the old table fires no ON DELETE action, and checks them before commit.
The ``sqlite_sequence`` counter starts at the table's largest id. PostgreSQL: nothing to do.
"""
from alembic import op


revision = '0003'
down_revision = '0002'
branch_labels = None
depends_on = None

TABLES = ("assignments", "clip_labels", "segments", "captions", "gold_labels", "gold_segments",
          "gold_captions", "review_comments")


def _rebuild(autoincrement: bool) -> None:
    if op.get_bind().dialect.name != "sqlite":
        return
    for table in TABLES:
        with op.batch_alter_table(table, recreate="always",
                                  table_kwargs={"sqlite_autoincrement": autoincrement}):
            pass


def upgrade() -> None:
    _rebuild(True)


def downgrade() -> None:
    _rebuild(False)
