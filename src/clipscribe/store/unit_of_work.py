"""The unit of work: one object owning a project's transactions.

Every read and write of the façade's services goes through :meth:`UnitOfWork.write` or
:meth:`UnitOfWork.read` (or one :meth:`UnitOfWork.snapshot` for a composite read). The unit of
work opens the session, hands the edit log its collector, retries what the database asks to be
retried, turns database refusals into clipscribe's own errors, and returns the edit-history
ids a write produced. What differs between a SQLite file and a PostgreSQL server is decided by
a :class:`DatabasePolicy` chosen once when the project opens — never by method overrides.
"""

from __future__ import annotations

import contextlib
import contextvars
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any, Protocol, TypeVar

from sqlalchemy import Engine, event, text
from sqlalchemy.exc import DataError, DBAPIError, OperationalError
from sqlalchemy.orm import Session, object_session
from sqlalchemy.orm.exc import StaleDataError

from ..errors import (
    DatabaseFault,
    PermissionRefused,
    RecordError,
    ServerBusyError,
    StaleWriteError,
)
from . import db, sqlite_check
from .models import Caption

T = TypeVar("T")

#: the session ``info`` key under which a write collects the ids of the edit rows it logs
EDITS_KEY = "edits"
#: the session ``info`` key holding the caption versions this project has seen
SEEN_KEY = "seen_caption_versions"
#: the session ``info`` key for the one time every edit row of a transaction shares
EDIT_AT_KEY = "edit_at"
SEEN_LIMIT = 200_000  # caption versions remembered per open project

#: the clock of the innermost ``simulated_clock()`` block of this thread, if any
_CLOCK: contextvars.ContextVar[Callable[[], Any] | None] = contextvars.ContextVar(
    "clipscribe_clock", default=None)
#: the edit-id list of the innermost ``recording()`` block of this thread, if any
_RECORDING: contextvars.ContextVar[list[int] | None] = contextvars.ContextVar(
    "clipscribe_recording", default=None)


class PageCheck(Protocol):
    """A background integrity check of the database file; writes wait for its verdict."""

    def verdict(self) -> None: ...

    def stop(self) -> None: ...


class DatabasePolicy:
    """What a SQLite file needs: retry while another program holds the write lock, and one
    plain line for a read-only, full, damaged or busy file."""

    is_server = False

    def __init__(self, engine: Engine, folder: Path) -> None:
        self.engine = engine
        self.folder = folder

    def run(self, attempt: Callable[[], T]) -> T:
        """Run one whole transaction, again while the database says it is busy."""
        return db.with_retry(attempt)

    def refusal(self, exc: DBAPIError) -> Exception | None:
        """clipscribe's own error for a database refusal, or None to let it through."""
        known = sqlite_check.explain(exc, self.folder)
        return DatabaseFault(known) if known else None


#: SQLSTATEs worth running the whole transaction again for (serialization failure, deadlock)
RETRY_STATES = ("40001", "40P01")
#: insufficient privilege (a grant or a row-level-security policy said no)
DENIED_STATE = "42501"
#: lock not available (lock_timeout), query cancelled (statement_timeout)
BUSY_STATES = ("55P03", "57014")


