"""initial schema

Revision ID: 0001
Revises: 
Create Date: 2026-12-01
"""
from alembic import op
import sqlalchemy as sa


revision = '0001'
down_revision = None
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.create_table('annotators',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=200), nullable=False),
    sa.Column('role', sa.String(length=20), nullable=False),
    sa.Column('db_login', sa.String(length=63), nullable=True),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint("role IN ('annotator', 'lead')", name=op.f('ck_annotators_role')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_annotators')),
    sa.UniqueConstraint('name', name=op.f('uq_annotators_name'))
    )
    op.create_table('clips',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('path', sa.String(length=4096), nullable=False),
    sa.Column('sha256', sa.String(length=64), nullable=False),
    sa.Column('fps', sa.Float(), nullable=False),
    sa.Column('frame_count', sa.Integer(), nullable=False),
    sa.Column('duration', sa.Float(), nullable=False),
    sa.Column('width', sa.Integer(), nullable=False),
    sa.Column('height', sa.Integer(), nullable=False),
    sa.Column('group_key', sa.String(length=500), nullable=True),
    sa.Column('source', sa.String(length=2000), nullable=True),
    sa.Column('licence', sa.String(length=500), nullable=True),
    sa.Column('consent', sa.Boolean(), nullable=True),
    sa.Column('state', sa.String(length=20), nullable=False),
    sa.Column('fingerprint', sa.BigInteger(), nullable=True),
    sa.Column('added_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint("state IN ('new', 'in_progress', 'done', 'settled')", name=op.f('ck_clips_state')),
    sa.CheckConstraint('frame_count >= 0', name=op.f('ck_clips_frame_count')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_clips')),
    sa.UniqueConstraint('path', name=op.f('uq_clips_path'))
    )
    with op.batch_alter_table('clips', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_clips_group_key'), ['group_key'], unique=False)
        batch_op.create_index(batch_op.f('ix_clips_sha256'), ['sha256'], unique=False)
        batch_op.create_index(batch_op.f('ix_clips_state'), ['state'], unique=False)

    op.create_table('labels',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('name', sa.String(length=200), nullable=False),
    sa.Column('key', sa.String(length=1), nullable=True),
    sa.Column('colour', sa.String(length=7), nullable=True),
    sa.Column('guideline', sa.Text(), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.Column('retired', sa.Boolean(), nullable=False),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_labels')),
    sa.UniqueConstraint('name', name=op.f('uq_labels_name'))
    )
    op.create_table('settings',
    sa.Column('key', sa.String(length=100), nullable=False),
    sa.Column('value', sa.JSON(), nullable=False),
    sa.PrimaryKeyConstraint('key', name=op.f('pk_settings'))
    )
    op.create_table('assignments',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('annotator_id', sa.Integer(), nullable=False),
    sa.Column('state', sa.String(length=20), nullable=False),
    sa.Column('reason', sa.Text(), nullable=True),
    sa.Column('assigned_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('expires_at', sa.DateTime(timezone=True), nullable=True),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.CheckConstraint("state IN ('open', 'submitted', 'skipped', 'unsure', 'expired')", name=op.f('ck_assignments_state')),
    sa.ForeignKeyConstraint(['annotator_id'], ['annotators.id'], name=op.f('fk_assignments_annotator_id_annotators'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_assignments_clip_id_clips'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_assignments')),
    sa.UniqueConstraint('clip_id', 'annotator_id', name=op.f('uq_assignments_clip_id_annotator_id'))
    )
    with op.batch_alter_table('assignments', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_assignments_annotator_id'), ['annotator_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_assignments_clip_id'), ['clip_id'], unique=False)

    op.create_table('clip_labels',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('annotator_id', sa.Integer(), nullable=False),
    sa.Column('label_id', sa.Integer(), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['annotator_id'], ['annotators.id'], name=op.f('fk_clip_labels_annotator_id_annotators'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_clip_labels_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['label_id'], ['labels.id'], name=op.f('fk_clip_labels_label_id_labels'), ondelete='RESTRICT'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_clip_labels')),
    sa.UniqueConstraint('clip_id', 'annotator_id', name=op.f('uq_clip_labels_clip_id_annotator_id'))
    )
    with op.batch_alter_table('clip_labels', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_clip_labels_annotator_id'), ['annotator_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_clip_labels_clip_id'), ['clip_id'], unique=False)

    op.create_table('edits',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('annotator_id', sa.Integer(), nullable=True),
    sa.Column('action', sa.String(length=40), nullable=False),
    sa.Column('entity', sa.String(length=40), nullable=False),
    sa.Column('entity_id', sa.Integer(), nullable=True),
    sa.Column('clip_id', sa.Integer(), nullable=True),
    sa.Column('before', sa.JSON(), nullable=True),
    sa.Column('after', sa.JSON(), nullable=True),
    sa.Column('reverts', sa.Integer(), nullable=True),
    sa.ForeignKeyConstraint(['annotator_id'], ['annotators.id'], name=op.f('fk_edits_annotator_id_annotators'), ondelete='SET NULL'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_edits'))
    )
    with op.batch_alter_table('edits', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_edits_annotator_id'), ['annotator_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_edits_clip_id'), ['clip_id'], unique=False)

    op.create_table('gold_labels',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('label_id', sa.Integer(), nullable=False),
    sa.Column('lead_id', sa.Integer(), nullable=False),
    sa.Column('decided_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_gold_labels_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['label_id'], ['labels.id'], name=op.f('fk_gold_labels_label_id_labels'), ondelete='RESTRICT'),
    sa.ForeignKeyConstraint(['lead_id'], ['annotators.id'], name=op.f('fk_gold_labels_lead_id_annotators'), ondelete='RESTRICT'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_gold_labels')),
    sa.UniqueConstraint('clip_id', name=op.f('uq_gold_labels_clip_id'))
    )
    with op.batch_alter_table('gold_labels', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_gold_labels_clip_id'), ['clip_id'], unique=False)

    op.create_table('gold_segments',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('label_id', sa.Integer(), nullable=False),
    sa.Column('start_frame', sa.Integer(), nullable=False),
    sa.Column('end_frame', sa.Integer(), nullable=False),
    sa.Column('lead_id', sa.Integer(), nullable=False),
    sa.Column('decided_at', sa.DateTime(timezone=True), nullable=False),
    sa.CheckConstraint('end_frame > start_frame AND start_frame >= 0', name=op.f('ck_gold_segments_order')),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_gold_segments_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['label_id'], ['labels.id'], name=op.f('fk_gold_segments_label_id_labels'), ondelete='RESTRICT'),
    sa.ForeignKeyConstraint(['lead_id'], ['annotators.id'], name=op.f('fk_gold_segments_lead_id_annotators'), ondelete='RESTRICT'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_gold_segments'))
    )
    with op.batch_alter_table('gold_segments', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_gold_segments_clip_id'), ['clip_id'], unique=False)

    op.create_table('review_comments',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('annotator_id', sa.Integer(), nullable=True),
    sa.Column('lead_id', sa.Integer(), nullable=False),
    sa.Column('text', sa.Text(), nullable=False),
    sa.Column('created_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['annotator_id'], ['annotators.id'], name=op.f('fk_review_comments_annotator_id_annotators'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_review_comments_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['lead_id'], ['annotators.id'], name=op.f('fk_review_comments_lead_id_annotators'), ondelete='RESTRICT'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_review_comments'))
    )
    with op.batch_alter_table('review_comments', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_review_comments_clip_id'), ['clip_id'], unique=False)

    op.create_table('segments',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('annotator_id', sa.Integer(), nullable=False),
    sa.Column('label_id', sa.Integer(), nullable=False),
    sa.Column('start_frame', sa.Integer(), nullable=False),
    sa.Column('end_frame', sa.Integer(), nullable=False),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.CheckConstraint('end_frame > start_frame', name=op.f('ck_segments_order')),
    sa.CheckConstraint('start_frame >= 0', name=op.f('ck_segments_start')),
    sa.ForeignKeyConstraint(['annotator_id'], ['annotators.id'], name=op.f('fk_segments_annotator_id_annotators'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_segments_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['label_id'], ['labels.id'], name=op.f('fk_segments_label_id_labels'), ondelete='RESTRICT'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_segments'))
    )
    with op.batch_alter_table('segments', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_segments_annotator_id'), ['annotator_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_segments_clip_id'), ['clip_id'], unique=False)

    op.create_table('captions',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('annotator_id', sa.Integer(), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.Column('text', sa.Text(), nullable=False),
    sa.Column('segment_id', sa.Integer(), nullable=True),
    sa.Column('updated_at', sa.DateTime(timezone=True), nullable=False),
    sa.Column('version', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['annotator_id'], ['annotators.id'], name=op.f('fk_captions_annotator_id_annotators'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_captions_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['segment_id'], ['segments.id'], name=op.f('fk_captions_segment_id_segments'), ondelete='SET NULL'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_captions'))
    )
    with op.batch_alter_table('captions', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_captions_annotator_id'), ['annotator_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_captions_clip_id'), ['clip_id'], unique=False)

    op.create_table('gold_captions',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('clip_id', sa.Integer(), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.Column('text', sa.Text(), nullable=False),
    sa.Column('source_caption_id', sa.Integer(), nullable=True),
    sa.Column('lead_id', sa.Integer(), nullable=False),
    sa.Column('decided_at', sa.DateTime(timezone=True), nullable=False),
    sa.ForeignKeyConstraint(['clip_id'], ['clips.id'], name=op.f('fk_gold_captions_clip_id_clips'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['lead_id'], ['annotators.id'], name=op.f('fk_gold_captions_lead_id_annotators'), ondelete='RESTRICT'),
    sa.ForeignKeyConstraint(['source_caption_id'], ['captions.id'], name=op.f('fk_gold_captions_source_caption_id_captions'), ondelete='SET NULL'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_gold_captions'))
    )
    with op.batch_alter_table('gold_captions', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_gold_captions_clip_id'), ['clip_id'], unique=False)



def downgrade() -> None:
    with op.batch_alter_table('gold_captions', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_gold_captions_clip_id'))

    op.drop_table('gold_captions')
    with op.batch_alter_table('captions', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_captions_clip_id'))
        batch_op.drop_index(batch_op.f('ix_captions_annotator_id'))

    op.drop_table('captions')
    with op.batch_alter_table('segments', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_segments_clip_id'))
        batch_op.drop_index(batch_op.f('ix_segments_annotator_id'))

    op.drop_table('segments')
    with op.batch_alter_table('review_comments', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_review_comments_clip_id'))

    op.drop_table('review_comments')
    with op.batch_alter_table('gold_segments', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_gold_segments_clip_id'))

    op.drop_table('gold_segments')
    with op.batch_alter_table('gold_labels', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_gold_labels_clip_id'))

    op.drop_table('gold_labels')
    with op.batch_alter_table('edits', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_edits_clip_id'))
        batch_op.drop_index(batch_op.f('ix_edits_annotator_id'))

    op.drop_table('edits')
    with op.batch_alter_table('clip_labels', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_clip_labels_clip_id'))
        batch_op.drop_index(batch_op.f('ix_clip_labels_annotator_id'))

    op.drop_table('clip_labels')
    with op.batch_alter_table('assignments', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_assignments_clip_id'))
        batch_op.drop_index(batch_op.f('ix_assignments_annotator_id'))

    op.drop_table('assignments')
    op.drop_table('settings')
    op.drop_table('labels')
    with op.batch_alter_table('clips', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_clips_state'))
        batch_op.drop_index(batch_op.f('ix_clips_sha256'))
        batch_op.drop_index(batch_op.f('ix_clips_group_key'))

    op.drop_table('clips')
    op.drop_table('annotators')
