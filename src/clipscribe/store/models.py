"""Typed SQLAlchemy 2 models of a project database.

Every table that users edit carries a ``version`` column for optimistic concurrency (the ORM's
``version_id_col``): a write based on a stale read fails instead of overwriting someone's work.
The ``edits`` table is append-only: undo, redo and the audit trail are all read from it.
"""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Any, Optional

from sqlalchemy import (
    JSON, BigInteger, Boolean, CheckConstraint, DateTime, Float, ForeignKey, Integer, MetaData,
    String, Text, UniqueConstraint,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship

from ..types import AssignmentState, ClipState, Role

NAMING = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_N_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

intpk = Annotated[int, mapped_column(Integer, primary_key=True)]
when = Annotated[dt.datetime, mapped_column(DateTime(timezone=True), default=lambda: utcnow())]
clip_fk = Annotated[int, mapped_column(ForeignKey("clips.id", ondelete="CASCADE"), index=True)]
annotator_fk = Annotated[int, mapped_column(ForeignKey("annotators.id", ondelete="CASCADE"), index=True)]
label_fk = Annotated[int, mapped_column(ForeignKey("labels.id", ondelete="RESTRICT"))]

ROLES = tuple(r.value for r in Role)
ASSIGNMENT_STATES = tuple(a.value for a in AssignmentState)
CLIP_STATES = tuple(c.value for c in ClipState)


def one_of(column: str, values: tuple[str, ...], name: str) -> CheckConstraint:
    """A CHECK that ``column`` holds one of ``values`` (generated from the enums, so the
    database and the code cannot disagree)."""
    return CheckConstraint(f"{column} IN ({', '.join(repr(v) for v in values)})", name=name)


def utcnow() -> dt.datetime:
    return dt.datetime.now(dt.timezone.utc)


#: SQLite reuses the id of the newest row once it is deleted, unless the table is AUTOINCREMENT.
#: Rows people edit and delete must never hand their id to a new row: a client holding
#: (id, version) of a deleted caption would otherwise pass the version check on a stranger's
#: new row, and the edit history would mix two rows under one id. (PostgreSQL never reuses.)
NO_ID_REUSE = {"sqlite_autoincrement": True}


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING)
    type_annotation_map = {dict[str, Any]: JSON}


class Setting(Base):
    """Project-wide settings that must live in the database (shared by every login)."""

    __tablename__ = "settings"
    key: Mapped[str] = mapped_column(String(100), primary_key=True)
    value: Mapped[Any] = mapped_column(JSON)


class Label(Base):
    __tablename__ = "labels"
    __table_args__ = (UniqueConstraint("name"),)
    id: Mapped[intpk]
    name: Mapped[str] = mapped_column(String(200))
    key: Mapped[Optional[str]] = mapped_column(String(1))
    colour: Mapped[Optional[str]] = mapped_column(String(7))
    guideline: Mapped[str] = mapped_column(Text, default="")
    position: Mapped[int] = mapped_column(Integer, default=0)
    retired: Mapped[bool] = mapped_column(Boolean, default=False)


class Annotator(Base):
    __tablename__ = "annotators"
    __table_args__ = (
        UniqueConstraint("name"),
        one_of("role", ROLES, "role"),
    )
    id: Mapped[intpk]
    name: Mapped[str] = mapped_column(String(200))
    role: Mapped[str] = mapped_column(String(20), default="annotator")
    db_login: Mapped[Optional[str]] = mapped_column(String(63))
    created_at: Mapped[when]


