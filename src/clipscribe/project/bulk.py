"""Labels and captions imported in bulk, inside the import's one write transaction.

References are resolved from dictionaries loaded once (a miss asks the context, which names
the error or finds a row added meanwhile); each run of label and caption records is checked
against the rows stored for its clips, loaded with one query per table; then the rows, their
assignments and their edit-history rows are written with executemany (SQLAlchemy Core). The
result is what :meth:`Annotation._set_clip_label` and :meth:`Annotation._add_caption` would
give record by record, with the same refusals in the same order.
"""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import PurePosixPath
from typing import TYPE_CHECKING, Any

from sqlalchemy import JSON, bindparam, func, insert, select, update
from sqlalchemy import text as sql_text
from sqlalchemy.orm import Session

from ..errors import RecordError, StaleWriteError
from ..schema.records import CaptionRecord, LabelRecord
from ..store.models import Annotator, Assignment, Caption, Clip, ClipLabel, Edit, Label, Segment, utcnow
from ..store.unit_of_work import SEEN_KEY, edit_time, session_edits
from ..store.history_values import json_value
from .annotate import _caption_text, start_work
from .context import MAX_ID

if TYPE_CHECKING:
    from .context import Context

#: ids per ``IN (...)`` list when loading the stored rows of a run's clips
IN_CHUNK = 5000
#: rows per INSERT on a server
ARRAY_CHUNK = 20_000
#: records planned between two progress reports
TICK_EVERY = 1000

Wrap = Callable[[int, RecordError], RecordError]


class Lookup:
    """Clips by id and path, people and labels by name, loaded once per import. The same
    rules as :meth:`Context.clip`: an all-digit reference is an id when such a clip exists,
    else a path."""

    def __init__(self, ctx: Context, s: Session) -> None:
        self.ctx, self.s = ctx, s
        self.clip_by_id: dict[int, str] = {}
        self.clip_by_path: dict[str, int] = {}
        for cid, path in s.execute(select(Clip.id, Clip.path)):
            self.add_clip(cid, path)
        self.people: dict[str, int] = {n: i for i, n in s.execute(select(Annotator.id, Annotator.name))}
        self.labels: dict[str, int] = {n: i for i, n in s.execute(
            select(Label.id, Label.name).where(Label.retired.is_(False)))}
        self._refs: dict[str, int] = {}
        self._refused: dict[tuple[str, str], RecordError] = {}  # asked once, refused every time

    def add_clip(self, cid: int, path: str) -> None:
        self.clip_by_id[cid] = path
        self.clip_by_path[path] = cid

    def clip(self, ref: str) -> int:
        hit = self._refs.get(ref)
        if hit is not None:
            return hit
        cid: int | None = None
        if ref.isascii() and ref.isdigit() and len(ref) <= 19 and int(ref) <= MAX_ID \
                and int(ref) in self.clip_by_id:
            cid = int(ref)
        if cid is None:
            cid = self.clip_by_path.get(ref)
        if cid is None:
            rel = PurePosixPath(ref.replace("\\", "/"))
            if not rel.is_absolute() and ".." not in rel.parts:
                cid = self.clip_by_path.get(rel.as_posix())
        if cid is None:  # the context names the refusal (or finds a clip added meanwhile)
            row = self._ask("clip", ref, self.ctx.clip)
            self.add_clip(row.id, row.path)
            cid = row.id
        self._refs[ref] = cid
        return cid

    def annotator(self, name: str) -> int:
        hit = self.people.get(name)
        if hit is None:
            hit = self.people[name] = self._ask("annotator", name, self.ctx.annotator).id
        return hit

    def label(self, name: str) -> int:
        hit = self.labels.get(name)
        if hit is None:
            hit = self.labels[name] = self._ask("label", name, self.ctx.label).id
        return hit

    def _ask(self, kind: str, ref: str, resolve: Callable[[Session, str], Any]) -> Any:
        refused = self._refused.get((kind, ref))
        if refused is not None:
            raise refused
        try:
            return resolve(self.s, ref)
        except RecordError as exc:
            self._refused[(kind, ref)] = exc
            raise


@dataclass
class _Item:
    line: int
    rec: LabelRecord | CaptionRecord
    clip: int = 0
    annotator: int = 0
    label: int = 0
    error: RecordError | None = None


