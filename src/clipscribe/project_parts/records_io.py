"""Interchange records in and out: JSON Lines (all record types) and CSV (labels)."""

from __future__ import annotations

import csv
import json
import os
from pathlib import Path, PurePosixPath
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session

from .. import media
from .catalog import probe_media
from ..errors import RecordError
from ..schema.records import (
    RECORD_TYPES, CaptionRecord, ClipRecord, CommentRecord, GoldRecord, LabelRecord, SegmentRecord,
    parse_record,
)
from ..store.models import Annotator, Caption, Clip, ReviewComment, Segment

MAX_LISTED = 20


class RecordsMixin:
    def import_records(self, path: str | os.PathLike) -> dict[str, int]:
        """Import a JSON Lines file, all or nothing. Returns counts per record type.

        Every line is validated first; then clips are probed; then everything is written in one
        transaction. Any problem raises RecordError naming file, line, field and reason, and
        nothing is written. Captions and segments identical to ones already present are not
        added twice, so importing a file again changes nothing.
        """
        src = Path(path)
        if src.suffix.lower() == ".csv":
            return self.import_labels_csv(src)
        records = _parse_jsonl(src)
        probed: dict[int, tuple[str, str, media.ProbeInfo]] = {}
        errors: list[str] = []
        for line, rec in records:
            if isinstance(rec, ClipRecord):
                try:
                    rel = _safe_relative(rec.clip)
                    rel = self.relative_media_path(self.media_root / rel)
                    info, digest = probe_media(self.media_root / rel)
                    probed[line] = (rel, digest, info)
                except (RecordError, media.MediaError, OSError) as exc:
                    errors.append(f"{src}:{line}: field 'clip': {exc}")
        _raise_if(errors, src)

        def work(s: Session) -> dict[str, int]:
            counts = {"clip": 0, "label": 0, "segment": 0, "caption": 0, "gold": 0}
            for line, rec in records:
                try:
                    # "comment" counts appear only when the file holds comments
                    counts[rec.type] = counts.get(rec.type, 0) + self._apply_record(s, rec, probed.get(line))
                except RecordError as exc:
                    field = "annotator" if "annotator" in str(exc) else "label" if "label " in str(exc) else "clip"
                    raise RecordError(f"{src}:{line}: field '{field}': {exc}") from None
            return counts
        return self._write(work)

    def _apply_record(self, s: Session, rec: Any, probed: tuple | None) -> int:
        if isinstance(rec, ClipRecord):
            rel, digest, info = probed
            if s.scalar(select(Clip.id).where(Clip.path == rel)) is not None:
                return 0
            self._insert_clip(s, rel, digest, info, rec.group, rec.source, rec.licence, rec.consent)
            return 1
        if isinstance(rec, LabelRecord):
            self._set_clip_label(s, rec.clip, rec.annotator, rec.label)
            return 1
        if isinstance(rec, SegmentRecord):
            c, a = self._clip(s, rec.clip), self._annotator(s, rec.annotator)
            if self._has_segment(s, c.id, a.id, rec):
                return 0
            self._add_segment(s, c, a, rec.label, rec.start, rec.end)
            return 1
        if isinstance(rec, CaptionRecord):
            c, a = self._clip(s, rec.clip), self._annotator(s, rec.annotator)
            if s.scalar(select(Caption.id).where(Caption.clip_id == c.id, Caption.annotator_id == a.id,
                                                 Caption.text == rec.text)) is not None:
                return 0
            seg_id = None
            if rec.segment is not None:
                seg_id = s.scalar(select(Segment.id).where(
                    Segment.clip_id == c.id, Segment.annotator_id == a.id,
                    Segment.start_frame == rec.segment[0], Segment.end_frame == rec.segment[1]))
                if seg_id is None:
                    raise RecordError(f"clip {rec.clip!r}: no segment [{rec.segment[0]}, {rec.segment[1]}) "
                                      f"by {rec.annotator!r} to tie the caption to")
            self._add_caption(s, c, a, rec.text, seg_id, None)
            return 1
        if isinstance(rec, GoldRecord):
            if rec.label is not None:
                self._set_gold_label(s, rec.clip, rec.label, rec.annotator)
            if rec.captions is not None:
                self._set_gold_captions(s, rec.clip, rec.captions, rec.annotator)
            return 1
        if isinstance(rec, CommentRecord):
            return self._import_comment(s, rec)
        raise AssertionError(rec)

    def _import_comment(self, s: Session, rec: CommentRecord) -> int:
        c, who = self._clip(s, rec.clip), self._lead(s, rec.annotator)
        to = self._annotator(s, rec.to).id if rec.to is not None else None
        if s.scalar(select(ReviewComment.id).where(
                ReviewComment.clip_id == c.id, ReviewComment.lead_id == who.id,
                ReviewComment.annotator_id.is_(to) if to is None else ReviewComment.annotator_id == to,
                ReviewComment.text == rec.text)) is not None:
            return 0  # the same comment again: imported before
        self._add_comment(s, c.id, who, to, rec.text)
        return 1

    @staticmethod
    def _has_segment(s: Session, clip_id: int, annotator_id: int, rec: SegmentRecord) -> bool:
        return s.scalar(select(Segment.id).where(
            Segment.clip_id == clip_id, Segment.annotator_id == annotator_id,
            Segment.start_frame == rec.start, Segment.end_frame == rec.end)) is not None

    def import_labels_csv(self, path: str | os.PathLike) -> dict[str, int]:
        """Import clip labels from CSV with the columns ``clip,annotator,label`` (all or nothing)."""
        src = Path(path)
        recs: list[tuple[int, LabelRecord]] = []
        errors: list[str] = []
        try:
            with open(src, newline="", encoding="utf-8-sig") as f:
                reader = csv.DictReader(f)
                missing = {"clip", "annotator", "label"} - set(reader.fieldnames or ())
                if missing:
                    raise RecordError(f"{src}:1: missing column(s) {', '.join(sorted(missing))}")
                for line, row in enumerate(reader, start=2):
                    try:
                        recs.append((line, LabelRecord(clip=row["clip"], annotator=row["annotator"],
                                                       label=row["label"])))
                    except ValidationError as exc:
                        errors.extend(_describe(src, line, exc))
        except OSError as exc:
            raise RecordError(f"{src}: {exc.strerror or exc}") from None
        _raise_if(errors, src)

        def work(s: Session) -> dict[str, int]:
            for line, rec in recs:
                try:
                    self._set_clip_label(s, rec.clip, rec.annotator, rec.label)
                except RecordError as exc:
                    raise RecordError(f"{src}:{line}: {exc}") from None
            return {"label": len(recs)}
        return self._write(work)

    # ---- export -----------------------------------------------------------------------
    def iter_records(self):
        """Every clip, label, segment, caption, gold decision and lead comment as interchange
        records (comments: those this login may read; on a server an annotator reads only the
        ones addressed to them)."""
        def q(s: Session) -> list[Any]:
            out: list[Any] = []
            for c in s.scalars(select(Clip).order_by(Clip.id)):
                out.append(ClipRecord(clip=c.path, group=c.group_key, source=c.source,
                                      licence=c.licence, consent=c.consent))
            return out
        out = self._read(q)
        paths = {c.id: c.path for c in self.clips()}
        segs = {g.id: g for g in self.segments()}
        for clip, who, label in self.clip_labels():
            out.append(LabelRecord(clip=paths[clip], annotator=who, label=label))
        for g in segs.values():
            out.append(SegmentRecord(clip=paths[g.clip], annotator=g.annotator, label=g.label,
                                     start=g.start, end=g.end))
        for c in self.caption_rows():
            seg = segs.get(c.segment) if c.segment else None
            out.append(CaptionRecord(clip=paths[c.clip], annotator=c.annotator, text=c.text,
                                     segment=(seg.start, seg.end) if seg else None))
        gold_caps = self.gold_captions()
        leads = self._read(lambda s: self._gold_leads(s))
        for clip, label in sorted(self.gold_labels().items()):
            out.append(GoldRecord(clip=paths[clip], annotator=leads[clip], label=label,
                                  captions=gold_caps.pop(clip, None)))
        for clip, caps in sorted(gold_caps.items()):
            out.append(GoldRecord(clip=paths[clip], annotator=leads[clip], captions=caps))
        for clip, to, lead, text in self.comments():
            out.append(CommentRecord(clip=paths[clip], annotator=lead, to=to, text=text))
        return out

    @staticmethod
    def _gold_leads(s: Session) -> dict[int, str]:
        from ..store.models import GoldCaption, GoldLabel
        names = {a.id: a.name for a in s.scalars(select(Annotator))}
        out = {g.clip_id: names[g.lead_id] for g in s.scalars(select(GoldCaption))}
        out.update({g.clip_id: names[g.lead_id] for g in s.scalars(select(GoldLabel))})
        return out

    def export_records(self, path: str | os.PathLike) -> int:
        """Write every record as JSON Lines (atomically); returns the number of lines."""
        recs = self.iter_records()
        dst = Path(path)
        tmp = dst.with_name(dst.name + ".tmp")
        with open(tmp, "w", encoding="utf-8", newline="\n") as f:
            for r in recs:
                f.write(json.dumps(r.model_dump(mode="json", exclude_none=True), ensure_ascii=False) + "\n")
        os.replace(tmp, dst)
        return len(recs)

    def export_labels_csv(self, path: str | os.PathLike) -> int:
        paths = {c.id: c.path for c in self.clips()}
        rows = self.clip_labels()
        dst = Path(path)
        tmp = dst.with_name(dst.name + ".tmp")
        with open(tmp, "w", newline="", encoding="utf-8") as f:
            w = csv.writer(f)
            w.writerow(["clip", "annotator", "label"])
            for clip, who, label in rows:
                w.writerow([paths[clip], who, label])
        os.replace(tmp, dst)
        return len(rows)


