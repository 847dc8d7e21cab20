"""Interchange records in and out: JSON Lines (all record types) and CSV (labels)."""

from __future__ import annotations

import csv
import json
import os
import threading
from collections.abc import Callable
from pathlib import Path, PurePosixPath
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select
from sqlalchemy.orm import Session

from .. import media
from ..errors import PermissionRefused, RecordError
from ..export import csvsafe, jsonl
from ..schema.records import (
    RECORD_TYPES,
    CaptionRecord,
    CheckRecord,
    ClipRecord,
    CommentRecord,
    GoldRecord,
    LabelRecord,
    SegmentRecord,
    StateRecord,
    parse_record,
)
from ..store.models import Annotator, Assignment, Clip, ReviewComment, Segment
from .bulk import TICK_EVERY, BulkImport, Lookup
from .catalog import Progress, probe_media
from .context import Service

MAX_LISTED = 20


class Records(Service):
    def import_records(self, path: str | os.PathLike, *, progress: Progress | None = None,
                       cancel: threading.Event | None = None) -> dict[str, int]:
        """Import a JSON Lines file, all or nothing. Returns counts per record type.

        Every line is validated first; then clips are probed; then everything is written in one
        transaction (labels and captions in bulk). Any problem raises RecordError naming file,
        line, field and reason, and nothing is written. Captions and segments identical to ones
        already present are not added twice, so importing a file again changes nothing.
        ``progress(done, total)`` counts every record twice, once checked and once written;
        setting ``cancel`` stops the import (JobCancelled) with nothing written.
        """
        src = Path(path)
        if src.suffix.lower() == ".csv":
            return self.import_labels_csv(src, progress=progress, cancel=cancel)
        steps = _Steps(progress, cancel)
        records = _parse_jsonl(src, steps)
        probed: dict[int, tuple[str, str, media.ProbeInfo]] = {}
        errors: list[str] = []
        for line, rec in records:
            if isinstance(rec, ClipRecord):
                steps.stop_if_cancelled()
                try:
                    rel = _safe_relative(rec.clip)
                    rel = self.ctx.relative_media_path(self.ctx.media_root / rel)
                    info, digest = probe_media(self.ctx.media_root / rel)
                    probed[line] = (rel, digest, info)
                except (RecordError, media.MediaError, OSError) as exc:
                    errors.append(f"{src}:{line}: field 'clip': {exc}")
        _raise_if(errors, src)
        steps.stop_if_cancelled()  # the last moment before the write lock is taken

        def work(s: Session) -> dict[str, int]:
            steps.stop_if_cancelled()
            counts = {"clip": 0, "label": 0, "segment": 0, "caption": 0, "gold": 0, "duplicate": 0}
            lookup = Lookup(self.ctx, s)
            bulk = BulkImport(self.ctx, s, lookup, wrap=lambda line, exc: _in_file(src, line, exc),
                              clash=_clash(src))
            seen: set[str] = set()
            run: list[tuple[int, Any]] = []  # label and caption records, written together
            run_start = 0

            def write_run(upto: int) -> None:
                for kind, n in bulk.run(run, lambda j: steps.written(run_start + j)).items():
                    counts[kind] += n
                run.clear()
                steps.written(upto)
            for i, (line, rec) in enumerate(records):
                key = rec.model_dump_json()
                if key in seen:  # the same record twice in one file is applied once
                    counts["duplicate"] += 1
                elif isinstance(rec, (LabelRecord, CaptionRecord)):
                    seen.add(key)
                    if not run:
                        run_start = i
                    run.append((line, rec))
                else:
                    seen.add(key)
                    write_run(i)
                    steps.stop_if_cancelled()
                    try:
                        # "comment" counts appear only when the file holds comments
                        counts[rec.type] = counts.get(rec.type, 0) + self._apply_record(
                            s, rec, probed.get(line), lookup)
                    except RecordError as exc:
                        raise _in_file(src, line, exc) from None
                if not run:
                    steps.written(i + 1)
            write_run(len(records))
            steps.stop_if_cancelled()
            return counts
        return self.ctx.write(work)

    def _apply_record(self, s: Session, rec: Any, probed: tuple | None, lookup: Lookup) -> int:
        """Write one clip, segment, gold or comment record (labels and captions go in bulk)."""
        if isinstance(rec, ClipRecord):
            assert probed is not None
            rel, digest, info = probed
            if s.scalar(select(Clip.id).where(Clip.path == rel)) is not None:
                return 0
            cid = self.peers.catalog._insert_clip(s, rel, digest, info, rec.group, rec.source,
                                                  rec.licence, rec.consent)
            lookup.add_clip(cid, rel)
            return 1
        if isinstance(rec, SegmentRecord):
            c, a = self.ctx.clip(s, rec.clip), self.ctx.annotator(s, rec.annotator)
            if self._has_segment(s, c.id, a.id, rec):
                return 0
            self.peers.annotation._add_segment(s, c, a, rec.label, rec.start, rec.end)
            return 1
        if isinstance(rec, GoldRecord):
            if rec.label is not None:
                self.peers.gold._set_gold_label(s, rec.clip, rec.label, rec.annotator)
            if rec.captions is not None:
                self.peers.gold._set_gold_captions(s, rec.clip, rec.captions, rec.annotator)
            return 1
        if isinstance(rec, CommentRecord):
            return self._import_comment(s, rec)
        if isinstance(rec, StateRecord):
            return self._import_state(s, rec)
        if isinstance(rec, CheckRecord):
            return self.peers.checks.import_check(s, rec.clip, rec.label, rec.annotator)
        raise AssertionError(rec)

    def _import_state(self, s: Session, rec: StateRecord) -> int:
        """One person's state of a clip, as it was (a record of work done, so the guideline
        is not checked again); the same state again changes nothing."""
        c, a = self.ctx.clip(s, rec.clip), self.ctx.annotator(s, rec.annotator)
        row = s.scalar(select(Assignment).where(Assignment.clip_id == c.id,
                                                Assignment.annotator_id == a.id))
        if row is not None and (row.state, row.reason) == (rec.state, rec.reason):
            return 0
        if row is None and rec.state == "open" and rec.reason is None:
            return 0
        self.peers.annotation._set_clip_state(s, c, a, rec.state, rec.reason, check=False)
        return 1

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

    def import_labels_csv(self, path: str | os.PathLike, *, progress: Progress | None = None,
                          cancel: threading.Event | None = None) -> dict[str, int]:
        """Import clip labels from CSV with the columns ``clip,annotator,label`` (all or nothing;
        ``progress`` and ``cancel`` as for :meth:`import_records`)."""
        src = Path(path)
        rows: list[tuple[int, dict[str, str | None]]] = []
        try:
            with open(src, newline="", encoding="utf-8-sig") as f:
                reader = csv.DictReader(f)
                missing = {"clip", "annotator", "label"} - set(reader.fieldnames or ())
                if missing:
                    raise RecordError(f"{src}:1: missing column(s) {', '.join(sorted(missing))}")
                rows = list(enumerate(reader, start=2))
        except OSError as exc:
            raise RecordError(f"{src}: {exc.strerror or exc}") from None
        except UnicodeDecodeError as exc:
            raise RecordError(f"{src}: not UTF-8 text ({exc.reason} at byte {exc.start}); "
                              "save it as UTF-8 — nothing was imported") from None
        except csv.Error as exc:
            raise RecordError(f"{src}: not a readable CSV file ({exc}) — nothing was imported") from None
        steps = _Steps(progress, cancel, len(rows))
        recs: list[tuple[int, Any]] = []
        errors: list[str] = []
        for i, (line, row) in enumerate(rows):
            steps.checked(i)
            try:
                recs.append((line, LabelRecord(
                    clip=csvsafe.read_cell(row["clip"] or ""),
                    annotator=csvsafe.read_cell(row["annotator"] or ""),
                    label=csvsafe.read_cell(row["label"] or ""))))
            except ValidationError as exc:
                errors.extend(_describe(src, line, exc))
        _raise_if(errors, src)
        steps.stop_if_cancelled()  # the last moment before the write lock is taken

        def wrap(line: int, exc: RecordError) -> RecordError:
            return exc if str(exc).startswith(f"{src}:") else RecordError(f"{src}:{line}: {exc}")

        def work(s: Session) -> dict[str, int]:
            steps.stop_if_cancelled()
            bulk = BulkImport(self.ctx, s, Lookup(self.ctx, s), wrap=wrap, clash=_clash(src))
            counts = bulk.run(recs, steps.written)
            steps.stop_if_cancelled()
            return {"label": counts["label"], "duplicate": counts["duplicate"]}
        return self.ctx.write(work)

    # ---- export -----------------------------------------------------------------------
    def iter_records(self) -> list[Any]:
        """Every clip, label, segment, caption, gold decision, lead comment and clip state
        (submitted, skipped with its reason, unsure) as interchange records (comments: those
        this login may read; on a server an annotator reads only the ones addressed to them).

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
        for clip, label, lead in self.peers.checks.check_records():  # a lead's dump only
            out.append(CheckRecord.model_construct(clip=paths[clip], annotator=lead, label=label))
        for clip, who, state, reason in self.ctx.read(_states):  # last: edits above would reopen
            out.append(StateRecord.model_construct(clip=paths[clip], annotator=who, state=state,
                                                   reason=reason))
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


def _states(s: Session) -> list[tuple[int, str, str, str | None]]:
    """``(clip id, annotator, state, reason)`` of every state worth keeping: submitted,
    skipped, unsure, or open with a note (leases that expired are the pool's, not work)."""
    stmt = (select(Assignment.clip_id, Annotator.name, Assignment.state, Assignment.reason)
            .join(Annotator, Annotator.id == Assignment.annotator_id)
            .where(Assignment.state.in_(("submitted", "skipped", "unsure"))
                   | ((Assignment.state == "open") & Assignment.reason.is_not(None)))
            .order_by(Assignment.clip_id, Annotator.name))
    return [tuple(r) for r in s.execute(stmt)]


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


def _parse_jsonl(src: Path, steps: _Steps) -> list[tuple[int, Any]]:
    try:
        text = src.read_text(encoding="utf-8")
    except OSError as exc:
        raise RecordError(f"{src}: {exc.strerror or exc}") from None
    except UnicodeDecodeError as exc:
        raise RecordError(f"{src}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    out: list[tuple[int, Any]] = []
    errors: list[str] = []
    lines = jsonl.split(text)
    steps.total = 2 * sum(1 for raw in lines if raw.strip())
    done = 0
    for line, raw in enumerate(lines, start=1):
        if not raw.strip():
            continue
        steps.checked(done)
        done += 1
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


class _Steps:
    """Progress of an import over its records, each counted twice (checked, then written),
    and its cancel signal."""

    def __init__(self, progress: Progress | None, cancel: threading.Event | None,
                 records: int = 0) -> None:
        self.progress, self.cancel, self.total = progress, cancel, 2 * records

    def checked(self, done: int) -> None:
        if done % TICK_EVERY == 0:
            self.stop_if_cancelled()
            self._report(done)

    def written(self, done: int) -> None:
        self._report(self.total // 2 + done)

    def _report(self, done: int) -> None:
        if self.progress is not None:
            self.progress(min(done, self.total), self.total)

    def stop_if_cancelled(self) -> None:
        if self.cancel is not None and self.cancel.is_set():
            raise media.JobCancelled("import cancelled; nothing was imported")


def _in_file(src: Path, line: int, exc: RecordError) -> RecordError:
    """A refusal of one record as the import names it: file, line and field."""
    if str(exc).startswith(f"{src}:"):
        return exc
    if isinstance(exc, PermissionRefused):  # about the person acting, not a field: same kind
        return type(exc)(f"{src}:{line}: {exc}")
    field = "annotator" if "annotator" in str(exc) else "label" if "label " in str(exc) else "clip"
    return RecordError(f"{src}:{line}: field '{field}': {exc}")


def _clash(src: Path) -> Callable[[int, int, LabelRecord, str], RecordError]:
    """The refusal of two different labels for one clip and person in one file."""
    def clash(line: int, first: int, rec: LabelRecord, label: str) -> RecordError:
        return RecordError(f"{src}:{line}: field 'label': clip {rec.clip!r} by {rec.annotator!r} is "
                           f"labelled {label!r} on line {first} and {rec.label!r} on line {line}; "
                           f"keep one of them — nothing was imported")
    return clash


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
