"""The edit history: the audit trail, and undo/redo by restoring a row's earlier state."""

from __future__ import annotations

from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..errors import StaleWriteError
from ..store.history_values import row_values
from ..store.models import (
    Annotator,
    Assignment,
    Caption,
    Clip,
    ClipLabel,
    Edit,
    GoldCaption,
    GoldLabel,
    GoldSegment,
    Segment,
)
from ..types import ClipRef, EditInfo  # noqa: F401 (re-exported)
from .context import Service, require, row_dict

ENTITIES = {"clip": Clip, "clip_label": ClipLabel, "segment": Segment, "caption": Caption,
            "assignment": Assignment, "gold_label": GoldLabel, "gold_segment": GoldSegment,
            "gold_caption": GoldCaption}
_UNDOABLE = set(ENTITIES)
_ANNOTATION = {"clip_label", "segment", "caption", "assignment"}  # one's own work on a clip
#: rows a clip's state is worked out from (its gold label, everyone's assignments)
_STATE_FROM = {"gold_label", "assignment"}


class History(Service):
    def history(self, *, clip: ClipRef | None = None, annotator: Any = None, limit: int | None = None) -> list[EditInfo]:
        """The edit history, oldest first (the audit trail)."""
        def q(s: Session) -> list[EditInfo]:
            stmt = select(Edit, Annotator.name).join(Annotator, Annotator.id == Edit.annotator_id, isouter=True)
            if clip is not None:
                stmt = stmt.where(Edit.clip_id == self.ctx.clip(s, clip).id)
            if annotator is not None:
                stmt = stmt.where(Edit.annotator_id == self.ctx.annotator(s, annotator).id)
            stmt = stmt.order_by(Edit.id.desc())
            if limit:
                stmt = stmt.limit(limit)
            rows = [EditInfo(e.id, e.at, name, e.action, e.entity, e.entity_id, e.clip_id, e.before,
                             e.after, e.reverts) for e, name in s.execute(stmt)]
            return rows[::-1]
        return self.ctx.read(q)

    def revert(self, edit_ids: list[int]) -> list[int]:
        """Undo the given edits (newest first, in one transaction) by restoring each row's
        ``before`` state; redo is reverting the revert. Refuses (StaleWriteError) when a row
        changed since the edit. Returns the ids of the new history rows."""
        def work(s: Session) -> list[int]:
            out, stated = [], set()
            for eid in sorted(edit_ids, reverse=True):
                e = s.get(Edit, eid)
                require(e is not None and e.entity in _UNDOABLE
                        and (e.entity != "clip" or e.action in ("facts", "undo")),
                        f"edit {eid}: cannot be undone")
                out.append(self._restore(s, e).id)
                if e.entity in _STATE_FROM and e.clip_id is not None:
                    stated.add(e.clip_id)
            for clip_id in sorted(stated):  # e.g. an undone settle leaves the clip unsettled
                self.peers.annotation._refresh_clip_state(s, s.get(Clip, clip_id))
            return out
        return self.ctx.write(work)

    def undo_trail(self, clip: ClipRef, annotator: Any, *, limit: int = 200) -> list[tuple[str, list[int]]]:
        """The steps ``annotator`` can still undo on ``clip``, oldest first, rebuilt from the
        edit history: ``(what, edit ids)`` per user action (the rows of one transaction). Undo
        rows take the steps they reverted off the trail, a redo puts them back; an undo of
        something not on the trail (another window) ends it there."""
        rows = [e for e in self.history(clip=clip, annotator=annotator)
                if e.entity in _ANNOTATION]
        groups: list[list[EditInfo]] = []
        for e in rows:
            last = groups[-1][-1] if groups else None
            if last is not None and last.at == e.at and (last.action == "undo") == (e.action == "undo"):
                groups[-1].append(e)
            else:
                groups.append([e])
        done: list[tuple[str, list[int]]] = []
        undone: list[tuple[str, list[int], list[int]]] = []  # (what, edit ids, undo ids)
        for g in groups:
            ids = [e.id for e in g]
            if g[0].action != "undo":
                done.append((_step_words(g), ids))
                undone.clear()
                continue
            hit = sorted(e.reverts for e in g)
            if done and sorted(done[-1][1]) == hit:
                what, was = done.pop()
                undone.append((what, was, ids))
            elif undone and sorted(undone[-1][2]) == hit:
                what, _was, _u = undone.pop()
                done.append((what, ids))
            else:
                done.clear()
                undone.clear()
        return done[-limit:]

    def _restore(self, s: Session, e: Edit) -> Edit:
        model = ENTITIES[e.entity]
        row = s.get(model, e.entity_id)
        now = row_dict(row) if row is not None else None
        if now is not None and e.after is not None:  # an edit of some columns compares those
            now = {k: now[k] for k in e.after if k in now}
        if (now is None) != (e.after is None) or (now and e.after and _content(now) != _content(e.after)):
            raise StaleWriteError(f"edit {e.id}: the {e.entity.replace('_', ' ')} changed since; "
                                  "undo would overwrite newer work")
        if e.before is None:
            s.delete(row)
        else:
            values = row_values(model, {k: v for k, v in e.before.items() if k != "version"})
            if row is None:
                row = model(**values)
                s.add(row)
            else:
                for k, v in values.items():
                    if k != "id":
                        setattr(row, k, v)
        s.flush()
        return self.ctx.log(s, "undo", e.entity, e.entity_id, e.clip_id, now,
                         row_dict(row) if e.before is not None else None, reverts=e.id)


def _step_words(rows: list[EditInfo]) -> str:
    """Words for one undo step, from its first row."""
    e = rows[0]
    after = e.after or {}
    if e.entity == "clip_label":
        return "Label clip" if e.after else "Clear clip label"
    if e.entity == "assignment":
        return {"submitted": "Submit clip", "skipped": "Skip clip", "unsure": "Flag unsure",
                "open": "Reopen clip"}.get(after.get("state"), "Clip state")
    verb = {"add": "Add", "change": "Edit", "delete": "Delete"}.get(e.action, e.action.capitalize())
    return f"{verb} {e.entity.replace('_', ' ')}"


def _content(row: dict) -> dict:
    """A row's values without the bookkeeping columns (version, timestamps)."""
    return {k: v for k, v in row.items() if k not in ("version", "updated_at")}

