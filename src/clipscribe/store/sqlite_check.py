"""Checks of a project's SQLite file before and after it is opened.

:func:`check_file` runs on every open and costs well under a millisecond: a missing or empty
file, a file that is not SQLite, and a damaged header or schema are refused with the file named
and the way out. The thorough ``PRAGMA quick_check`` reads every page; on a 100k-clip project
it takes longer than opening may (``benchmarks/bench_open_check.py``), so :class:`PageCheck`
runs it in a background thread on its own read connection; the project waits for its verdict
before its first write and refuses to write into a damaged file. No Qt.
"""

from __future__ import annotations

import sqlite3
import threading
from pathlib import Path
from urllib.parse import quote

from ..errors import ProjectError

MAGIC = b"SQLite format 3\x00"


def read_only_url(path: Path) -> str:
    """A URL reading ``path`` without the lock files SQLite would make beside it (for a project
    folder the user may not write to; a change made elsewhere meanwhile is not seen)."""
    # the URL's own unquoting leaves the percent-escaped file URI SQLite expects
    return f"sqlite+pysqlite:///{quote(Path(path).resolve().as_uri(), safe=':/')}" \
        "?mode=ro&immutable=1&uri=true"


def _ro_uri(path: Path) -> str:
    """A read-only SQLite URI for ``path`` (any character in the path escaped)."""
    return Path(path).resolve().as_uri() + "?mode=ro"


def recovery_advice(path: Path) -> str:
    return (f"restore {path.name} from a backup, or rescue what is readable with "
            f"`sqlite3 {path.name} .recover | sqlite3 rescued.sqlite` and put rescued.sqlite "
            f"in its place")


def damaged(path: Path, detail: str) -> ProjectError:
    # SQLite's own report may span lines ("*** in database main ***" then "Page 33: ..."):
    # an error is one line
    detail = " ".join(detail.split())
    return ProjectError(f"{path}: the project database is damaged ({detail}); nothing was "
                        f"changed. To go on, {recovery_advice(path)}")


def check_file(path: Path) -> None:
    """ProjectError naming ``path`` when it is missing, empty, not SQLite, or its header or
    schema cannot be read. Only creating a project makes a database file."""
    wal = path.with_name(path.name + "-wal")
    try:
        size = path.stat().st_size
    except FileNotFoundError:
        raise ProjectError(
            f"{path}: the project database is missing. Opening does not make a new one (that "
            f"would start an empty project over your work); restore it from a backup, or make "
            f"a new project with `clipscribe new`") from None
    except OSError as exc:
        raise ProjectError(f"{path}: cannot read the project database ({exc.strerror})") from None
    if size == 0:
        # a crash right after creating a project may leave every page in the write-ahead log
        if not (wal.exists() and wal.stat().st_size > 0):
            raise ProjectError(
                f"{path}: the project database is empty (0 bytes), so it holds no project. "
                f"Restore it from a backup, or make a new project with `clipscribe new`")
        return
    try:
        with open(path, "rb") as f:
            head = f.read(100)
    except OSError as exc:
        raise ProjectError(f"{path}: cannot read the project database ({exc.strerror})") from None
    if not head.startswith(MAGIC):
        raise damaged(path, "it does not start like a SQLite database")
    try:
        con = sqlite3.connect(_ro_uri(path), uri=True, timeout=15)
        try:
            con.execute("SELECT count(*) FROM sqlite_master").fetchone()
        finally:
            con.close()
    except sqlite3.DatabaseError as exc:
        if _is_damage(exc):
            raise damaged(path, str(exc)) from None
        # anything else (locked, read-only, a full disk, no -shm file) is not damage: the
        # open itself reports it


def _is_damage(exc: Exception) -> bool:
    text = str(exc).lower()
    return "malformed" in text or "not a database" in text or "corrupt" in text


class PageCheck:
    """``PRAGMA quick_check`` of a SQLite file in a background thread."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self.problem: str | None = None
        self._con: sqlite3.Connection | None = None
        self._lock = threading.Lock()
        self._stopped = False
        self._thread = threading.Thread(target=self._run, name="clipscribe-quick-check", daemon=True)
        self._thread.start()

    def _run(self) -> None:
        try:
            with self._lock:
                if self._stopped:
                    return
                self._con = sqlite3.connect(_ro_uri(self.path), uri=True, timeout=15,
                                            check_same_thread=False)
            rows = [r[0] for r in self._con.execute("PRAGMA quick_check(5)")]
            if rows != ["ok"]:
                self.problem = "; ".join(rows)
        except sqlite3.DatabaseError as exc:
            if _is_damage(exc):  # interrupted, locked, I/O trouble: no verdict on the pages
                self.problem = str(exc)
        finally:
            with self._lock:
                if self._con is not None:
                    self._con.close()
                    self._con = None

    @property
    def done(self) -> bool:
        return not self._thread.is_alive()

    def verdict(self) -> None:
        """Wait for the check; ProjectError (with recovery advice) if it found damage."""
        self._thread.join()
        if self.problem is not None:
            raise damaged(self.path, self.problem)

    def stop(self) -> None:
        with self._lock:
            self._stopped = True
            if self._con is not None:
                self._con.interrupt()
        self._thread.join(timeout=5)


def explain(exc: BaseException, where: Path | str | None = None) -> str | None:
    """One plain line for a database error a user can meet (read-only file, full disk, damaged
    file, busy database), or None when it is none of those. The transaction that raised it was
    rolled back, so every line says nothing was changed."""
    orig = getattr(exc, "orig", None) or exc
    text = str(orig).strip().splitlines()[0] if str(orig).strip() else type(orig).__name__
    low = text.lower()
    at = f"{where}: " if where else ""
    if "readonly" in low or "read-only" in low or "read only" in low:
        return (f"{at}the project database is read-only ({text}); nothing was changed — "
                "check the permissions of the database file and its folder")
    if "disk is full" in low or "no space" in low:
        return f"{at}the disk holding the project database is full ({text}); nothing was changed"
    if "malformed" in low or "not a database" in low:
        path = Path(where) if where else Path("project.sqlite")
        return (f"{at}the project database is damaged ({text}); nothing was changed. To go on, "
                f"{recovery_advice(path if path.suffix else path / 'project.sqlite')}")
    if "database is locked" in low or "database is busy" in low:
        return f"{at}the project database is busy: another program holds its lock ({text}); try again"
    if "unable to open database" in low:
        return f"{at}cannot open the project database ({text})"
    return None