@dataclass
class _Stored:
    """The rows stored for one run's clips, as the run changes them."""

    labels: dict[tuple[int, int], dict[str, Any]] = field(default_factory=dict)
    texts: set[tuple[int, int, str]] = field(default_factory=set)
    last_position: dict[tuple[int, int], int] = field(default_factory=dict)
    segments: dict[tuple[int, int, int, int], int] = field(default_factory=dict)
    assigned: set[tuple[int, int]] = field(default_factory=set)


@dataclass
class _Plan:
    new_labels: list[dict[str, Any]] = field(default_factory=list)
    changed_labels: list[tuple[dict[str, Any], dict[str, Any]]] = field(default_factory=list)
    captions: list[dict[str, Any]] = field(default_factory=list)
    #: edit-history order: (kind, index into the list of that kind)
    order: list[tuple[str, int]] = field(default_factory=list)
    touched: dict[tuple[int, int], None] = field(default_factory=dict)


class BulkImport:
    """Label and caption records of one import file, written run by run.

    ``wrap(line, error)`` turns a refusal into the import's message (file and line);
    ``clash(line, first, rec, label)`` words two different labels for one clip and person."""

    def __init__(self, ctx: Context, s: Session, lookup: Lookup, *, wrap: Wrap,
                 clash: Callable[[int, int, LabelRecord, str], RecordError]) -> None:
        self.ctx, self.s, self.lookup = ctx, s, lookup
        self.wrap, self.clash = wrap, clash
        #: (clip, person) -> (line, label) of the first label record for it in the file
        self.labelled: dict[tuple[int, int], tuple[int, str]] = {}

    # ---- one run of records --------------------------------------------------------------
    def run(self, records: list[tuple[int, Any]], tick: Callable[[int], None] | None = None) -> dict[str, int]:
        """Check and write one run of label and caption records (in file order); returns
        counts of labels and captions written and of label records taken as duplicates."""
        counts = {"label": 0, "caption": 0, "duplicate": 0}
        if not records:
            return counts
        items = [self._resolve(line, rec) for line, rec in records]
        stored = self._load(items)
        plan = _Plan()
        for i, item in enumerate(items):
            if tick is not None and i and i % TICK_EVERY == 0:
                tick(i)
            if item.error is not None:
                raise self.wrap(item.line, item.error)
            try:
                if isinstance(item.rec, LabelRecord):
                    verdict = self._plan_label(item, stored, plan)
                else:
                    verdict = self._plan_caption(item, stored, plan)
            except RecordError as exc:
                raise self.wrap(item.line, exc) from None
            if verdict:
                counts[verdict] += 1
        self._write(plan, stored)
        if tick is not None:
            tick(len(items))
        return counts

    def _resolve(self, line: int, rec: LabelRecord | CaptionRecord) -> _Item:
        item = _Item(line, rec)
        try:
            item.clip = self.lookup.clip(rec.clip)
            item.annotator = self.lookup.annotator(rec.annotator)
            if isinstance(rec, LabelRecord):
                item.label = self.lookup.label(rec.label)
        except RecordError as exc:  # raised when the run reaches this line
            item.error = exc
        return item

    def _plan_label(self, item: _Item, stored: _Stored, plan: _Plan) -> str | None:
        rec = item.rec
        assert isinstance(rec, LabelRecord)
        key = (item.clip, item.annotator)
        if key in self.labelled:
            first, label = self.labelled[key]
            if label == rec.label:
                return "duplicate"
            raise self.clash(item.line, first, rec, label)
        self.labelled[key] = (item.line, rec.label)
        now = stored.labels.get(key)
        if now is not None and now["label_id"] == item.label:
            return None  # already so: importing a file again changes nothing
        if now is None:
            plan.order.append(("new_label", len(plan.new_labels)))
            plan.new_labels.append({"clip_id": item.clip, "annotator_id": item.annotator,
                                    "label_id": item.label})
        else:
            plan.order.append(("changed_label", len(plan.changed_labels)))
            plan.changed_labels.append((now, {**now, "label_id": item.label}))
        plan.touched[key] = None
        return "label"

    def _plan_caption(self, item: _Item, stored: _Stored, plan: _Plan) -> str | None:
        rec = item.rec
        assert isinstance(rec, CaptionRecord)
        key = (item.clip, item.annotator)
        if (item.clip, item.annotator, rec.text) in stored.texts:
            return None  # the same caption is stored already
        segment = None
        if rec.segment is not None:
            segment = stored.segments.get((*key, *rec.segment))
            if segment is None:
                raise RecordError(f"clip {rec.clip!r}: no segment [{rec.segment[0]}, {rec.segment[1]}) "
                                  f"by {rec.annotator!r} to tie the caption to")
        text = _caption_text(rec.text)
        if self.ctx.is_server and "\x00" in text:
            raise RecordError("caption text holds a NUL character (0x00), which PostgreSQL "
                              "text cannot store")
        last = stored.last_position.get(key)
        position = stored.last_position[key] = 0 if last is None else last + 1
        stored.texts.add((item.clip, item.annotator, text))
        plan.order.append(("caption", len(plan.captions)))
        plan.captions.append({"clip_id": item.clip, "annotator_id": item.annotator,
                              "position": position, "text": text, "segment_id": segment})
        plan.touched[key] = None
        return "caption"

    # ---- the stored rows of a run's clips --------------------------------------------------
    def _load(self, items: list[_Item]) -> _Stored:
        s, out = self.s, _Stored()
        s.flush()  # rows of records applied one by one before this run
        ok = [i for i in items if i.error is None]
        label_clips = {i.clip for i in ok if isinstance(i.rec, LabelRecord)}
        caption_clips = {i.clip for i in ok if isinstance(i.rec, CaptionRecord)}
        segment_clips = {i.clip for i in ok if isinstance(i.rec, CaptionRecord) and i.rec.segment}
        t: Any = ClipLabel.__table__
        for ids in _chunks(label_clips):
            for row in s.execute(select(t).where(t.c.clip_id.in_(ids))).mappings():
                out.labels[(row["clip_id"], row["annotator_id"])] = {k: json_value(v) for k, v in row.items()}
        for ids in _chunks(caption_clips):
            out.texts.update((c, a, text) for c, a, text in s.execute(
                select(Caption.clip_id, Caption.annotator_id, Caption.text).where(Caption.clip_id.in_(ids))))
            for c, a, last in s.execute(select(Caption.clip_id, Caption.annotator_id,
                                               func.max(Caption.position))
                                        .where(Caption.clip_id.in_(ids))
                                        .group_by(Caption.clip_id, Caption.annotator_id)):
                if last is not None:
                    out.last_position[(c, a)] = last
        for ids in _chunks(segment_clips):
            for sid, c, a, start, end in s.execute(
                    select(Segment.id, Segment.clip_id, Segment.annotator_id, Segment.start_frame,
                           Segment.end_frame).where(Segment.clip_id.in_(ids)).order_by(Segment.id)):
                out.segments.setdefault((c, a, start, end), sid)
        for ids in _chunks(label_clips | caption_clips):
            out.assigned.update((c, a) for c, a in s.execute(
                select(Assignment.clip_id, Assignment.annotator_id).where(Assignment.clip_id.in_(ids))))
        return out

    # ---- writing ------------------------------------------------------------------------
    def _write(self, plan: _Plan, stored: _Stored) -> None:
        if not plan.order:
            return
        s = self.s
        conn = s.connection()
        now = utcnow()
        stamp = json_value(now)
        new_labels = [{**r, "updated_at": now, "version": 1} for r in plan.new_labels]
        label_ids = _insert(conn, ClipLabel, new_labels)
        self._update_labels(conn, plan.changed_labels, now, stamp)
        captions = [{**r, "updated_at": now, "version": 1} for r in plan.captions]
        caption_ids = _insert(conn, Caption, captions)
        seen = s.info.get(SEEN_KEY)
        if seen is not None:  # what this project last wrote, as for a caption added by hand
            seen.update(dict.fromkeys(caption_ids, 1))
        self._touch(conn, plan.touched, stored.assigned, now)

        def after(row: dict[str, Any], rid: int, model: Any) -> dict[str, Any]:
            full = {**row, "id": rid, "updated_at": stamp, "version": 1}
            return {c.key: full.get(c.key) for c in model.__table__.columns}
        me = self.ctx.me(s)
        at = edit_time(s, utcnow)
        edits = []
        for kind, i in plan.order:
            if kind == "new_label":
                row = after(plan.new_labels[i], label_ids[i], ClipLabel)
                entity, action, before = "clip_label", "set", None
            elif kind == "changed_label":
                before, row = plan.changed_labels[i]
                entity, action = "clip_label", "set"
            else:
                row = after(plan.captions[i], caption_ids[i], Caption)
                entity, action, before = "caption", "add", None
            edits.append({"annotator_id": me.id if me else None, "action": action, "entity": entity,
                          "entity_id": row["id"], "clip_id": row["clip_id"], "before": before,
                          "after": row, "reverts": None, "at": at})
        session_edits(s).extend(_insert(conn, Edit, edits))
        s.expire_all()  # rows the session loaded earlier may have changed underneath it

    def _update_labels(self, conn: Any, changed: list[tuple[dict, dict]], now: Any, stamp: str) -> None:
        if not changed:
            return
        t: Any = ClipLabel.__table__
        params = [{"b_id": row["id"], "b_version": row["version"], "b_label": row["label_id"],
                   "b_at": now, "b_next": row["version"] + 1} for _before, row in changed]
        for _before, row in changed:
            row.update(updated_at=stamp, version=row["version"] + 1)
        if conn.dialect.name == "postgresql":  # one statement over arrays, whatever the count
            done = conn.execute(sql_text(
                "UPDATE clip_labels AS t SET label_id = v.label_id, updated_at = :at, "
                "version = v.version + 1 FROM unnest(CAST(:ids AS INTEGER[]), "
                "CAST(:versions AS INTEGER[]), CAST(:labels AS INTEGER[])) AS v(id, version, label_id) "
                "WHERE t.id = v.id AND t.version = v.version"),
                {"at": now, "ids": [p["b_id"] for p in params],
                 "versions": [p["b_version"] for p in params],
                 "labels": [p["b_label"] for p in params]}).rowcount
        else:
            done = conn.execute(update(t).where(t.c.id == bindparam("b_id"),
                                                t.c.version == bindparam("b_version"))
                                .values(label_id=bindparam("b_label"), updated_at=bindparam("b_at"),
                                        version=bindparam("b_next")), params).rowcount
        if done != len(params) and (conn.dialect.name == "postgresql"
                                    or conn.dialect.supports_sane_multi_rowcount):
            raise StaleWriteError("someone else changed a clip label while it was imported; "
                                  "nothing was imported — try again")

    def _touch(self, conn: Any, pairs: dict[tuple[int, int], None], assigned: set[tuple[int, int]],
               now: Any) -> None:
        """What :meth:`Annotation._touch` does for each (clip, person) worked on: their
        assignment, created on first work, and a ``new`` clip becomes ``in_progress`` (on a
        server the database works the state out, once per clip)."""
        missing = [p for p in pairs if p not in assigned]
        clips = sorted({c for c, _ in pairs})
        fresh: list[int] = []
        if self.ctx.is_server:  # read before the new assignments: clips nobody had started
            for ids in _chunks(clips):
                fresh += conn.execute(select(Clip.id).where(Clip.id.in_(ids), Clip.state == "new")).scalars()
        if missing and self.ctx.is_server:  # the database's checked function makes them
            start_work(conn, missing)
        elif missing:
            _insert(conn, Assignment, [
                {"clip_id": c, "annotator_id": a, "state": "open", "reason": None, "assigned_at": now,
                 "expires_at": None, "updated_at": now, "version": 1, "comments_read": None}
                for c, a in missing], ids=False)
        if self.ctx.is_server:
            if fresh:  # the server's own function, once per clip
                conn.execute(sql_text("SELECT count(clipscribe_refresh_clip_state(c)) "
                                      "FROM unnest(CAST(:ids AS INTEGER[])) AS c"), {"ids": fresh})
        elif clips:
            t: Any = Clip.__table__
            conn.execute(update(t).where(t.c.id == bindparam("b_id"), t.c.state == "new")
                         .values(state="in_progress"), [{"b_id": c} for c in clips])


