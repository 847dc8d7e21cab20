"""check clips: clips whose answer a lead knows in advance

Revision ID: 0009_check_clips
Revises: 0008_pull_waits
Create Date: 2026-12-04

One table, ``check_clips`` (clip as its key, known answer, the lead who marked it). On a team server only
leads may read or write it: row-level security with a lead-only policy, and no grant to the
annotators' group, so an annotator's login cannot find out which clips are check clips. The
pull (``clipscribe_pull``, definer rights) reads it to mix check clips into each annotator's
work at the rate the lead set; it returns only a clip id, as before.
"""
import sqlalchemy as sa
from alembic import op


revision = '0009_check_clips'
down_revision = '0008_pull_waits'
branch_labels = None
depends_on = None


def upgrade() -> None:
    if sa.inspect(op.get_bind()).has_table('check_clips'):
        pass  # a database rewound to an older revision by hand still has it
    else:
        _create()
    if op.get_bind().dialect.name == "postgresql":
        from clipscribe.store import team
        team.protect_check_clips(op.get_bind())
        team.harden(op.get_bind())  # the pull that mixes check clips in


def _create() -> None:
    op.create_table(
        'check_clips',
        sa.Column('clip_id', sa.Integer(), autoincrement=False, nullable=False),
        sa.Column('label_id', sa.Integer(), nullable=False),
        sa.Column('lead_id', sa.Integer(), nullable=False),
        sa.Column('marked_at', sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_check_clips_clip_id_clips'),
                                ondelete='CASCADE'),
        sa.ForeignKeyConstraint(['label_id'], ['labels.id'],
                                name=op.f('fk_check_clips_label_id_labels'), ondelete='RESTRICT'),
        sa.ForeignKeyConstraint(['lead_id'], ['annotators.id'],
                                name=op.f('fk_check_clips_lead_id_annotators'), ondelete='RESTRICT'),
        sa.PrimaryKeyConstraint('clip_id', name=op.f('pk_check_clips')),
    )


def downgrade() -> None:
    op.drop_table('check_clips')
