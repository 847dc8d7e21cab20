"""Submitting a clip whose captions miss the caption guideline: what is missing, and (when the
lead allows it) an override with a reason. The project decides; this dialog only asks."""

from __future__ import annotations

from PySide6.QtCore import Qt, Slot
from PySide6.QtWidgets import (
    QDialog, QDialogButtonBox, QLabel, QLineEdit, QListWidget, QVBoxLayout, QWidget,
)


class SubmitCheckDialog(QDialog):
    """Lists what the clip's captions miss; with ``blocking`` False, a reason field and
    "Submit anyway" (enabled once a reason is typed). ``reason()`` is the override given."""

    def __init__(self, missing: tuple[str, ...] | list[str], *, blocking: bool,
                 parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("submitCheck")
        self.setWindowTitle("Captions miss the guideline")
        self.setMinimumWidth(560)
        lay = QVBoxLayout(self)
        head = ("This clip cannot be submitted yet: the lead made the caption guideline a block."
                if blocking else "This clip's captions miss the caption guideline:")
        top = QLabel(head)
        top.setWordWrap(True)
        lay.addWidget(top)
        self.items = QListWidget()
        self.items.setObjectName("missingList")
        self.items.setWordWrap(True)
        self.items.addItems(list(missing))
        self.items.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        lay.addWidget(self.items)
        self.reason_edit = QLineEdit()
        self.reason_edit.setObjectName("overrideReason")
        self.reason_edit.setPlaceholderText("Why submit it anyway? (kept in the edit history)")
        buttons = QDialogButtonBox()
        self.back = buttons.addButton("&Go back and fix", QDialogButtonBox.ButtonRole.RejectRole)
        self.anyway = None
        if not blocking:
            lay.addWidget(QLabel("&Reason to submit anyway:", buddy=self.reason_edit))
            lay.addWidget(self.reason_edit)
            self.anyway = buttons.addButton("&Submit anyway", QDialogButtonBox.ButtonRole.AcceptRole)
            self.anyway.setEnabled(False)
            self.reason_edit.textChanged.connect(self._reason_changed)
            self.reason_edit.returnPressed.connect(self._accept_if_reason)
        buttons.accepted.connect(self._accept_if_reason)
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)
        self.back.setDefault(True)

    @Slot(str)
    def _reason_changed(self, text: str) -> None:
        if self.anyway is not None:
            self.anyway.setEnabled(bool(text.strip()))

    @Slot()
    def _accept_if_reason(self) -> None:
        if self.anyway is not None and self.reason_edit.text().strip():
            self.accept()

    def reason(self) -> str | None:
        """The override reason when the person chose "Submit anyway", else None."""
        if self.result() != QDialog.DialogCode.Accepted or self.anyway is None:
            return None
        return self.reason_edit.text().strip() or None


def ask_override(parent: QWidget, missing, *, blocking: bool) -> str | None:
    """Show the dialog modally; the override reason, or None to go back."""
    dlg = SubmitCheckDialog(missing, blocking=blocking, parent=parent)
    dlg.exec()
    return dlg.reason()
