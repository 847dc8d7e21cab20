"""assignments found by their state

Revision ID: 0011_assignments_by_state
Revises: 0010_pull_once
Create Date: 2026-12-04

An index on ``assignments.state``. The skipped and unsure clips (read by the agreement report,
the board and the review desk, each asking for the few rows in one state) were found by reading
every assignment: 45-50 ms a time at 290k assignments, three times per report
(``benchmarks/bench_project_scale.py``). With the index a rare state is found at once.
"""
import sqlalchemy as sa
from alembic import op


revision = '0011_assignments_by_state'
down_revision = '0010_pull_once'
branch_labels = None
depends_on = None


def upgrade() -> None:
    made = {ix["name"] for ix in sa.inspect(op.get_bind()).get_indexes('assignments')}
    if 'ix_assignments_state' not in made:  # a database rewound by hand may have it
        op.create_index('ix_assignments_state', 'assignments', ['state'])


def downgrade() -> None:
    op.drop_index('ix_assignments_state', table_name='assignments')
