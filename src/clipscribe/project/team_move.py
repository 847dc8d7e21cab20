"""Moving a solo SQLite project onto a PostgreSQL server, with nothing lost.

Every table is copied in foreign-key order with its ids, in one server transaction. Before
that transaction commits, each table's row count and a SHA-256 over its rows (in primary-key
order, every value in a canonical text form) are compared between the two databases; any
difference rolls the whole copy back. Then the id sequences are set past the largest id, and
the settings file is pointed at the server (without a password). The SQLite file is left
where it was, untouched.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
from typing import Any

from sqlalchemy import Connection, Table, delete, func, insert, select, update

from ..errors import ProjectError
from ..store import db, team
from ..store import urls as db_urls
from ..store.models import Annotator, Base, Setting
from ..types import MoveReport, TableCheck  # noqa: F401 (re-exported)

BATCH = 1000






def canonical(value: Any) -> str:
    """One value as text that reads the same from SQLite and PostgreSQL: datetimes in UTC ISO
    form (SQLite hands them back without a zone, and we only ever store UTC), floats by
    ``repr``, JSON by sorted keys."""
    if isinstance(value, dt.datetime):
        if value.tzinfo is None:
            value = value.replace(tzinfo=dt.timezone.utc)
        return value.astimezone(dt.timezone.utc).isoformat()
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, (dict, list)):
        return json.dumps(value, sort_keys=True, ensure_ascii=False)
    return json.dumps(value, ensure_ascii=False)


def table_digest(conn: Connection, table: Table) -> tuple[int, str]:
    """Row count and SHA-256 of a table's rows in primary-key order."""
    keys = [i for i, c in enumerate(table.columns) if c.primary_key]
    # sorted here, not by the server: text keys collate differently in the two databases
    rows = sorted(conn.execute(select(table)), key=lambda r: tuple(r[i] for i in keys))
    h = hashlib.sha256()
    for row in rows:
        h.update(("\x1f".join(canonical(v) for v in row) + "\x1e").encode("utf-8"))
    return len(rows), h.hexdigest()


def move_to_server(project_cls: Any, folder: Any, url: str, *, lead: str | None = None) -> MoveReport:
    """Copy the SQLite project in ``folder`` onto the empty database at ``url`` (the admin's
    login; password from the URL or ~/.pgpass) and point the folder at it.

    ``lead`` names the person whose database login is the admin's (default: the first lead).
    Raises ProjectError when the target is not empty or a check fails (nothing is kept then).
    """
    from .opening import without_password
    src = project_cls.open(folder)
    try:
        if src.is_server:
            raise ProjectError(f"{folder}: already a server project")
        target = db.make_engine(url)
        try:
            report = _copy(src, target, url, lead)
        finally:
            target.dispose()
        src.update_settings(database_url=without_password(url))
        return report
    finally:
        src.close()


def _copy(src: Any, target: Any, url: str, lead: str | None) -> MoveReport:
    if target.dialect.name != "postgresql":
        raise ProjectError(f"{url}: move-to-server needs a postgresql:// URL")
    try:
        db.migrate(target)
    except ProjectError:
        raise
    except Exception as exc:
        raise ProjectError(f"cannot set up the schema on the server: {exc}") from exc
    report = MoveReport(url=_safe(url))
    tables = Base.metadata.sorted_tables
    with src.engine.connect() as here, target.begin() as there:
        for t in tables:
            left = there.scalar(select(func.count()).select_from(t)) or 0
            if t.name == "settings":
                left = there.scalar(select(func.count()).select_from(t).where(
                    ~t.c.key.startswith("team."))) or 0
            if left:
                raise ProjectError(f"{_safe(url)}: the server database is not empty "
                                   f"({t.name} has {left} rows); move into a new database")
        there.execute(delete(Setting.__table__).where(Setting.__table__.c.key.startswith("team.")))
        for t in tables:
            rows = here.execute(select(t).order_by(*t.primary_key.columns)).mappings()
            batch: list[dict] = []
            for r in rows:
                batch.append(dict(r))
                if len(batch) >= BATCH:
                    there.execute(t.insert(), batch)
                    batch = []
            if batch:
                there.execute(t.insert(), batch)
        for t in tables:
            n1, d1 = table_digest(here, t)
            n2, d2 = table_digest(there, t)
            report.tables.append(TableCheck(t.name, n1, n2, d1, d2))
        if not report.ok:
            bad = ", ".join(c.table for c in report.tables if not c.ok)
            raise ProjectError(f"copy check failed for {bad}; nothing was moved")
        for t in tables:
            if "id" in t.c and list(t.primary_key.columns) == [t.c.id]:
                top = there.scalar(select(func.max(t.c.id))) or 0
                there.execute(select(func.setval(func.pg_get_serial_sequence(t.name, "id"),
                                                 top + 1, False)))
                report.sequences[t.name] = top + 1
        report.lead = _map_admin(there, lead)
        there.execute(insert(Setting), [{"key": team.BLIND_KEY,
                                                    "value": bool(src.settings.blind)}])
    return report


def _map_admin(conn: Connection, lead: str | None) -> str | None:
    """Give the admin's login to one lead (their edits then pass the lead policies as them)."""
    ann = Annotator.__table__
    q = select(ann.c.id, ann.c.name).where(ann.c.role == "lead").order_by(ann.c.id)
    if lead is not None:
        q = select(ann.c.id, ann.c.name).where(ann.c.name == lead)
    row = conn.execute(q.limit(1)).first()
    if row is None:
        if lead is not None:
            raise ProjectError(f"lead {lead!r}: no such person in the project")
        return None
    conn.execute(update(ann).where(ann.c.id == row.id).values(db_login=team.current_login(conn)))
    return row.name


def _safe(url: str) -> str:
    return db_urls.without_secrets(url)


def write_report(report: MoveReport) -> str:
    """The report as the lines the command prints."""
    lines = [f"moved to {report.url}"]
    width = max((len(t.table) for t in report.tables), default=5)
    for t in report.tables:
        lines.append(f"  {t.table:<{width}}  rows {t.rows_here:>7} -> {t.rows_there:<7}  "
                     f"sha256 {t.sha256_here[:16]}  {'ok' if t.ok else 'DIFFERENT ' + t.sha256_there[:16]}")
    for name, nxt in report.sequences.items():
        lines.append(f"  sequence {name}.id: next {nxt}")
    if report.lead:
        lines.append(f"  lead {report.lead!r} uses the admin login")
    return "\n".join(lines)


__all__ = ["MoveReport", "TableCheck", "canonical", "move_to_server", "table_digest", "write_report"]
