"""Gold decisions by a lead: settled label, segments and reference captions, and comments."""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from ..errors import StaleWriteError
from ..store.models import (
    Annotator,
    Assignment,
    Caption,
    ClipLabel,
    GoldCaption,
    GoldLabel,
    GoldSegment,
    ReviewComment,
    Segment,
)
from ..types import ClipRef
from .annotate import check_caption_length
from .context import Service, require, row_dict


class Gold(Service):
    def _lead(self, s: Session, lead: Any) -> Annotator:
        """The lead a decision is recorded under (default: the person acting), who must be a
        lead; so must the person acting, when they name someone else."""
        self.ctx.lead_only(s, "settle gold or comment")
        return self.ctx.require_lead(s, "settle gold", lead)

    def gold_label_version(self, clip: ClipRef) -> int:
        """Version of a clip's gold label; 0 when it has none yet."""
        def q(s: Session) -> int:
            row = s.scalar(select(GoldLabel).where(GoldLabel.clip_id == self.ctx.clip(s, clip).id))
            return row.version if row is not None else 0
        return self.ctx.read(q)

    def set_gold_label(self, clip: ClipRef, label: str | None, *, lead: Any = None,
                       expected_version: int | None = None) -> None:
        """Settle a clip's label. With ``expected_version`` (from :meth:`gold_label_version`)
        a gold label another lead changed meanwhile raises StaleWriteError (``kept_value`` is
        your label, ``current_value`` theirs) instead of being overwritten."""
        if expected_version is None:
            self.ctx.write(lambda s: self._set_gold_label(s, clip, label, lead))
            return
        def work(s: Session) -> None:
            c = self.ctx.clip(s, clip)
            row = s.scalar(select(GoldLabel).where(GoldLabel.clip_id == c.id).with_for_update(of=GoldLabel))
            now = row.version if row is not None else 0
            if now != expected_version:
                raise _gold_conflict(c.id, label, row.label.name if row else None, now, expected_version)
            try:
                self._set_gold_label(s, c, label, lead)
            except IntegrityError:  # another lead created it first
                raise _gold_conflict(c.id, label, None, None, expected_version) from None
        self.ctx.write(work)


    def _set_gold_label(self, s: Session, clip: Any, label: str | None, lead: Any) -> None:
        c, who = self.ctx.clip(s, clip), self._lead(s, lead)
        row = s.scalar(select(GoldLabel).where(GoldLabel.clip_id == c.id))
        before = row_dict(row) if row else None
        if label is None:
            if row is not None:
                s.delete(row)
                s.flush()
                self.ctx.log(s, "clear", "gold_label", before["id"], c.id, before, None, who=who)
        else:
            lab = self.ctx.label(s, label)
            if row is None:
                row = GoldLabel(clip_id=c.id, label_id=lab.id, lead_id=who.id)
                s.add(row)
            else:
                row.label_id, row.lead_id = lab.id, who.id
            s.flush()
            self.ctx.log(s, "set", "gold_label", row.id, c.id, before, row_dict(row), who=who)
        self.peers.annotation._refresh_clip_state(s, c)

    def _drop_gold_rows(self, s: Session, model, entity: str, clip_id: int, who) -> None:
        """Delete a clip's gold rows of one kind, each deletion in the edit history."""
        for row in s.scalars(select(model).where(model.clip_id == clip_id)):
            before = row_dict(row)
            s.delete(row)
            s.flush()
            self.ctx.log(s, "delete", entity, before["id"], clip_id, before, None, who=who)

    def set_gold_segments(self, clip: ClipRef, segments: list[tuple[str, int, int]], *, lead: Any = None) -> None:
        """Replace a clip's gold segments with ``(label, start, end)`` triples."""
        def work(s: Session) -> None:
            c, who = self.ctx.clip(s, clip), self._lead(s, lead)
            self._drop_gold_rows(s, GoldSegment, "gold_segment", c.id, who)
            for label, start, end in segments:
                require(0 <= start < end <= c.frame_count, f"gold segment [{start}, {end}): outside clip {c.id}")
                row = GoldSegment(clip_id=c.id, label_id=self.ctx.label(s, label).id, start_frame=start,
                                  end_frame=end, lead_id=who.id)
                s.add(row)
                s.flush()
                self.ctx.log(s, "add", "gold_segment", row.id, c.id, None, row_dict(row), who=who)
        self.ctx.write(work)

    def set_gold_captions(self, clip: ClipRef, captions: list[str | tuple[str, int | None]], *,
                          lead: Any = None) -> None:
        """Replace a clip's gold reference captions; items are texts or ``(text, source caption id)``."""
        self.ctx.write(lambda s: self._set_gold_captions(s, clip, captions, lead))

    def _set_gold_captions(self, s: Session, clip: Any, captions: list, lead: Any) -> None:
        c, who = self.ctx.clip(s, clip), self._lead(s, lead)
        self._drop_gold_rows(s, GoldCaption, "gold_caption", c.id, who)
        for pos, item in enumerate(captions):
            text, source = (item, None) if isinstance(item, str) else item
            require(bool(text and text.strip()), "gold caption text is blank")
            check_caption_length(text, f"gold caption {pos + 1}")
            row = GoldCaption(clip_id=c.id, position=pos, text=text, source_caption_id=source, lead_id=who.id)
            s.add(row)
            s.flush()
            self.ctx.log(s, "add", "gold_caption", row.id, c.id, None, row_dict(row), who=who)

    def gold_labels(self) -> dict[int, str]:
        return self.ctx.read(lambda s: {g.clip_id: g.label.name for g in s.scalars(select(GoldLabel))})

    def gold_segments(self, clip: ClipRef | None = None) -> list[tuple[int, str, int, int]]:
        def q(s: Session):
            stmt = select(GoldSegment).order_by(GoldSegment.clip_id, GoldSegment.start_frame)
            if clip is not None:
                stmt = stmt.where(GoldSegment.clip_id == self.ctx.clip(s, clip).id)
            return [(g.clip_id, g.label.name, g.start_frame, g.end_frame) for g in s.scalars(stmt)]
        return self.ctx.read(q)

    def gold_captions(self, clip: ClipRef | None = None) -> dict[int, list[str]]:
        def q(s: Session):
            stmt = select(GoldCaption).order_by(GoldCaption.clip_id, GoldCaption.position)
            if clip is not None:
                stmt = stmt.where(GoldCaption.clip_id == self.ctx.clip(s, clip).id)
            out: dict[int, list[str]] = {}
            for g in s.scalars(stmt):
                out.setdefault(g.clip_id, []).append(g.text)
            return out
        return self.ctx.read(q)

    def add_comment(self, clip: ClipRef, text: str, *, annotator: Any = None, lead: Any = None) -> int:
        """Leave a lead's comment on a clip, optionally addressed to one annotator. Only a
        comment addressed to an annotator reaches them (on that clip, in their clip panel);
        one addressed to no one stays among the leads. See :meth:`comment_to_annotators`."""
        def work(s: Session) -> int:
            c, who = self.ctx.clip(s, clip), self._lead(s, lead)
            to = self.ctx.annotator(s, annotator).id if annotator is not None else None
            return self._add_comment(s, c.id, who, to, text)
        return self.ctx.write(work)

    def comment_to_annotators(self, clip: ClipRef, text: str, *, annotators: Any = None,
                              lead: Any = None) -> list[int]:
        """The same comment to several annotators of ``clip``, one addressed copy each, in one
        transaction. ``annotators`` defaults to everyone (leads excepted) who labelled,
        segmented, captioned, skipped or was assigned the clip. Returns the comment ids."""
        def work(s: Session) -> list[int]:
            c, who = self.ctx.clip(s, clip), self._lead(s, lead)
            if annotators is None:
                ids = set()
                for model in (ClipLabel, Segment, Caption, Assignment):
                    ids |= set(s.scalars(select(model.annotator_id).where(model.clip_id == c.id)))
                people = [a for a in s.scalars(select(Annotator).where(Annotator.id.in_(ids))
                                               .order_by(Annotator.name)) if a.role != "lead"]
            else:
                people = [self.ctx.annotator(s, a) for a in annotators]
            require(bool(people), f"clip {c.id}: no annotator has worked on it to address")
            return [self._add_comment(s, c.id, who, a.id, text) for a in people]
        return self.ctx.write(work)

    def _add_comment(self, s: Session, clip_id: int, who: Annotator, to: int | None,
                     text: str) -> int:
        require(bool(text and text.strip()), "comment is blank")
        row = ReviewComment(clip_id=clip_id, annotator_id=to, lead_id=who.id, text=text)
        s.add(row)
        s.flush()
        self.ctx.log(s, "add", "comment", row.id, clip_id, None, row_dict(row), who=who)
        return row.id

    def comments(self, clip: ClipRef | None = None) -> list[tuple[int, str | None, str, str]]:
        """``(clip id, addressee or None, lead, text)``."""
        def q(s: Session):
            stmt = select(ReviewComment).order_by(ReviewComment.id)
            if clip is not None:
                stmt = stmt.where(ReviewComment.clip_id == self.ctx.clip(s, clip).id)
            names = {a.id: a.name for a in s.scalars(select(Annotator))}
            return [(r.clip_id, names.get(r.annotator_id), names[r.lead_id], r.text) for r in s.scalars(stmt)]
        return self.ctx.read(q)


def _gold_conflict(clip_id: int, mine: str | None, theirs: str | None, now: int | None,
                   expected: int) -> StaleWriteError:
    return StaleWriteError(
        f"clip {clip_id}: another lead changed the gold label (now {theirs!r}, version {now}; "
        f"you edited version {expected}); your label {mine!r} was not saved",
        kept_value=mine, current_value=theirs, current_version=now)
