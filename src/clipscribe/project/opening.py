"""Opening a project folder: the settings file (written atomically), the media root check,
and the login part of a database URL (a password is used, never saved or printed)."""

from __future__ import annotations

import os
from pathlib import Path

from pydantic import ValidationError
from sqlalchemy.exc import DatabaseError

from ..errors import ProjectError
from ..schema.settings import SETTINGS_FILE, ProjectSettings


def prepare_settings(folder: Path, cfg: ProjectSettings) -> Path:
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


def write_settings(folder: Path, cfg: ProjectSettings) -> None:
    """Write the settings file atomically (a temporary file renamed into place)."""
    os.replace(prepare_settings(folder, cfg), folder / SETTINGS_FILE)


def check_media_root(root: Path, cfg: ProjectSettings) -> None:
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


def check_sqlite_url(source: str, url: str | None, own: Path) -> None:
    """ProjectError when ``url`` (named by ``source``: the settings file, or the URL given to
    create) is a SQLite database other than the folder's own file ``own``: a project's SQLite
    database lives in the project folder, and a URL pointing elsewhere would make clipscribe
    create its tables inside an unrelated file."""
    if not url or not url.startswith("sqlite"):
        return
    from urllib.parse import unquote, urlparse

    from sqlalchemy.engine import make_url
    try:
        db = make_url(url).database or ""
    except Exception:  # noqa: BLE001 - any unreadable URL gets the same one line
        raise ProjectError(f"{source}: database_url {url!r} is not a database URL") from None
    if db.startswith("file:"):  # a SQLite URI filename
        db = unquote(urlparse(db).path)
    if db and db != ":memory:" and os.path.realpath(db) == os.path.realpath(own):
        return
    shown = f"the SQLite file {os.path.abspath(db)}" if db and db != ":memory:" else "a SQLite database in memory"
    raise ProjectError(f"{source}: database_url names {shown}, not this project's own {own}; a "
                       "project's SQLite database lives in its folder: remove database_url to use it")


def disk_full(folder: Path) -> bool:
    import shutil
    try:
        return shutil.disk_usage(folder).free < 256 * 1024
    except OSError:
        return False


def with_login(url: str, user: str | None, password: str | None) -> str:
    """Put a login into a PostgreSQL URL (team mode); SQLite URLs are returned unchanged."""
    if not url.startswith("postgresql") or not user:
        return url
    from sqlalchemy.engine import make_url
    u = make_url(url).set(username=user.lower(), password=password)
    return u.render_as_string(hide_password=False)


def with_password(url: str, password: str) -> str:
    """A server URL with ``password`` put in (for this connection only)."""
    from sqlalchemy.engine import make_url
    return make_url(url).set(password=password).render_as_string(hide_password=False)


def secret_warning(url: str | None, where: str) -> str | None:
    """The warning to print when ``url`` (given as ``where``) carries a secret, else None."""
    from ..store.urls import secret_warning as warning
    return warning(url, where)


def explain_fault(exc: BaseException, where: Path | str | None) -> str | None:
    """One plain line for a database fault a user can meet (read-only file, full disk,
    damaged file, busy database), or None when ``exc`` is no database fault."""
    from sqlalchemy.exc import DBAPIError

    from ..store.sqlite_check import explain
    return explain(exc, where) if isinstance(exc, DBAPIError) else None


def without_password(url: str | None) -> str | None:
    """The URL to keep in the settings file: never a password, in user-info or query
    (libpq's ~/.pgpass has it)."""
    from ..store.urls import without_secrets
    return without_secrets(url)


def one_line(exc: Exception, url: str) -> str:
    """The driver's own first line (not SQLAlchemy's wrapping with SQL and links), naming the
    server and login for a server URL; never a password."""
    from sqlalchemy.exc import DBAPIError

    from ..store.urls import host_of
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


def wants_password(exc: Exception) -> bool:
    """Whether the server refused the login for want of a (right) password: libpq says "no
    password supplied" or "password authentication failed". A server asking for a weaker method
    than SCRAM is not asking for a password: none is ever sent to it."""
    text = str(exc.orig if isinstance(exc, DatabaseError) and exc.orig is not None else exc).lower()
    return "password" in text and "authentication method requirement" not in text


def first_error(exc: ValidationError) -> str:
    err = exc.errors()[0]
    where = ".".join(str(p) for p in err.get("loc", ())) or "value"
    return f"{where}: {err.get('msg')}"
