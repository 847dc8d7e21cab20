"""Results kept between runs, keyed by what they depend on.

A result (today: the caption part of the agreement report, the part that costs most) is stored
in the project folder under ``.clipscribe-cache/results/`` with a key made of

* the **recipe**: which result, its settings (seed, sample size), the database it was read
  from, and a digest of the engine's source code (a changed metric never reuses old numbers);
* the **rows it was computed from**, stamped cheaply: for each table it reads, the row count,
  the largest id and the sum of the row versions. Ids are never reused and every update bumps
  a row's version, so an insert, an update or a delete moves the stamp;
* the **edit log**: the entry remembers the newest edit id it saw, and is served only while
  no later edit touched what it depends on (an undo that puts a deleted row back with its old
  id is an edit too). Looking that up reads only the edits made since, so one new label does
  not cost a scan of the log, and does not discard the caption part.

Both are read from the database the project is open on, so two machines sharing a server
never serve each other's stale numbers: whoever changed a row moved the stamp for everyone.
Files are signed with a key kept in the user's own cache folder, so an entry copied in from
elsewhere (a project folder received from someone else) is never unpickled; it is ignored and
the result computed again. The folder holds its own ``.gitignore``.
"""

from __future__ import annotations

import hashlib
import hmac
import json
import os
import pickle
import secrets
import threading
import time
from pathlib import Path
from typing import Any, Callable, TypeVar

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from ..store.models import Annotator, Caption, Edit
from .context import Service

T = TypeVar("T")

#: where results are kept, below the project folder
FOLDER = Path(".clipscribe-cache") / "results"
#: entries kept per kind of result (the newest ones)
KEEP = 3
#: per kind of result: the tables its stamp covers, and the edit-log entities that touch them
DEPENDS = {"captions": ((Caption, Annotator), ("caption", "annotator"))}
_MAC = 32


class Results(Service):
    """The result cache of one open project (see the module's description)."""

    def cached(self, kind: str, settings: dict[str, Any], compute: Callable[[], T]
               ) -> tuple[T, dict[str, Any] | None]:
        """``compute()``'s value for ``kind`` with ``settings``, from the cache when an entry
        covers the current rows; else computed now and stored. Returns the value and, when it
        came from the cache, what the entry covers (None when computed now)."""
        tables, entities = DEPENDS[kind]
        stamp, newest = self.ctx.read(lambda s: (_stamp(s, tables), _newest_edit(s)))
        key, path = self._entry(kind, settings, stamp)
        # one computation per entry in this process: the review desk and the board ask for the
        # same part at once; the second waits and reads what the first kept
        with _entry_lock(path):
            found = _load(path)
            if found is not None:
                covers, value = found
                since = covers["edit"]
                if since is not None and not self.ctx.read(
                        lambda s: _edited_since(s, since, entities)):
                    return value, covers
            value = compute()
            covers = {"kind": kind, "key": key, "edit": newest, "rows": stamp,
                      "settings": settings,
                      "computed_at": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())}
            _store(path, (covers, value))
        return value, None

    def has(self, kind: str, settings: dict[str, Any]) -> bool:
        """Whether an entry for ``kind`` with ``settings`` is kept for the current rows: a quick
        look (the rows' stamp and the file), for a screen deciding what to show first.
        :meth:`cached` still checks the edit log and the signature before it serves one."""
        tables, _ = DEPENDS[kind]
        return self._entry(kind, settings, self.ctx.read(lambda s: _stamp(s, tables)))[1].exists()

    def _entry(self, kind: str, settings: dict[str, Any], stamp: dict[str, list]
               ) -> tuple[str, Path]:
        key = _key(kind, settings, stamp, self._database())
        return key, self._folder() / f"{kind}-{key[:32]}.pickle"

    def kept(self, name: str) -> Any | None:
        """What :meth:`keep` last kept under ``name`` for this database, or None. The caller
        checks that it still holds (the entry carries what it covers)."""
        return _load(self._kept_path(name))

    def keep(self, name: str, value: Any) -> None:
        """Keep ``value`` under ``name`` for this database (signed, like every entry)."""
        _store(self._kept_path(name), value)

    def _kept_path(self, name: str) -> Path:
        db = hashlib.sha256(self._database().encode()).hexdigest()[:32]
        return self._folder() / f"{name}-{db}.pickle"

    def _folder(self) -> Path:
        return self.ctx.folder / FOLDER

    def _database(self) -> str:
        return self.ctx.engine.url.render_as_string(hide_password=True)


def _stamp(s: Session, tables: tuple) -> dict[str, list]:
    """Per table: row count, largest id, sum of versions (small tables: every row)."""
    out: dict[str, list] = {}
    for model in tables:
        if model is Annotator:  # a handful of rows whose names and roles matter
            out[model.__tablename__] = [list(r) for r in s.execute(
                select(Annotator.id, Annotator.name, Annotator.role).order_by(Annotator.id))]
        else:
            n, top, versions = s.execute(select(func.count(), func.max(model.id),
                                                func.coalesce(func.sum(model.version), 0))).one()
            out[model.__tablename__] = [int(n), top, int(versions)]
    return out


