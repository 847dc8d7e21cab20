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
from ..errors import RecordError
from ..export import csvsafe, jsonl
from ..schema.records import (
    RECORD_TYPES,
    CaptionRecord,
    ClipRecord,
    CommentRecord,
    GoldRecord,
    LabelRecord,
    SegmentRecord,
    parse_record,
)
from ..store.models import Annotator, Caption, Clip, ReviewComment, Segment
from .catalog import probe_media
from .context import Service

MAX_LISTED = 20


class Records(Service):
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
                    rel = self.ctx.relative_media_path(self.ctx.media_root / rel)
                    info, digest = probe_media(self.ctx.media_root / rel)
                    probed[line] = (rel, digest, info)
                except (RecordError, media.MediaError, OSError) as exc:
                    errors.append(f"{src}:{line}: field 'clip': {exc}")
        _raise_if(errors, src)

        def work(s: Session) -> dict[str, int]:
            counts = {"clip": 0, "label": 0, "segment": 0, "caption": 0, "gold": 0, "duplicate": 0}
            seen: set[str] = set()
            labelled: dict[tuple[int, int], tuple[int, str]] = {}  # (clip, annotator) -> (line, label)
            for line, rec in records:
                key = rec.model_dump_json()
                if key in seen:  # the same record twice in one file is applied once
                    counts["duplicate"] += 1
                    continue
                seen.add(key)
                try:
                    if isinstance(rec, LabelRecord) and self._label_seen(s, rec, line, labelled, src):
                        counts["duplicate"] += 1
                        continue
                    # "comment" counts appear only when the file holds comments
                    counts[rec.type] = counts.get(rec.type, 0) + self._apply_record(s, rec, probed.get(line))
                except RecordError as exc:
                    if str(exc).startswith(f"{src}:"):
                        raise
                    field = "annotator" if "annotator" in str(exc) else "label" if "label " in str(exc) else "clip"
                    raise RecordError(f"{src}:{line}: field '{field}': {exc}") from None
            return counts
        return self.ctx.write(work)

    def _label_seen(self, s: Session, rec: LabelRecord, line: int,
                    labelled: dict[tuple[int, int], tuple[int, str]], src: Path) -> bool:
        """True when an earlier line of the file gave this clip and annotator the same label
        (a duplicate); RecordError naming both lines when it gave a different one."""
        key = (self.ctx.clip(s, rec.clip).id, self.ctx.annotator(s, rec.annotator).id)
        self.ctx.label(s, rec.label)  # an unknown label is named as such, before any clash
        if key not in labelled:
            labelled[key] = (line, rec.label)
            return False
        first, label = labelled[key]
        if label == rec.label:
            return True
        raise RecordError(f"{src}:{line}: field 'label': clip {rec.clip!r} by {rec.annotator!r} is "
                          f"labelled {label!r} on line {first} and {rec.label!r} on line {line}; "
                          f"keep one of them — nothing was imported")

    def _apply_record(self, s: Session, rec: Any, probed: tuple | None) -> int:
        if isinstance(rec, ClipRecord):
            rel, digest, info = probed
            if s.scalar(select(Clip.id).where(Clip.path == rel)) is not None:
                return 0
            self.peers.catalog._insert_clip(s, rel, digest, info, rec.group, rec.source, rec.licence, rec.consent)
            return 1
        if isinstance(rec, LabelRecord):
            if self._read_label(s, rec.clip, rec.annotator) == rec.label:
                return 0  # already so: importing a file again changes nothing
            self.peers.annotation._set_clip_label(s, rec.clip, rec.annotator, rec.label)
            return 1
        if isinstance(rec, SegmentRecord):
            c, a = self.ctx.clip(s, rec.clip), self.ctx.annotator(s, rec.annotator)
            if self._has_segment(s, c.id, a.id, rec):
                return 0
            self.peers.annotation._add_segment(s, c, a, rec.label, rec.start, rec.end)
            return 1
        if isinstance(rec, CaptionRecord):
            c, a = self.ctx.clip(s, rec.clip), self.ctx.annotator(s, rec.annotator)
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
            self.peers.annotation._add_caption(s, c, a, rec.text, seg_id, None)
            return 1
        if isinstance(rec, GoldRecord):
            if rec.label is not None:
                self.peers.gold._set_gold_label(s, rec.clip, rec.label, rec.annotator)
            if rec.captions is not None:
                self.peers.gold._set_gold_captions(s, rec.clip, rec.captions, rec.annotator)
            return 1
        if isinstance(rec, CommentRecord):
            return self._import_comment(s, rec)
        raise AssertionError(rec)

    def _import_comment(self, s: Session, rec: CommentRecord) -> int:
        c, who = self.ctx.clip(s, rec.clip), self.peers.gold._lead(s, rec.annotator)
        to = self.ctx.annotator(s, rec.to).id if rec.to is not None else None
        if s.scalar(select(ReviewComment.id).where(
                ReviewComment.clip_id == c.id, ReviewComment.lead_id == who.id,
                ReviewComment.annotator_id.is_(to) if to is None else ReviewComment.annotator_id == to,
                ReviewComment.text == rec.text)) is not None:
            return 0  # the same comment again: imported before
        self.peers.gold._add_comment(s, c.id, who, to, rec.text)
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
                        recs.append((line, LabelRecord(
                            clip=csvsafe.read_cell(row["clip"] or ""),
                            annotator=csvsafe.read_cell(row["annotator"] or ""),
                            label=csvsafe.read_cell(row["label"] or ""))))
                    except ValidationError as exc:
                        errors.extend(_describe(src, line, exc))
        except OSError as exc:
            raise RecordError(f"{src}: {exc.strerror or exc}") from None
        except UnicodeDecodeError as exc:
            raise RecordError(f"{src}: not UTF-8 text ({exc.reason} at byte {exc.start}); "
                              "save it as UTF-8 — nothing was imported") from None
        except csv.Error as exc:
            raise RecordError(f"{src}: not a readable CSV file ({exc}) — nothing was imported") from None
        _raise_if(errors, src)

        def work(s: Session) -> dict[str, int]:
            counts = {"label": 0, "duplicate": 0}
            labelled: dict[tuple[int, int], tuple[int, str]] = {}
            for line, rec in recs:
                try:
                    if self._label_seen(s, rec, line, labelled, src):
                        counts["duplicate"] += 1
                        continue
                    if self._read_label(s, rec.clip, rec.annotator) != rec.label:
                        self.peers.annotation._set_clip_label(s, rec.clip, rec.annotator, rec.label)
                        counts["label"] += 1
                except RecordError as exc:
                    if str(exc).startswith(f"{src}:"):
                        raise
                    raise RecordError(f"{src}:{line}: {exc}") from None
            return counts
        return self.ctx.write(work)

    def _read_label(self, s: Session, clip: Any, annotator: Any) -> str | None:
        from ..store.models import ClipLabel
        row = s.scalar(select(ClipLabel).where(ClipLabel.clip_id == self.ctx.clip(s, clip).id,
                                               ClipLabel.annotator_id == self.ctx.annotator(s, annotator).id))
        return row.label.name if row is not None else None

    # ---- export -----------------------------------------------------------------------
    def iter_records(self) -> list[Any]:
        """Every clip, label, segment, caption, gold decision and lead comment as interchange
        records (comments: those this login may read; on a server an annotator reads only the
        ones addressed to them).

        Built from stored rows without validating them again, so a row stored before a limit
        existed is still written out (an import then names it)."""
        with self.ctx.snapshot():  # one state of the database for every read below
            return self._iter_records()

    def _iter_records(self) -> list[Any]:
        def q(s: Session) -> list[Any]:
            out: list[Any] = []
            for c in s.scalars(select(Clip).order_by(Clip.id)):
                out.append(ClipRecord.model_construct(clip=c.path, group=c.group_key, source=c.source,
                                      licence=c.licence, consent=c.consent))
            return out
        out = self.ctx.read(q)
        paths = {c.id: c.path for c in self.peers.catalog.clips()}
        segs = {g.id: g for g in self.peers.annotation.segments()}
        for clip, who, label in self.peers.annotation.clip_labels():
            out.append(LabelRecord.model_construct(clip=paths[clip], annotator=who, label=label))
        for g in segs.values():
            out.append(SegmentRecord.model_construct(clip=paths[g.clip], annotator=g.annotator, label=g.label,
                                     start=g.start, end=g.end))
        for c in self.peers.annotation.caption_rows():
            seg = segs.get(c.segment) if c.segment else None
            out.append(CaptionRecord.model_construct(clip=paths[c.clip], annotator=c.annotator, text=c.text,
                                     segment=(seg.start, seg.end) if seg else None))
        gold_caps = self.peers.gold.gold_captions()
        leads = self.ctx.read(lambda s: self._gold_leads(s))
        for clip, label in sorted(self.peers.gold.gold_labels().items()):
            out.append(GoldRecord.model_construct(clip=paths[clip], annotator=leads[clip], label=label,
                                  captions=gold_caps.pop(clip, None)))
        for clip, caps in sorted(gold_caps.items()):
            out.append(GoldRecord.model_construct(clip=paths[clip], annotator=leads[clip], captions=caps))
        for clip, to, lead, text in self.peers.gold.comments():
            out.append(CommentRecord.model_construct(clip=paths[clip], annotator=lead, to=to, text=text))
        return out

    @staticmethod
    def _gold_leads(s: Session) -> dict[int, str]:
        from ..store.models import GoldCaption, GoldLabel
        names = {a.id: a.name for a in s.scalars(select(Annotator))}
        out = {g.clip_id: names[g.lead_id] for g in s.scalars(select(GoldCaption))}
        out.update({g.clip_id: names[g.lead_id] for g in s.scalars(select(GoldLabel))})
        return out

    def export_records(self, path: str | os.PathLike) -> int:
        """Write every record as JSON Lines (atomically); returns the number of lines.

        Rows stored before a limit existed (a caption longer than the caption limit) are written
        as they are: a dump never fails for the whole project because of one row."""
        self.peers.team.require_export_right()  # leads only (on a server the database decides)
        recs = self.iter_records()

        def write(f) -> None:
            for r in recs:
                f.write(jsonl.line(json.dumps(r.model_dump(mode="json", exclude_none=True),
                                              ensure_ascii=False)))
        _write_atomically(Path(path), write, newline="\n")
        return len(recs)

    def export_labels_csv(self, path: str | os.PathLike) -> int:
        """Write every clip label as CSV (``clip,annotator,label``); text cells a spreadsheet
        would run as a formula get a leading ``'`` (read back by :meth:`import_labels_csv`)."""
        self.peers.team.require_export_right()  # leads only (on a server the database decides)
        paths = {c.id: c.path for c in self.peers.catalog.clips()}
        rows = self.peers.annotation.clip_labels()

        def write(f) -> None:
            w = csvsafe.writer(f)
            w.writerow(["clip", "annotator", "label"])
            for clip, who, label in rows:
                w.writerow([paths[clip], who, label])
        _write_atomically(Path(path), write, newline="")
        return len(rows)


def _write_atomically(dst: Path, write, *, newline: str) -> None:
    """Write ``dst`` through a temporary file beside it, renamed into place when complete; on
    any failure (a full disk, a read-only folder) the temporary file is removed again and the
    error names the file."""
    tmp = dst.with_name(dst.name + ".tmp")
    try:
        with open(tmp, "w", encoding="utf-8", newline=newline) as f:
            write(f)
        os.replace(tmp, dst)
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise RecordError(f"{dst}: cannot write ({exc.strerror or exc}); nothing was written") from None
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


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
    for line, raw in enumerate(jsonl.split(text), start=1):
        if not raw.strip():
            continue
        try:
            obj = json.loads(raw)
        except json.JSONDecodeError as exc:
            errors.append(f"{src}:{line}: not valid JSON ({exc.msg} at column {exc.colno})")
            continue
        except RecursionError:
            errors.append(f"{src}:{line}: not accepted (JSON nested too deeply)")
            continue
        except ValueError as exc:  # e.g. an integer with more digits than Python converts
            errors.append(f"{src}:{line}: not accepted ({exc})")
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
