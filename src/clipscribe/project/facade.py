"""``clipscribe.Project``: the one door to a project, used alike by the GUI, the CLI and scripts.

A project is a folder holding ``clipscribe-project.json`` (settings) and, unless the settings
name a PostgreSQL server, ``project.sqlite``. Every public method that changes data runs in
its own transaction and appends to the edit history.
"""

from __future__ import annotations

import datetime as dt
import getpass
import os
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any, ContextManager, TypeVar

from pydantic import ValidationError
from sqlalchemy import Engine, select
from sqlalchemy.exc import DatabaseError, OperationalError
from sqlalchemy.orm import Session

from ..errors import LoginRequired, ProjectError, RecordError
from ..schema.settings import SETTINGS_FILE, ProjectSettings
from ..store import db, sqlite_check
from ..store.models import Annotator
from ..store.unit_of_work import UnitOfWork, simulated_clock
from ..types import (
    IDLE_SECONDS,
    AnnotatorInfo,
    AssignmentPlan,
    CaptionInfo,
    ClipComparison,
    ClipInfo,
    ClipRef,
    CommentNote,
    ComputeReport,
    DisputedClip,
    DisputedOrder,
    EditInfo,
    GoldCaptionInfo,
    IngestReport,
    LabelInfo,
    MoveReport,
    OthersWork,
    QueueRow,
    SegmentInfo,
    Throughput,
    TrendPoint,
)
from . import opening
from .context import Context
from .services import Peers

if TYPE_CHECKING:
    import threading

    from .. import export
    from ..schema.settings import LabelSpec
    from .analysis import AgreementReport
    from .catalog import Progress

T = TypeVar("T")
DB_FILE = "project.sqlite"
check_sqlite_file = sqlite_check.check_file


