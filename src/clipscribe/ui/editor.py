"""Writes the current person's edits of the clip on screen through the project, one
transaction each, with undo commands and a saved/not-saved report."""

from __future__ import annotations

import time
from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoStack

from ..errors import RecordError
from .undo import EditCommand


class ClipEditor(QObject):
    """The one place the workbench changes annotation data."""

    changed = Signal()          # something of the clip on screen changed: re-read it
    saved = Signal(str)         # "Saved 14:02:11"
    notSaved = Signal(str)      # the project's reason
    saving = Signal()

    def __init__(self, project, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.project = project
        self.undo_stack = QUndoStack(self)
        self.clip: int | None = None

    @property
    def me(self) -> str:
        return self.project.user

    def apply(self, text: str, fn: Callable[[], Any], *, undoable: bool = True) -> Any:
        """Run one write; on success push an undo command; on a refusal report the reason.
        Returns ``fn``'s result, or None when the project refused."""
        self.saving.emit()
        try:
            out = fn()
        except RecordError as exc:
            self.notSaved.emit(str(exc))
            return None
        ids = list(self.project.last_edit_ids)
        if undoable and ids:
            self.undo_stack.push(EditCommand(text, self.project, ids, on_change=self._after_undo,
                                             on_error=self.notSaved.emit))
        self.saved.emit(time.strftime("%H:%M:%S"))
        self.changed.emit()
        return out if out is not None else True

    def _after_undo(self) -> None:
        self.saved.emit(time.strftime("%H:%M:%S"))
        self.changed.emit()

    # ---- clip label and state -----------------------------------------------------------
    def set_label(self, label: str | None) -> Any:
        what = f"Label clip “{label}”" if label else "Clear clip label"
        return self.apply(what, lambda: self.project.set_clip_label(self.clip, self.me, label))

    def set_state(self, state: str, reason: str | None = None) -> Any:
        words = {"submitted": "Submit clip", "skipped": "Skip clip", "unsure": "Flag unsure",
                 "open": "Reopen clip"}
        return self.apply(words[state], lambda: self.project.set_clip_state(
            self.clip, self.me, state, reason))

    # ---- segments -----------------------------------------------------------------------
    def add_segment(self, label: str, start: int, end: int) -> Any:
        return self.apply(f"Add segment {start}–{end - 1}",
                          lambda: self.project.add_segment(self.clip, self.me, label, start, end))

    def move_segment(self, segment_id: int, start: int, end: int) -> Any:
        return self.apply("Move segment edge", lambda: self.project.update_segment(
            segment_id, start=start, end=end))

    def relabel_segment(self, segment_id: int, label: str) -> Any:
        return self.apply(f"Segment label “{label}”",
                          lambda: self.project.update_segment(segment_id, label=label))

    def split_segment(self, segment_id: int, at: int) -> Any:
        return self.apply("Split segment", lambda: self.project.split_segment(segment_id, at))

    def merge_segments(self, first: int, second: int) -> Any:
        return self.apply("Merge segments", lambda: self.project.merge_segments(first, second))

    def delete_segment(self, segment_id: int) -> Any:
        return self.apply("Delete segment", lambda: self.project.delete_segment(segment_id))

    # ---- captions -----------------------------------------------------------------------
    def save_caption(self, caption_id: int | None, text: str, segment: int | None,
                     position: int) -> tuple[bool, int | None]:
        """Write one caption slot: add, change or (blank text) delete. Returns (saved, the
        caption id now in the slot); on a refusal ``saved`` is False and the reason was sent."""
        if caption_id is None:
            if not text.strip():
                return True, None
            out = self.apply("Add caption", lambda: self.project.add_caption(
                self.clip, self.me, text, segment=segment, position=position))
            return (False, None) if out is None else (True, out)
        if not text.strip():
            ok = self.apply("Delete caption", lambda: self.project.delete_caption(caption_id))
            return (ok is not None), (None if ok is not None else caption_id)
        ok = self.apply("Edit caption", lambda: self.project.update_caption(
            caption_id, text, segment=segment))
        return ok is not None, caption_id
