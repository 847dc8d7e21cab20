"""Shared plumbing of the façade: transactions, reference resolution, the edit log."""

from __future__ import annotations

import datetime as dt
import os
from collections.abc import Callable
from pathlib import Path, PurePosixPath
from typing import Any, TypeVar

from sqlalchemy import Engine, inspect, select
from sqlalchemy.orm import Session
from sqlalchemy.orm.exc import StaleDataError

from ..errors import ProjectError, RecordError, StaleWriteError
from ..schema.settings import ProjectSettings
from ..store import db
from ..store.models import Annotator, Clip, Edit, Label, utcnow

T = TypeVar("T")


class ProjectBase:
    def __init__(self, folder: Path, settings: ProjectSettings, engine: Engine) -> None:
        self.folder = folder
        self.settings = settings
        self.engine = engine
        self._writer = db.writer(engine)
        self.user: str | None = None
        #: id of the last edit-history row written by this object (for undo stacks)
        self.last_edit_ids: list[int] = []

    # ---- lifetime ---------------------------------------------------------------------
    def close(self) -> None:
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
        def attempt() -> T:
            edits: list[int] = []
            try:
                with db.transaction(self._writer) as s:
                    s.info["edits"] = edits
                    s.info.pop("edit_at", None)
                    out = fn(s)
            except StaleDataError:
                raise StaleWriteError("someone else changed this item since you loaded it; "
                                      "your change was not saved — reload and try again") from None
            self.last_edit_ids = edits
            return out
        return db.with_retry(attempt)

    def _read(self, fn: Callable[[Session], T]) -> T:
        with db.transaction(self.engine) as s:
            return fn(s)

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
            row = s.get(Clip, ref)
        elif isinstance(ref, str):
            if ref.isdigit():
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
            row = s.get(Annotator, ref)
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
