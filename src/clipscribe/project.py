"""``clipscribe.Project``: the one door to a project, used alike by the GUI, the CLI and scripts.

A project is a folder holding ``clipscribe-project.json`` (settings) and, unless the settings
name a PostgreSQL server, ``project.sqlite``. Every public method that changes data runs in
its own transaction and appends to the edit history.
"""

from __future__ import annotations

import getpass
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select
from sqlalchemy.exc import DatabaseError, OperationalError

from .errors import LoginRequired, ProjectError, RecordError
from .project_parts.analysis import AnalysisMixin
from .project_parts.annotate import AnnotateMixin
from .project_parts.base import ProjectBase
from .project_parts.catalog import CatalogMixin
from .project_parts.exporting import ExportingMixin
from .project_parts.gold import GoldMixin
from .project_parts.history import HistoryMixin
from .project_parts.records_io import RecordsMixin
from .project_parts.review import ReviewMixin
from .project_parts.team import TeamMixin
from .project_parts.workbench import WorkbenchMixin
from .schema.settings import SETTINGS_FILE, ProjectSettings
from .store import db, sqlite_check
from .store.models import Annotator

DB_FILE = "project.sqlite"
check_sqlite_file = sqlite_check.check_file


class Project(ReviewMixin, AnalysisMixin, ExportingMixin, TeamMixin, WorkbenchMixin, AnnotateMixin, HistoryMixin, GoldMixin, RecordsMixin, CatalogMixin, ProjectBase):
    """An open project. Use as a context manager, or call :meth:`close`.

    Create with :meth:`create`, open with :meth:`open`. ``user`` is the person acting: their name
    is written into the edit history and, in blind mode, limits what the workbench shows.
    """

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
                                  database_url=_without_password(database_url), **settings)
        except ValidationError as exc:
            raise RecordError(f"project settings: {_first_error(exc)}") from None
        root.mkdir(parents=True, exist_ok=True)
        _check_media_root(root, cfg)
        media = cfg.media_root
        (root / media if not Path(media).is_absolute() else Path(media)).mkdir(
            parents=True, exist_ok=True)
        _write_settings(root, cfg)
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
            raise ProjectError(f"{path}: {_first_error(exc)}") from None
        except UnicodeDecodeError as exc:
            raise ProjectError(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
        except OSError as exc:
            raise ProjectError(f"{path}: cannot read the settings ({exc.strerror or exc})") from None
        _check_media_root(root, cfg)
        local_db = cfg.database_url is None
        if local_db:  # only create makes a database: a missing or empty file is an error
            check_sqlite_file(root / DB_FILE)
        project = cls._connect(root, cfg, user=user, password=password)
        if local_db:
            project._page_check = sqlite_check.PageCheck(root / DB_FILE)
        return project

    @classmethod
    def _connect(cls, root: Path, cfg: ProjectSettings, *, user: str | None,
                 password: str | None, url: str | None = None) -> "Project":
        if url is None:  # a given url (create: the admin's, maybe with password) is used as is
            url = _with_login(cfg.database_url or db.sqlite_url(root.resolve() / DB_FILE),
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
                message = f"{root}: cannot open the project database: {_one_line(exc, url)}"
                if _wants_password(exc):
                    from sqlalchemy.engine import make_url
                    from .store.urls import host_of
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
            if "i/o error" in reason.lower() and _disk_full(root):
                reason = f"the disk holding it is full ({reason})"
            raise ProjectError(f"{root}: cannot open the project database: {reason}") from None
        except Exception as exc:
            engine.dispose()
            raise ProjectError(f"{root}: cannot open the project database: "
                               f"{_one_line(exc, url)}") from exc
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
        from .store.urls import host_of
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
        database nor the settings file changes (a full disk fails the file write first)."""
        try:
            cfg = ProjectSettings.model_validate({**self.settings.model_dump(), **changes})
        except ValidationError as exc:
            raise RecordError(f"project settings: {_first_error(exc)}") from None
        tmp = _prepare_settings(self.folder, cfg)
        try:
            if together_with is not None:
                together_with()
            os.replace(tmp, self.folder / SETTINGS_FILE)
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
        self.settings = cfg
        return cfg

    def set_caption_rules(self, *, captions_per_clip: int | None = None,
                          min_words: int | None = None, max_words: int | None = None) -> ProjectSettings:
        """Change the caption guideline's numbers (those given); the fewest words may not
        exceed the most. RecordError names the setting at fault."""
        g = self.settings.caption_guideline.model_dump()
        g.update({k: v for k, v in (("captions_per_clip", captions_per_clip),
                                    ("min_words", min_words), ("max_words", max_words)) if v is not None})
        if g["min_words"] > g["max_words"]:
            raise RecordError(f"caption rules: min_words {g['min_words']} is more than "
                              f"max_words {g['max_words']}")
        return self.update_settings(caption_guideline=g)


def _prepare_settings(folder: Path, cfg: ProjectSettings) -> Path:
    """The settings written in full to a temporary file beside the real one (flushed to disk);
    ProjectError naming the file when that fails (nothing is left behind)."""
    tmp = folder / (SETTINGS_FILE + ".tmp")
    try:
        with open(tmp, "w", encoding="utf-8") as f:
            f.write(cfg.model_dump_json(indent=2) + "\n")
            f.flush()
            os.fsync(f.fileno())
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise ProjectError(f"{folder / SETTINGS_FILE}: cannot write the settings "
                           f"({exc.strerror or exc}); nothing was changed") from None
    return tmp


def _write_settings(folder: Path, cfg: ProjectSettings) -> None:
    """Write the settings file atomically (a temporary file renamed into place)."""
    os.replace(_prepare_settings(folder, cfg), folder / SETTINGS_FILE)


def _check_media_root(root: Path, cfg: ProjectSettings) -> None:
    """ProjectError when an absolute (shared-storage) media root holds the project folder
    itself: scanning it would walk the project and everything beside it."""
    media = Path(cfg.media_root)
    if not media.is_absolute():
        return
    real_media, real_root = Path(os.path.realpath(media)), Path(os.path.realpath(root))
    if real_media == real_root or real_media in real_root.parents:
        raise ProjectError(f"{root / SETTINGS_FILE}: media_root {cfg.media_root!r} contains the "
                           "project folder; point it at the shared-storage folder that holds "
                           "the videos")


def _disk_full(folder: Path) -> bool:
    import shutil
    try:
        return shutil.disk_usage(folder).free < 256 * 1024
    except OSError:
        return False


def _with_login(url: str, user: str | None, password: str | None) -> str:
    """Put a login into a PostgreSQL URL (team mode); SQLite URLs are returned unchanged."""
    if not url.startswith("postgresql") or not user:
        return url
    from sqlalchemy.engine import make_url
    u = make_url(url).set(username=user.lower(), password=password)
    return u.render_as_string(hide_password=False)


def _without_password(url: str | None) -> str | None:
    """The URL to keep in the settings file: never a password, in user-info or query
    (libpq's ~/.pgpass has it)."""
    from .store.urls import without_secrets
    return without_secrets(url)


def _one_line(exc: Exception, url: str) -> str:
    """The driver's own first line (not SQLAlchemy's wrapping with SQL and links), naming the
    server and login for a server URL; never a password."""
    from sqlalchemy.exc import DBAPIError
    from .store.urls import host_of
    inner = exc.orig if isinstance(exc, DBAPIError) and exc.orig is not None else exc
    lines = [ln.strip() for ln in str(inner).strip().splitlines() if ln.strip()]
    # libpq puts the reason after "connection to server at ... failed:" on the same line
    first = next((ln for ln in lines if "password" in ln.lower()), lines[0] if lines else repr(inner))
    if "authentication method requirement" in first:
        first += ("; no password was sent (clipscribe logs in only by SCRAM; is this the team's "
                  "server? see the threat model in docs/team-server.md)")
    where = host_of(url)
    if where is None:
        return first
    from sqlalchemy.engine import make_url
    return f"server {where}, login {make_url(url).username!r}: {first}"


def _wants_password(exc: Exception) -> bool:
    """Whether the server refused the login for want of a (right) password: libpq says "no
    password supplied" or "password authentication failed". A server asking for a weaker method
    than SCRAM is not asking for a password: none is ever sent to it."""
    text = str(exc.orig if isinstance(exc, DatabaseError) and exc.orig is not None else exc).lower()
    return "password" in text and "authentication method requirement" not in text


def _first_error(exc: ValidationError) -> str:
    err = exc.errors()[0]
    where = ".".join(str(p) for p in err.get("loc", ())) or "value"
    return f"{where}: {err.get('msg')}"
