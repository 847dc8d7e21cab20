"""The captions panel: the current person's reference captions of the clip on screen.

Text is saved when an editor loses focus, when Enter is pressed, and after a short pause in
typing; :meth:`CaptionsPanel.flush` saves whatever is pending (called on clip change and close).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from PySide6.QtCore import Qt, QTimer, Slot
from PySide6.QtWidgets import (
    QComboBox, QGridLayout, QLabel, QLineEdit, QScrollArea, QVBoxLayout, QWidget,
)

from .caption_checks import check_caption, count_words

IDLE_SAVE_MS = 600


@dataclass
class Slot_:
    """One caption slot: its widgets and what the project holds for it."""
    edit: QLineEdit
    segment: QComboBox
    note: QLabel
    count: QLabel
    timer: QTimer
    caption_id: int | None = None
    saved_text: str = ""
    saved_segment: int | None = None
    extra: dict = field(default_factory=dict)

    @property
    def dirty(self) -> bool:
        return self.edit.text() != self.saved_text or self.segment.currentData() != self.saved_segment


class CaptionsPanel(QWidget):
    def __init__(self, editor, guideline, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("captions")
        self.editor = editor
        self.guideline = guideline
        self.slots: list[Slot_] = []
        self._segments: list = []
        outer = QVBoxLayout(self)
        outer.setContentsMargins(0, 0, 0, 0)
        g = guideline
        self.rules = QLabel(f"{g.captions_per_clip} captions, {g.min_words}–{g.max_words} words each. "
                            "Describe what happens; each is saved as you type.")
        self.rules.setWordWrap(True)
        self.rules.setObjectName("captionRules")
        outer.addWidget(self.rules)
        area = QScrollArea()
        area.setWidgetResizable(True)
        area.setFrameShape(QScrollArea.Shape.NoFrame)
        self._box = QWidget()
        self._grid = QGridLayout(self._box)
        self._grid.setContentsMargins(0, 0, 0, 0)
        self._grid.setVerticalSpacing(2)
        self._grid.setColumnStretch(1, 1)
        area.setWidget(self._box)
        outer.addWidget(area, 1)
        for i in range(g.captions_per_clip):
            self._add_slot(i)

    # ---- building ----------------------------------------------------------------------
    def _add_slot(self, i: int) -> Slot_:
        edit = QLineEdit()
        edit.setPlaceholderText(f"Caption {i + 1}")
        edit.setAccessibleName(f"Caption {i + 1}")
        edit.setObjectName(f"caption{i + 1}")
        seg = QComboBox()
        seg.setToolTip("Tie this caption to one segment, or to the whole clip")
        seg.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        note, count = QLabel(), QLabel("0 words")
        note.setObjectName("captionNote")
        note.setWordWrap(True)
        count.setObjectName("wordCount")
        timer = QTimer(self)
        timer.setSingleShot(True)
        timer.setInterval(IDLE_SAVE_MS)
        slot = Slot_(edit, seg, note, count, timer)
        self.slots.append(slot)
        row = 3 * i
        self._grid.setRowStretch(row, 0)
        self._grid.addWidget(QLabel(f"{i + 1}."), row, 0)
        self._grid.addWidget(edit, row, 1, 1, 2)
        self._grid.addWidget(seg, row + 1, 1)
        self._grid.addWidget(count, row + 1, 2, Qt.AlignmentFlag.AlignRight)
        self._grid.addWidget(note, row + 2, 1, 1, 2)
        self._grid.setRowStretch(row + 3, 1)  # keeps the slots packed at the top
        edit.textEdited.connect(lambda _t, s=slot: (s.timer.start(), self._check_all()))
        edit.editingFinished.connect(lambda s=slot: self._save(s))
        timer.timeout.connect(lambda s=slot: self._save(s))
        seg.activated.connect(lambda _i, s=slot: self._save(s))
        self._fill_segments(slot)
        return slot

    def _fill_segments(self, slot: Slot_) -> None:
        want = slot.segment.currentData()
        slot.segment.blockSignals(True)
        slot.segment.clear()
        slot.segment.addItem("whole clip", None)
        for g in self._segments:
            slot.segment.addItem(f"{g.label} {g.start}–{g.end - 1}", g.id)
        pos = slot.segment.findData(want)
        slot.segment.setCurrentIndex(max(0, pos))
        slot.segment.blockSignals(False)

    # ---- loading -----------------------------------------------------------------------
    def load(self, captions: list, segments: list, *, keep_unsaved: bool = True) -> None:
        """Show ``captions`` (CaptionInfo) of the clip; slots with unsaved typing keep it."""
        self._segments = list(segments)
        while len(self.slots) < len(captions):
            self._add_slot(len(self.slots))
        free = list(range(len(self.slots)))
        placed: dict[int, object] = {}
        for c in sorted(captions, key=lambda c: (c.position, c.id)):
            i = c.position if c.position in free else free[0]
            free.remove(i)
            placed[i] = c
        for i, slot in enumerate(self.slots):
            c = placed.get(i)
            pending = keep_unsaved and slot.dirty
            text = pending and slot.edit.text()
            slot.caption_id = c.id if c else None
            slot.saved_text = c.text if c else ""
            slot.saved_segment = c.segment if c else None
            self._fill_segments(slot)
            if not pending:
                slot.edit.setText(slot.saved_text)
                slot.edit.setCursorPosition(0)
                slot.segment.setCurrentIndex(max(0, slot.segment.findData(slot.saved_segment)))
            elif text is not False:
                slot.edit.setText(text)
        self._check_all()

    def clear(self) -> None:
        for slot in self.slots:
            slot.timer.stop()
            slot.caption_id, slot.saved_text, slot.saved_segment = None, "", None
            slot.edit.clear()
        self._check_all()

    # ---- saving ------------------------------------------------------------------------
    def _save(self, slot: Slot_) -> None:
        slot.timer.stop()
        if self.editor.clip is None or not slot.dirty:
            return
        text, seg = slot.edit.text(), slot.segment.currentData()
        ok, new_id = self.editor.save_caption(slot.caption_id, text, seg, self.slots.index(slot))
        if ok:  # on a refusal the slot stays unsaved and is tried again on the next pause
            slot.caption_id, slot.saved_text, slot.saved_segment = new_id, text, seg

    @Slot()
    def flush(self) -> None:
        """Save every slot with unsaved text now."""
        for slot in self.slots:
            self._save(slot)

    @property
    def has_unsaved(self) -> bool:
        return any(s.dirty for s in self.slots)

    # ---- checks ------------------------------------------------------------------------
    def _check_all(self) -> None:
        g = self.guideline
        texts = [s.edit.text() for s in self.slots]
        for i, slot in enumerate(self.slots):
            others = texts[:i] + texts[i + 1:]
            found = check_caption(texts[i], min_words=g.min_words, max_words=g.max_words,
                                  banned_openings=g.banned_openings, others=others)
            n = count_words(texts[i])
            slot.count.setText(f"{n} word{'s' if n != 1 else ''}")
            slot.note.setText("; ".join(f.message for f in found))
            slot.note.setVisible(bool(found))
            slot.extra["findings"] = found
            slot.edit.setProperty("problem", bool(found))
            slot.edit.style().unpolish(slot.edit)
            slot.edit.style().polish(slot.edit)

    def focus_first_empty(self) -> None:
        for slot in self.slots:
            if not slot.edit.text():
                slot.edit.setFocus(Qt.FocusReason.ShortcutFocusReason)
                return
        if self.slots:
            self.slots[0].edit.setFocus(Qt.FocusReason.ShortcutFocusReason)
