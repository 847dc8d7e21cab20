"""What every service of the façade shares: the unit of work, the folder and its settings, the
person acting, and the resolution of references (a clip by id or path, a person by name)."""

from __future__ import annotations

import os
from collections.abc import Callable
from pathlib import Path, PurePosixPath
from typing import TYPE_CHECKING, Any, ContextManager, TypeVar

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..errors import NotALeadError, ProjectError, RecordError
from ..schema.settings import ProjectSettings
from ..store.models import Annotator, Clip, Edit, Label, utcnow
from ..store.history_values import json_value, row_dict  # noqa: F401 (used by the services)
from ..store.unit_of_work import UnitOfWork, edit_time, session_edits
from ..types import ClipRef

if TYPE_CHECKING:
    from .services import Peers

T = TypeVar("T")
MAX_ID = 2**63 - 1  # the largest row id a database holds; bigger numbers name no row
#: how every lead-only action is refused (see :meth:`Context.lead_only`)
LEAD_ONLY = "only a lead may {what}; {who!r} is {role}"


class Context:
    """Shared state of one open project. Services hold it; they never hold each other's
    state. ``settings`` and ``user`` may change while the project is open."""

    def __init__(self, folder: Path, settings: ProjectSettings, uow: UnitOfWork) -> None:
        self.folder = folder
        self.settings = settings
        self.uow = uow
        self.user: str | None = None
        #: replaces the settings file and ``settings`` (set by the façade, which owns the file)
        self.update_settings: Callable[..., ProjectSettings] = _no_settings_writer

    # ---- transactions -----------------------------------------------------------------
    def write(self, fn: Callable[[Session], T]) -> T:
        return self.uow.write(fn)

    def read(self, fn: Callable[[Session], T]) -> T:
        return self.uow.read(fn)

    def snapshot(self) -> ContextManager[Session]:
        """Reads inside the block see one state of the database (see UnitOfWork.snapshot)."""
        return self.uow.snapshot()

    @property
    def is_server(self) -> bool:
        return self.uow.is_server

    @property
    def engine(self) -> Any:
        return self.uow.engine

    def check_writable(self, what: str) -> None:
        self.uow.check_writable(what)

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

    def media_path(self, clip: ClipRef) -> Path:
        """Absolute path of a clip's media file."""
        rel = self.read(lambda s: self.clip(s, clip).path)
        return self.media_root / Path(*PurePosixPath(rel).parts)

    # ---- resolution -------------------------------------------------------------------
    def clip(self, s: Session, ref: Any) -> Clip:
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

    def annotator(self, s: Session, ref: Any) -> Annotator:
        """A person by id or name; None means the person acting."""
        if isinstance(ref, Annotator):
            return ref
        if ref is None:
            ref = self.user
        row: Annotator | None
        if isinstance(ref, int) and not isinstance(ref, bool):
            row = s.get(Annotator, ref) if 0 < ref <= MAX_ID else None
        else:
            row = s.scalar(select(Annotator).where(Annotator.name == str(ref)))
        if row is None:
            raise RecordError(f"annotator {ref!r}: no such annotator (add them first)")
        return row

    def label(self, s: Session, name: Any) -> Label:
        row = s.scalar(select(Label).where(Label.name == str(name)))
        if row is None or row.retired:
            known = ", ".join(s.scalars(select(Label.name).where(Label.retired.is_(False))
                                        .order_by(Label.position)))
            raise RecordError(f"label {name!r}: not in the label set ({known or 'empty'})")
        return row

    def me(self, s: Session) -> Annotator | None:
        if self.user is None:
            return None
        return s.scalar(select(Annotator).where(Annotator.name == self.user))

    # ---- access: the one lead check -----------------------------------------------------
    def require_lead(self, s: Session, what: str, who: Any = None, *,
                     refusal: str = "{who!r} is not a lead: only leads {what}") -> Annotator:
        """The person acting (or ``who``) when they are a lead. Otherwise
        :class:`NotALeadError`, worded by ``refusal`` with ``{who}`` (their name), ``{what}``
        and ``{role}`` ("an annotator", or "not a person in this project")."""
        name = who if who is not None else self.user
        if name is not None and "{role}" not in refusal:
            row: Annotator | None = self.annotator(s, name)  # RecordError: no such annotator
        else:
            row = (self.annotator(s, name) if isinstance(name, (int, Annotator))
                   else s.scalar(select(Annotator).where(Annotator.name == str(name))))
        if row is None or row.role != "lead":
            role = "not a person in this project" if row is None else f"an {row.role}"
            shown = row.name if row is not None else name
            raise NotALeadError(refusal.format(who=shown, what=what, role=role))
        return row

    def lead_only(self, s: Session, what: str) -> None:
        """The role check of every lead-only action, whatever the door (API, CLI, GUI): the
        person acting must be a lead, else :class:`NotALeadError` (``what`` names the action).
        A project with no lead yet lets whoever sets it up act as one.

        On SQLite this guards against mistakes; it is no security boundary (whoever can write
        the project's file can change anything in it). On a server the database enforces the
        same rights by login, whatever the program."""
        if s.scalar(select(Annotator.id).where(Annotator.role == "lead").limit(1)) is None:
            return
        self.require_lead(s, what, refusal=LEAD_ONLY)

    def check_lead(self, what: str) -> None:
        """:meth:`lead_only` in a read of its own, before work that writes later (or elsewhere)."""
        self.read(lambda s: self.lead_only(s, what))

    # ---- edit history -----------------------------------------------------------------
    def log(self, s: Session, action: str, entity: str, entity_id: int | None,
            clip_id: int | None, before: dict | None, after: dict | None, *,
            who: Annotator | None = None, reverts: int | None = None) -> Edit:
        """Append one row to the edit history, in the write ``s`` belongs to."""
        me = who if who is not None else self.me(s)
        e = Edit(annotator_id=me.id if me else None, action=action, entity=entity,
                 entity_id=entity_id, clip_id=clip_id, before=before, after=after,
                 reverts=reverts, at=edit_time(s, utcnow))
        s.add(e)
        s.flush()
        session_edits(s).append(e.id)
        return e


def _no_settings_writer(**_changes: Any) -> ProjectSettings:
    raise ProjectError("this project cannot change its settings")


def require(cond: bool, message: str) -> None:
    if not cond:
        raise RecordError(message)


class Service:
    """Base of every service: the shared context and the other services (``peers``)."""

    def __init__(self, ctx: Context, peers: Peers) -> None:
        self.ctx = ctx
        self.peers = peers