class ServerPolicy(DatabasePolicy):
    """What a PostgreSQL server needs: retry serialization failures and deadlocks, and one
    clear line (never the SQL or its parameters) for a refusal: no right -> PermissionRefused;
    a lock not granted in time or a time limit -> ServerBusyError naming who holds strong
    locks; a value the server cannot store -> RecordError."""

    is_server = True

    def run(self, attempt: Callable[[], T]) -> T:
        for i in range(6):
            try:
                return attempt()
            except DBAPIError as exc:
                if getattr(exc.orig, "sqlstate", None) in RETRY_STATES and i < 5:
                    time.sleep(0.02 * (2 ** i))
                    continue
                raise
        raise AssertionError("unreachable")

    def refusal(self, exc: DBAPIError) -> Exception | None:
        code = getattr(exc.orig, "sqlstate", None) or ""
        first = str(exc.orig).strip().splitlines()[0] if exc.orig else str(exc)
        if code == DENIED_STATE:
            return PermissionRefused(f"the database refused this for your login: {first}")
        if code in BUSY_STATES:
            why = "a lock was not granted in time" if code == "55P03" else "a time limit was reached"
            return ServerBusyError(f"the server is busy ({self.lock_holders()}): {why}; "
                                   "nothing was saved, try again in a moment")
        if code.startswith("22") or isinstance(exc, DataError):  # psycopg's own: no code
            return RecordError(f"the server refused a value: {first}")
        return None

    def lock_holders(self) -> str:
        """Who holds table locks that stop other writers in this database, as far as the
        server shows it to this login (login names and tables, never their statements)."""
        try:
            with self.engine.connect() as conn:
                rows = conn.execute(text(
                    "SELECT DISTINCT a.usename, c.relname FROM pg_catalog.pg_locks l "
                    "JOIN pg_catalog.pg_stat_activity a ON a.pid = l.pid "
                    "LEFT JOIN pg_catalog.pg_class c ON c.oid = l.relation "
                    "WHERE l.granted AND l.locktype = 'relation' AND l.pid <> pg_backend_pid() "
                    "AND l.database = (SELECT oid FROM pg_catalog.pg_database "
                    "                  WHERE datname = current_database()) "
                    "AND l.mode IN ('ShareLock', 'ShareRowExclusiveLock', 'ExclusiveLock', "
                    "               'AccessExclusiveLock') ORDER BY 1, 2")).all()
        except Exception:  # noqa: BLE001 - the message matters more than the detail
            rows = []
        if not rows:
            return "locked by another session"
        return "locked by " + ", ".join(f"{who or 'another login'} on {rel or 'a table'}"
                                        for who, rel in rows[:3])


def policy_for(engine: Engine, folder: Path) -> DatabasePolicy:
    return (ServerPolicy if engine.dialect.name == "postgresql" else DatabasePolicy)(engine, folder)


