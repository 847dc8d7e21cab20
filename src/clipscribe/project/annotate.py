"""Annotation edits: clip labels, segments, captions and a person's clip states (the edit
history and undo live in :mod:`.history`)."""

from __future__ import annotations

from typing import Any

from sqlalchemy import func, select
from sqlalchemy import text as sql_text
from sqlalchemy.orm import Session
from sqlalchemy.orm.attributes import set_committed_value

from ..errors import GuidelineNotMet, RecordError, StaleWriteError
from ..schema.caption_rules import missing_at_submit
from ..schema.records import MAX_CAPTION_CHARS
from ..store.models import (
    Annotator,
    Assignment,
    Caption,
    Clip,
    ClipLabel,
    Edit,
    GoldLabel,
    Label,
    Segment,
    utcnow,
)
from ..types import CaptionInfo, ClipRef, SegmentInfo  # noqa: F401 (re-exported)
from .context import Service, require, row_dict


class Annotation(Service):
    # ---- clip labels ------------------------------------------------------------------
    def set_clip_label(self, clip: ClipRef, annotator: Any, label: str | None) -> int | None:
        """Set (or with ``None`` clear) one annotator's label of a clip. Setting it also gives
        that label to the annotator's unlabelled segments of the clip, in the same edit (one
        undo step); clearing it leaves segments as they are."""
        return self.ctx.write(lambda s: self._set_clip_label(s, clip, annotator, label))

    def _set_clip_label(self, s: Session, clip: Any, annotator: Any, label: str | None) -> int | None:
        c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
        row = s.scalar(select(ClipLabel).where(ClipLabel.clip_id == c.id, ClipLabel.annotator_id == a.id))
        if label is None:
            if row is not None:
                before = row_dict(row)
                s.delete(row)
                s.flush()
                self.ctx.log(s, "clear", "clip_label", before["id"], c.id, before, None)
                self._reopen(s, c.id, a.id)
            return None
        lab = self.ctx.label(s, label)
        before = row_dict(row) if row is not None else None
        if row is None:
            row = ClipLabel(clip_id=c.id, annotator_id=a.id, label_id=lab.id)
            s.add(row)
        elif row.label_id == lab.id:
            if self._fill_unlabelled(s, c, a, lab):
                self._reopen(s, c.id, a.id)
            return row.id
        else:
            row.label_id, row.updated_at = lab.id, utcnow()
        s.flush()
        self._touch(s, c, a)
        self.ctx.log(s, "set", "clip_label", row.id, c.id, before, row_dict(row))
        self._fill_unlabelled(s, c, a, lab)
        self._reopen(s, c.id, a.id)
        return row.id

    def _fill_unlabelled(self, s: Session, c: Clip, a: Annotator, lab: Label) -> int:
        """Give ``lab`` to the annotator's unlabelled segments of the clip, each change in the
        history of the write ``s`` belongs to; returns how many."""
        rows = list(s.scalars(select(Segment).where(
            Segment.clip_id == c.id, Segment.annotator_id == a.id, Segment.label_id.is_(None))
            .order_by(Segment.start_frame, Segment.id)))
        for g in rows:
            before = row_dict(g)
            g.label_id, g.updated_at = lab.id, utcnow()
            s.flush()
            self.ctx.log(s, "change", "segment", g.id, c.id, before, row_dict(g))
        return len(rows)

    def _owned_by(self, s: Session, stmt, model, clip: Any, annotator: Any):
        """Narrow a query over a per-annotator table to one clip and/or one annotator."""
        if clip is not None:
            stmt = stmt.where(model.clip_id == self.ctx.clip(s, clip).id)
        if annotator is not None:
            stmt = stmt.where(model.annotator_id == self.ctx.annotator(s, annotator).id)
        return stmt

    def _kept_clip_labels(self, s: Session) -> list[tuple[int, str, str]]:
        """Every clip label, kept from the last read while nothing it depends on moved: the
        board's trend and its agreement report both read them (a second read cost a big
        project a second). The stamp covers the rows (count, largest id, sum of versions:
        every update bumps a row's version), the people and labels tables (their names are
        put in) and the newest edit of the history (every write through clipscribe logs one)."""
        stamp = (tuple(s.execute(select(func.count(), func.max(ClipLabel.id),
                                        func.coalesce(func.sum(ClipLabel.version), 0))).one()),
                 s.scalar(select(func.max(Edit.id))),
                 tuple(s.execute(select(Annotator.id, Annotator.name).order_by(Annotator.id))),
                 tuple(s.execute(select(Label.id, Label.name).order_by(Label.id))))
        kept = getattr(self, "_labels_kept", None)
        if kept is not None and kept[0] == stamp:
            return list(kept[1])
        rows = _all_clip_labels(s)
        self._labels_kept = (stamp, rows)
        return list(rows)

    def clip_labels(self, *, annotator: Any = None, clip: ClipRef | None = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator name, label)`` for every clip label, ordered by clip then person."""
        def q(s: Session) -> list[tuple[int, str, str]]:
            if clip is None and annotator is None:
                return self._kept_clip_labels(s)
            stmt = (select(ClipLabel.clip_id, Annotator.name, Label.name)
                    .join(Annotator, Annotator.id == ClipLabel.annotator_id)
                    .join(Label, Label.id == ClipLabel.label_id).order_by(ClipLabel.clip_id, Annotator.name))
            stmt = self._owned_by(s, stmt, ClipLabel, clip, annotator)
            return [tuple(r) for r in s.execute(stmt)]
        return self.ctx.read(q)

    # ---- segments ---------------------------------------------------------------------
    def add_segment(self, clip: ClipRef, annotator: Any, label: str | None, start: int, end: int) -> int:
        """Add a segment ``[start, end)`` in frames; returns its id. ``label`` None stores it
        unlabelled (the annotator's next clip label, or a label chosen for it, fills it)."""
        return self.ctx.write(lambda s: self._add_segment(s, clip, annotator, label, start, end))

    def _add_segment(self, s: Session, clip: Any, annotator: Any, label: str | None, start: int,
                     end: int) -> int:
        c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
        lab_id = None if label is None else self.ctx.label(s, label).id
        self._check_segment(s, c, a, start, end, None)
        row = Segment(clip_id=c.id, annotator_id=a.id, label_id=lab_id, start_frame=start, end_frame=end)
        s.add(row)
        s.flush()
        self._touch(s, c, a)
        self.ctx.log(s, "add", "segment", row.id, c.id, None, row_dict(row))
        self._reopen(s, c.id, a.id)
        return row.id

    def update_segment(self, segment_id: int, *, start: int | None = None, end: int | None = None,
                       label: str | None = None) -> None:
        def work(s: Session) -> None:
            row = s.get(Segment, segment_id)
            require(row is not None, f"segment {segment_id}: no such segment")
            before = row_dict(row)
            new_start = row.start_frame if start is None else start
            new_end = row.end_frame if end is None else end
            self._check_segment(s, s.get(Clip, row.clip_id), s.get(Annotator, row.annotator_id),
                                new_start, new_end, row.id)
            row.start_frame, row.end_frame = new_start, new_end
            if label is not None:
                row.label_id = self.ctx.label(s, label).id
            row.updated_at = utcnow()
            s.flush()
            self.ctx.log(s, "change", "segment", row.id, row.clip_id, before, row_dict(row))
            self._reopen(s, row.clip_id, row.annotator_id)
        self.ctx.write(work)

    def delete_segment(self, segment_id: int) -> None:
        def work(s: Session) -> None:
            row = s.get(Segment, segment_id)
            require(row is not None, f"segment {segment_id}: no such segment")
            for cap in s.scalars(select(Caption).where(Caption.segment_id == row.id)):
                before = row_dict(cap)
                cap.segment_id = None
                s.flush()
                self.ctx.log(s, "change", "caption", cap.id, cap.clip_id, before, row_dict(cap))
            before = row_dict(row)
            s.delete(row)
            s.flush()
            self.ctx.log(s, "delete", "segment", before["id"], before["clip_id"], before, None)
            self._reopen(s, before["clip_id"], before["annotator_id"])
        self.ctx.write(work)

    def split_segment(self, segment_id: int, at: int) -> int:
        """Cut a segment in two at frame ``at``; returns the id of the new right part."""
        def work(s: Session) -> int:
            row = s.get(Segment, segment_id)
            require(row is not None, f"segment {segment_id}: no such segment")
            require(row.start_frame < at < row.end_frame,
                    f"segment {segment_id}: frame {at} is not strictly inside [{row.start_frame}, {row.end_frame})")
            before = row_dict(row)
            right = Segment(clip_id=row.clip_id, annotator_id=row.annotator_id, label_id=row.label_id,
                            start_frame=at, end_frame=row.end_frame)
            row.end_frame, row.updated_at = at, utcnow()
            s.flush()
            self.ctx.log(s, "change", "segment", row.id, row.clip_id, before, row_dict(row))
            s.add(right)
            s.flush()
            self.ctx.log(s, "add", "segment", right.id, right.clip_id, None, row_dict(right))
            self._reopen(s, right.clip_id, right.annotator_id)
            return right.id
        return self.ctx.write(work)

    def merge_segments(self, first_id: int, second_id: int) -> None:
        """Join two segments of one annotator into the first (spanning both; first's label)."""
        def work(s: Session) -> None:
            a, b = s.get(Segment, first_id), s.get(Segment, second_id)
            require(a is not None and b is not None, "merge: no such segment")
            require(a.clip_id == b.clip_id and a.annotator_id == b.annotator_id,
                    "merge: segments belong to different clips or annotators")
            before_a, before_b = row_dict(a), row_dict(b)
            for cap in s.scalars(select(Caption).where(Caption.segment_id == b.id)):
                cb = row_dict(cap)
                cap.segment_id = a.id
                s.flush()
                self.ctx.log(s, "change", "caption", cap.id, cap.clip_id, cb, row_dict(cap))
            s.delete(b)
            s.flush()
            self.ctx.log(s, "delete", "segment", before_b["id"], b.clip_id, before_b, None)
            a.start_frame, a.end_frame = min(a.start_frame, b.start_frame), max(a.end_frame, b.end_frame)
            a.updated_at = utcnow()
            s.flush()
            self.ctx.log(s, "change", "segment", a.id, a.clip_id, before_a, row_dict(a))
            self._reopen(s, a.clip_id, a.annotator_id)
        self.ctx.write(work)

    def segments(self, *, clip: ClipRef | None = None, annotator: Any = None) -> list[SegmentInfo]:
        """Every segment, ordered by clip, person, start; ``label`` is None for an unlabelled
        one (marked before its annotator chose a label)."""
        def q(s: Session) -> list[SegmentInfo]:
            stmt = (select(Segment, Annotator.name).join(Annotator, Annotator.id == Segment.annotator_id)
                    .order_by(Segment.clip_id, Annotator.name, Segment.start_frame, Segment.id))
            stmt = self._owned_by(s, stmt, Segment, clip, annotator)
            return [SegmentInfo(g.id, g.clip_id, name, g.label.name if g.label else None,
                                g.start_frame, g.end_frame)
                    for g, name in s.execute(stmt)]
        return self.ctx.read(q)

    def _check_segment(self, s: Session, c: Clip, a: Annotator, start: int, end: int,
                       own_id: int | None) -> None:
        require(isinstance(start, int) and isinstance(end, int), "segment bounds must be whole frames")
        require(0 <= start < end, f"segment [{start}, {end}): needs 0 <= start < end")
        require(end <= c.frame_count, f"segment [{start}, {end}): clip {c.id} has only {c.frame_count} frames")
        if not self.ctx.settings.segments_may_overlap:
            clash = s.scalar(select(Segment).where(
                Segment.clip_id == c.id, Segment.annotator_id == a.id, Segment.start_frame < end,
                Segment.end_frame > start, Segment.id != (own_id or -1)))
            require(clash is None, f"segment [{start}, {end}) overlaps segment "
                    f"[{clash.start_frame}, {clash.end_frame}) and this project does not allow overlaps"
                    if clash else "")

    # ---- captions ---------------------------------------------------------------------
    def add_caption(self, clip: ClipRef, annotator: Any, text: str, *, segment: int | None = None,
                    position: int | None = None) -> int:
        """Add one reference caption; returns its id."""
        return self.ctx.write(lambda s: self._add_caption(s, clip, annotator, text, segment, position))

    def _add_caption(self, s: Session, clip: Any, annotator: Any, text: str, segment: int | None,
                     position: int | None) -> int:
        text = _caption_text(text)
        c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
        if segment is not None:
            seg = s.get(Segment, segment)
            require(seg is not None and seg.clip_id == c.id, f"segment {segment}: not a segment of clip {c.id}")
        pos = position
        if pos is None:
            last = s.scalar(select(func.max(Caption.position)).where(
                Caption.clip_id == c.id, Caption.annotator_id == a.id))
            pos = 0 if last is None else last + 1
        row = Caption(clip_id=c.id, annotator_id=a.id, text=text, position=pos, segment_id=segment)
        s.add(row)
        s.flush()
        self._touch(s, c, a)
        self.ctx.log(s, "add", "caption", row.id, c.id, None, row_dict(row))
        self._reopen(s, c.id, a.id)
        return row.id

    def update_caption(self, caption_id: int, text: str | None = None, *,
                       segment: int | None | type(...) = ..., expected_version: int | None = None) -> int:
        """Change a caption's text and/or segment; returns the new version. A caption changed
        or deleted meanwhile by someone else raises StaleWriteError: changed since
        ``expected_version`` when given, else since this project object last read or wrote it
        (a caption it never read is written as it is now)."""
        expected_version = self._expected_caption(caption_id, expected_version)
        def work(s: Session) -> int:
            row = _caption_to_write(s, caption_id, expected_version, "your text was not saved")
            before = row_dict(row)
            if text is not None:
                row.text = _caption_text(text)
            if segment is not ...:
                if segment is not None:
                    seg = s.get(Segment, segment)
                    require(seg is not None and seg.clip_id == row.clip_id,
                            f"segment {segment}: not a segment of clip {row.clip_id}")
                row.segment_id = segment
            row.updated_at = utcnow()
            s.flush()
            self.ctx.log(s, "change", "caption", row.id, row.clip_id, before, row_dict(row))
            self._reopen(s, row.clip_id, row.annotator_id)
            return row.version
        try:
            return self.ctx.write(work)
        except StaleWriteError as exc:
            raise self._caption_conflict(exc, caption_id, text) from None

    def delete_caption(self, caption_id: int, *, expected_version: int | None = None) -> None:
        """Delete a caption. A caption changed or deleted meanwhile by someone else (since
        ``expected_version``, else since this object last read it) raises StaleWriteError and
        nothing is deleted."""
        expected_version = self._expected_caption(caption_id, expected_version)
        def work(s: Session) -> None:
            row = _caption_to_write(s, caption_id, expected_version, "nothing was deleted")
            before = row_dict(row)
            s.delete(row)
            s.flush()
            self.ctx.log(s, "delete", "caption", before["id"], before["clip_id"], before, None)
            self._reopen(s, before["clip_id"], before["annotator_id"])
        try:
            self.ctx.write(work)
        except StaleWriteError as exc:
            raise self._caption_conflict(exc, caption_id, None) from None

    def _caption_conflict(self, exc: StaleWriteError, caption_id: int,
                          kept: str | None) -> StaleWriteError:
        """The refusal of a caption write, with what is stored now as typed facts."""
        cur = self.ctx.read(lambda s: s.get(Caption, caption_id))
        return StaleWriteError(str(exc), kept_text=kept,
                               current_text=cur.text if cur is not None else None,
                               current_version=cur.version if cur is not None else None,
                               deleted=cur is None)

    def _expected_caption(self, caption_id: int, expected_version: int | None) -> int | None:
        if expected_version is not None:
            return expected_version
        return self.ctx.uow.seen_caption_versions.get(caption_id)

    def captions(self, *, clip: ClipRef | None = None, annotator: Any = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator name, text)`` for every caption, ordered by clip, person, position."""
        def q(s: Session) -> list[tuple[int, str, str]]:
            # plain columns, not caption objects: a report reads every caption of the project
            stmt = (select(Caption.clip_id, Annotator.name, Caption.text)
                    .join(Annotator, Annotator.id == Caption.annotator_id)
                    .order_by(Caption.clip_id, Annotator.name, Caption.position, Caption.id))
            stmt = self._owned_by(s, stmt, Caption, clip, annotator)
            return [tuple(r) for r in s.execute(stmt)]
        return self.ctx.read(q)

    def caption_rows(self, *, clip: ClipRef | None = None, annotator: Any = None) -> list[CaptionInfo]:
        def q(s: Session) -> list[CaptionInfo]:
            stmt = (select(Caption, Annotator.name).join(Annotator, Annotator.id == Caption.annotator_id)
                    .order_by(Caption.clip_id, Annotator.name, Caption.position, Caption.id))
            stmt = self._owned_by(s, stmt, Caption, clip, annotator)
            return [CaptionInfo(c.id, c.clip_id, name, c.position, c.text, c.segment_id)
                    for c, name in s.execute(stmt)]
        return self.ctx.read(q)

    # ---- clip states per annotator ----------------------------------------------------
    def set_clip_state(self, clip: ClipRef, annotator: Any, state: str, reason: str | None = None,
                       *, override: str | None = None) -> None:
        """Mark one's work on a clip: ``submitted``, ``skipped`` (needs a reason), ``unsure`` or
        ``open``. Submitting checks the caption guideline when the project asks for it
        (``caption_guideline.at_submit``): captions that miss it raise :class:`GuidelineNotMet`
        naming what is missing, unless ``override`` gives a reason ("warn"; the override and
        what it let through are recorded in the edit history) — a "block" refuses even then."""
        require(state in ("open", "submitted", "skipped", "unsure"),
                f"state {state!r}: use open, submitted, skipped or unsure")
        require(state != "skipped" or bool(reason and reason.strip()), "skipping a clip needs a reason")
        require(override is None or bool(override.strip()), "an override needs a reason")
        self.ctx.write(lambda s: self._set_clip_state(s, clip, annotator, state, reason, override))

    def _set_clip_state(self, s: Session, clip: Any, annotator: Any, state: str,
                        reason: str | None, override: str | None = None, *,
                        check: bool = True) -> None:
        """Write one state; ``check``: check the guideline at submit."""
        c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
        missing = self._guideline_missing(s, c, a) if check and state == "submitted" else []
        if missing:
            self._refuse_submit(c, missing, override)
        row = self._touch(s, c, a)
        before = row_dict(row)
        row.state, row.reason, row.updated_at = state, reason, utcnow()
        s.flush()
        self._refresh_clip_state(s, c)
        self.ctx.log(s, "state", "assignment", row.id, c.id, before, row_dict(row))
        if missing:
            self.ctx.log(s, "override", "guideline", row.id, c.id, None,
                         {"missing": missing, "reason": override})

    def _guideline_missing(self, s: Session, c: Clip, a: Annotator) -> list[str]:
        g = self.ctx.settings.caption_guideline
        if g.at_submit == "off":
            return []
        texts = list(s.scalars(select(Caption.text).where(
            Caption.clip_id == c.id, Caption.annotator_id == a.id)
            .order_by(Caption.position, Caption.id)))
        return missing_at_submit(texts, captions_per_clip=g.captions_per_clip,
                                 min_words=g.min_words, max_words=g.max_words,
                                 banned_openings=g.banned_openings)

    def _refuse_submit(self, c: Clip, missing: list[str], override: str | None) -> None:
        """GuidelineNotMet unless an override is given and the project allows one."""
        blocking = self.ctx.settings.caption_guideline.at_submit == "block"
        if override is not None and not blocking:
            return
        what = "; ".join(missing)
        tail = (" — the lead made the guideline a block, so fix the captions first"
                if blocking else " — fix the captions, or submit with an override giving a reason")
        raise GuidelineNotMet(f"clip {c.id} misses the caption guideline: {what}{tail}",
                              missing=tuple(missing), blocking=blocking)

    def _reopen(self, s: Session, clip_id: int, annotator_id: int) -> None:
        """An edit of one's own submitted clip reopens it (recorded, undone with the edit):
        a submitted clip never changes silently."""
        row = s.scalar(select(Assignment).where(Assignment.clip_id == clip_id,
                                                Assignment.annotator_id == annotator_id))
        if row is None or row.state != "submitted":
            return
        before = row_dict(row)
        row.state, row.updated_at = "open", utcnow()
        s.flush()
        self._refresh_clip_state(s, s.get(Clip, clip_id))
        self.ctx.log(s, "reopen", "assignment", row.id, clip_id, before, row_dict(row))

    def clip_state(self, clip: ClipRef, annotator: Any = None) -> tuple[str, str | None]:
        def q(s: Session) -> tuple[str, str | None]:
            c, a = self.ctx.clip(s, clip), self.ctx.annotator(s, annotator)
            row = s.scalar(select(Assignment).where(Assignment.clip_id == c.id, Assignment.annotator_id == a.id))
            return (row.state, row.reason) if row else ("open", None)
        return self.ctx.read(q)

    def _touch(self, s: Session, c: Clip, a: Annotator) -> Assignment:
        """The annotator's assignment of the clip, created on first work. On a server an
        annotator may not write ``clips.state``: the database works it out (see
        :meth:`_refresh_clip_state`)."""
        server_starts = self.ctx.is_server and c.state == "new"
        if server_starts:
            set_committed_value(c, "state", "in_progress")  # written by the database below
        mine = select(Assignment).where(Assignment.clip_id == c.id, Assignment.annotator_id == a.id)
        row = s.scalar(mine)
        if row is None and self.ctx.is_server:
            start_work(s, [(c.id, a.id)])
            row = s.scalar(mine)
        elif row is None:
            row = Assignment(clip_id=c.id, annotator_id=a.id, state="open")
            s.add(row)
            s.flush()
        if c.state == "new":
            c.state = "in_progress"
        if server_starts:
            self._refresh_clip_state(s, c)
        return row

    def _refresh_clip_state(self, s: Session, c: Clip) -> None:
        """Work a clip's state out from its gold label and everyone's assignments. On a server
        an annotator's login sees only its own assignments and may not write ``clips.state``:
        the database does it (``clipscribe_refresh_clip_state``, for a clip the caller has an
        assignment on); the loaded row takes the result without writing it again."""
        if self.ctx.is_server:
            s.flush()
            state = s.scalar(sql_text("SELECT clipscribe_refresh_clip_state(:c)"), {"c": c.id})
            set_committed_value(c, "state", state)
            return
        if s.scalar(select(GoldLabel.id).where(GoldLabel.clip_id == c.id)) is not None:
            c.state = "settled"
            return
        states = list(s.scalars(select(Assignment.state).where(Assignment.clip_id == c.id)))
        live = [st for st in states if st != "expired"]
        if live and all(st in ("submitted", "skipped") for st in live):
            c.state = "done"
        elif live:
            c.state = "in_progress"
        else:
            c.state = "new"


def start_work(s: Any, pairs: list[tuple[int, int]]) -> None:
    """On a server, make the assignments of ``(clip id, person id)`` pairs that have none,
    through the database's checked function (an annotator's login may not insert them
    itself; a refusal becomes a PermissionRefused like any other). ``s``: a session or a
    connection; a session is flushed first, so the work that justifies the row is there."""
    if isinstance(s, Session):
        s.flush()
    s.execute(sql_text("SELECT clipscribe_start(CAST(:c AS INTEGER[]), CAST(:a AS INTEGER[]))"),
              {"c": [c for c, _ in pairs], "a": [a for _, a in pairs]})


def _caption_to_write(s: Session, caption_id: int, expected_version: int | None,
                      not_done: str) -> Caption:
    """The caption row a write is about to change, refused (StaleWriteError) when it is no
    longer at ``expected_version``."""
    row = s.get(Caption, caption_id)
    if expected_version is not None and row is None:
        raise StaleWriteError(f"caption {caption_id} was deleted by someone else "
                              f"(you edited version {expected_version}); {not_done}")
    require(row is not None, f"caption {caption_id}: no such caption")
    if expected_version is not None and row.version != expected_version:
        raise StaleWriteError(f"caption {caption_id} was changed by someone else "
                              f"(version {row.version}, you edited {expected_version}); {not_done}")
    return row


def _caption_text(text: str) -> str:
    if not isinstance(text, str) or not text.strip():
        raise RecordError("caption text is blank")
    check_caption_length(text)
    return text


def check_caption_length(text: str, what: str = "caption") -> None:
    """RecordError when ``text`` is longer than the one caption limit (every door uses it)."""
    if len(text) > MAX_CAPTION_CHARS:
        raise RecordError(f"{what} is {len(text):,} characters long; the limit is "
                          f"{MAX_CAPTION_CHARS:,} — shorten it (nothing was saved)")


def _all_clip_labels(s: Session) -> list[tuple[int, str, str]]:
    """Every clip label as (clip id, annotator name, label), ordered by clip then person: the
    rows read as three id columns (no join, no ORDER BY, which cost SQLite most of the time on
    a big project), names put in from the two small tables, the order made with numpy."""
    import numpy as np

    from ..store.columns import int_columns
    people = dict(s.execute(select(Annotator.id, Annotator.name)).all())
    labels = dict(s.execute(select(Label.id, Label.name)).all())
    table = int_columns(s, select(ClipLabel.clip_id, ClipLabel.annotator_id, ClipLabel.label_id))
    if not len(table):
        return []
    ids = sorted(people, key=people.__getitem__)  # annotator ids in name order
    rank = np.zeros(max([*people, int(table[:, 1].max())]) + 1, dtype=np.int64)
    rank[ids] = np.arange(1, len(ids) + 1)   # 0: a person not (yet) visible, left out as a join would
    known = (rank[table[:, 1]] > 0) & np.isin(table[:, 2], list(labels))
    table = table[known]
    table = table[np.lexsort((rank[table[:, 1]], table[:, 0]))]
    return list(zip(table[:, 0].tolist(), map(people.__getitem__, table[:, 1].tolist()),
                    map(labels.__getitem__, table[:, 2].tolist())))