class Clip(Base):
    __tablename__ = "clips"
    __table_args__ = (
        UniqueConstraint("path"),
        CheckConstraint("frame_count >= 0", name="frame_count"),
        one_of("state", CLIP_STATES, "state"),
    )
    id: Mapped[intpk]
    path: Mapped[str] = mapped_column(String(4096), doc="relative to the media root, '/' separated")
    sha256: Mapped[str] = mapped_column(String(64), index=True)
    fps: Mapped[float] = mapped_column(Float)
    frame_count: Mapped[int] = mapped_column(Integer)
    duration: Mapped[float] = mapped_column(Float)
    width: Mapped[int] = mapped_column(Integer)
    height: Mapped[int] = mapped_column(Integer)
    group_key: Mapped[Optional[str]] = mapped_column(String(500), index=True)
    source: Mapped[Optional[str]] = mapped_column(String(2000))
    licence: Mapped[Optional[str]] = mapped_column(String(500))
    consent: Mapped[Optional[bool]] = mapped_column(Boolean)
    state: Mapped[str] = mapped_column(String(20), default="new", index=True)
    fingerprint: Mapped[Optional[int]] = mapped_column(BigInteger, doc="64-bit perceptual hash, signed")
    added_at: Mapped[when]
    annotators_wanted: Mapped[Optional[int]] = mapped_column(
        Integer, doc="how many people should annotate the clip (team assignment); None: one")


class Assignment(Base):
    __tablename__ = "assignments"
    __table_args__ = (
        UniqueConstraint("clip_id", "annotator_id"),
        one_of("state", ASSIGNMENT_STATES, "state"),
        NO_ID_REUSE,
    )
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    annotator_id: Mapped[annotator_fk]
    # indexed: the few skipped or unsure rows are read on their own (migration 0011)
    state: Mapped[str] = mapped_column(String(20), default="open", index=True)
    reason: Mapped[Optional[str]] = mapped_column(Text)
    assigned_at: Mapped[when]
    expires_at: Mapped[Optional[dt.datetime]] = mapped_column(DateTime(timezone=True))
    updated_at: Mapped[when]
    version: Mapped[int] = mapped_column(Integer, default=1)
    #: id of the newest lead comment on this clip addressed to this annotator that they have
    #: read; larger ids are unread (comment ids are never reused)
    comments_read: Mapped[Optional[int]] = mapped_column(Integer)
    __mapper_args__ = {"version_id_col": version}


class ClipLabel(Base):
    __tablename__ = "clip_labels"
    __table_args__ = (UniqueConstraint("clip_id", "annotator_id"), NO_ID_REUSE)
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    annotator_id: Mapped[annotator_fk]
    label_id: Mapped[label_fk]
    updated_at: Mapped[when]
    version: Mapped[int] = mapped_column(Integer, default=1)
    label: Mapped[Label] = relationship(lazy="joined")
    __mapper_args__ = {"version_id_col": version}


class Segment(Base):
    __tablename__ = "segments"
    __table_args__ = (
        CheckConstraint("start_frame >= 0", name="start"),
        CheckConstraint("end_frame > start_frame", name="order"),
        NO_ID_REUSE,
    )
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    annotator_id: Mapped[annotator_fk]
    # None: marked before its annotator chose a label ("unlabelled"); setting the clip label
    # fills it, or the annotator gives it one
    label_id: Mapped[Optional[int]] = mapped_column(ForeignKey("labels.id", ondelete="RESTRICT"))
    start_frame: Mapped[int] = mapped_column(Integer)
    end_frame: Mapped[int] = mapped_column(Integer, doc="exclusive")
    updated_at: Mapped[when]
    version: Mapped[int] = mapped_column(Integer, default=1)
    label: Mapped[Optional[Label]] = relationship(lazy="joined")
    __mapper_args__ = {"version_id_col": version}


class Caption(Base):
    __tablename__ = "captions"
    __table_args__ = NO_ID_REUSE
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    annotator_id: Mapped[annotator_fk]
    position: Mapped[int] = mapped_column(Integer, default=0)
    text: Mapped[str] = mapped_column(Text)
    segment_id: Mapped[Optional[int]] = mapped_column(ForeignKey("segments.id", ondelete="SET NULL"))
    updated_at: Mapped[when]
    version: Mapped[int] = mapped_column(Integer, default=1)
    __mapper_args__ = {"version_id_col": version}


