"""The captions panel: the current person's reference captions of the clip on screen.

Text is saved when an editor loses focus, when Enter is pressed, and after a short pause in
typing; :meth:`CaptionsPanel.flush` saves whatever is pending (called on clip change and close).

Every change (and every delete: a cleared slot) is written only if the caption is still at the
version the slot last read. A caption changed or deleted elsewhere meanwhile (another window, a
script, a lead) is not overwritten: the slot keeps the person's text, is marked "Not saved",
stops saving by itself, and waits for :meth:`CaptionsPanel.keep_mine` (Ctrl+S; a deleted
caption is added again with their text) or :meth:`CaptionsPanel.take_theirs` (Ctrl+R; a deleted
caption's slot is cleared).
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field

from PySide6.QtCore import Qt, QTimer, Signal, Slot
from PySide6.QtWidgets import (
    QComboBox, QGridLayout, QHBoxLayout, QLabel, QScrollArea, QToolButton, QVBoxLayout, QWidget,
)

from ...schema.caption_rules import check_caption, count_words
from ..segment_look import label_text
from .caption_edit import CaptionEdit

IDLE_SAVE_MS = 600
THEIRS_SHOWN = 80  # characters of the stored text quoted in a conflict note
DELETED = (None, None)  # what a slot in conflict holds as "theirs" when the caption is gone
TIPS = {False: ("Save your text over the one stored elsewhere (Ctrl+S)",
                "Replace your text with the stored one (Ctrl+R)"),
        True: ("Save your text as a new caption (Ctrl+S)",
               "Accept the deletion and clear your text (Ctrl+R)")}


@dataclass
class Slot_:
    """One caption slot: its widgets and what the project holds for it."""
    edit: CaptionEdit
    segment: QComboBox
    note: QLabel
    count: QLabel
    timer: QTimer
    bar: QWidget                      # the conflict note with its two buttons
    bar_text: QLabel
    caption_id: int | None = None
    saved_text: str = ""
    saved_segment: int | None = None
    version: int | None = None        # of the stored caption the typing started from
    theirs: tuple[str | None, int | None] | None = None  # (text, version) stored elsewhere: a conflict
    extra: dict = field(default_factory=dict)

    @property
    def dirty(self) -> bool:
        return self.edit.text() != self.saved_text or self.segment.currentData() != self.saved_segment

    @property
    def gone(self) -> bool:
        """In conflict because the caption was deleted elsewhere."""
        return self.theirs == DELETED


class CaptionsPanel(QWidget):
    conflictsChanged = Signal(int)  # number of slots whose caption was changed or deleted elsewhere

    def __init__(self, editor, guideline, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("captions")
        self.editor = editor
        self.guideline = guideline
        self.slots: list[Slot_] = []
        self._segments: list = []
        self._clip: int | None = None
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
        self._chain_tab_order()

    # ---- building ----------------------------------------------------------------------
    def _add_slot(self, i: int) -> Slot_:
        edit = CaptionEdit()
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
        bar, bar_text = self._conflict_bar(i)
        slot = Slot_(edit, seg, note, count, timer, bar, bar_text)
        self.slots.append(slot)
        row = 4 * i
        self._grid.setRowStretch(row, 0)
        self._grid.addWidget(QLabel(f"{i + 1}."), row, 0)
        self._grid.addWidget(edit, row, 1, 1, 2)
        self._grid.addWidget(seg, row + 1, 1)
        self._grid.addWidget(count, row + 1, 2, Qt.AlignmentFlag.AlignRight)
        self._grid.addWidget(bar, row + 2, 1, 1, 2)
        self._grid.addWidget(note, row + 3, 1, 1, 2)
        self._grid.setRowStretch(row + 4, 1)  # keeps the slots packed at the top
        keep, take = bar.findChildren(QToolButton)
        keep.clicked.connect(lambda _=False, s=slot: self._save(s, force=True))
        take.clicked.connect(lambda _=False, s=slot: self._take_theirs(s))
        edit.textEdited.connect(lambda _t, s=slot: (s.timer.start(), self._check_all()))
        edit.editingFinished.connect(lambda s=slot: self._save(s))
        edit.undoBeyond.connect(lambda s=slot: self._undo_beyond(s))
        timer.timeout.connect(lambda s=slot: self._save(s))
        seg.activated.connect(lambda _i, s=slot: self._save(s))
        self._fill_segments(slot)
        return slot

    def _chain_tab_order(self) -> None:
        """Tab goes from one caption's text to the next, then through the segment boxes: a
        typist who tabs to the next caption never lands on a box that ignores letters, where
        they would reach the label and segment keys instead."""
        chain = [s.edit for s in self.slots] + [s.segment for s in self.slots]
        for a, b in zip(chain, chain[1:]):
            QWidget.setTabOrder(a, b)

    def _conflict_bar(self, i: int) -> tuple[QWidget, QLabel]:
        bar = QWidget()
        bar.setObjectName("captionConflict")
        bar.setAttribute(Qt.WidgetAttribute.WA_StyledBackground, True)
        lay = QHBoxLayout(bar)
        lay.setContentsMargins(6, 3, 6, 3)
        text = QLabel()
        text.setObjectName("conflictText")
        text.setWordWrap(True)
        lay.addWidget(text, 1)
        for label, tip in zip(("Keep mine", "Take theirs"), TIPS[False]):
            b = QToolButton()
            b.setText(label)
            b.setToolTip(tip)
            b.setAccessibleName(f"{label}, caption {i + 1}")
            lay.addWidget(b)
        bar.hide()
        return bar, text

    def _fill_segments(self, slot: Slot_) -> None:
        want = slot.segment.currentData()
        slot.segment.blockSignals(True)
        slot.segment.clear()
        slot.segment.addItem("whole clip", None)
        for g in self._segments:
            slot.segment.addItem(f"{label_text(g.label)} {g.start}–{g.end - 1}", g.id)
        pos = slot.segment.findData(want)
        slot.segment.setCurrentIndex(max(0, pos))
        slot.segment.blockSignals(False)

    # ---- loading -----------------------------------------------------------------------
    def load(self, captions: list, segments: list, *, versions: dict[int, int] | None = None,
             keep_unsaved: bool = True) -> None:
        """Show ``captions`` (CaptionInfo) of the clip, at ``versions`` ({caption id: version});
        on the same clip, slots with unsaved typing keep it and the version it started from."""
        versions = versions or {}
        if self.editor.clip != self._clip:  # another clip: nothing typed carries over
            self._clip, keep_unsaved = self.editor.clip, False
        self._segments = list(segments)
        held = self._typed_over_deleted(captions) if keep_unsaved else set()
        while len(self.slots) < len(captions) + len(held):
            self._add_slot(len(self.slots))
            self._chain_tab_order()
        free = [i for i in range(len(self.slots)) if i not in held]
        placed: dict[int, object] = {}
        for c in sorted(captions, key=lambda c: (c.position, c.id)):
            i = c.position if c.position in free else free[0]
            free.remove(i)
            placed[i] = c
        for i, slot in enumerate(self.slots):
            if i in held:
                # the typing keeps the deleted caption's id, so saving it finds the deletion
                # instead of quietly adding the text back
                if slot.theirs is not None and not slot.gone:
                    slot.theirs = DELETED
                    self._mark(slot)
                self._fill_segments(slot)
                continue
            c = placed.get(i)
            pending = keep_unsaved and slot.dirty
            if pending and c is not None and c.id == slot.caption_id:
                # typing stays on its base version, so a change made elsewhere meanwhile is
                # found when it is saved instead of being overwritten
                if slot.theirs is not None:
                    slot.theirs = (c.text, versions.get(c.id, slot.theirs[1]))
                    self._mark(slot)
                self._fill_segments(slot)
                continue
            text = pending and slot.edit.text()
            slot.caption_id = c.id if c else None
            slot.saved_text = c.text if c else ""
            slot.saved_segment = c.segment if c else None
            slot.version = versions.get(c.id) if c else None
            if slot.theirs is not None:
                slot.theirs = None
                self._mark(slot)
            self._fill_segments(slot)
            if not pending and slot.edit.text() != slot.saved_text:
                slot.edit.setText(slot.saved_text)
                slot.edit.setCursorPosition(0)
            if not pending:
                slot.segment.setCurrentIndex(max(0, slot.segment.findData(slot.saved_segment)))
            elif text is not False:
                slot.edit.setText(text)
        self._check_all()

    def _typed_over_deleted(self, captions: list) -> set[int]:
        """Slots with unsaved typing whose caption is no longer among ``captions``."""
        there = {c.id for c in captions}
        return {i for i, s in enumerate(self.slots)
                if s.dirty and s.caption_id is not None and s.caption_id not in there}

    def clear(self) -> None:
        for slot in self.slots:
            slot.timer.stop()
            slot.caption_id, slot.saved_text, slot.saved_segment = None, "", None
            slot.version, slot.theirs = None, None
            slot.edit.clear()
            self._mark(slot)
        self._check_all()

    # ---- saving ------------------------------------------------------------------------
    def _save(self, slot: Slot_, *, force: bool = False) -> None:
        """Write the slot if it changed. A slot in conflict waits for ``force`` (keep mine),
        which writes over the version stored elsewhere, and only that version, or adds the
        text as a new caption when the stored one was deleted."""
        slot.timer.stop()
        if self.editor.clip is None or (slot.theirs is not None and not force):
            return
        if not slot.dirty and slot.theirs is None:
            return
        text, seg = slot.edit.text(), slot.segment.currentData()
        caption_id = None if slot.gone else slot.caption_id
        base = slot.theirs[1] if slot.theirs is not None else slot.version
        res = self.editor.save_caption(caption_id, text, seg, self.slots.index(slot),
                                       expected_version=base)
        if res.ok:
            slot.caption_id, slot.saved_text, slot.saved_segment = res.caption_id, text, seg
            slot.version, slot.theirs = res.version, None
        elif res.conflict is not None:  # on other refusals the slot is tried again on the next pause
            slot.theirs = self._stored(slot, res.conflict)
        self._mark(slot)

    def _stored(self, slot: Slot_, exc) -> tuple[str | None, int | None]:
        """(text, version) of the slot's caption as stored now; DELETED when it is gone."""
        if exc.deleted or exc.current_version is not None:  # the façade said what is stored
            return exc.current_text, exc.current_version
        p = self.editor.project
        version = p.caption_versions(self.editor.clip, p.user).get(slot.caption_id)
        text = next((c.text for c in p.caption_rows(clip=self.editor.clip, annotator=p.user)
                     if c.id == slot.caption_id), None)
        return DELETED if text is None or version is None else (text, version)

    def _take_theirs(self, slot: Slot_) -> None:
        if slot.theirs is None:
            return
        text, version = slot.theirs
        if slot.gone:  # the deletion stands: the slot is empty again
            slot.caption_id, text = None, ""
        slot.timer.stop()
        slot.edit.setText(text)
        slot.edit.setCursorPosition(0)
        slot.saved_text, slot.version, slot.theirs = text, version, None
        slot.saved_segment = slot.segment.currentData()  # the next re-read brings the stored one
        self._mark(slot)
        self._check_all()
        self.editor.changed.emit()  # re-read the clip: segment choice and versions as stored

    @Slot()
    def keep_mine(self) -> None:
        """Save every slot now, writing over captions changed elsewhere (Ctrl+S)."""
        for slot in self.slots:
            self._save(slot, force=True)

    @Slot()
    def take_theirs(self) -> None:
        """Replace the text of every slot in conflict with the stored one, or clear it when the
        caption was deleted elsewhere (Ctrl+R)."""
        for slot in self.slots:
            self._take_theirs(slot)

    @Slot()
    def flush(self) -> None:
        """Save every slot with unsaved text now (slots in conflict wait to be settled)."""
        for slot in self.slots:
            self._save(slot)

    @property
    def has_unsaved(self) -> bool:
        return any(s.dirty for s in self.slots)

    @property
    def conflicts(self) -> list[Slot_]:
        """Slots whose caption was changed or deleted elsewhere; their text is not saved."""
        return [s for s in self.slots if s.theirs is not None]

    def _mark(self, slot: Slot_) -> None:
        on = slot.theirs is not None
        if on:
            slot.bar_text.setText(_conflict_note(slot.theirs[0]))
            for button, tip in zip(slot.bar.findChildren(QToolButton), TIPS[slot.gone]):
                button.setToolTip(tip)
        slot.bar.setVisible(on)
        if bool(slot.edit.property("conflict")) != on:
            slot.edit.setProperty("conflict", on)
            slot.edit.style().unpolish(slot.edit)
            slot.edit.style().polish(slot.edit)
        self.conflictsChanged.emit(len(self.conflicts))

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

    def _undo_beyond(self, slot: Slot_) -> None:
        """Ctrl+Z in a field with no typing left to undo: save what is typed, then undo the
        last edit of the clip."""
        self._save(slot)
        self.editor.undo_stack.undo()

    def step_focus(self, step: int) -> None:
        """Put the cursor in the next (``step`` 1) or previous (-1) caption, wrapping round."""
        if not self.slots:
            return
        edits = [s.edit for s in self.slots]
        here = next((i for i, e in enumerate(edits) if e.hasFocus()), -1 if step > 0 else 0)
        e = edits[(here + step) % len(edits)]
        e.setFocus(Qt.FocusReason.ShortcutFocusReason)
        e.end(False)

    def focus_first_empty(self) -> None:
        for slot in self.slots:
            if not slot.edit.text():
                slot.edit.setFocus(Qt.FocusReason.ShortcutFocusReason)
                return
        if self.slots:
            self.slots[0].edit.setFocus(Qt.FocusReason.ShortcutFocusReason)


def _conflict_note(theirs: str | None) -> str:
    if theirs is None:
        return ("<b>Not saved: deleted elsewhere</b>. Ctrl+S keeps yours as a new caption, "
                "Ctrl+R lets it go.")
    quoted = theirs if len(theirs) <= THEIRS_SHOWN else theirs[:THEIRS_SHOWN - 1] + "…"
    return (f"<b>Not saved: changed elsewhere</b> to “{html.escape(quoted)}”. "
            "Ctrl+S keeps yours, Ctrl+R takes theirs.")
