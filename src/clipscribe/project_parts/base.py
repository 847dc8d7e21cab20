"""Shared plumbing of the façade: transactions, reference resolution, the edit log."""

from __future__ import annotations

import contextlib
import contextvars
import datetime as dt
import os
from collections.abc import Callable, Iterator
from pathlib import Path, PurePosixPath
from typing import Any, TypeVar

from sqlalchemy import Engine, event, inspect, select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.orm import Session, object_session
from sqlalchemy.orm.exc import StaleDataError

from ..errors import ProjectError, RecordError, StaleWriteError
from ..schema.settings import ProjectSettings
from ..store import db, sqlite_check
from ..store.models import Annotator, Caption, Clip, Edit, Label, utcnow

T = TypeVar("T")
#: the edit-id list of the innermost ``Project.recording()`` block of this thread, if any
_RECORDING: contextvars.ContextVar[list[int] | None] = contextvars.ContextVar(
    "clipscribe_recording", default=None)
SEEN_LIMIT = 200_000  # caption versions remembered per open project
SEEN_KEY = "seen_caption_versions"
MAX_ID = 2**63 - 1  # the largest row id a database holds; bigger numbers name no row


class ProjectBase:
    def __init__(self, folder: Path, settings: ProjectSettings, engine: Engine) -> None:
        self.folder = folder
        self.settings = settings
        self.engine = engine
        self._writer = db.writer(engine)
        self.user: str | None = None
        #: id of the last edit-history row written by this object (for undo stacks)
        self.last_edit_ids: list[int] = []
        #: the background page check of a SQLite file (set by open); writes wait for it
        self._page_check = None
        #: caption id -> the version this object last read or wrote: a change without an
        #: explicit expected version is checked against it (a stale write is refused)
        self.seen_caption_versions: dict[int, int] = {}

    # ---- lifetime ---------------------------------------------------------------------
    def close(self) -> None:
        if self._page_check is not None:
            self._page_check.stop()
        self.engine.dispose()

    def __enter__(self):
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"<Project {self.settings.name!r} at {self.folder}>"

    @property
    def is_server(self) -> bool:
        return self.engine.dialect.name == "postgresql"

    # ---- transactions -----------------------------------------------------------------
    def _write(self, fn: Callable[[Session], T]) -> T:
        """Run ``fn`` in one write transaction (retried while SQLite reports busy)."""
        if self._page_check is not None:  # never write into a damaged file
            self._page_check.verdict()
        def attempt() -> T:
            edits: list[int] = []
            try:
                with db.transaction(self._writer) as s:
                    s.info["edits"] = edits
                    s.info[SEEN_KEY] = self.seen_caption_versions
                    s.info.pop("edit_at", None)
                    out = fn(s)
                self._forget_old_versions()
            except StaleDataError:
                raise StaleWriteError("someone else changed this item since you loaded it; "
                                      "your change was not saved — reload and try again") from None
            self.last_edit_ids = edits
            collector = _RECORDING.get()
            if collector is not None:
                collector.extend(edits)
            return out
        return db.with_retry(attempt)

    @contextlib.contextmanager
    def recording(self) -> Iterator[list[int]]:
        """``with project.recording() as ids: ...``: ``ids`` collects the edit-history ids of
        every write made inside the block by this thread (for an undo step; revert them with
        :meth:`revert`). Blocks nest; other threads' writes are never mixed in."""
        outer = _RECORDING.get()
        ids: list[int] = []
        token = _RECORDING.set(ids)
        try:
            yield ids
        finally:
            _RECORDING.reset(token)
            if outer is not None:
                outer.extend(ids)

    def check_writable(self, what: str) -> None:
        """ProjectError before ``what`` starts when the database cannot take a write (a
        read-only file or folder), so a command never does its work and then fails to record
        it. Costs one empty write transaction."""
        if self.engine.dialect.name != "sqlite":
            return
        try:
            self._write(lambda s: s.execute(text("UPDATE settings SET key = key WHERE 0")))
        except DBAPIError as exc:
            reason = sqlite_check.explain(exc, self.folder) or str(exc.orig or exc).splitlines()[0]
            raise ProjectError(f"{what}: not started, {reason}") from None

    def _read(self, fn: Callable[[Session], T]) -> T:
        with db.transaction(self.engine) as s:
            s.info[SEEN_KEY] = self.seen_caption_versions
            out = fn(s)
        self._forget_old_versions()
        return out

    def _forget_old_versions(self) -> None:
        seen = self.seen_caption_versions
        if len(seen) > SEEN_LIMIT:  # forget the oldest half rather than grow without end
            for key in list(seen)[:len(seen) // 2]:
                del seen[key]

    # ---- paths ------------------------------------------------------------------------
    @property
    def media_root(self) -> Path:
        root = Path(self.settings.media_root)
        return root if root.is_absolute() else self.folder / root

    def relative_media_path(self, path: str | os.PathLike) -> str:
        """The '/'-separated path of ``path`` below the media root; RecordError if outside."""
        root = Path(os.path.realpath(self.media_root))
        p = Path(path)
        if not p.is_absolute():
            candidate = self.media_root / p
            p = candidate if candidate.exists() or not p.exists() else p.absolute()
        real = Path(os.path.realpath(p))
        try:
            rel = real.relative_to(root)
        except ValueError:
            raise RecordError(f"{path}: lies outside the media root {self.media_root}") from None
        if not rel.parts:
            raise RecordError(f"{path}: is the media root itself, not a file")
        return PurePosixPath(*rel.parts).as_posix()

    def media_path(self, clip: Any) -> Path:
        """Absolute path of a clip's media file."""
        rel = self._read(lambda s: self._clip(s, clip).path)
        return self.media_root / Path(*PurePosixPath(rel).parts)

    # ---- resolution -------------------------------------------------------------------
    def _clip(self, s: Session, ref: Any) -> Clip:
        """A clip by id, str(id) or media path relative to the media root."""
        if isinstance(ref, Clip):
            return ref
        row = None
        if isinstance(ref, int) and not isinstance(ref, bool):
            row = s.get(Clip, ref) if 0 < ref <= MAX_ID else None
        elif isinstance(ref, str):
            if ref.isascii() and ref.isdigit() and len(ref) <= 19 and int(ref) <= MAX_ID:
                row = s.get(Clip, int(ref))
            if row is None:
                rel = PurePosixPath(ref.replace("\\", "/"))
                if rel.is_absolute() or ".." in rel.parts:
                    raise RecordError(f"clip {ref!r}: path must be relative to the media root")
                row = s.scalar(select(Clip).where(Clip.path == rel.as_posix()))
        else:
            raise RecordError(f"clip {ref!r}: expected an id or a relative media path")
        if row is None:
            raise RecordError(f"clip {ref!r}: no such clip in this project")
        return row

    def _annotator(self, s: Session, ref: Any) -> Annotator:
        if isinstance(ref, Annotator):
            return ref
        if ref is None:
            ref = self.user
        if isinstance(ref, int) and not isinstance(ref, bool):
            row = s.get(Annotator, ref) if 0 < ref <= MAX_ID else None
        else:
            row = s.scalar(select(Annotator).where(Annotator.name == str(ref)))
        if row is None:
            raise RecordError(f"annotator {ref!r}: no such annotator (add them first)")
        return row

    def _label(self, s: Session, name: Any) -> Label:
        row = s.scalar(select(Label).where(Label.name == str(name)))
        if row is None or row.retired:
            known = ", ".join(s.scalars(select(Label.name).where(Label.retired.is_(False))
                                        .order_by(Label.position)))
            raise RecordError(f"label {name!r}: not in the label set ({known or 'empty'})")
        return row

    def _me(self, s: Session) -> Annotator | None:
        if self.user is None:
            return None
        return s.scalar(select(Annotator).where(Annotator.name == self.user))

    # ---- edit history -----------------------------------------------------------------
    def _log(self, s: Session, action: str, entity: str, entity_id: int | None,
             clip_id: int | None, before: dict | None, after: dict | None, *,
             who: Annotator | None = None, reverts: int | None = None) -> Edit:
        me = who if who is not None else self._me(s)
        # every row of one transaction carries the same time, so one user action (a split
        # writes two rows) can be found again as one step of undo after reopening
        e = Edit(annotator_id=me.id if me else None, action=action, entity=entity,
                 entity_id=entity_id, clip_id=clip_id, before=before, after=after,
                 reverts=reverts, at=s.info.setdefault("edit_at", utcnow()))
        s.add(e)
        s.flush()
        s.info.setdefault("edits", []).append(e.id)
        return e


# Every caption row a project's session loads or writes: its version is remembered in the
# project's ``seen_caption_versions`` (the session carries that dict in ``info``).
@event.listens_for(Caption, "load")
@event.listens_for(Caption, "refresh")
def _caption_read(target: Caption, context: Any, *_attrs: Any) -> None:
    seen = context.session.info.get(SEEN_KEY) if context.session is not None else None
    if seen is not None and target.version is not None:
        seen[target.id] = target.version


@event.listens_for(Caption, "after_insert")
@event.listens_for(Caption, "after_update")
def _caption_written(_mapper: Any, _conn: Any, target: Caption) -> None:
    s = object_session(target)
    seen = s.info.get(SEEN_KEY) if s is not None else None
    if seen is not None and target.version is not None:
        seen[target.id] = target.version


@event.listens_for(Caption, "after_delete")
def _caption_deleted(_mapper: Any, _conn: Any, target: Caption) -> None:
    s = object_session(target)
    seen = s.info.get(SEEN_KEY) if s is not None else None
    if seen is not None:  # deleted by this project itself: nothing stale to report later
        seen.pop(target.id, None)


def row_dict(obj: Any) -> dict[str, Any]:
    """Column values of an ORM row as JSON-safe data (for the edit history)."""
    out: dict[str, Any] = {}
    for attr in inspect(obj).mapper.column_attrs:
        v = getattr(obj, attr.key)
        if isinstance(v, dt.datetime):
            # times are stored in UTC; SQLite hands them back without a zone, PostgreSQL with
            # its own zone object: write one form so history rows compare equal
            v = (v.replace(tzinfo=dt.timezone.utc) if v.tzinfo is None
                 else v.astimezone(dt.timezone.utc)).isoformat()
        out[attr.key] = v
    return out


def require(cond: bool, message: str) -> None:
    if not cond:
        raise RecordError(message)


def check_project(cond: bool, message: str) -> None:
    if not cond:
        raise ProjectError(message)
