"""The one place the review desk writes: gold label, gold segments, gold captions and comments
of the clip under review, each one transaction through the project with the lead's name (the
edit history records who and when), and an undo command on the desk's own stack.

Undo asks ``Project.revert`` (the edit history's own undo). The desk first compares the gold
with what this decision left; if someone changed it since, undo refuses. Should revert still
refuse when the gold is exactly as left (its check compares stored rows, bookkeeping columns
included), the previous gold is written back through the same façade setters instead — a new
decision in the history, never a silent one.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

from PySide6.QtGui import QUndoCommand

from ...errors import RecordError, StaleWriteError
from ..editor import ClipEditor


def gold_state(project, clip: int, kind: str) -> Any:
    if kind == "label":
        return project.gold_labels().get(clip)
    if kind == "segments":
        return [(l, s, e) for _, l, s, e in project.gold_segments(clip)]
    return [(g.text, g.source) for g in project.gold_caption_rows(clip)]


def write_gold(project, clip: int, kind: str, state: Any, lead: str) -> None:
    if kind == "label":
        project.set_gold_label(clip, state, lead=lead)
    elif kind == "segments":
        project.set_gold_segments(clip, list(state), lead=lead)
    else:
        project.set_gold_captions(clip, list(state), lead=lead)


class GoldCommand(QUndoCommand):
    """One gold decision, pushed after it was written (``edit_ids`` are its history rows)."""

    def __init__(self, text: str, editor: "ReviewEditor", clip: int, kind: str, before: Any,
                 after: Any, edit_ids: list[int]) -> None:
        super().__init__(text)
        self.editor, self.clip, self.kind = editor, clip, kind
        self.before, self.after = before, after
        self.edit_ids, self.undo_ids = list(edit_ids), []
        self._first = True

    def _flip(self, expect: Any, target: Any, ids: list[int]) -> list[int] | None:
        p, ed = self.editor.project, self.editor
        if gold_state(p, self.clip, self.kind) != expect:
            ed.notSaved.emit(f"Cannot undo “{self.text()}”: the gold changed since")
            self.setObsolete(True)
            return None
        try:
            return p.revert(ids)
        except StaleWriteError:
            with p.recording() as written:
                write_gold(p, self.clip, self.kind, target, ed.me)
            return written
        except RecordError as exc:
            ed.notSaved.emit(f"Cannot undo “{self.text()}”: {exc}")
            self.setObsolete(True)
            return None

    def undo(self) -> None:
        ids = self._flip(self.after, self.before, self.edit_ids)
        if ids is not None:
            self.undo_ids = ids
            self.editor.after_undo()

    def redo(self) -> None:
        if self._first:  # the decision itself was written before the command was pushed
            self._first = False
            return
        ids = self._flip(self.before, self.after, self.undo_ids)
        if ids is not None:
            self.edit_ids = ids
            self.editor.after_undo()


class ReviewEditor(ClipEditor):
    """Same signals as :class:`ClipEditor` (changed, saved, notSaved, saving)."""

    def decide(self, text: str, kind: str, fn: Callable[[], Any]) -> Any:
        """Write one gold decision of ``kind`` ("label", "segments", "captions") with undo."""
        clip = self.clip
        before = gold_state(self.project, clip, kind)
        self.saving.emit()
        try:
            with self.project.recording() as ids:
                fn()
        except RecordError as exc:
            self.notSaved.emit(str(exc))
            return None
        after = gold_state(self.project, clip, kind)
        if ids and after != before:
            self.undo_stack.push(GoldCommand(text, self, clip, kind, before, after, ids))
        self.saved.emit(time.strftime("%H:%M:%S"))
        self.changed.emit()
        return True

    def after_undo(self) -> None:
        self._after_undo()

    def settle_label(self, label: str | None) -> Any:
        what = f"Settle label “{label}”" if label else "Unsettle label"
        return self.decide(what, "label", lambda: self.project.set_gold_label(
            self.clip, label, lead=self.me))

    def settle_segments(self, segments: list[tuple[str, int, int]],
                        what: str = "Gold segments") -> Any:
        return self.decide(what, "segments", lambda: self.project.set_gold_segments(
            self.clip, [tuple(g) for g in segments], lead=self.me))

    def settle_captions(self, items: list[tuple[str, int | None]]) -> Any:
        return self.decide("Gold captions", "captions", lambda: self.project.set_gold_captions(
            self.clip, list(items), lead=self.me))

    def comment(self, text: str, annotator: str | None) -> Any:
        # comments are messages, not data: they are kept (no undo), like a sent note
        # to no one in particular: one addressed copy to each annotator of the clip, since an
        # annotator only ever sees comments addressed to them
        return self.apply("Comment", lambda: self.project.add_comment(
            self.clip, text, annotator=annotator, lead=self.me) if annotator is not None else
            self.project.comment_to_annotators(self.clip, text, lead=self.me), undoable=False)
