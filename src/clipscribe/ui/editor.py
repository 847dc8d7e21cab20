"""Writes the current person's edits of the clip on screen through the project, one
transaction each, with undo commands and a saved/not-saved report."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from PySide6.QtCore import QObject, Signal
from PySide6.QtGui import QUndoStack

from ..errors import ProjectError, RecordError, ServerBusyError, StaleWriteError
from .undo import EditCommand


@dataclass(frozen=True, slots=True)
class CaptionSave:
    """What became of one caption slot's write."""
    ok: bool                        # written (or nothing to write)
    caption_id: int | None          # the caption now in the slot
    version: int | None = None      # its version after the write (None: no caption)
    conflict: StaleWriteError | None = None  # changed or deleted elsewhere since it was read; not written


def _deleted_elsewhere(exc: StaleWriteError) -> bool:
    """Whether a refused caption write found its caption deleted (see Project.update_caption)."""
    return exc.deleted


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
        self.last_refusal: Exception | None = None

    @property
    def me(self) -> str:
        return self.project.user

    def apply(self, text: str, fn: Callable[[], Any], *, undoable: bool = True,
              stale: Callable[[StaleWriteError], str] | None = None) -> Any:
        """Run one write; on success push an undo command; on a refusal report the reason
        (``stale``, when given, words a StaleWriteError instead of its message).
        Returns ``fn``'s result, or None when the project refused (kept in ``last_refusal``)."""
        self.saving.emit()
        self.last_refusal = None
        try:
            with self.project.recording() as ids:
                out = fn()
        except (RecordError, ServerBusyError) as exc:  # busy: a lock elsewhere, try again
            self.last_refusal = exc
            self.notSaved.emit(stale(exc) if stale and isinstance(exc, StaleWriteError) else str(exc))
            return None
        except ProjectError as exc:  # a damaged, read-only, full or busy database (DatabaseFault)
            self.last_refusal = exc
            self.notSaved.emit((str(exc).splitlines() or [type(exc).__name__])[0])
            return None
        if undoable and ids:
            self.undo_stack.push(EditCommand(text, self.project, ids, on_change=self._after_undo,
                                             on_error=self.notSaved.emit))
        self.saved.emit(time.strftime("%H:%M:%S"))
        self.changed.emit()
        return out if out is not None else True

    def restore_undo(self, clip: int) -> None:
        """Undo for ``clip``: the person's steps on it still undoable, from the edit history
        (so undo reaches back past a clip change or a reopened project)."""
        self.undo_stack.clear()
        for what, ids in self.project.undo_trail(clip, self.me):
            self.undo_stack.push(EditCommand(what, self.project, ids, on_change=self._after_undo,
                                             on_error=self.notSaved.emit))

    def _after_undo(self) -> None:
        self.saved.emit(time.strftime("%H:%M:%S"))
        self.changed.emit()

    # ---- clip label and state -----------------------------------------------------------
    def set_label(self, label: str | None) -> Any:
        what = f"Label clip “{label}”" if label else "Clear clip label"
        return self.apply(what, lambda: self.project.set_clip_label(self.clip, self.me, label))

    def set_state(self, state: str, reason: str | None = None, *,
                  override: str | None = None) -> Any:
        words = {"submitted": "Submit clip", "skipped": "Skip clip", "unsure": "Flag unsure",
                 "open": "Reopen clip"}
        return self.apply(words[state], lambda: self.project.set_clip_state(
            self.clip, self.me, state, reason, override=override))

    # ---- segments -----------------------------------------------------------------------
    def add_segment(self, label: str | None, start: int, end: int) -> Any:
        """Add one of one's segments; ``label`` None: unlabelled."""
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
                     position: int, *, expected_version: int | None = None) -> CaptionSave:
        """Write one caption slot: add, change or (blank text) delete. A change or delete is
        written only if the caption is still at ``expected_version``; otherwise nothing is
        written and the result carries the conflict (with the text and version now stored,
        None for a caption deleted elsewhere)."""
        p = self.project
        if caption_id is None:
            if not text.strip():
                return CaptionSave(True, None)
            new_id = self.apply("Add caption", lambda: p.add_caption(
                self.clip, self.me, text, segment=segment, position=position))
            if new_id is None:
                return CaptionSave(False, None)
            return CaptionSave(True, new_id, p.caption_version(new_id))
        if not text.strip():
            if caption_id not in p.caption_versions(self.clip, self.me):
                return CaptionSave(True, None)  # deleted elsewhere too: nothing to settle
            ok = self.apply("Delete caption", lambda: p.delete_caption(
                caption_id, expected_version=expected_version),
                stale=lambda exc: _conflict_words(position, exc, deleting=True))
            if ok is None:
                return self._refused(caption_id, expected_version)
            return CaptionSave(True, None)
        version = self.apply(
            "Edit caption", lambda: p.update_caption(caption_id, text, segment=segment,
                                                     expected_version=expected_version),
            stale=lambda exc: _conflict_words(position, exc, deleting=False))
        if version is None:
            return self._refused(caption_id, expected_version)
        return CaptionSave(True, caption_id, version)

    def _refused(self, caption_id: int, expected_version: int | None) -> CaptionSave:
        exc = self.last_refusal
        return CaptionSave(False, caption_id, expected_version,
                           exc if isinstance(exc, StaleWriteError) else None)


def _conflict_words(position: int, exc: StaleWriteError, *, deleting: bool) -> str:
    n = position + 1
    if _deleted_elsewhere(exc):
        return (f"caption {n} was deleted elsewhere; yours is kept — Ctrl+S saves it as a new "
                "caption, Ctrl+R lets it go")
    if deleting:
        return (f"caption {n} was changed elsewhere, so it was not deleted — Ctrl+S deletes it, "
                "Ctrl+R takes theirs")
    return f"caption {n} was changed elsewhere; yours is kept — Ctrl+S saves it, Ctrl+R takes theirs"
