"""The clip panel: the clip label buttons, the clip's state, the inline skip prompt, the lead's
comments addressed to this person on this clip (unread ones marked) and, with blind mode off, a
muted read-only line of the labels the other annotators gave.

Buttons are bound to the window's actions, so a key and a click do the same thing.
"""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal, Slot
from PySide6.QtGui import QAction
from PySide6.QtWidgets import (
    QGridLayout, QHBoxLayout, QLabel, QLineEdit, QPushButton, QSizePolicy, QToolButton, QVBoxLayout,
    QWidget,
)

from .. import theme


#: unread comments stand out: dark amber text on a pale ground (readable in light and dark themes)
UNREAD_STYLE = ("QLabel#leadComments { color: #4a3000; background: #fff4d6; "
                "border: 1px solid #e0b64a; border-radius: 3px; padding: 4px; }")
READ_STYLE = ("QLabel#leadComments { border: 1px solid #b8c1ca; border-radius: 3px; "
              "padding: 4px; }")


class LabelButton(QToolButton):
    """A label button that can carry a suggestion: a thin bar along its bottom edge, as long as
    the suggested probability (darker for the best one)."""

    def __init__(self) -> None:
        super().__init__()
        self.probability: float | None = None
        self.best = False

    def set_probability(self, probability: float | None, best: bool = False) -> None:
        self.probability, self.best = probability, best
        self.update()

    def paintEvent(self, event) -> None:  # noqa: N802
        super().paintEvent(event)
        if self.probability is None:
            return
        from PySide6.QtGui import QColor, QPainter
        painter = QPainter(self)
        r = self.rect().adjusted(10, 0, -3, -3)
        width = max(2, round(r.width() * self.probability))
        painter.fillRect(r.left(), r.bottom() - 2, r.width(), 3, QColor("#dde3e8"))
        painter.fillRect(r.left(), r.bottom() - 2, width, 3,
                         QColor("#1f5f66" if self.best else "#7a9ea3"))
        painter.end()