def _insert(conn: Any, model: Any, rows: list[dict[str, Any]], *, ids: bool = True) -> list[int]:
    """Insert ``rows`` in bulk; their new ids in the order of ``rows`` (with ``ids``)."""
    if not rows:
        return []
    t = model.__table__
    if conn.dialect.name == "postgresql":
        return _insert_arrays(conn, t, rows, ids=ids)
    # SQLite: this write holds the lock and the tables never reuse an id (AUTOINCREMENT), so
    # the new rows take the ids after the largest one, in the order of ``rows``; a plain
    # executemany is many times faster than RETURNING row by row
    last = conn.scalar(select(func.max(t.c.id))) or 0 if ids else 0
    _executemany(conn, t, rows)
    if not ids:
        return []
    new = list(conn.execute(select(t.c.id).where(t.c.id > last).order_by(t.c.id)).scalars())
    assert len(new) == len(rows), (t.name, len(new), len(rows))
    return new


def _executemany(conn: Any, t: Any, rows: list[dict[str, Any]]) -> None:
    """One driver executemany of ``rows``, each value turned into what the column's type
    stores (as SQLAlchemy would, without its per-row bookkeeping)."""
    names = list(rows[0])
    procs = [t.c[c].type.dialect_impl(conn.dialect).bind_processor(conn.dialect) for c in names]
    memo: list[dict[Any, Any] | None] = [None if p is None or isinstance(t.c[c].type, JSON) else {}
                                         for c, p in zip(names, procs)]

    def value(i: int, v: Any) -> Any:
        proc, seen = procs[i], memo[i]
        if proc is None:
            return v
        if seen is None:  # JSON: None is stored as JSON null, as the ORM does
            return proc(v)
        if v is None:
            return None
        if v not in seen:  # e.g. one time stamp for every row
            seen[v] = proc(v)
        return seen[v]
    q = conn.dialect.identifier_preparer.quote
    sql = (f"INSERT INTO {q(t.name)} ({', '.join(q(c) for c in names)}) "
           f"VALUES ({', '.join('?' for _ in names)})")
    conn.exec_driver_sql(sql, [tuple(value(i, r[c]) for i, c in enumerate(names)) for r in rows])


