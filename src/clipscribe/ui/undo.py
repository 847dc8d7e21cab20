"""Undo and redo over the project's edit history.

Each command is pushed *after* its edit has been written; it holds the history row ids the
write produced (collected with ``Project.recording()``). Undo reverts them; redo reverts the undo.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtGui import QUndoCommand

from ..errors import RecordError


class EditCommand(QUndoCommand):
    def __init__(self, text: str, project, edit_ids: list[int], *,
                 on_change: Callable[[], None], on_error: Callable[[str], None]) -> None:
        super().__init__(text)
        self.project = project
        self.edit_ids = list(edit_ids)
        self.undo_ids: list[int] = []
        self._on_change = on_change
        self._on_error = on_error
        self._first = True

    def undo(self) -> None:
        try:
            self.undo_ids = self.project.revert(self.edit_ids)
        except RecordError as exc:
            self._on_error(f"Cannot undo “{self.text()}”: {exc}")
            self.setObsolete(True)
            return
        self._on_change()

    def redo(self) -> None:
        if self._first:  # the edit itself was already written when the command was pushed
            self._first = False
            return
        try:
            self.edit_ids = self.project.revert(self.undo_ids)
        except RecordError as exc:
            self._on_error(f"Cannot redo “{self.text()}”: {exc}")
            self.setObsolete(True)
            return
        self._on_change()