class ClipPanel(QWidget):
    skipConfirmed = Signal(str)   # reason
    commentsRead = Signal()       # the person acknowledged the comments on screen

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("clipPanel")
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.title = QLabel("No clip")
        self.title.setObjectName("clipTitle")
        self.title.setWordWrap(True)
        lay.addWidget(self.title)
        self._labels = QGridLayout()
        self._labels.setSpacing(4)
        lay.addLayout(self._labels)
        self.current = QLabel("Your label: none")
        lay.addWidget(self.current)
        self.suggestion = QLabel()
        self.suggestion.setObjectName("suggestionNote")
        self.suggestion.setWordWrap(True)
        self.suggestion.hide()
        lay.addWidget(self.suggestion)
        self.others = QLabel()
        self.others.setObjectName("othersLabels")
        self.others.setWordWrap(True)
        self.others.setToolTip("Labels the other annotators gave this clip (blind mode is off); "
                               "read only")
        self.others.hide()
        lay.addWidget(self.others)
        self._states = QHBoxLayout()
        lay.addLayout(self._states)
        self.state = QLabel("Your state: open")
        self.state.setObjectName("clipState")
        lay.addWidget(self.state)
        # the inline skip prompt: hidden until "Skip clip…"
        self.skip_box = QWidget()
        row = QHBoxLayout(self.skip_box)
        row.setContentsMargins(0, 0, 0, 0)
        self.skip_reason = QLineEdit()
        self.skip_reason.setObjectName("skipReason")
        self.skip_reason.setPlaceholderText("Why skip? (e.g. too dark, not the task, upsetting)")
        ok, cancel = QPushButton("Skip"), QPushButton("Cancel")
        row.addWidget(self.skip_reason, 1)
        row.addWidget(ok)
        row.addWidget(cancel)
        self.skip_box.hide()
        lay.addWidget(self.skip_box)
        ok.clicked.connect(self._confirm_skip)
        self.skip_reason.returnPressed.connect(self._confirm_skip)
        cancel.clicked.connect(self.hide_skip_prompt)
        self.label_buttons: dict[str, LabelButton] = {}
        # the lead's comments to this person on this clip: hidden when there are none
        self.comment_box = QWidget()
        self.comment_box.setObjectName("commentBox")
        cl = QVBoxLayout(self.comment_box)
        cl.setContentsMargins(0, 4, 0, 0)
        self.comments = QLabel()
        self.comments.setObjectName("leadComments")
        self.comments.setWordWrap(True)
        self.comments.setTextFormat(Qt.TextFormat.PlainText)
        self.comments.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        cl.addWidget(self.comments)
        self.read_button = QPushButton("Mark comments as read")
        self.read_button.setObjectName("markCommentsRead")
        self.read_button.setFocusPolicy(Qt.FocusPolicy.NoFocus)
        self.read_button.setToolTip("The comments stay here; only the new mark goes")
        self.read_button.clicked.connect(self.commentsRead)
        cl.addWidget(self.read_button, 0, Qt.AlignmentFlag.AlignRight)
        self.comment_box.hide()
        lay.addWidget(self.comment_box)
        self.unread = 0

    def set_label_actions(self, actions: list[QAction], colours: dict[str, str]) -> None:
        for i, action in enumerate(actions):
            b = LabelButton()
            b.setDefaultAction(action)
            b.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextOnly)
            b.setCheckable(True)
            b.setFocusPolicy(Qt.FocusPolicy.NoFocus)
            b.setMinimumWidth(110)
            name = action.data()
            c = colours.get(name, "#888888")
            b.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
            key = action.shortcut().toString()
            b.setText(f"{name}   [{key.lower() if len(key) == 1 else key}]" if key else name)
            b.setStyleSheet(
                f"QToolButton {{ border: 1px solid #b8c1ca; border-left: 8px solid {c};"
                f" border-radius: 3px; padding: 5px 8px; background: #f7f9fa; }}"
                f"QToolButton:checked {{ background: {c}; color: {theme.text_colour_on(c)};"
                f" font-weight: bold; }}")
            self._labels.addWidget(b, i // 2, i % 2)
            self.label_buttons[name] = b

    def set_state_actions(self, actions: list[QAction]) -> None:
        for action in actions:
            b = QToolButton()
            b.setDefaultAction(action)
            b.setFocusPolicy(Qt.FocusPolicy.NoFocus)
            self._states.addWidget(b)
        self._states.addStretch(1)

    # ---- showing -----------------------------------------------------------------------
    def show_clip(self, title: str, label: str | None, state: str, reason: str | None) -> None:
        self.title.setText(title)
        self.current.setText(f"Your label: {label or 'none'}")
        for name, b in self.label_buttons.items():
            b.setChecked(name == label)
        self.state.setText(f"Your state: {state}" + (f" ({reason})" if reason else ""))

    def show_suggestion(self, ranked: list[tuple[str, float]], note: str, key: str = "") -> None:
        """Bars on the label buttons for ``ranked`` ``(label, probability)`` (empty: none) and a
        line naming the best one, or ``note`` (empty: the line hides)."""
        best = ranked[0][0] if ranked else None
        probs = dict(ranked)
        for name, b in self.label_buttons.items():
            b.set_probability(probs.get(name), name == best)
        if ranked:
            from .suggestions import ANCHORING
            self.suggestion.setText(f"Suggested: {best} ({probs[best]:.0%})"
                                    + (f" — {key} accepts it" if key else ""))
            self.suggestion.setToolTip(ANCHORING)
        else:
            self.suggestion.setText(note)
            self.suggestion.setToolTip("")
        self.suggestion.setVisible(bool(ranked or note))

    def show_comments(self, notes: list) -> None:
        """Show the lead's comments to this person on this clip (``CommentNote`` objects),
        unread ones marked "NEW"; none hides the box."""
        self.unread = sum(n.unread for n in notes)
        head = (f"Comments from the lead — {self.unread} new" if self.unread
                else "Comments from the lead")
        lines = [f"{'● NEW  ' if n.unread else ''}{n.lead}, {n.at:%d %b %H:%M}: {n.text}"
                 for n in notes]
        self.comments.setText("\n".join([head, *lines]))
        self.comments.setAccessibleName(head)
        self.comments.setStyleSheet(UNREAD_STYLE if self.unread else READ_STYLE)
        self.read_button.setVisible(bool(self.unread))
        self.comment_box.setVisible(bool(notes))

    def show_others(self, labels: list[tuple[str, str]]) -> None:
        """Show ``(annotator, label)`` pairs of the others; none hides the line."""
        self.others.setText("Others: " + " · ".join(f"{who} {label}" for who, label in labels))
        self.others.setVisible(bool(labels))

    @Slot()
    def show_skip_prompt(self) -> None:
        self.skip_box.show()
        self.skip_reason.setFocus(Qt.FocusReason.ShortcutFocusReason)

    @Slot()
    def hide_skip_prompt(self) -> None:
        self.skip_reason.clear()
        self.skip_box.hide()

    @Slot()
    def _confirm_skip(self) -> None:
        reason = self.skip_reason.text().strip()
        if reason:
            self.skipConfirmed.emit(reason)
            self.hide_skip_prompt()
        else:
            self.skip_reason.setPlaceholderText("A reason is needed to skip a clip")