def _safe_relative(ref: str) -> str:
    p = PurePosixPath(ref.replace("\\", "/"))
    if p.is_absolute() or ".." in p.parts or (p.parts and p.parts[0].endswith(":")):
        raise RecordError(f"path {ref!r} must be relative to the media root and stay inside it")
    return p.as_posix()


def _parse_jsonl(src: Path) -> list[tuple[int, Any]]:
    try:
        text = src.read_text(encoding="utf-8")
    except OSError as exc:
        raise RecordError(f"{src}: {exc.strerror or exc}") from None
    except UnicodeDecodeError as exc:
        raise RecordError(f"{src}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    out: list[tuple[int, Any]] = []
    errors: list[str] = []
    for line, raw in enumerate(text.splitlines(), start=1):
        if not raw.strip():
            continue
        try:
            obj = json.loads(raw)
        except json.JSONDecodeError as exc:
            errors.append(f"{src}:{line}: not valid JSON ({exc.msg} at column {exc.colno})")
            continue
        if not isinstance(obj, dict):
            errors.append(f"{src}:{line}: expected a JSON object, got {type(obj).__name__}")
            continue
        try:
            out.append((line, parse_record(obj)))
        except ValidationError as exc:
            errors.extend(_describe(src, line, exc))
    _raise_if(errors, src)
    return out


def _describe(src: Path, line: int, exc: ValidationError) -> list[str]:
    out = []
    for err in exc.errors():
        loc = tuple(err.get("loc", ()))
        if len(loc) > 1 and loc[0] in RECORD_TYPES:  # drop the union's tag from the location
            loc = loc[1:]
        field = ".".join(str(p) for p in loc) or "type"
        out.append(f"{src}:{line}: field '{field}': {err.get('msg')}")
    return out


def _raise_if(errors: list[str], src: Path) -> None:
    if not errors:
        return
    more = f" (and {len(errors) - MAX_LISTED} more)" if len(errors) > MAX_LISTED else ""
    raise RecordError("; ".join(errors[:MAX_LISTED]) + more + f" — nothing was imported from {src}")