class Project:
    """An open project. Use as a context manager, or call :meth:`close`.

    Create with :meth:`create`, open with :meth:`open`. ``user`` is the person acting: their name
    is written into the edit history and, in blind mode, limits what the workbench shows.
    """

    def __init__(self, folder: Path, settings: ProjectSettings, engine: Engine) -> None:
        self._uow = UnitOfWork(engine, folder)
        self._ctx = Context(folder, settings, self._uow)
        self._ctx.update_settings = self.update_settings
        self._peers = Peers(self._ctx)

    # the services, each made (and its module imported) on first use
    _catalog = property(lambda self: self._peers.catalog)
    _annotation = property(lambda self: self._peers.annotation)
    _workbench = property(lambda self: self._peers.workbench)
    _gold = property(lambda self: self._peers.gold)
    _history = property(lambda self: self._peers.history)
    _records = property(lambda self: self._peers.records)
    _review = property(lambda self: self._peers.review)
    _analysis = property(lambda self: self._peers.analysis)
    _exporting = property(lambda self: self._peers.exporting)
    _team = property(lambda self: self._peers.team)
    _suggestions = property(lambda self: self._peers.suggestions)
    _compute = property(lambda self: self._peers.compute)
    _checks = property(lambda self: self._peers.checks)
    _results = property(lambda self: self._peers.results)
    _disputed = property(lambda self: self._peers.disputed)

    # ---- lifetime and shared state --------------------------------------------------------
    def close(self) -> None:
        self._uow.close()

    def __enter__(self) -> "Project":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"<Project {self.settings.name!r} at {self.folder}>"

    @property
    def folder(self) -> Path:
        return self._ctx.folder

    @property
    def settings(self) -> ProjectSettings:
        return self._ctx.settings

    @property
    def engine(self) -> Engine:
        return self._uow.engine

    @property
    def user(self) -> str | None:
        """The person acting: written into the edit history; in blind mode it limits what the
        workbench shows."""
        return self._ctx.user

    @user.setter
    def user(self, name: str | None) -> None:
        self._ctx.user = name

    @property
    def is_server(self) -> bool:
        return self._uow.is_server

    @property
    def media_root(self) -> Path:
        return self._ctx.media_root

    def relative_media_path(self, path: str | os.PathLike) -> str:
        """The '/'-separated path of ``path`` below the media root; RecordError if outside."""
        return self._ctx.relative_media_path(path)

    def media_path(self, clip: ClipRef) -> Path:
        """Absolute path of a clip's media file."""
        return self._ctx.media_path(clip)

    @property
    def last_edit_ids(self) -> list[int]:
        """The edit-history ids the last write of this thread produced (for an undo step);
        :meth:`recording` collects those of a whole block."""
        return self._uow.last_edit_ids

    @property
    def seen_caption_versions(self) -> dict[int, int]:
        return self._uow.seen_caption_versions

    def recording(self) -> ContextManager[list[int]]:
        """``with project.recording() as ids: ...``: ``ids`` collects the edit-history ids of
        every write made inside the block by this thread (for an undo step; revert them with
        :meth:`revert`). Blocks nest; other threads' writes are never mixed in."""
        return self._uow.recording()

    @staticmethod
    def simulated_clock(clock: Callable[[], dt.datetime]) -> ContextManager[None]:
        """``with Project.simulated_clock(lambda: next_time()): ...``: the edit-history rows of
        writes made inside the block (by this thread) carry ``clock()`` as their time, read
        once per write. For sample projects and tests; the history stays append-only."""
        return simulated_clock(clock)

    def check_writable(self, what: str) -> None:
        """ProjectError before ``what`` starts when the database cannot take a write."""
        self._ctx.check_writable(what)

    @property
    def last_export_cleaned(self) -> list[str]:
        """Unfinished folders of a killed export that the last export removed."""
        return self._exporting.last_export_cleaned

    # test and tool support: one transaction on the project's unit of work
    def _write(self, fn: Callable[[Session], T]) -> T:
        return self._uow.write(fn)

    def _read(self, fn: Callable[[Session], T]) -> T:
        return self._uow.read(fn)

    def _add_caption(self, s: Session, clip: Any, annotator: Any, text: str,
                     segment: int | None, position: int | None) -> int:
        return self._annotation._add_caption(s, clip, annotator, text, segment, position)

    # ---- opening ----------------------------------------------------------------------
    @classmethod
    def create(cls, folder: str | os.PathLike, database_url: str | None = None, *,
               name: str | None = None, user: str | None = None, **settings: Any) -> "Project":
        """Make a new project folder (it may exist but must not hold a project already)."""
        root = Path(folder)
        if (root / SETTINGS_FILE).exists():
            raise ProjectError(f"{root}: already holds a clipscribe project")
        if root.exists() and not root.is_dir():
            raise ProjectError(f"{root}: exists and is not a folder")
        try:
            cfg = ProjectSettings(name=name or root.resolve().name or "project",
                                  database_url=opening.without_password(database_url), **settings)
        except ValidationError as exc:
            raise RecordError(f"project settings: {opening.first_error(exc)}") from None
        opening.check_sqlite_url("database_url", database_url, root.absolute() / DB_FILE)
        root.mkdir(parents=True, exist_ok=True)
        opening.check_media_root(root, cfg)
        media = cfg.media_root
        (root / media if not Path(media).is_absolute() else Path(media)).mkdir(
            parents=True, exist_ok=True)
        opening.write_settings(root, cfg)
        try:
            project = cls._connect(root, cfg, user=user, password=None, url=database_url)
        except Exception:
            (root / SETTINGS_FILE).unlink(missing_ok=True)  # no half-made project left behind
            raise
        local = user or project.local_user_name()
        project.add_annotator(local, role="lead", exist_ok=True)
        project.user = local
        return project

    @classmethod
    def open(cls, folder: str | os.PathLike, user: str | None = None,
             password: str | None = None) -> "Project":
        """Open an existing project folder, migrating its database if it is older."""
        root = Path(folder)
        path = root / SETTINGS_FILE
        if not path.exists():
            raise ProjectError(f"{root}: no clipscribe project here (missing {SETTINGS_FILE})")
        try:
            cfg = ProjectSettings.model_validate_json(path.read_text(encoding="utf-8"))
        except ValidationError as exc:
            raise ProjectError(f"{path}: {opening.first_error(exc)}") from None
        except UnicodeDecodeError as exc:
            raise ProjectError(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
        except OSError as exc:
            raise ProjectError(f"{path}: cannot read the settings ({exc.strerror or exc})") from None
        opening.check_media_root(root, cfg)
        opening.check_sqlite_url(str(path), cfg.database_url, root.absolute() / DB_FILE)
        local_db = cfg.database_url is None
        if local_db:  # only create makes a database: a missing or empty file is an error
            check_sqlite_file(root / DB_FILE)
        project = cls._connect(root, cfg, user=user, password=password)
        if local_db:
            project._uow.page_check = sqlite_check.PageCheck(root / DB_FILE)
        return project

    @classmethod
    def _connect(cls, root: Path, cfg: ProjectSettings, *, user: str | None,
                 password: str | None, url: str | None = None) -> "Project":
        if url is None:  # a given url (create: the admin's, maybe with password) is used as is
            url = opening.with_login(cfg.database_url or db.sqlite_url(root.resolve() / DB_FILE),
                              user, password)
        engine = db.make_engine(url)
        try:
            db.migrate(engine)
        except ProjectError:
            engine.dispose()
            raise
        except DatabaseError as exc:
            engine.dispose()
            if cfg.database_url is None and not isinstance(exc, OperationalError):
                raise sqlite_check.damaged(root / DB_FILE, str(exc.orig or exc)) from None
            if not url.startswith("sqlite"):  # a server: its own line, naming server and login
                message = f"{root}: cannot open the project database: {opening.one_line(exc, url)}"
                if opening.wants_password(exc):
                    from sqlalchemy.engine import make_url

                    from ..store.urls import host_of
                    raise LoginRequired(message, server=host_of(url),
                                        login=make_url(url).username,
                                        refused="authentication failed" in str(exc)) from None
                raise ProjectError(message) from None
            reason = str(exc.orig or exc).strip().splitlines()[0]
            if (cfg.database_url is None and url.startswith("sqlite") and "immutable" not in url
                    and not os.access(root, os.W_OK)):
                # a read-only project folder: SQLite cannot make its lock files there, so read
                # the file as it is (every write is then refused as read-only)
                return cls._connect(root, cfg, user=user, password=password,
                                    url=sqlite_check.read_only_url(root.resolve() / DB_FILE))
            if "i/o error" in reason.lower() and opening.disk_full(root):
                reason = f"the disk holding it is full ({reason})"
            raise ProjectError(f"{root}: cannot open the project database: {reason}") from None
        except Exception as exc:
            engine.dispose()
            raise ProjectError(f"{root}: cannot open the project database: "
                               f"{opening.one_line(exc, url)}") from exc
        project = cls(root, cfg, engine)
        project.user = user or project._default_user()
        return project

    def _default_user(self) -> str:
        local = self.local_user_name()
        with db.transaction(self.engine) as s:
            if s.scalar(select(Annotator.id).where(Annotator.name == local)) is not None:
                return local
            lead = s.scalar(select(Annotator.name).where(Annotator.role == "lead")
                            .order_by(Annotator.id))
        return lead or local

    @staticmethod
    def server_of(folder: str | os.PathLike) -> str | None:
        """``host:port/database`` of the server a project folder's settings name (what a
        login there would reach), or None for a solo project or unreadable settings."""
        from ..store.urls import host_of
        try:
            cfg = ProjectSettings.model_validate_json(
                (Path(folder) / SETTINGS_FILE).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        return host_of(cfg.database_url)

    @staticmethod
    def local_user_name() -> str:
        try:
            return getpass.getuser() or "owner"
        except Exception:  # no login name on some containers
            return "owner"

    # ---- settings ---------------------------------------------------------------------
    def update_settings(self, *, together_with: Callable[[], Any] | None = None,
                        **changes: Any) -> ProjectSettings:
        """Change settings (validated) and write the settings file atomically.

        ``together_with`` (a database write) runs after the new file is fully written under a
        temporary name and before it is renamed into place: when either fails, neither the
        database nor the settings file changes (a full disk fails the file write first).
        Lead only."""
        self._ctx.check_lead("change the project settings")
        try:
            cfg = ProjectSettings.model_validate({**self.settings.model_dump(), **changes})
        except ValidationError as exc:
            raise RecordError(f"project settings: {opening.first_error(exc)}") from None
        tmp = opening.prepare_settings(self.folder, cfg)
        try:
            if together_with is not None:
                together_with()
            os.replace(tmp, self.folder / SETTINGS_FILE)
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
        self._ctx.settings = cfg
        return cfg

    def set_caption_rules(self, *, captions_per_clip: int | None = None,
                          min_words: int | None = None, max_words: int | None = None,
                          at_submit: str | None = None) -> ProjectSettings:
        """Change the caption guideline's numbers (those given); the fewest words may not
        exceed the most. ``at_submit`` is what submitting captions that miss the guideline
        does: "off", "warn" (an override with a reason lets it through, recorded) or "block".
        RecordError names the setting at fault."""
        g = self.settings.caption_guideline.model_dump()
        g.update({k: v for k, v in (("captions_per_clip", captions_per_clip),
                                    ("min_words", min_words), ("max_words", max_words),
                                    ("at_submit", at_submit)) if v is not None})
        if g["min_words"] > g["max_words"]:
            raise RecordError(f"caption rules: min_words {g['min_words']} is more than "
                              f"max_words {g['max_words']}")
        return self.update_settings(caption_guideline=g)

    @classmethod
    def move_to_server(cls, folder: str | os.PathLike, url: str, *,
                       lead: str | None = None) -> MoveReport:
        """Copy a solo SQLite project onto an empty PostgreSQL database and point the folder
        at it; see :func:`clipscribe.project.team_move.move_to_server`."""
        from .team_move import move_to_server
        return move_to_server(cls, folder, url, lead=lead)

    # ---- catalog (Catalog) --------------------------------------------------------
    def define_labels(
            self, labels: Sequence[str | dict | LabelSpec], *, ordinal: bool | None = None) -> list[LabelInfo]:
        """Set the label set, in order. Names not given again are retired (kept for history).

        Items are names or label specs (``name``, ``key``, ``colour``, ``guideline``). Keys and
        colours are filled in when missing. Raises RecordError on duplicates or bad specs.
        """
        return self._catalog.define_labels(labels, ordinal=ordinal)

    def labels(self) -> list[LabelInfo]:
        """The current label set, in order."""
        return self._catalog.labels()

    def label_set_version(self) -> int:
        return self._catalog.label_set_version()

    def labels_ordinal(self) -> bool:
        return self._catalog.labels_ordinal()

    def add_annotator(
            self, name: str, role: str = "annotator", password: str | None = None, *, exist_ok: bool = False) -> int:
        """Add a person. In a server project ``password`` creates their database login."""
        return self._catalog.add_annotator(name, role, password, exist_ok=exist_ok)

    def annotators(self) -> list[AnnotatorInfo]:
        return self._catalog.annotators()

    def role(self, name: str | None = None) -> str | None:
        return self._catalog.role(name)

    def add_clip(
            self, media_path: str | os.PathLike, group: str | None = None, *, source: str | None = None, licence: str | None = None, consent: bool | None = None) -> int:
        """Register one media file that lies inside the media root; returns the clip id."""
        return self._catalog.add_clip(media_path, group, source=source, licence=licence, consent=consent)

    def add_media(
            self, folder: str | os.PathLike, *, group_pattern: str | None = None, group_csv: str | os.PathLike | None = None, progress: Progress | None = None, source: str | None = None, licence: str | None = None, consent: bool | None = None,
            workers: int | None = None, scheduler: str | None = None, path_map: Any = None) -> IngestReport:
        """Add every video below ``folder`` (recursive). Unreadable files are skipped with the
        reason. The group key comes from ``group_pattern`` (a regular expression with a named
        group ``group``, searched in the path relative to the media root; :data:`BY_FOLDER`
        groups by folder, as the CLI and the setup dialog do by default) or from ``group_csv``
        (columns ``path,group``); with neither, every clip is its own group. A file with the same
        SHA-256 as a clip already present (or added earlier in the same call) is added and
        listed in ``duplicates``. With ``workers`` or ``scheduler`` (as for :meth:`compute`)
        the files are read (header, SHA-256, frame index) by worker processes and the clips
        written in batches; without them, in this process, one clip per transaction."""
        return self._catalog.add_media(folder, group_pattern=group_pattern, group_csv=group_csv, progress=progress, source=source, licence=licence, consent=consent,
                                       workers=workers, scheduler=scheduler, path_map=path_map)

    def copy_media_in(
            self, source: str | os.PathLike, *, cancel: Any = None, progress: Progress | None = None) -> Path:
        """Copy the videos below ``source``, a folder outside the media root, into a folder of
        the media root named after it (``name``, ``name-2``…), keeping sub-folders; all or
        nothing. Copying the same source again resumes in the same folder (files already there
        and identical are kept), so a retry after a kill makes no second copy. Returns the
        folder; :meth:`add_media` on it adds the clips (those present already are not added
        twice)."""
        return self._catalog.copy_media_in(source, cancel=cancel, progress=progress)

    def clip(self, ref: Any) -> ClipInfo:
        return self._catalog.clip(ref)

    def clips(
            self, *, state: str | None = None, group: str | None = None, label: str | None = None, assignee: str | None = None, offset: int = 0, limit: int | None = None) -> list[ClipInfo]:
        """Clips in id order, optionally filtered; ``offset``/``limit`` page through them."""
        return self._catalog.clips(state=state, group=group, label=label, assignee=assignee, offset=offset, limit=limit)

    def clip_count(self, **filters: Any) -> int:
        return self._catalog.clip_count(**filters)

    def groups(self) -> list[str]:
        return self._catalog.groups()

    def set_clip_facts(self, clip: ClipRef, *, group: Any = ..., consent: Any = ...,
                       licence: Any = ..., source: Any = ...) -> bool:
        """Change facts of a clip already added: its ``group`` (the unit kept on one side of a
        split), ``consent``, ``licence`` and ``source``. Only the facts given change; None makes
        a fact unknown (a clip without a group is its own group). Lead only. One edit in the
        history, undone by :meth:`revert` like other edits; returns False when nothing changed."""
        return self._peers.clip_facts.set_clip_facts(clip, group=group, consent=consent,
                                                      licence=licence, source=source)

    def set_fingerprint(self, clip: ClipRef, value: int) -> None:
        """Store a clip's 64-bit perceptual fingerprint (kept as a signed 64-bit integer)."""
        return self._catalog.set_fingerprint(clip, value)

    def stats(self) -> dict[str, Any]:
        """Counts for a quick overview (``clipscribe stats``)."""
        return self._catalog.stats()

    # ---- annotate (Annotation) ----------------------------------------------------
    def set_clip_label(self, clip: ClipRef, annotator: Any, label: str | None) -> int | None:
        """Set (or with ``None`` clear) one annotator's label of a clip. Setting it also gives
        that label to the annotator's unlabelled segments of the clip, in the same edit (one
        undo step)."""
        return self._annotation.set_clip_label(clip, annotator, label)

    def clip_labels(self, *, annotator: Any = None, clip: ClipRef | None = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator name, label)`` for every clip label, ordered by clip then person."""
        return self._annotation.clip_labels(annotator=annotator, clip=clip)

    def add_segment(self, clip: ClipRef, annotator: Any, label: str | None, start: int, end: int) -> int:
        """Add a segment ``[start, end)`` in frames; returns its id. ``label`` None stores it
        unlabelled: the annotator's next clip label fills it, or ``update_segment(label=...)``."""
        return self._annotation.add_segment(clip, annotator, label, start, end)

    def update_segment(
            self, segment_id: int, *, start: int | None = None, end: int | None = None, label: str | None = None) -> None:
        return self._annotation.update_segment(segment_id, start=start, end=end, label=label)

    def delete_segment(self, segment_id: int) -> None:
        return self._annotation.delete_segment(segment_id)

    def split_segment(self, segment_id: int, at: int) -> int:
        """Cut a segment in two at frame ``at``; returns the id of the new right part."""
        return self._annotation.split_segment(segment_id, at)

    def merge_segments(self, first_id: int, second_id: int) -> None:
        """Join two segments of one annotator into the first (spanning both; first's label)."""
        return self._annotation.merge_segments(first_id, second_id)

    def segments(self, *, clip: ClipRef | None = None, annotator: Any = None) -> list[SegmentInfo]:
        """Annotators' segments, ordered by clip, annotator, start. ``SegmentInfo.label`` is
        None for an unlabelled segment (shown as "unlabelled" in the workbench)."""
        return self._annotation.segments(clip=clip, annotator=annotator)

    def add_caption(
            self, clip: ClipRef, annotator: Any, text: str, *, segment: int | None = None, position: int | None = None) -> int:
        """Add one reference caption; returns its id."""
        return self._annotation.add_caption(clip, annotator, text, segment=segment, position=position)

    def update_caption(
            self, caption_id: int, text: str | None = None, *, segment: int | None | type(...) = ..., expected_version: int | None = None) -> int:
        """Change a caption's text and/or segment; returns the new version. A caption changed
        or deleted meanwhile by someone else raises StaleWriteError: changed since
        ``expected_version`` when given, else since this project object last read or wrote it
        (a caption it never read is written as it is now)."""
        return self._annotation.update_caption(caption_id, text, segment=segment, expected_version=expected_version)

    def delete_caption(self, caption_id: int, *, expected_version: int | None = None) -> None:
        """Delete a caption. A caption changed or deleted meanwhile by someone else (since
        ``expected_version``, else since this object last read it) raises StaleWriteError and
        nothing is deleted."""
        return self._annotation.delete_caption(caption_id, expected_version=expected_version)

    def captions(self, *, clip: ClipRef | None = None, annotator: Any = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator name, text)`` for every caption, ordered by clip, person, position."""
        return self._annotation.captions(clip=clip, annotator=annotator)

    def caption_rows(self, *, clip: ClipRef | None = None, annotator: Any = None) -> list[CaptionInfo]:
        return self._annotation.caption_rows(clip=clip, annotator=annotator)

    def set_clip_state(
            self, clip: ClipRef, annotator: Any, state: str, reason: str | None = None, *,
            override: str | None = None) -> None:
        """Mark one's work on a clip: ``submitted``, ``skipped`` (needs a reason), ``unsure`` or ``open``.

        When the project checks the caption guideline at submit (``caption_guideline.at_submit``
        "warn" or "block", see :meth:`set_caption_rules`), submitting captions that miss it
        raises :class:`~clipscribe.errors.GuidelineNotMet` listing what is missing. With "warn",
        ``override`` (a reason) submits anyway and the edit history records the override and
        what it let through; "block" refuses overrides. Any later edit of one's own submitted
        clip (label, segment, caption) reopens it, recorded in the history and undone with it."""
        return self._annotation.set_clip_state(clip, annotator, state, reason, override=override)

    def clip_state(self, clip: ClipRef, annotator: Any = None) -> tuple[str, str | None]:
        return self._annotation.clip_state(clip, annotator)

    # ---- workbench (Workbench) ----------------------------------------------------
    def find_clips(self, text: str, *, limit: int = 20) -> list[ClipInfo]:
        """Clips whose number is ``text`` or whose media path contains it (any case), the
        number first, then in id order."""
        return self._workbench.find_clips(text, limit=limit)

    def queue_rows(
            self, annotator: Any = None, *, state: str | None = None, label: str | None = None, group: str | None = None, assignee: str | None = None, offset: int = 0, limit: int | None = None) -> list[QueueRow]:
        """A page of clips in id order with ``annotator``'s own state and label (default: the
        current user). ``state`` (open, unfinished, submitted, skipped, unsure) and ``label``
        filter on that person's own work only, so blind mode shows nothing of others'."""
        return self._workbench.queue_rows(annotator, state=state, label=label, group=group, assignee=assignee, offset=offset, limit=limit)

    def queue_row(self, clip: ClipRef, annotator: Any = None, **filters: Any) -> QueueRow | None:
        """The :meth:`queue_rows` row of one clip, or None when the filters leave it out."""
        return self._workbench.queue_row(clip, annotator, **filters)

    def queue_count(self, annotator: Any = None, **filters: Any) -> int:
        """Number of rows :meth:`queue_rows` yields with the same filters."""
        return self._workbench.queue_count(annotator, **filters)

    def queue_index(self, clip: ClipRef, annotator: Any = None, **filters: Any) -> int | None:
        """Row number of ``clip`` in :meth:`queue_rows` with the same filters, or None."""
        return self._workbench.queue_index(clip, annotator, **filters)

    def next_unfinished_clip(
            self, annotator: Any = None, *, after: Any = None, wrap: bool = True) -> int | None:
        """Id of the first clip after ``after`` (by id) that ``annotator`` has neither submitted
        nor skipped; wraps round to the start when ``wrap``. None when all are finished."""
        return self._workbench.next_unfinished_clip(annotator, after=after, wrap=wrap)

    def my_clip_label(self, clip: ClipRef, annotator: Any = None) -> str | None:
        """``annotator``'s own label of ``clip`` (default: the current user), or None."""
        return self._workbench.my_clip_label(clip, annotator)

    def caption_versions(self, clip: ClipRef, annotator: Any = None) -> dict[int, int]:
        """``{caption id: version}`` of ``annotator``'s captions of ``clip`` (default: the current
        user): the versions a later ``update_caption(..., expected_version=...)`` checks against."""
        return self._workbench.caption_versions(clip, annotator)

    def others_work(self, clip: ClipRef, annotator: Any = None) -> OthersWork:
        """Everyone else's clip label, captions and segments of ``clip`` (others than
        ``annotator``, default the current user). Blind mode on (:meth:`blind_mode`) gives an
        empty :class:`OthersWork` without reading any of it."""
        return self._workbench.others_work(clip, annotator)

    def my_comments(self, clip: ClipRef, annotator: Any = None) -> list[CommentNote]:
        """Lead comments addressed to ``annotator`` (default: the current user) on ``clip``,
        oldest first, each marked unread until :meth:`mark_comments_read`. Comments addressed
        to others, or to no one, are never among them."""
        return self._workbench.my_comments(clip, annotator)

    def unread_comments(self, annotator: Any = None) -> dict[int, int]:
        """``{clip id: number of unread comments}`` addressed to ``annotator`` (default: the
        current user); clips with none are left out."""
        return self._workbench.unread_comments(annotator)

    def mark_comments_read(self, clip: ClipRef, annotator: Any = None) -> int:
        """Mark every comment addressed to ``annotator`` (default: the current user) on ``clip``
        as read; returns how many were unread. The read state lives on the person's own
        assignment of the clip (made when missing, as opening work on a clip does); not an edit
        of the data, so it is not in the edit history and not undone."""
        return self._workbench.mark_comments_read(clip, annotator)

    # ---- gold (Gold) --------------------------------------------------------------
    def gold_label_version(self, clip: ClipRef) -> int:
        """Version of a clip's gold label; 0 when it has none yet."""
        return self._gold.gold_label_version(clip)

    def set_gold_label(
            self, clip: ClipRef, label: str | None, *, lead: Any = None, expected_version: int | None = None) -> None:
        """Settle a clip's label. With ``expected_version`` (from :meth:`gold_label_version`)
        a gold label another lead changed meanwhile raises StaleWriteError (``kept_value`` is
        your label, ``current_value`` theirs) instead of being overwritten."""
        return self._gold.set_gold_label(clip, label, lead=lead, expected_version=expected_version)

    def set_gold_segments(
            self, clip: ClipRef, segments: list[tuple[str, int, int]], *, lead: Any = None) -> None:
        """Replace a clip's gold segments with ``(label, start, end)`` triples."""
        return self._gold.set_gold_segments(clip, segments, lead=lead)

    def set_gold_captions(
            self, clip: ClipRef, captions: list[str | tuple[str, int | None]], *, lead: Any = None) -> None:
        """Replace a clip's gold reference captions; items are texts or ``(text, source caption id)``."""
        return self._gold.set_gold_captions(clip, captions, lead=lead)

    def gold_labels(self) -> dict[int, str]:
        return self._gold.gold_labels()

    def gold_segments(self, clip: ClipRef | None = None) -> list[tuple[int, str, int, int]]:
        return self._gold.gold_segments(clip)

    def gold_captions(self, clip: ClipRef | None = None) -> dict[int, list[str]]:
        return self._gold.gold_captions(clip)

    def add_comment(self, clip: ClipRef, text: str, *, annotator: Any = None, lead: Any = None) -> int:
        """Leave a lead's comment on a clip, optionally addressed to one annotator. Only a
        comment addressed to an annotator reaches them (on that clip, in their clip panel);
        one addressed to no one stays among the leads. See :meth:`comment_to_annotators`."""
        return self._gold.add_comment(clip, text, annotator=annotator, lead=lead)

    def comment_to_annotators(
            self, clip: ClipRef, text: str, *, annotators: Any = None, lead: Any = None) -> list[int]:
        """The same comment to several annotators of ``clip``, one addressed copy each, in one
        transaction. ``annotators`` defaults to everyone (leads excepted) who labelled,
        segmented, captioned, skipped or was assigned the clip. Returns the comment ids."""
        return self._gold.comment_to_annotators(clip, text, annotators=annotators, lead=lead)

    def comments(self, clip: ClipRef | None = None) -> list[tuple[int, str | None, str, str]]:
        """``(clip id, addressee or None, lead, text)``."""
        return self._gold.comments(clip)

    # ---- history (History) --------------------------------------------------------
    def history(
            self, *, clip: ClipRef | None = None, annotator: Any = None, limit: int | None = None) -> list[EditInfo]:
        """The edit history, oldest first (the audit trail)."""
        return self._history.history(clip=clip, annotator=annotator, limit=limit)

    def revert(self, edit_ids: list[int]) -> list[int]:
        """Undo the given edits (newest first, in one transaction) by restoring each row's
        ``before`` state; redo is reverting the revert. Refuses (StaleWriteError) when a row
        changed since the edit. Returns the ids of the new history rows."""
        return self._history.revert(edit_ids)

    def undo_trail(
            self, clip: ClipRef, annotator: Any, *, limit: int = 200) -> list[tuple[str, list[int]]]:
        """The steps ``annotator`` can still undo on ``clip``, oldest first, rebuilt from the
        edit history: ``(what, edit ids)`` per user action (the rows of one transaction). Undo
        rows take the steps they reverted off the trail, a redo puts them back; an undo of
        something not on the trail (another window) ends it there."""
        return self._history.undo_trail(clip, annotator, limit=limit)

    # ---- records (Records) --------------------------------------------------------
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
        return self._records.import_records(path, progress=progress, cancel=cancel)

    def import_labels_csv(self, path: str | os.PathLike, *, progress: Progress | None = None,
                          cancel: threading.Event | None = None) -> dict[str, int]:
        """Import clip labels from CSV with the columns ``clip,annotator,label`` (all or nothing;
        ``progress`` and ``cancel`` as for :meth:`import_records`)."""
        return self._records.import_labels_csv(path, progress=progress, cancel=cancel)

    def iter_records(self):
        """Every clip, label, segment, caption, gold decision, lead comment and clip state
        (submitted, skipped with its reason, unsure) as interchange records (comments: those
        this login may read; on a server an annotator reads only the ones addressed to them).

        Built from stored rows without validating them again, so a row stored before a limit
        existed is still written out (an import then names it)."""
        return self._records.iter_records()

    def export_records(self, path: str | os.PathLike) -> int:
        """Write every record as JSON Lines (atomically); returns the number of lines.

        Rows stored before a limit existed (a caption longer than the caption limit) are written
        as they are: a dump never fails for the whole project because of one row."""
        return self._records.export_records(path)

    def export_labels_csv(self, path: str | os.PathLike) -> int:
        """Write every clip label as CSV (``clip,annotator,label``); text cells a spreadsheet
        would run as a formula get a leading ``'`` (read back by :meth:`import_labels_csv`)."""
        return self._records.export_labels_csv(path)

    # ---- review (Review) ----------------------------------------------------------
    def check_reviewer(self, who: str | None = None) -> str:
        """The name of the person reviewing; :class:`NotALeadError` unless they are a lead."""
        return self._review.check_reviewer(who)

    def skips(self, clip: ClipRef | None = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator, reason)`` of every skipped clip (or of one clip), by clip and
        name. A skip is not a label: agreement and exports leave the skipper's label out."""
        return self._review.skips(clip)

    def unsure_flags(self, clip: ClipRef | None = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator, note)`` of every clip flagged unsure (or of one clip), by clip
        and name; note "" when none was given. Unlike a skip, the flagger's label counts."""
        return self._review.unsure_flags(clip)

    def review_queue(
            self, *, label: str | None = None, annotator: str | None = None, group: str | None = None, report: Any = None, seed: int = 0, n_boot: int = 200, flagged: bool = False,
            rank_by: str = "disputed", provisional: bool = False, order: DisputedOrder | None = None,
            offset: int = 0, limit: int | None = None) -> list[DisputedClip]:
        """Clips most disputed first, as the agreement report orders them: most label
        disagreement (1 - majority share), then lowest mean pairwise segment F1, then lowest
        leave-one-out caption BLEU (see :meth:`ClipTable.worst_first`).

        ``rank_by="least-certain"``: lowest posterior probability of the inferred label
        (Dawid-Skene) first. Every row carries ``inferred_label`` and ``certainty``.

        ``label`` keeps clips some annotator gave that label; ``annotator`` keeps clips that
        person labelled, segmented or captioned; ``group`` keeps one group; ``flagged`` keeps
        clips someone skipped or flagged unsure. Pass a ready ``report`` to skip recomputing
        it; ``provisional=True`` computes none and orders by label disagreement alone.
        ``order`` (from :meth:`review_order`, with the ``report`` it was made from) skips
        ordering again; ``offset``/``limit`` give one page of rows. Leads only.
        """
        return self._review.review_queue(label=label, annotator=annotator, group=group, report=report, seed=seed, n_boot=n_boot, flagged=flagged, rank_by=rank_by, provisional=provisional, order=order, offset=offset, limit=limit)

    def review_order(
            self, *, report: Any = None, label: str | None = None, annotator: str | None = None,
            group: str | None = None, flagged: bool = False, rank_by: str = "disputed") -> DisputedOrder:
        """The clip ids of :meth:`review_queue` in its order, with their ranks, and no rows
        built (cheap for 100k clips). Without ``report`` the order is provisional: by label
        disagreement alone, ties by clip id. Rows of a page: :meth:`review_rows`. Leads only."""
        return self._disputed.review_order(report=report, label=label, annotator=annotator, group=group, flagged=flagged, rank_by=rank_by)

    def review_rows(self, order: DisputedOrder, start: int = 0, stop: int | None = None, *,
                    report: Any = None) -> list[DisputedClip]:
        """The :meth:`review_queue` rows of ``order.clips[start:stop]``, read for those clips
        alone and scored by ``report`` (the one the order was made from; without one, label
        disagreement only). Leads only."""
        return self._disputed.review_rows(order, start, stop, report=report)

    def most_disputed_clip(self) -> int | None:
        """The first clip of :meth:`review_queue`, or None in an empty project. Leads only."""
        return self._review.most_disputed_clip()

    def clip_comparison(self, clip: ClipRef, *, report: Any = None) -> ClipComparison:
        """Every annotator's label, segments and captions of ``clip`` beside the gold, and who
        skipped it with their reason (a skipper's left-over label is not among ``labels``).
        Leads only."""
        return self._review.clip_comparison(clip, report=report)

    def gold_caption_rows(self, clip: ClipRef) -> list[GoldCaptionInfo]:
        """A clip's gold captions with the annotator caption each came from."""
        return self._review.gold_caption_rows(clip)

    def throughput(self, *, idle_seconds: float = IDLE_SECONDS) -> dict[str, Throughput]:
        r"""Clips per hour per annotator from the edit history.

        Working time :math:`T_a = \sum_i \min(t_{i+1} - t_i, \tau)` over the annotator's edits
        in time order, with :math:`\tau` = ``idle_seconds`` (a longer pause is a break; our
        choice, 5 minutes by default); clips per hour is :math:`3600\,C_a / T_a` with
        :math:`C_a` the distinct clips the annotator edited (NaN when :math:`T_a = 0`).
        """
        return self._review.throughput(idle_seconds=idle_seconds)

    def agreement_trend(self, *, window: int | None = None, by: str = "auto") -> list[TrendPoint]:
        """Krippendorff's alpha (nominal) of the annotators' labels over time, clips ordered by
        when their last label was set. ``by="clips"``: consecutive windows of ``window`` clips
        (default: six windows, at least three clips each). ``by="week"``: one point per ISO
        calendar week (UTC). ``by="auto"``: weeks when the labels span at least
        :data:`MIN_WEEKS` weeks, else windows of clips. Alpha as in
        :func:`clipscribe.agreement.krippendorff_alpha` (Krippendorff 2004, *Content Analysis*,
        ch. 11)."""
        return self._review.agreement_trend(window=window, by=by)

    # ---- label suggestions (Suggestions) --------------------------------------------
    def train_suggester(self, *, progress: Progress = None,
                        cancel: threading.Event | Callable[[], bool] | None = None,
                        min_agreement: float = 0.6, seed: int = 0) -> Any:
        """Compute missing clip features, then train the suggester on the labelled clips
        (labels by the export label policy). Too few labels raise
        :class:`~clipscribe.errors.NotEnoughLabels` ("not enough labels yet: N of M")."""
        return self._suggestions.train_suggester(progress=progress, cancel=cancel,
                                                 min_agreement=min_agreement, seed=seed)

    def suggest(self, clip: ClipRef) -> list[tuple[str, float]]:
        """``[(label, probability), ...]`` best first; ``[]`` when there is no model yet (see
        :meth:`suggestion_reason`). Never sets a label."""
        return self._suggestions.suggest(clip)

    def suggestion_reason(self, clip: ClipRef | None = None) -> str:
        """Why :meth:`suggest` gives nothing ("" when it gives suggestions)."""
        return self._suggestions.suggestion_reason(clip)

    def compare_streams(self, folds: int = 5, seed: int = 0, *, progress: Progress = None,
                        cancel: threading.Event | Callable[[], bool] | None = None,
                        min_agreement: float = 0.6, n_boot: int = 1000) -> Any:
        """Grouped cross-validation of the "single-frame", "appearance", "motion" and "fused"
        streams: ``.accuracy``, ``.macro_f1``, ``.predictions`` (out-of-fold label per clip id),
        ``.confusion``, ``.intervals``, ``.weight`` and ``.recipe`` (see
        :class:`clipscribe.features.models.StreamComparison`)."""
        return self._suggestions.compare_streams(folds, seed, progress=progress, cancel=cancel,
                                                 min_agreement=min_agreement, n_boot=n_boot)

    def features_missing(self, *, labelled_only: bool = False,
                         stop_after: int | None = None) -> tuple[int, int]:
        """``(missing, clips)``: how many clips (or, with ``labelled_only``, labelled clips the
        suggester would train on) have no clip features in the cache yet (counting stops once
        it passes ``stop_after``). Training and the comparison compute them; ``clipscribe
        compute DIR --what features`` does it ahead."""
        return self._suggestions.features_missing(labelled_only=labelled_only,
                                                  stop_after=stop_after)

    def suggestion_visibility(self) -> str:
        """Who sees suggestions in the workbench: "off", "after-look" (once the annotator has
        seen the clip's last frame or labelled it) or "on"."""
        return self._suggestions.suggestion_visibility()

    def set_suggestion_visibility(self, mode: str) -> None:
        """Decide whether annotators see suggestions ("off" / "after-look" / "on"); lead only.
        Suggestions can anchor people: an annotator who sees one tends to accept it."""
        return self._suggestions.set_suggestion_visibility(mode)

    def accept_suggestion(self, clip: ClipRef, annotator: Any = None, *,
                          expected: str | None = None) -> str:
        """Set the clip's label to its best suggestion, marked as accepted in the edit history;
        returns the label (no suggestion, or a best one other than ``expected``:
        :class:`RecordError`)."""
        return self._suggestions.accept_suggestion(clip, annotator, expected=expected)

    def accepted_suggestions(self) -> set[tuple[int, str]]:
        """(clip id, annotator) of the clip labels whose latest change accepted a suggestion."""
        return self._suggestions.accepted_suggestions()

    def least_certain_first(self, clips: list[int] | None = None) -> list[tuple[int, float]]:
        """``[(clip id, margin), ...]``, smallest margin between the two most probable labels
        first; empty without a model."""
        return self._suggestions.least_certain_first(clips)

    def hand_out_least_certain(self, annotator: Any, n: int) -> list[int]:
        """Reserve the next ``n`` clips for ``annotator``, least certain first (lead only);
        :meth:`next_clip` then gives them in that order. Returns the clip ids."""
        return self._suggestions.hand_out_least_certain(annotator, n)

    def agreement_with_and_without_suggestions(self) -> dict[str, Any]:
        """Krippendorff's alpha of the annotators' labels with and without the labels set by
        accepting a suggestion."""
        return self._suggestions.agreement_with_and_without_suggestions()

    # ---- precompute (Compute) -----------------------------------------------------
    def compute(
            self, what: str | Sequence[str] | None = None, *, clips: Sequence[ClipRef] | None = None,
            group: str | None = None, workers: int | None = None, scheduler: str | None = None,
            path_map: Any = None, cache_dir: str | os.PathLike | None = None,
            progress: Progress = None,
            cancel: threading.Event | Callable[[], bool] | None = None) -> ComputeReport:
        """Compute what is missing for every clip (or ``clips``, or a ``group``): ``what`` is
        any of "index", "thumbs", "motion", "fingerprint", "features" (a list, or one string
        "index,thumbs"; default all). A clip already done is skipped, so a run killed half-way
        is resumed by running it again. The work runs on a local cluster of ``workers`` worker
        processes (default cores − 1; 0 computes in this process, without Dask), or on the
        Dask ``scheduler`` given ("tcp://host:8786"). ``path_map`` ({client prefix: worker
        prefix}) names where workers find the media root and ``cache_dir`` (default: the
        per-user cache) when they mount shared storage elsewhere. A missing or broken file is
        listed in ``.failed`` with the reason; nothing else stops. Fingerprints are written by
        a lead. Needs ``clipscribe[cluster]`` (Dask) unless ``workers=0``; see docs/cluster.md."""
        return self._compute.compute(what, clips=clips, group=group, workers=workers,
                                     scheduler=scheduler, path_map=path_map, cache_dir=cache_dir,
                                     progress=progress, cancel=cancel)

    # ---- analysis (Analysis) ------------------------------------------------------
    def agreement_report(
            self, *, captions: bool = True, segments: bool = True, seed: int = 0, n_boot: int = 1000,
            truth_model: str = "full", cache: bool = True) -> AgreementReport:
        """Labels, segments and captions agreement over every annotator's work (leads' gold
        decisions excluded), with bootstrap confidence intervals resampling clips, and the
        annotator reliability section (``.reliability``: inferred labels by Dawid-Skene with
        ``truth_model`` "full" or "one-coin", and check-clip accuracy). The caption part is
        kept in the project's result cache and reused while no caption changed (``cache=False``
        computes everything now); the recipe's note says when a kept part was used."""
        return self._analysis.agreement_report(captions=captions, segments=segments, seed=seed, n_boot=n_boot,
                                               truth_model=truth_model, cache=cache)

    def caption_part_kept(self, seed: int = 0) -> bool:
        """Whether :meth:`agreement_report` with this ``seed`` would reuse a kept caption part
        (a quick look; a screen shows the label numbers first when it would not: computing
        the caption part takes about a minute at 100k clips)."""
        return self._analysis.caption_part_kept(seed)

    def agreement_inputs(self) -> dict[str, Any]:
        """The rows the report is computed from (for scripts that call the engine directly)."""
        return self._analysis.agreement_inputs()

    # ---- exporting (Exporting) ----------------------------------------------------
    def compute_fingerprints(
            self, *, progress: Progress = None, cancel: threading.Event | None = None) -> int:
        """Compute the perceptual fingerprint of every clip that lacks one; returns how many."""
        return self._exporting.compute_fingerprints(progress=progress, cancel=cancel)

    def missing_fingerprints(self) -> int:
        """How many clips have no perceptual fingerprint: an export's near-duplicate check
        cannot cover them (compute them with ``compute(["fingerprint"])`` or
        ``plan_export(compute_missing=True)``)."""
        return self._exporting.missing_fingerprints()

    def export_inputs(self) -> list[export.ClipInput]:
        """Every clip as the export engine's plain input (leads' own labels excluded)."""
        return self._exporting.export_inputs()

    def plan_export(
            self, ratios: Mapping[str, float] | None = None, *, seed: int = 0, min_agreement: float = 0.6, frozen: Mapping[str, str] | str | os.PathLike | None = None, hamming_radius: int = 8, caption_threshold: float = 0.9, progress: Progress = None, captions: str = "gold", segments: str = "gold+best", labels: str = "majority", min_posterior: float = 0.9, compute_missing: bool = False, cancel: threading.Event | None = None) -> export.ExportPlan:
        """Decide labels, assign splits and run every leakage check; writes nothing.

        ``frozen`` defaults to the assignment of this project's last export; a path to an
        export manifest (or its folder) uses that manifest's assignment instead. ``captions``
        is the caption policy, ``"gold"`` or ``"gold+agreeing"`` (see
        :class:`clipscribe.export.LabelPolicy`); clips with fewer references than the caption
        guideline's captions per clip, and splits empty or far from their ratios, are in the
        plan's ``warnings``. ``segments`` is the segment rule: ``"gold+best"`` (gold segments,
        else those of the agreeing annotator who agrees best with the others, else none) or
        ``"gold"`` (gold segments, else none); the manifest records both rules and how many
        repeated reference captions were dropped. ``labels`` is the label rule without gold:
        ``"majority"`` (``min_agreement``) or ``"inferred"`` (the label Dawid-Skene infers,
        when its posterior is at least ``min_posterior``; recorded with the inference's
        recipe). Gold wins under either rule.

        Fingerprints are never computed inside the check unasked: clips without one are
        reported as not checked for near duplicates (a ``no-fingerprint`` finding, counted in
        the manifest). ``compute_missing=True`` computes them first through the compute path,
        reporting to ``progress`` and stopped by ``cancel`` (see :meth:`missing_fingerprints`).
        """
        return self._exporting.plan_export(ratios, seed=seed, min_agreement=min_agreement, frozen=frozen, hamming_radius=hamming_radius, caption_threshold=caption_threshold, progress=progress, captions=captions, segments=segments, labels=labels, min_posterior=min_posterior, compute_missing=compute_missing, cancel=cancel)

    def write_export(
            self, out_dir: str | os.PathLike, plan: export.ExportPlan, *, media_mode: str | None = None, webvtt: bool = False, override_reason: str | None = None, overwrite: bool = False, progress: Progress = None, cancel: threading.Event | None = None):
        """Write a planned export atomically; remember its assignment for the next export.
        Blocking leakage findings stop it unless ``override_reason`` is given (recorded)."""
        return self._exporting.write_export(out_dir, plan, media_mode=media_mode, webvtt=webvtt, override_reason=override_reason, overwrite=overwrite, progress=progress, cancel=cancel)

    def plan_folds(
            self, k: int, *, seed: int = 0, val_fraction: float = 0.0, min_agreement: float = 0.6, hamming_radius: int = 8, caption_threshold: float = 0.9, progress: Progress = None, captions: str = "gold", segments: str = "gold+best", labels: str = "majority", min_posterior: float = 0.9, compute_missing: bool = False, cancel: threading.Event | None = None) -> list[export.ExportPlan]:
        """k rotating group-exclusive folds (split 1..k, each testing on one k-th of the
        groups), each planned and leakage-checked like a single export; writes nothing.
        Missing fingerprints as in :meth:`plan_export`."""
        return self._exporting.plan_folds(k, seed=seed, val_fraction=val_fraction, min_agreement=min_agreement, hamming_radius=hamming_radius, caption_threshold=caption_threshold, progress=progress, captions=captions, segments=segments, labels=labels, min_posterior=min_posterior, compute_missing=compute_missing, cancel=cancel)

    def write_folds(
            self, out_dir: str | os.PathLike, plans: list[export.ExportPlan], *, media_mode: str | None = None, webvtt: bool = False, override_reason: str | None = None, progress: Progress = None, cancel: threading.Event | None = None) -> list:
        """Write folds as ``out_dir/split-1 .. split-k``, all or nothing: nothing is written when
        any fold has blocking findings (unless overridden) or a write fails."""
        return self._exporting.write_folds(out_dir, plans, media_mode=media_mode, webvtt=webvtt, override_reason=override_reason, progress=progress, cancel=cancel)

    # ---- team (Team) --------------------------------------------------------------
    def require_full_view(self, what: str) -> None:
        """Refuse ``what`` (a report over everyone's work) to a login the server shows only
        its own work: an annotator in blind mode. Solo projects see everything."""
        return self._team.require_full_view(what)

    def set_password(self, name: str, password: str) -> str:
        """Give a person a login (or a new password); returns the login name. Server only;
        the connected login needs CREATEROLE (the admin)."""
        return self._team.set_password(name, password)

    def set_role(self, name: str, role: str) -> None:
        """Make a person an annotator or a lead. Lead only; the last lead stays a lead.
        Setting the role a person already has changes nothing. On a server their login (if
        they have one) moves to the matching group role in the same transaction; the
        connected login needs CREATEROLE (the admin) for that."""
        return self._team.set_role(name, role)

    def set_blind(self, blind: bool) -> None:
        """Blind mode on: annotators cannot read each other's labels, segments or captions."""
        return self._team.set_blind(blind)

    def blind_mode(self) -> bool:
        return self._team.blind_mode()

    def set_lease(self, hours: float) -> None:
        """How long a pulled clip stays reserved without any edit before it returns to the pool."""
        return self._team.set_lease(hours)

    def lease_seconds(self) -> float:
        return self._team.lease_seconds()

    def assign(
            self, *, per_clip: int = 1, overlap: float = 0.0, overlap_count: int = 3, seed: int = 0,
            check_rate: float | None = None) -> AssignmentPlan:
        """Set how many people annotate each clip: a fraction ``overlap`` of the clips (chosen
        by ``seed``, see :func:`overlap_selection`) gets ``overlap_count``, the rest
        ``per_clip``. Settled clips are left out. ``check_rate`` (0..1; None keeps the
        current one) is the share of each annotator's clips that are check clips, which the
        queue mixes in (see :meth:`mark_check_clip`). Lead only."""
        return self._team.assign(per_clip=per_clip, overlap=overlap, overlap_count=overlap_count, seed=seed,
                                 check_rate=check_rate)

    def check_rate(self) -> float:
        """Share of each annotator's clips that are check clips (0: none handed out)."""
        return self._team.check_rate()

    def mark_check_clip(self, clip: ClipRef, answer: str | None = None) -> str:
        """Make ``clip`` a check clip: its answer is known in advance (``answer``, default the
        clip's gold label), and each annotator's labels of it are scored against that answer
        (accuracy with a Wilson interval and kappa, in the agreement report). Annotators are
        not told which clips are check clips (on a team server the database hides them); the
        queue mixes them in at the check rate of :meth:`assign`. Returns the answer. Lead only."""
        return self._checks.mark_check_clip(clip, answer)

    def unmark_check_clip(self, clip: ClipRef) -> bool:
        """Make a check clip an ordinary clip again; False when it was none. Lead only."""
        return self._checks.unmark_check_clip(clip)

    def check_clips(self) -> dict[int, str]:
        """{clip id: known answer} of every check clip. Lead only."""
        return self._checks.check_clips()

    def assignment_plan(self) -> dict[int, int]:
        """clip id -> number of people wanted (clips never planned count as one)."""
        return self._team.assignment_plan()

    def next_clip(self, annotator: Any = None) -> int | None:
        """Reserve and return the next clip for ``annotator`` (default: the current user),
        or None when nothing is left. Their own open clip comes first; otherwise the lowest
        clip id that still needs people and that they have not had. Abandoned leases
        (open, no edit by that person on that clip within the lease) expire first."""
        return self._team.next_clip(annotator)

    def expire_assignments(self) -> int:
        """Return abandoned leases to the pool now; returns how many expired. (Pulling does
        this too.) On a server, a lead sees every lease; an annotator only their own."""
        return self._team.expire_assignments()

    def caption_version(self, caption_id: int) -> int:
        return self._team.caption_version(caption_id)

    def require_export_right(self) -> None:
        """Only leads export. On a server the database decides (``clipscribe_is_lead()``)."""
        return self._team.require_export_right()

