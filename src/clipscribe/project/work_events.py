"""The annotation work in the edit history as columns, for throughput and the agreement trend.

A big project has over a million history rows. Read as (datetime, name, clip) tuples they cost
seconds of Python per report; here they are read as two plain queries over the same rows (three
integer columns, then the times as the driver gives them) and kept as numpy arrays, so the
sums per annotator and the last time per clip are array operations.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

import numpy as np
from sqlalchemy import String, func, select, type_coerce
from sqlalchemy.orm import Session

from ..store.columns import driver_columns
from ..store.models import Edit

#: entities whose history rows count as annotation work
WORK_ENTITIES = ("clip_label", "segment", "caption", "assignment")
_EPOCH = dt.datetime(1970, 1, 1)


@dataclass(frozen=True)
class WorkEvents:
    """One row per annotation edit of a worker, in history order: ``worker`` indexes
    ``names``; ``micros`` is the time in microseconds since 1970 (UTC), ``at`` the same time
    as the database driver returned it (text on SQLite, a datetime on a server; objects)."""

    names: list[str]
    worker: np.ndarray
    clip: np.ndarray
    micros: np.ndarray
    at: np.ndarray

    def when(self, i: int) -> dt.datetime:
        """The time of event ``i`` as the typed column would give it."""
        v = self.at[i]
        return dt.datetime.fromisoformat(v) if isinstance(v, str) else v

    def last_per_clip(self) -> dict[int, dt.datetime]:
        """{clip: time of its last work event}."""
        if not len(self.clip):
            return {}
        order = np.lexsort((self.micros, self.clip))
        last = order[np.r_[self.clip[order][1:] != self.clip[order][:-1], True]]
        return {c: self.when(i) for c, i in zip(self.clip[last].tolist(), last.tolist())}

    def of(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        """(times in microseconds, sorted; clips) of one worker's events."""
        if name not in self.names:
            return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
        mine = self.worker == self.names.index(name)
        return np.sort(self.micros[mine]), self.clip[mine]


def read_work_events(s: Session, ids: dict[int, str], workers: set[str]) -> WorkEvents:
    """Every annotation edit credited to the annotator whose row changed (an import by the
    lead counts for the annotator it was for; the one who made the edit when the row names
    nobody known), workers' edits only."""
    owner = func.coalesce(Edit.after["annotator_id"].as_integer(),
                          Edit.before["annotator_id"].as_integer(), -1)
    stmt = (select(type_coerce(Edit.at, String), owner, func.coalesce(Edit.annotator_id, -1),
                   Edit.clip_id)
            .where(Edit.entity.in_(sorted(WORK_ENTITIES)), Edit.clip_id.is_not(None))
            .order_by(Edit.id))
    cells = driver_columns(s, stmt)  # a million history rows: no Row object per row
    at, table = cells[:, 0], cells[:, 1:].astype(np.int64)
    names = sorted(workers)
    top = max([0, *ids, int(table[:, :2].max(initial=0))]) + 1
    known = np.zeros(top, dtype=bool)
    known[list(ids)] = True
    code = np.full(top, -1, dtype=np.int64)  # annotator id -> index in names, -1: not a worker
    for i, name in ids.items():
        if name in workers:
            code[i] = names.index(name)
    owner_ok = (table[:, 0] >= 0) & known[np.maximum(table[:, 0], 0)]
    who = np.where(owner_ok, table[:, 0], table[:, 1])
    worker = np.where(who >= 0, code[np.maximum(who, 0)], -1)
    keep = np.flatnonzero(worker >= 0)
    at = at[keep]
    return WorkEvents(names, worker[keep], table[keep, 2], _micros(at), at)


def _micros(at: np.ndarray) -> np.ndarray:
    """Microseconds since 1970 (UTC) of driver values: ISO text (SQLite, stored in UTC) is
    parsed by numpy in one call; datetimes (a server) are converted one by one."""
    if not len(at):
        return np.zeros(0, dtype=np.int64)
    if isinstance(at[0], str):
        return at.astype("datetime64[us]").astype(np.int64)
    one = dt.timedelta(microseconds=1)

    def micros(v: dt.datetime) -> int:
        if v.tzinfo is not None:
            v = v.astimezone(dt.timezone.utc).replace(tzinfo=None)
        return (v - _EPOCH) // one
    return np.fromiter(map(micros, at), dtype=np.int64, count=len(at))


def active_seconds(micros: np.ndarray, idle_seconds: float) -> float:
    r""":math:`\sum_i \min(t_{i+1} - t_i, \tau)` over sorted times, summed in order as Python
    floats (the same value a loop over the datetimes gives)."""
    gaps = np.diff(micros) / 1e6
    return sum(np.minimum(gaps, idle_seconds).tolist())
