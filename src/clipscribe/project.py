"""``clipscribe.Project``: the one door to a project, used alike by the GUI, the CLI and scripts.

A project is a folder holding ``clipscribe-project.json`` (settings) and, unless the settings
name a PostgreSQL server, ``project.sqlite``. Every public method that changes data runs in
its own transaction and appends to the edit history.
"""

from __future__ import annotations

import getpass
import os
from pathlib import Path
from typing import Any

from pydantic import ValidationError
from sqlalchemy import select

from .errors import ProjectError, RecordError
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
from .store import db
from .store.models import Annotator

DB_FILE = "project.sqlite"


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
        return cls._connect(root, cfg, user=user, password=password)

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
        except Exception as exc:
            engine.dispose()
            raise ProjectError(f"{root}: cannot open the project database: {exc}") from exc
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
    def local_user_name() -> str:
        try:
            return getpass.getuser() or "owner"
        except Exception:  # no login name on some containers
            return "owner"

    # ---- settings ---------------------------------------------------------------------
    def update_settings(self, **changes: Any) -> ProjectSettings:
        """Change settings (validated) and write the settings file atomically."""
        try:
            cfg = ProjectSettings.model_validate({**self.settings.model_dump(), **changes})
        except ValidationError as exc:
            raise RecordError(f"project settings: {_first_error(exc)}") from None
        _write_settings(self.folder, cfg)
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


def _write_settings(folder: Path, cfg: ProjectSettings) -> None:
    """Write the settings file atomically (a temporary file renamed into place)."""
    tmp = folder / (SETTINGS_FILE + ".tmp")
    tmp.write_text(cfg.model_dump_json(indent=2) + "\n", encoding="utf-8")
    os.replace(tmp, folder / SETTINGS_FILE)


def _with_login(url: str, user: str | None, password: str | None) -> str:
    """Put a login into a PostgreSQL URL (team mode); SQLite URLs are returned unchanged."""
    if not url.startswith("postgresql") or not user:
        return url
    from sqlalchemy.engine import make_url
    u = make_url(url).set(username=user.lower(), password=password)
    return u.render_as_string(hide_password=False)


def _without_password(url: str | None) -> str | None:
    """The URL to keep in the settings file: never a password (libpq's ~/.pgpass has it)."""
    if not url or not url.startswith("postgresql"):
        return url
    from sqlalchemy.engine import make_url
    return make_url(url)._replace(password=None).render_as_string(hide_password=False)


def _first_error(exc: ValidationError) -> str:
    err = exc.errors()[0]
    where = ".".join(str(p) for p in err.get("loc", ())) or "value"
    return f"{where}: {err.get('msg')}"
