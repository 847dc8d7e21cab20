"""What the work view gives up while the workbench window shows its review view: its docks are
hidden and its commands (also the View menu's entries showing or hiding a dock) are off, so keys meant for the review desk never act on the work
view's clip. Leaving the review view brings both back as they were."""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtGui import QAction, QUndoStack
from PySide6.QtWidgets import QDockWidget

#: actions that stay live on the review view (the rest act on the work view's clip)
SHARED_ACTIONS = ("work_view", "review_view", "shortcuts", "cautions", "quit", "export")


class WorkViewPause:
    def __init__(self, actions: dict[str, QAction], docks: Callable[[], list[QDockWidget]],
                 undo_stack: QUndoStack) -> None:
        self.actions = actions
        self.docks = docks
        self.undo_stack = undo_stack
        self._hidden: list[QDockWidget] = []
        self._was_enabled: dict[str, bool] = {}

    def hold(self) -> None:
        """Turn the work commands off and hide the docks (again while held: a no-op)."""
        if not self._was_enabled:
            for name, a in self.actions.items():
                if name not in SHARED_ACTIONS:
                    self._was_enabled[name] = a.isEnabled()
                    a.setEnabled(False)
        for d in self.docks():
            d.toggleViewAction().setEnabled(False)
            if not d.isHidden():
                self._hidden.append(d)
                d.hide()

    def release(self) -> None:
        """Commands back as they were (undo and redo as the undo stack says now), docks shown."""
        live = {"undo": self.undo_stack.canUndo(), "redo": self.undo_stack.canRedo()}
        for name, on in self._was_enabled.items():
            self.actions[name].setEnabled(live.get(name, on))
        self._was_enabled.clear()
        while self._hidden:
            self._hidden.pop().show()
        for d in self.docks():
            d.toggleViewAction().setEnabled(True)
