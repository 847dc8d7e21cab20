"""Engines, sessions and migrations.

SQLite: WAL journal, foreign keys on, a busy timeout, and ``BEGIN IMMEDIATE`` for write
transactions so two processes never deadlock upgrading a read lock to a write lock.
PostgreSQL: psycopg 3 (team mode).
"""

from __future__ import annotations

import os
import re
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, TypeVar
from urllib.parse import quote

from sqlalchemy import Engine, create_engine, event
from sqlalchemy.exc import DBAPIError, OperationalError
from sqlalchemy.orm import Session

from ..errors import ProjectError

if TYPE_CHECKING:
    from alembic.config import Config

MIGRATIONS = Path(__file__).with_name("migrations")
SQLITE_BUSY_MS = 15_000
LOCK_TIMEOUT_S = 10.0
T = TypeVar("T")


def sqlite_url(path: Path) -> str:
    # quoted, so a folder name holding "?", "#" or "%" is not read as part of the URL
    return "sqlite+pysqlite:///" + quote(str(path), safe="/:\\ ")


def make_engine(url: str) -> Engine:
    """Create an engine with the pragmas and transaction handling this project relies on."""
    if url.startswith("postgresql://"):
        url = "postgresql+psycopg://" + url[len("postgresql://"):]
    if url.startswith("sqlite"):
        engine = create_engine(url, connect_args={"timeout": SQLITE_BUSY_MS / 1000})
        _sqlite_setup(engine)
        return engine
    if url.startswith("postgresql+psycopg"):
        return create_engine(url, pool_pre_ping=True, connect_args=server_connect_args())
    raise ProjectError(f"database URL {url!r}: only sqlite and postgresql are supported")


def server_connect_args() -> dict[str, str]:
    """libpq options every server connection gets, whatever the project folder's URL says
    (the folder may have been edited to point anywhere):

    * ``require_auth``: the server must authenticate by SCRAM-SHA-256, so the password never
      crosses the wire, in clear or as an MD5 hash; a server asking for anything else is
      refused before the password leaves (libpq 16 or newer; ``CLIPSCRIBE_REQUIRE_AUTH``
      names other methods, e.g. ``scram-sha-256,none`` for a local socket with peer login);
    * ``lock_timeout``: a statement waiting longer than ``CLIPSCRIBE_LOCK_TIMEOUT`` seconds
      (default 10) for a lock another session holds fails instead of hanging.
    """
    seconds = float(os.environ.get("CLIPSCRIBE_LOCK_TIMEOUT") or LOCK_TIMEOUT_S)
    args = {"options": f"-c lock_timeout={max(1, int(seconds * 1000))}"}
    if libpq_version() >= 160000:
        args["require_auth"] = os.environ.get("CLIPSCRIBE_REQUIRE_AUTH") or "scram-sha-256"
    return args


def libpq_version() -> int:
    """The client library's version as libpq reports it (e.g. 170002), 0 when unknown."""
    try:
        import psycopg
        return int(psycopg.pq.version())
    except Exception:  # noqa: BLE001 - no driver: no server connections either
        return 0


def _sqlite_setup(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_conn, _record):  # noqa: ANN001
        # Take transaction control away from the sqlite3 module so BEGIN is ours to emit.
        dbapi_conn.isolation_level = None
        cur = dbapi_conn.cursor()
        cur.execute(f"PRAGMA busy_timeout = {SQLITE_BUSY_MS}")
        cur.execute("PRAGMA journal_mode = WAL")
        cur.execute("PRAGMA synchronous = NORMAL")
        cur.execute("PRAGMA foreign_keys = ON")
        cur.close()

    @event.listens_for(engine, "begin")
    def _on_begin(conn):  # noqa: ANN001
        mode = conn.get_execution_options().get("sqlite_begin", "DEFERRED")
        conn.exec_driver_sql(f"BEGIN {mode}")


def writer(engine: Engine) -> Engine:
    """The engine to use for write transactions (takes the write lock up front on SQLite)."""
    if engine.dialect.name == "sqlite":
        return engine.execution_options(sqlite_begin="IMMEDIATE")
    return engine


