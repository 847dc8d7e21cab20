"""The edit history: the audit trail, and undo/redo by restoring a row's earlier state."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..errors import StaleWriteError
from ..store.models import (
    Annotator, Assignment, Caption, ClipLabel, Edit, GoldCaption, GoldLabel, GoldSegment, Segment,
)
from .base import require, row_dict

ENTITIES = {"clip_label": ClipLabel, "segment": Segment, "caption": Caption,
            "assignment": Assignment, "gold_label": GoldLabel, "gold_segment": GoldSegment,
            "gold_caption": GoldCaption}
_UNDOABLE = set(ENTITIES)


@dataclass(frozen=True, slots=True)
class EditInfo:
    id: int
    at: dt.datetime
    who: str | None
    action: str
    entity: str
    entity_id: int | None
    clip: int | None
    before: dict | None
    after: dict | None
    reverts: int | None


class HistoryMixin:
    def history(self, *, clip: Any = None, annotator: Any = None, limit: int | None = None) -> list[EditInfo]:
        """The edit history, oldest first (the audit trail)."""
        def q(s: Session) -> list[EditInfo]:
            stmt = select(Edit, Annotator.name).join(Annotator, Annotator.id == Edit.annotator_id, isouter=True)
            if clip is not None:
                stmt = stmt.where(Edit.clip_id == self._clip(s, clip).id)
            if annotator is not None:
                stmt = stmt.where(Edit.annotator_id == self._annotator(s, annotator).id)
            stmt = stmt.order_by(Edit.id.desc())
            if limit:
                stmt = stmt.limit(limit)
            rows = [EditInfo(e.id, e.at, name, e.action, e.entity, e.entity_id, e.clip_id, e.before,
                             e.after, e.reverts) for e, name in s.execute(stmt)]
            return rows[::-1]
        return self._read(q)

    def revert(self, edit_ids: list[int]) -> list[int]:
        """Undo the given edits (newest first, in one transaction) by restoring each row's
        ``before`` state; redo is reverting the revert. Refuses (StaleWriteError) when a row
        changed since the edit. Returns the ids of the new history rows."""
        def work(s: Session) -> list[int]:
            out = []
            for eid in sorted(edit_ids, reverse=True):
                e = s.get(Edit, eid)
                require(e is not None and e.entity in _UNDOABLE, f"edit {eid}: cannot be undone")
                out.append(self._restore(s, e).id)
            return out
        return self._write(work)

    def _restore(self, s: Session, e: Edit) -> Edit:
        model = ENTITIES[e.entity]
        row = s.get(model, e.entity_id)
        now = row_dict(row) if row is not None else None
        if (now is None) != (e.after is None) or (now and e.after and _content(now) != _content(e.after)):
            raise StaleWriteError(f"edit {e.id}: the {e.entity.replace('_', ' ')} changed since; "
                                  "undo would overwrite newer work")
        if e.before is None:
            s.delete(row)
        else:
            values = {k: _from_json(v) for k, v in e.before.items() if k != "version"}
            if row is None:
                row = model(**values)
                s.add(row)
            else:
                for k, v in values.items():
                    if k != "id":
                        setattr(row, k, v)
        s.flush()
        return self._log(s, "undo", e.entity, e.entity_id, e.clip_id, now,
                         row_dict(row) if e.before is not None else None, reverts=e.id)



def _content(row: dict) -> dict:
    """A row's values without the bookkeeping columns (version, timestamps)."""
    return {k: v for k, v in row.items() if k not in ("version", "updated_at")}


def _from_json(v: Any) -> Any:
    if isinstance(v, str) and len(v) >= 19 and v[4] == "-" and v[10] == "T":
        try:
            return dt.datetime.fromisoformat(v)
        except ValueError:
            return v
    return v