class GoldLabel(Base):
    __tablename__ = "gold_labels"
    __table_args__ = (UniqueConstraint("clip_id"), NO_ID_REUSE)
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    label_id: Mapped[label_fk]
    lead_id: Mapped[int] = mapped_column(ForeignKey("annotators.id", ondelete="RESTRICT"))
    decided_at: Mapped[when]
    version: Mapped[int] = mapped_column(Integer, default=1)
    label: Mapped[Label] = relationship(lazy="joined")
    __mapper_args__ = {"version_id_col": version}


class GoldSegment(Base):
    __tablename__ = "gold_segments"
    __table_args__ = (CheckConstraint("end_frame > start_frame AND start_frame >= 0", name="order"),
                      NO_ID_REUSE)
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    label_id: Mapped[label_fk]
    start_frame: Mapped[int] = mapped_column(Integer)
    end_frame: Mapped[int] = mapped_column(Integer)
    lead_id: Mapped[int] = mapped_column(ForeignKey("annotators.id", ondelete="RESTRICT"))
    decided_at: Mapped[when]
    label: Mapped[Label] = relationship(lazy="joined")


class GoldCaption(Base):
    __tablename__ = "gold_captions"
    __table_args__ = NO_ID_REUSE
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    position: Mapped[int] = mapped_column(Integer, default=0)
    text: Mapped[str] = mapped_column(Text)
    source_caption_id: Mapped[Optional[int]] = mapped_column(
        ForeignKey("captions.id", ondelete="SET NULL"))
    lead_id: Mapped[int] = mapped_column(ForeignKey("annotators.id", ondelete="RESTRICT"))
    decided_at: Mapped[when]


class CheckClip(Base):
    """A clip whose answer is known in advance, mixed into annotators' work to measure them.
    Only leads may see these rows (on a server the database refuses every other login)."""

    __tablename__ = "check_clips"
    clip_id: Mapped[int] = mapped_column(ForeignKey("clips.id", ondelete="CASCADE"),
                                         primary_key=True, autoincrement=False)
    label_id: Mapped[label_fk]
    lead_id: Mapped[int] = mapped_column(ForeignKey("annotators.id", ondelete="RESTRICT"))
    marked_at: Mapped[when]
    label: Mapped[Label] = relationship(lazy="joined")


class ReviewComment(Base):
    __tablename__ = "review_comments"
    __table_args__ = NO_ID_REUSE
    id: Mapped[intpk]
    clip_id: Mapped[clip_fk]
    annotator_id: Mapped[Optional[int]] = mapped_column(ForeignKey("annotators.id", ondelete="CASCADE"))
    lead_id: Mapped[int] = mapped_column(ForeignKey("annotators.id", ondelete="RESTRICT"))
    text: Mapped[str] = mapped_column(Text)
    created_at: Mapped[when]


class Edit(Base):
    """One user action, append-only. ``before``/``after`` hold the row as plain JSON (None when
    the row did not exist), so the action can be undone, redone and audited."""

    __tablename__ = "edits"
    id: Mapped[intpk]
    at: Mapped[when]
    annotator_id: Mapped[Optional[int]] = mapped_column(ForeignKey("annotators.id", ondelete="SET NULL"), index=True)
    action: Mapped[str] = mapped_column(String(40))
    entity: Mapped[str] = mapped_column(String(40))
    entity_id: Mapped[Optional[int]] = mapped_column(Integer)
    clip_id: Mapped[Optional[int]] = mapped_column(Integer, index=True)
    before: Mapped[Optional[dict[str, Any]]] = mapped_column(JSON)
    after: Mapped[Optional[dict[str, Any]]] = mapped_column(JSON)
    reverts: Mapped[Optional[int]] = mapped_column(Integer, doc="id of the edit this one undoes")