def _is_busy(exc: OperationalError) -> bool:
    text = str(exc.orig).lower() if exc.orig is not None else str(exc).lower()
    return "database is locked" in text or "database is busy" in text


def with_retry(fn: Callable[[], T], *, attempts: int = 8) -> T:
    """Run ``fn`` (a whole transaction) again when SQLite reports the database busy."""
    for i in range(attempts):
        try:
            return fn()
        except OperationalError as exc:
            if not _is_busy(exc) or i == attempts - 1:
                raise
            time.sleep(0.05 * (2 ** i))
    raise AssertionError("unreachable")


@contextmanager
def transaction(engine: Engine) -> Iterator[Session]:
    """One session, one transaction: commit on success, roll back on error."""
    with Session(engine, expire_on_commit=False) as s, s.begin():
        yield s


# ---- migrations ---------------------------------------------------------------------------

def alembic_config(engine: Engine) -> Config:
    from alembic.config import Config
    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS))
    cfg.attributes["engine"] = engine
    return cfg


_REVISION = re.compile(r"^(revision|down_revision)\s*=\s*(?:'([^']*)'|\"([^\"]*)\"|None)\s*$", re.M)


def _head_from_files() -> str | None:
    """The head revision read from the revision files' ``revision``/``down_revision`` lines,
    without loading alembic (a few milliseconds on every open); None when the files do not
    make one plain chain this reading is sure of."""
    revs: dict[str, str | None] = {}
    for path in (MIGRATIONS / "versions").glob("*.py"):
        found = {m.group(1): m.group(2) or m.group(3) for m in _REVISION.finditer(
            path.read_text(encoding="utf-8"))}
        if "revision" not in found or "down_revision" not in found:
            return None
        revs[str(found["revision"])] = found["down_revision"]
    heads = set(revs) - set(revs.values())
    return heads.pop() if len(heads) == 1 else None


def head_revision() -> str:
    quick = _head_from_files()
    if quick is not None:
        return quick
    from alembic.script import ScriptDirectory
    heads = ScriptDirectory(str(MIGRATIONS)).get_heads()
    assert len(heads) == 1, heads
    return heads[0]


def current_revision(engine: Engine) -> str | None:
    from alembic.runtime.migration import MigrationContext
    with engine.connect() as conn:
        return MigrationContext.configure(conn).get_current_revision()


def _at_head(engine: Engine) -> bool:
    """True when the database's schema revision is this version's head, found with one query
    and without alembic; any doubt (no table, an error) answers False."""
    head = _head_from_files()
    if head is None:
        return False
    try:
        with engine.connect() as conn:
            rows = conn.exec_driver_sql("SELECT version_num FROM alembic_version").all()
    except DBAPIError:
        return False
    return [r[0] for r in rows] == [head]


def migrate(engine: Engine) -> None:
    """Bring the schema to this version's head; refuse a database from a newer clipscribe."""
    if _at_head(engine):
        return  # the common case: nothing to do, and alembic stays unloaded
    from alembic import command
    from alembic.script import ScriptDirectory
    script = ScriptDirectory(str(MIGRATIONS))
    current = current_revision(engine)
    if current is not None:
        try:
            script.get_revision(current)
        except Exception:  # alembic raises several kinds for an unknown revision
            raise ProjectError(
                f"the project database is at schema revision {current!r}, which this clipscribe "
                f"does not know: it was written by a newer version. Upgrade clipscribe to open it."
            ) from None
        if current == head_revision():
            return
    try:
        command.upgrade(alembic_config(engine), "head")
    except Exception as exc:  # wrapped by SQLAlchemy, or raw from the driver (team SQL)
        inner = exc.orig if isinstance(exc, DBAPIError) else exc
        if getattr(inner, "sqlstate", None) != "42501":
            raise
        raise ProjectError(
            f"the project database is at schema revision {current!r} and this clipscribe needs "
            f"{head_revision()!r}; only the database's owner may upgrade it: ask the admin to "
            "open the project once with this version") from None