class UnitOfWork:
    """Transactions of one open project. Thread-safe: each call has its own session; the
    last write's edit ids are kept per thread."""

    def __init__(self, engine: Engine, folder: Path) -> None:
        self.engine = engine
        self.policy = policy_for(engine, folder)
        self._writer = db.writer(engine)
        self._local = threading.local()
        #: the background page check of a SQLite file (set by open); writes wait for it
        self.page_check: PageCheck | None = None
        #: caption id -> the version this project last read or wrote: a change without an
        #: explicit expected version is checked against it (a stale write is refused)
        self.seen_caption_versions: dict[int, int] = {}

    @property
    def is_server(self) -> bool:
        return self.policy.is_server

    @property
    def last_edit_ids(self) -> list[int]:
        """The edit-history ids the last write of this thread produced (empty before any)."""
        return list(getattr(self._local, "last", []))

    # ---- transactions -----------------------------------------------------------------
    def write(self, fn: Callable[[Session], T]) -> T:
        """Run ``fn`` in one write transaction; the edit rows it logs are this write's ids."""
        if self.page_check is not None:  # never write into a damaged file
            self.page_check.verdict()
        def attempt() -> T:
            edits: list[int] = []
            try:
                with db.transaction(self._writer) as s:
                    s.info[EDITS_KEY] = edits
                    s.info[SEEN_KEY] = self.seen_caption_versions
                    out = fn(s)
            except StaleDataError:
                raise StaleWriteError("someone else changed this item since you loaded it; "
                                      "your change was not saved — reload and try again") from None
            self._local.last = edits
            collector = _RECORDING.get()
            if collector is not None:
                collector.extend(edits)
            return out
        try:
            return self._translated(lambda: self.policy.run(attempt))
        finally:
            self._forget_old_versions()

    def read(self, fn: Callable[[Session], T]) -> T:
        """Run ``fn`` in one read transaction; inside :meth:`snapshot` it joins that one."""
        joined: Session | None = getattr(self._local, "snapshot", None)
        if joined is not None:
            return fn(joined)
        def attempt() -> T:
            with db.transaction(self.engine) as s:
                s.info[SEEN_KEY] = self.seen_caption_versions
                return fn(s)
        try:
            return self._translated(attempt)
        finally:
            self._forget_old_versions()

    @contextlib.contextmanager
    def snapshot(self) -> Iterator[Session]:
        """One read transaction for a composite read (several queries that must agree): every
        :meth:`read` of this thread inside the block joins it. On a server it runs REPEATABLE
        READ, so a concurrent team write cannot mix states; on SQLite the read transaction is
        started at once, so every query sees the file as it was then."""
        if getattr(self._local, "snapshot", None) is not None:  # nested: the outer one holds
            yield self._local.snapshot
            return
        with db.transaction(self.engine) as s:
            if self.is_server:
                s.connection(execution_options={"isolation_level": "REPEATABLE READ"})
            else:  # pysqlite begins lazily; one query now takes the read snapshot
                s.execute(text("SELECT 1 FROM settings LIMIT 1"))
            s.info[SEEN_KEY] = self.seen_caption_versions
            self._local.snapshot = s
            try:
                yield s
            except DBAPIError as exc:
                err = self.policy.refusal(exc)
                if err is not None:
                    raise err from exc
                raise
            finally:
                self._local.snapshot = None

    def _translated(self, fn: Callable[[], T]) -> T:
        try:
            return fn()
        except DBAPIError as exc:
            err = self.policy.refusal(exc)
            if err is None:
                raise
            raise err from exc

    @contextlib.contextmanager
    def recording(self) -> Iterator[list[int]]:
        """``ids`` collects the edit ids of every write made inside the block by this thread.
        Blocks nest; other threads' writes are never mixed in."""
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
        if self.is_server:
            return
        try:
            self.write(lambda s: s.execute(text("UPDATE settings SET key = key WHERE 0")))
        except DatabaseFault as exc:
            raise DatabaseFault(f"{what}: not started, {exc}") from None
        except OperationalError as exc:
            reason = (sqlite_check.explain(exc, self.policy.folder)
                      or str(exc.orig or exc).splitlines()[0])
            raise DatabaseFault(f"{what}: not started, {reason}") from None

    def close(self) -> None:
        if self.page_check is not None:
            self.page_check.stop()
        self.engine.dispose()

    def _forget_old_versions(self) -> None:
        seen = self.seen_caption_versions
        if len(seen) > SEEN_LIMIT:  # forget the oldest half rather than grow without end
            for key in list(seen)[:len(seen) // 2]:
                seen.pop(key, None)


def session_edits(s: Session) -> list[int]:
    """The edit-id collector of the write ``s`` belongs to."""
    edits: list[int] = s.info.setdefault(EDITS_KEY, [])
    return edits


def edit_time(s: Session, now: Callable[[], Any]) -> Any:
    """The one time every edit row of ``s``'s transaction carries (so one user action that
    writes several rows is found again as one undo step): ``now()``, or the simulated
    clock's reading inside :func:`simulated_clock`."""
    if EDIT_AT_KEY not in s.info:
        clock = _CLOCK.get()
        s.info[EDIT_AT_KEY] = clock() if clock is not None else now()
    return s.info[EDIT_AT_KEY]


@contextlib.contextmanager
def simulated_clock(clock: Callable[[], Any]) -> Iterator[None]:
    """Inside the block, each write's edit rows carry ``clock()`` (read once per write) as
    their time instead of the wall clock: for generated sample projects and tests that need
    a history spread over days. The history stays append-only; nothing is rewritten."""
    token = _CLOCK.set(clock)
    try:
        yield
    finally:
        _CLOCK.reset(token)


# Every caption row a project's session loads or writes: its version is remembered in the
# unit of work's ``seen_caption_versions`` (the session carries that dict in ``info``).
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