def _insert_arrays(conn: Any, t: Any, rows: list[dict[str, Any]], *, ids: bool) -> list[int]:
    """PostgreSQL: ids drawn from the table's sequence in one query, then the rows sent as one
    JSON document per chunk and unpacked by the server (``INSERT … SELECT FROM
    json_to_recordset(…)``). Row security and triggers apply to each row as to any insert."""
    q = conn.dialect.identifier_preparer.quote
    new: list[int] = []
    if ids:
        new = sorted(conn.execute(sql_text(
            "SELECT nextval(pg_get_serial_sequence(:t, 'id')) FROM generate_series(1, :n)"),
            {"t": t.name, "n": len(rows)}).scalars())
        rows = [{"id": i, **r} for i, r in zip(new, rows)]
    names = [c for c in rows[0] if any(r[c] is not None for r in rows)]
    fields = ", ".join(f"{q(c)} {t.c[c].type.compile(conn.dialect)}" for c in names)
    # JSON null where the ORM stores it (a JSON column given None), not SQL NULL
    values = ", ".join(f"COALESCE(x.{q(c)}, 'null'::json)" if isinstance(t.c[c].type, JSON)
                       else f"x.{q(c)}" for c in names)
    stmt = sql_text(f"INSERT INTO {q(t.name)} ({', '.join(q(c) for c in names)}) SELECT {values} "
                    f"FROM json_to_recordset(CAST(:rows AS json)) AS x({fields})")
    for start in range(0, len(rows), ARRAY_CHUNK):
        conn.execute(stmt, {"rows": json.dumps(rows[start:start + ARRAY_CHUNK], default=_iso)})
    return new


def _iso(v: Any) -> str:
    if isinstance(v, dt.datetime):
        return v.isoformat()
    raise TypeError(f"{type(v).__name__} is not JSON")


def _chunks(ids: Iterable[int]) -> Iterator[list[int]]:
    ordered = sorted(ids)
    for i in range(0, len(ordered), IN_CHUNK):
        yield ordered[i:i + IN_CHUNK]
