"""The annotation work recorded in the edit history, as numpy columns kept between runs.

Throughput and the agreement trend need, for every annotation edit, when it was made, whose
row it changed and on which clip. A big project has over a million such edits, and reading
them as rows costs seconds, so the columns are kept in the result cache
(:meth:`~clipscribe.project.results.Results.kept`) with the newest edit id they cover and
are brought up to date by reading only the edits made since.

The history is append-only, so the columns of an entry stay true; they would only be wrong
if an edit with an id the entry covers appeared later (another client's transaction that
committed after a newer one, on a server) or if the database were not the one the entry was
read from. Both are caught by one count made in the same snapshot as the read: the number of
history rows up to the entry's newest id must be the number it saw then, or every row is read
again.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

import numpy as np
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from ..store.models import Edit
from .context import Service

#: entities whose history rows count as annotation work
WORK_ENTITIES = ("clip_label", "segment", "caption", "assignment")
#: the result-cache name of the columns
KEPT_AS = "workevents1"  # (a new number when the columns change)
_EPOCH = dt.datetime(1970, 1, 1)


@dataclass(frozen=True)
class WorkEvents:
    """Every annotation edit as columns, in history order.

    ``at_us``: when, in microseconds since 1970-01-01 UTC; ``owner``: the annotator whose row
    changed (-1 when the row names none); ``who``: the annotator who made the edit (-1 when
    unknown); ``clip``: the clip. ``upto`` is the newest edit id read and ``seen`` the number
    of history rows (of any kind) up to it; ``aware`` whether the database returns times with
    a time zone (a server) or without (SQLite, where they are UTC)."""

    at_us: np.ndarray
    owner: np.ndarray
    who: np.ndarray
    clip: np.ndarray
    upto: int
    seen: int
    aware: bool = False

    def credited(self, ids: dict[int, str], workers: set[str]
                 ) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[str]]:
        """``(at_us, person, clip, names)`` of the edits credited to a worker: to the
        annotator whose row changed when that person exists, else to whoever made the edit
        (an import by the lead counts for the annotator it was for). ``person`` indexes
        ``names``, the workers' names sorted."""
        names = sorted(workers)
        known = np.fromiter(ids, dtype=np.int64, count=len(ids))
        person = np.where(np.isin(self.owner, known), self.owner, self.who)
        mine = sorted((i, names.index(n)) for i, n in ids.items() if n in workers)
        if not mine or not len(person):
            return self.at_us[:0], person[:0], self.clip[:0], names
        key = np.array([i for i, _ in mine], dtype=np.int64)
        at = np.minimum(np.searchsorted(key, person), len(key) - 1)
        keep = key[at] == person
        slot = np.array([k for _, k in mine], dtype=np.int64)[at]
        return self.at_us[keep], slot[keep], self.clip[keep], names

    def when(self, at_us: int | np.integer) -> dt.datetime:
        """A time of these columns as the database would have returned it (UTC)."""
        t = _EPOCH + dt.timedelta(microseconds=int(at_us))
        return t.replace(tzinfo=dt.timezone.utc) if self.aware else t


def _empty() -> WorkEvents:
    z = np.zeros(0, dtype=np.int64)
    return WorkEvents(z, z, z, z, 0, 0)


class WorkLog(Service):
    """The work columns of one open project (see the module's description)."""

    def events(self) -> WorkEvents:
        """Every annotation edit as columns, up to date with the database."""
        kept = getattr(self, "_kept", None)
        with self.ctx.snapshot() as s:
            top, total = s.execute(_newest_and_count()).one()
            if kept is not None and (kept.upto, kept.seen) == (top, total):
                return kept  # nothing written since this process last looked
            if kept is None:
                kept = self.peers.results.kept(KEPT_AS)
            if not isinstance(kept, WorkEvents) or not _still_true(s, kept, total):
                kept = _empty()
            new = _read_after(s, kept.upto)
        events = _append(kept, new, top, total)
        if events.upto != kept.upto or events.seen != kept.seen:
            self.peers.results.keep(KEPT_AS, events)
        self._kept = events
        return events


def _newest_and_count() -> Any:
    """The newest edit id and how many edits there are, as two subqueries: SQLite answers
    each from an index (3 ms at 1.2M edits), where ``max(id), count(id)`` in one select
    reads the whole log (45-65 ms), on every board refresh and twice per report."""
    return select(select(func.coalesce(func.max(Edit.id), 0)).scalar_subquery(),
                  select(func.count()).select_from(Edit).scalar_subquery())


def _still_true(s: Session, kept: WorkEvents, total: int) -> bool:
    """Whether the history up to the entry's newest id still has the rows it had then."""
    later = s.scalar(select(func.count()).select_from(Edit).where(Edit.id > kept.upto))
    return total - int(later or 0) == kept.seen


def _read_after(s: Session, edit: int) -> list[Any]:
    """(when, whose row, who, clip) of the annotation edits after ``edit``, in history order:
    four plain columns, not whole history rows with their JSON."""
    owner = func.coalesce(Edit.after["annotator_id"].as_integer(),
                          Edit.before["annotator_id"].as_integer())
    stmt = (select(Edit.at, owner, Edit.annotator_id, Edit.clip_id)
            .where(Edit.id > edit, Edit.entity.in_(sorted(WORK_ENTITIES)),
                   Edit.clip_id.is_not(None))
            .order_by(Edit.id))
    return s.connection().execute(stmt).all()


def _append(kept: WorkEvents, rows: list[Any], top: int, total: int) -> WorkEvents:
    if not rows:
        return WorkEvents(kept.at_us, kept.owner, kept.who, kept.clip, top, total, kept.aware)
    aware = rows[0][0].tzinfo is not None
    ats = [a.astimezone(dt.timezone.utc).replace(tzinfo=None) if a.tzinfo else a
           for a, _, _, _ in rows]
    at_us = np.array(ats, dtype="datetime64[us]").astype(np.int64)
    cols = [np.fromiter((-1 if v is None else v for v in col), dtype=np.int64, count=len(rows))
            for col in list(zip(*rows))[1:]]
    return WorkEvents(np.concatenate([kept.at_us, at_us]),
                      np.concatenate([kept.owner, cols[0]]), np.concatenate([kept.who, cols[1]]),
                      np.concatenate([kept.clip, cols[2]]), top, total, aware or kept.aware)
