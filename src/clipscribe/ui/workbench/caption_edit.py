"""One caption's text field: wraps onto as many lines as the text needs and grows with it.

A caption is one piece of text without line breaks, so Return finishes the field (it is saved)
instead of starting a new line, and Tab moves on to the next field. Ctrl+Z first undoes typing in
the field; when the field has nothing left to undo it asks for the edit-level undo
(``undoBeyond``), so the key keeps working after the text was saved.

It offers the few calls of a one-line field the captions panel uses (``text``, ``setText``,
``textEdited``, ``editingFinished``, ``end``), so the panel treats it as one.
"""

from __future__ import annotations

from PySide6.QtCore import QEvent, QSize, Qt, Signal
from PySide6.QtGui import QFocusEvent, QKeyEvent, QKeySequence, QTextCursor, QTextOption
from PySide6.QtWidgets import QFrame, QPlainTextEdit, QSizePolicy, QWidget

MAX_LINES = 6  # past this the field scrolls instead of growing further


class CaptionEdit(QPlainTextEdit):
    textEdited = Signal(str)     # typed by the person (not set by the program)
    editingFinished = Signal()   # Return, or the field lost focus after a change
    undoBeyond = Signal()        # Ctrl+Z with no typing left to undo in the field

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setTabChangesFocus(True)
        self.setWordWrapMode(QTextOption.WrapMode.WrapAtWordBoundaryOrAnywhere)
        self.setLineWrapMode(QPlainTextEdit.LineWrapMode.WidgetWidth)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAlwaysOff)
        self.setVerticalScrollBarPolicy(Qt.ScrollBarPolicy.ScrollBarAsNeeded)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self.setFrameShape(QFrame.Shape.StyledPanel)
        self._programmatic = False
        self._changed_since_focus = False
        self.document().documentLayout().documentSizeChanged.connect(lambda _s: self._fit())
        self.textChanged.connect(self._text_changed)
        self._fit()

    # ---- the one-line field's calls ---------------------------------------------------
    def text(self) -> str:
        return self.toPlainText()

    def setText(self, text: str) -> None:  # noqa: N802
        """Show ``text`` as set by the program (not an edit; no ``textEdited``). Typing undo of
        the field is kept when the text does not change."""
        if text == self.toPlainText():
            return
        self._programmatic = True
        try:
            self.setPlainText(text)
        finally:
            self._programmatic = False
        self._fit()

    def clear(self) -> None:
        self.setText("")

    def end(self, mark: bool = False) -> None:
        c = self.textCursor()
        c.movePosition(QTextCursor.MoveOperation.End,
                       QTextCursor.MoveMode.KeepAnchor if mark else QTextCursor.MoveMode.MoveAnchor)
        self.setTextCursor(c)

    def setCursorPosition(self, pos: int) -> None:  # noqa: N802
        c = self.textCursor()
        c.setPosition(min(pos, len(self.toPlainText())))
        self.setTextCursor(c)

    # ---- behaviour ----------------------------------------------------------------------
    def _text_changed(self) -> None:
        if not self._programmatic:
            self._changed_since_focus = True
            self.textEdited.emit(self.toPlainText())

    def _fit(self) -> None:
        """Height for the wrapped text: one line at least, MAX_LINES at most."""
        fm = self.fontMetrics()
        lines = max(1, min(MAX_LINES, int(self.document().size().height()) or 1))
        m = self.contentsMargins()
        doc_margin = int(self.document().documentMargin())
        self.setFixedHeight(lines * fm.lineSpacing() + 2 * doc_margin + m.top() + m.bottom() + 2)

    def resizeEvent(self, e) -> None:  # noqa: N802
        # a caption set before the panel had its final width was wrapped for the width it had
        # then; at the new width it may take more lines (seen at start-up: the first clip's
        # caption cut after one line), so the height follows the width
        super().resizeEvent(e)
        if e.size().width() != e.oldSize().width():
            self._fit()

    def sizeHint(self) -> QSize:  # noqa: N802
        return QSize(200, self.height())

    def insertFromMimeData(self, source) -> None:  # noqa: N802
        """Pasted line breaks become spaces: a caption is one piece of text."""
        if source.hasText():
            self.insertPlainText(" ".join(source.text().split()))

    def keyPressEvent(self, e: QKeyEvent) -> None:  # noqa: N802
        if e.key() in (Qt.Key.Key_Return, Qt.Key.Key_Enter) and not (
                e.modifiers() & Qt.KeyboardModifier.ControlModifier):
            self._changed_since_focus = False
            self.editingFinished.emit()
            return
        if e.matches(QKeySequence.StandardKey.Undo) and not self.document().isUndoAvailable():
            self.undoBeyond.emit()
            return
        super().keyPressEvent(e)

    def event(self, e: QEvent) -> bool:
        # Ctrl+Return belongs to the window (submit the clip), not to the field
        if e.type() == QEvent.Type.ShortcutOverride and isinstance(e, QKeyEvent) and e.key() in (
                Qt.Key.Key_Return, Qt.Key.Key_Enter) and e.modifiers() & Qt.KeyboardModifier.ControlModifier:
            e.ignore()
            return False
        return super().event(e)

    def focusOutEvent(self, e: QFocusEvent) -> None:  # noqa: N802
        super().focusOutEvent(e)
        if self._changed_since_focus:
            self._changed_since_focus = False
            self.editingFinished.emit()
