"""Queries the annotator workbench needs: queue pages with one person's state, the next clip
they have not finished, their own label of one clip and, with blind mode off, what the others
did on it."""

from __future__ import annotations

from typing import Any

from sqlalchemy import and_, func, or_, select
from sqlalchemy.orm import Session

from ..store.models import (
    Annotator,
    Assignment,
    Caption,
    Clip,
    ClipLabel,
    Label,
    ReviewComment,
)
from ..types import ClipRef, CommentNote, OthersWork, QueueRow  # noqa: F401 (re-exported)
from .catalog import ClipInfo, clip_info
from .context import Service

#: per-person states that count as finished work
FINISHED = ("submitted", "skipped")


_CLIP_COLUMNS = (Clip.id, Clip.path, Clip.sha256, Clip.fps, Clip.frame_count, Clip.duration,
                 Clip.width, Clip.height, Clip.group_key, Clip.source, Clip.licence, Clip.consent,
                 Clip.state, Clip.fingerprint)  # in ClipInfo's field order








class Workbench(Service):
    def _queue_stmt(self, s: Session, me, state, label, group, assignee):
        """Clips with ``me``'s state and label; ``state``/``label`` filter on ``me``'s own."""
        # plain columns, not ORM entities: building 100k rows stays cheap
        stmt = (select(*_CLIP_COLUMNS, Assignment.state, Label.name).select_from(Clip)
                .outerjoin(Assignment, and_(Assignment.clip_id == Clip.id,
                                            Assignment.annotator_id == me.id))
                .outerjoin(ClipLabel, and_(ClipLabel.clip_id == Clip.id,
                                           ClipLabel.annotator_id == me.id))
                .outerjoin(Label, Label.id == ClipLabel.label_id))
        stmt = self._in_scope(s, stmt, group, assignee)
        if state == "open":
            stmt = stmt.where(or_(Assignment.state.is_(None), Assignment.state == "open"))
        elif state == "unfinished":
            stmt = stmt.where(or_(Assignment.state.is_(None), Assignment.state.not_in(FINISHED)))
        elif state:
            stmt = stmt.where(Assignment.state == state)
        if label:
            stmt = stmt.where(ClipLabel.label_id == self.ctx.label(s, label).id)
        return stmt

    def _in_scope(self, s: Session, stmt, group, assignee):
        """``stmt`` limited to one group and/or the clips assigned to one person."""
        if group:
            stmt = stmt.where(Clip.group_key == group)
        if assignee:
            who = self.ctx.annotator(s, assignee)
            stmt = stmt.where(Clip.id.in_(select(Assignment.clip_id).where(
                Assignment.annotator_id == who.id)))
        return stmt

    def _queue_ids(self, s: Session, me, filters: dict):
        """Clip ids of :meth:`queue_rows` with ``filters``, for counting. Without a state or
        label filter the person's own rows (at most one per clip, by their unique keys) are
        not joined at all, which makes counting 100k clips several times cheaper."""
        if filters.get("state") or filters.get("label"):
            return self._queue_stmt(s, me, filters.get("state"), filters.get("label"),
                                    filters.get("group"), filters.get("assignee")).with_only_columns(Clip.id)
        return self._in_scope(s, select(Clip.id), filters.get("group"), filters.get("assignee"))

    def find_clips(self, text: str, *, limit: int = 20) -> list[ClipInfo]:
        """Clips whose number is ``text`` or whose media path contains it (any case), the
        number first, then in id order."""
        text = text.strip().lstrip("#")
        def q(s: Session) -> list[ClipInfo]:
            if not text:
                return []
            found = []
            if text.isdigit():
                c = s.get(Clip, int(text))
                found = [clip_info(c)] if c is not None else []
            like = "%" + text.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_") + "%"
            stmt = select(Clip).where(Clip.path.ilike(like, escape="\\")).order_by(Clip.id).limit(limit)
            found += [clip_info(c) for c in s.scalars(stmt) if not found or c.id != found[0].id]
            return found[:limit]
        return self.ctx.read(q)

    def queue_rows(self, annotator: Any = None, *, state: str | None = None,
                   label: str | None = None, group: str | None = None,
                   assignee: str | None = None, offset: int = 0,
                   limit: int | None = None) -> list[QueueRow]:
        """A page of clips in id order with ``annotator``'s own state and label (default: the
        current user). ``state`` (open, unfinished, submitted, skipped, unsure) and ``label``
        filter on that person's own work only, so blind mode shows nothing of others'."""
        def q(s: Session) -> list[QueueRow]:
            me = self.ctx.annotator(s, annotator)
            stmt = self._queue_stmt(s, me, state, label, group, assignee).order_by(Clip.id).offset(offset)
            if limit is not None:
                stmt = stmt.limit(limit)
            return [QueueRow(ClipInfo(*r[:-2]), r[-2] or "open", r[-1]) for r in s.execute(stmt)]
        return self.ctx.read(q)

    def queue_row(self, clip: ClipRef, annotator: Any = None, **filters: Any) -> QueueRow | None:
        """The :meth:`queue_rows` row of one clip, or None when the filters leave it out."""
        def q(s: Session) -> QueueRow | None:
            c, me = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            stmt = self._queue_stmt(s, me, filters.get("state"), filters.get("label"),
                                    filters.get("group"), filters.get("assignee"))
            r = s.execute(stmt.where(Clip.id == c.id)).first()
            return None if r is None else QueueRow(ClipInfo(*r[:-2]), r[-2] or "open", r[-1])
        return self.ctx.read(q)

    def queue_count(self, annotator: Any = None, **filters: Any) -> int:
        """Number of rows :meth:`queue_rows` yields with the same filters."""
        def q(s: Session) -> int:
            me = self.ctx.annotator(s, annotator)
            sub = self._queue_ids(s, me, filters)
            return s.scalar(select(func.count()).select_from(sub.subquery())) or 0
        return self.ctx.read(q)

    def queue_index(self, clip: ClipRef, annotator: Any = None, **filters: Any) -> int | None:
        """Row number of ``clip`` in :meth:`queue_rows` with the same filters, or None."""
        def q(s: Session) -> int | None:
            c, me = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            stmt = self._queue_ids(s, me, filters)
            if s.scalar(stmt.where(Clip.id == c.id)) is None:
                return None
            return s.scalar(select(func.count()).select_from(stmt.where(Clip.id < c.id).subquery())) or 0
        return self.ctx.read(q)

    def next_unfinished_clip(self, annotator: Any = None, *, after: Any = None,
                             wrap: bool = True) -> int | None:
        """Id of the first clip after ``after`` (by id) that ``annotator`` has neither submitted
        nor skipped; wraps round to the start when ``wrap``. None when all are finished."""
        def q(s: Session) -> int | None:
            me = self.ctx.annotator(s, annotator)
            done = select(Assignment.clip_id).where(Assignment.annotator_id == me.id,
                                                    Assignment.state.in_(FINISHED))
            base = select(Clip.id).where(Clip.id.not_in(done)).order_by(Clip.id).limit(1)
            start = self.ctx.clip(s, after).id if after is not None else 0
            found = s.scalar(base.where(Clip.id > start))
            if found is None and wrap:
                found = s.scalar(base)
            return found
        return self.ctx.read(q)

    def my_clip_label(self, clip: ClipRef, annotator: Any = None) -> str | None:
        """``annotator``'s own label of ``clip`` (default: the current user), or None."""
        def q(s: Session) -> str | None:
            c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            return s.scalar(select(Label.name).join(ClipLabel, ClipLabel.label_id == Label.id)
                            .where(ClipLabel.clip_id == c.id, ClipLabel.annotator_id == a.id))
        return self.ctx.read(q)

    def caption_versions(self, clip: ClipRef, annotator: Any = None) -> dict[int, int]:
        """``{caption id: version}`` of ``annotator``'s captions of ``clip`` (default: the current
        user): the versions a later ``update_caption(..., expected_version=...)`` checks against."""
        def q(s: Session) -> dict[int, int]:
            c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            return dict(s.execute(select(Caption.id, Caption.version).where(
                Caption.clip_id == c.id, Caption.annotator_id == a.id)).all())
        return self.ctx.read(q)

    def others_work(self, clip: ClipRef, annotator: Any = None) -> OthersWork:
        """Everyone else's clip label, captions and segments of ``clip`` (others than
        ``annotator``, default the current user). Blind mode on (:meth:`blind_mode`) gives an
        empty :class:`OthersWork` without reading any of it."""
        if self.peers.team.blind_mode():
            return OthersWork([], [], [])
        me = self.ctx.read(lambda s: self.ctx.annotator(s, annotator).name)
        labels = [(who, label) for _c, who, label in self.peers.annotation.clip_labels(clip=clip) if who != me]
        captions = [c for c in self.peers.annotation.caption_rows(clip=clip) if c.annotator != me]
        segments = [g for g in self.peers.annotation.segments(clip=clip) if g.annotator != me]
        return OthersWork(labels, captions, segments)

    # ---- lead comments, as their addressee sees them ----------------------------------------
    def _comments_to(self, s: Session, me, clip_id: int | None = None):
        """(comment, lead name, read up to) of comments addressed to ``me``; only those rows
        (on a server, row-level security shows an annotator nothing else)."""
        lead = Annotator.__table__.alias("lead")
        stmt = (select(ReviewComment, lead.c.name, Assignment.comments_read)
                .join(lead, lead.c.id == ReviewComment.lead_id)
                .outerjoin(Assignment, and_(Assignment.clip_id == ReviewComment.clip_id,
                                            Assignment.annotator_id == me.id))
                .where(ReviewComment.annotator_id == me.id)
                .order_by(ReviewComment.clip_id, ReviewComment.id))
        if clip_id is not None:
            stmt = stmt.where(ReviewComment.clip_id == clip_id)
        return s.execute(stmt).all()

    def my_comments(self, clip: ClipRef, annotator: Any = None) -> list[CommentNote]:
        """Lead comments addressed to ``annotator`` (default: the current user) on ``clip``,
        oldest first, each marked unread until :meth:`mark_comments_read`. Comments addressed
        to others, or to no one, are never among them."""
        def q(s: Session) -> list[CommentNote]:
            c, me = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            return [CommentNote(r.id, r.clip_id, lead, r.text, r.created_at,
                                read is None or r.id > read)
                    for r, lead, read in self._comments_to(s, me, c.id)]
        return self.ctx.read(q)

    def unread_comments(self, annotator: Any = None) -> dict[int, int]:
        """``{clip id: number of unread comments}`` addressed to ``annotator`` (default: the
        current user); clips with none are left out."""
        def q(s: Session) -> dict[int, int]:
            me = self.ctx.annotator(s, annotator)
            out: dict[int, int] = {}
            for r, _lead, read in self._comments_to(s, me):
                if read is None or r.id > read:
                    out[r.clip_id] = out.get(r.clip_id, 0) + 1
            return out
        return self.ctx.read(q)

    def mark_comments_read(self, clip: ClipRef, annotator: Any = None) -> int:
        """Mark every comment addressed to ``annotator`` (default: the current user) on ``clip``
        as read; returns how many were unread. The read state lives on the person's own
        assignment of the clip (made when missing, as opening work on a clip does); not an edit
        of the data, so it is not in the edit history and not undone."""
        def work(s: Session) -> int:
            c, me = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            rows = self._comments_to(s, me, c.id)
            if not rows:
                return 0
            newest = max(r.id for r, _, _ in rows)
            read = rows[0][2]
            unread = sum(read is None or r.id > read for r, _, _ in rows)
            if unread:
                self.peers.annotation._touch(s, c, me).comments_read = newest
            return unread
        return self.ctx.write(work)