def _newest_edit(s: Session) -> int | None:
    return s.scalar(select(func.max(Edit.id)))


def _edited_since(s: Session, edit: int, entities: tuple[str, ...]) -> bool:
    """Whether an edit after ``edit`` touched one of ``entities`` (reads only newer edits)."""
    return s.scalar(select(Edit.id).where(Edit.id > edit, Edit.entity.in_(entities)).limit(1)) is not None


def _key(kind: str, settings: dict[str, Any], stamp: dict[str, list], database: str) -> str:
    text = json.dumps({"kind": kind, "settings": settings, "rows": stamp, "database": database,
                       "code": _code_digest()}, sort_keys=True, default=str)
    return hashlib.sha256(text.encode()).hexdigest()


_CODE: dict[str, str] = {}
_LOCKS: dict[str, threading.Lock] = {}
_LOCKS_GUARD = threading.Lock()


def _entry_lock(path: Path) -> threading.Lock:
    with _LOCKS_GUARD:
        return _LOCKS.setdefault(str(path), threading.Lock())


def _code_digest(package: str = "agreement") -> str:
    """Digest of an engine's source files (``agreement`` or ``export``): new code never
    reuses old numbers."""
    if package not in _CODE:
        import importlib
        h = hashlib.sha256()
        folder = Path(importlib.import_module(f"clipscribe.{package}").__file__).parent
        for f in sorted(folder.glob("*.py")):
            h.update(f.name.encode() + b"\0" + f.read_bytes())
        _CODE[package] = h.hexdigest()
    return _CODE[package]


def content_key(kind: str, parts: list[str], settings: dict[str, Any], package: str) -> str:
    """A key made of the inputs themselves (``parts``, e.g. the texts a result is computed
    from), ``settings`` and the engine's code: an entry under it can never be stale."""
    h = hashlib.sha256(json.dumps({"kind": kind, "settings": settings,
                                   "code": _code_digest(package)}, sort_keys=True).encode())
    # the parts joined by NUL, hashed a chunk at a time: the same digest as one join, without
    # a copy of every part at once (64 MB of text for the captions of 100k clips)
    for at in range(0, len(parts), _HASH_CHUNK):
        h.update(("\0" if at else "").encode())
        h.update("\0".join(parts[at:at + _HASH_CHUNK]).encode("utf-8", "surrogatepass"))
    h.update(str(len(parts)).encode())
    return h.hexdigest()


_HASH_CHUNK = 1 << 15  # parts hashed at once by content_key


def _secret() -> bytes:
    """This user's signing key (made on first use, readable by the user alone)."""
    import platformdirs
    path = Path(platformdirs.user_cache_dir("clipscribe")) / "result-cache.key"
    try:
        return path.read_bytes()
    except FileNotFoundError:
        path.parent.mkdir(parents=True, exist_ok=True)
        key = secrets.token_bytes(32)
        try:
            fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        except FileExistsError:  # made meanwhile by another process
            return path.read_bytes()
        with os.fdopen(fd, "wb") as f:
            f.write(key)
        return key


def _load(path: Path) -> Any | None:
    try:
        data = path.read_bytes()
    except OSError:
        return None
    # a view, not a copy: the caption part of a 100k-clip project is 139 MB, and copying it
    # costs fresh pages (0.05-0.5 s on the development machine)
    mac, body = data[:_MAC], memoryview(data)[_MAC:]
    if len(mac) < _MAC or not hmac.compare_digest(mac, hmac.new(_secret(), body, "sha256").digest()):
        return None  # not signed by this user: never unpickled
    try:
        return pickle.loads(body)
    except Exception:  # noqa: BLE001 -- an entry from older code: computed again
        return None


def _store(path: Path, value: Any) -> None:
    """Write an entry (to a temporary name, then renamed) and drop the oldest beyond KEEP;
    a folder that cannot be written leaves the result uncached, nothing else."""
    try:
        body = pickle.dumps(value, protocol=pickle.HIGHEST_PROTOCOL)
        path.parent.mkdir(parents=True, exist_ok=True)
        ignore = path.parent.parent / ".gitignore"
        if not ignore.exists():
            ignore.write_text("# results clipscribe keeps between runs; safe to delete\n*\n")
        tmp = path.with_name(f"{path.name}.{os.getpid()}.tmp")
        tmp.write_bytes(hmac.new(_secret(), body, "sha256").digest() + body)
        os.replace(tmp, path)
        kind = path.name.split("-", 1)[0]
        old = sorted(path.parent.glob(f"{kind}-*.pickle"), key=lambda p: p.stat().st_mtime)
        for stale in old[:-KEEP]:
            stale.unlink(missing_ok=True)
    except OSError:
        pass
