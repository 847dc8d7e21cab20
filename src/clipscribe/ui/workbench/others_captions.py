"""The other annotators' captions of the clip on screen, shown under one's own when blind mode
is off: a collapsible, read-only, muted list (plain labels, so nothing of it can be edited)."""

from __future__ import annotations

from PySide6.QtCore import Qt, Slot
from PySide6.QtWidgets import QLabel, QScrollArea, QSizePolicy, QToolButton, QVBoxLayout, QWidget


class OthersCaptions(QWidget):
    """A toggle "Others' captions (n)" over one muted line per caption; hidden when empty."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("othersCaptions")
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 6, 0, 0)
        lay.setSpacing(2)
        self.toggle = QToolButton()
        self.toggle.setObjectName("othersToggle")
        self.toggle.setCheckable(True)
        self.toggle.setChecked(True)
        self.toggle.setToolButtonStyle(Qt.ToolButtonStyle.ToolButtonTextBesideIcon)
        self.toggle.setToolTip("Captions the other annotators wrote (blind mode is off); read only")
        self.toggle.toggled.connect(self._expand)
        lay.addWidget(self.toggle)
        self.body = QScrollArea()
        self.body.setWidgetResizable(True)
        self.body.setFrameShape(QScrollArea.Shape.NoFrame)
        inner = QWidget()
        self._lines = QVBoxLayout(inner)
        self._lines.setContentsMargins(0, 0, 0, 0)
        self._lines.setSpacing(4)
        self._lines.addStretch(1)
        self.body.setWidget(inner)
        lay.addWidget(self.body, 1)
        self.texts: list[str] = []
        self.caption_ids: list[int] = []
        self.set_captions([])

    def set_captions(self, captions: list) -> None:
        """Show ``captions`` (CaptionInfo of other annotators); none hides the whole list."""
        while self._lines.count() > 1:  # the last item is the stretch that packs lines at the top
            self._lines.takeAt(0).widget().deleteLater()
        self.texts = [c.text for c in captions]
        self.caption_ids = [c.id for c in captions]
        for c in captions:
            line = QLabel(f"{c.annotator}: {c.text}")
            line.setObjectName("othersCaption")
            line.setWordWrap(True)
            line.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
            self._lines.insertWidget(self._lines.count() - 1, line)
        self.toggle.setText(f"Others' captions ({len(captions)})")
        self._expand(self.toggle.isChecked())
        self.setVisible(bool(captions))

    @Slot(bool)
    def _expand(self, on: bool) -> None:
        self.toggle.setArrowType(Qt.ArrowType.DownArrow if on else Qt.ArrowType.RightArrow)
        self.body.setVisible(on)
        # folded, it keeps only the toggle's height and gives the room back to one's own captions
        self.setSizePolicy(QSizePolicy.Policy.Preferred,
                           QSizePolicy.Policy.Expanding if on else QSizePolicy.Policy.Fixed)
