"""The Settle panel: gold label (one click on an annotator's label, or any label), gold segments
(copy an annotator's track, or edit the table) and a comment to the annotators."""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QAbstractItemView, QCheckBox, QComboBox, QGridLayout, QHBoxLayout, QHeaderView, QLabel, QPlainTextEdit,
    QPushButton, QTableView, QVBoxLayout, QWidget,
)

from .gold_segments import GoldSegmentModel


def heading(text: str) -> QLabel:
    lab = QLabel(text)
    lab.setObjectName("heading")
    return lab


class SettlePanel(QWidget):
    labelChosen = Signal(object)        # label name, or None to unsettle
    copyTrack = Signal(str)             # annotator whose segments become gold
    addSegment = Signal()
    removeSegment = Signal(int)         # row of the gold segment table
    commentSent = Signal(str, object)   # text, addressee or None
    checkClip = Signal(bool)            # make the clip a check clip (True) or an ordinary one

    def __init__(self, labels: list[str], segments: GoldSegmentModel, parent=None) -> None:
        super().__init__(parent)
        self.setObjectName("settlePanel")
        lay = QVBoxLayout(self)
        lay.setContentsMargins(8, 4, 8, 8)
        lay.addWidget(heading("Gold label"))
        self.gold_now = QLabel()
        self.gold_now.setObjectName("goldNow")
        lay.addWidget(self.gold_now)
        self.votes = QGridLayout()
        lay.addLayout(self.votes)
        row = QHBoxLayout()
        self.any_label = QComboBox()
        self.any_label.addItems(labels)
        self.any_label.setAccessibleName("Any label")
        self.any_label.setPlaceholderText("choose a label")
        settle = self.settle_button = QPushButton("Settle")
        settle.setToolTip("Settle the label chosen in the list")
        settle.clicked.connect(lambda: self.any_label.currentIndex() >= 0 and
                               self.labelChosen.emit(self.any_label.currentText()))
        self.any_label.currentIndexChanged.connect(lambda i: settle.setEnabled(i >= 0))
        clear = QPushButton("Unsettle")
        clear.clicked.connect(lambda: self.labelChosen.emit(None))
        row.addWidget(self.any_label, 1)
        row.addWidget(settle)
        row.addWidget(clear)
        lay.addLayout(row)
        self.check_box = QCheckBox("Check clip: its gold label is the known answer")
        self.check_box.setObjectName("checkClip")
        self.check_box.setToolTip(
            "Check clips are mixed into every annotator's queue at the check rate and score "
            "each person against the known answer (accuracy and kappa on the board). "
            "Annotators are not told which clips they are.")
        self.check_box.clicked.connect(self.checkClip)
        lay.addWidget(self.check_box)

        lay.addWidget(heading("Gold segments"))
        row = QHBoxLayout()
        self.track_of = QComboBox()
        self.track_of.setAccessibleName("Annotator whose segments to copy")
        copy = QPushButton("Copy to gold")
        copy.setToolTip("Replace the gold segments with this annotator's labelled segments "
                        "(unlabelled ones are not copied)")
        copy.clicked.connect(lambda: self.track_of.currentText() and
                             self.copyTrack.emit(self.track_of.currentText()))
        row.addWidget(self.track_of, 1)
        row.addWidget(copy)
        lay.addLayout(row)
        self.table = QTableView()
        self.table.setObjectName("goldSegments")
        self.table.setModel(segments)
        self.table.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.table.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.table.verticalHeader().setVisible(False)
        self.table.setMinimumHeight(96)
        lay.addWidget(self.table, 1)
        row = QHBoxLayout()
        add = QPushButton("Add at playhead")
        add.clicked.connect(self.addSegment)
        rem = QPushButton("Remove")
        rem.clicked.connect(lambda: self.table.currentIndex().isValid() and
                            self.removeSegment.emit(self.table.currentIndex().row()))
        row.addWidget(add)
        row.addWidget(rem)
        row.addStretch(1)
        lay.addLayout(row)

        lay.addWidget(heading("Comment for the annotators"))
        self.to = QComboBox()
        self.to.setAccessibleName("Comment addressed to")
        lay.addWidget(self.to)
        self.text = QPlainTextEdit()
        self.text.setPlaceholderText("What should they do differently? (Ctrl+Return sends)")
        self.text.setFixedHeight(64)
        lay.addWidget(self.text)
        send = QPushButton("Send comment")
        send.setShortcut("Ctrl+Return")
        send.clicked.connect(self._send)
        lay.addWidget(send)
        self.history = QLabel()
        self.history.setObjectName("commentHistory")
        self.history.setWordWrap(True)
        self.history.setTextFormat(Qt.TextFormat.PlainText)
        lay.addWidget(self.history)
        self._vote_buttons: list[QPushButton] = []
        self._vote_odds: list[QLabel] = []   # the posterior beside each vote button

    def show_clip(self, labels: dict[str, str], gold: str | None, annotators: list[str],
                  comments: list, skipped: dict[str, str] | None = None,
                  unsure: dict[str, str] | None = None,
                  posterior: dict[str, float] | None = None) -> None:
        """``skipped``: annotator -> reason, shown on their vote button (a skip is no vote);
        ``unsure``: annotator -> note of those who flagged the clip unsure (their vote counts);
        ``posterior``: label -> inferred probability, shown beside each annotator's answer."""
        skipped, unsure, posterior = skipped or {}, unsure or {}, posterior or {}
        self.gold_now.setText(f"Settled: {gold}" if gold else "Not settled yet")
        # the list shows this clip's gold, or nothing chosen: never a label left from another
        # clip or decision, which Settle would then write over the gold
        self.any_label.setCurrentIndex(self.any_label.findText(gold) if gold else -1)
        # Alt+1…9 puts the focus on the vote button it clicks; that button is replaced here,
        # and the focus must stay in the desk (its keys, such as Alt+Down, work from there)
        focused = next((i for i, b in enumerate(self._vote_buttons) if b.hasFocus()), None)
        for b in self._vote_buttons + self._vote_odds:
            b.hide()  # at once: until deleted, a shown old button would share its Alt key
            b.deleteLater()
        self._vote_buttons, self._vote_odds = [], []
        for i, name in enumerate(annotators):
            lab = labels.get(name)
            said = f"skipped ({skipped[name]})" if name in skipped else lab or '—'
            if name in unsure:
                said += f" (unsure: {unsure[name]})" if unsure[name] else " (unsure)"
            b = QPushButton(f"&{i + 1}  {name}: {said}" if i < 9 else f"{name}: {said}")
            b.setToolTip(f"Settle “{lab}” (Alt+{i + 1})" if lab else
                         f"{name} skipped this clip: {skipped[name]}" if name in skipped else
                         f"{name} gave no label")
            b.setEnabled(lab is not None)
            b.setCheckable(True)
            b.setChecked(lab is not None and lab == gold)
            b.clicked.connect(lambda _=False, l=lab: self.labelChosen.emit(l))
            self.votes.addWidget(b, i, 0)
            b.show()  # now, so its Alt key works before the next pass of the event loop
            self._vote_buttons.append(b)
            odds = QLabel(f"{posterior[lab]:.2f}" if lab in posterior else "")
            odds.setObjectName("votePosterior")
            odds.setToolTip(f"inferred probability that the true label is “{lab}” "
                            "(Dawid-Skene, from every annotator's estimated confusion)"
                            if lab in posterior else "")
            self.votes.addWidget(odds, i, 1)
            odds.show()
            self._vote_odds.append(odds)
        if focused is not None:
            live = [b for b in self._vote_buttons if b.isEnabled()]
            target = (self._vote_buttons[focused] if focused < len(self._vote_buttons)
                      and self._vote_buttons[focused].isEnabled() else live[0] if live
                      else self.any_label)
            target.show()  # now, not on the next pass of the event loop: hidden, it takes no focus
            target.setFocus(Qt.FocusReason.OtherFocusReason)
        self.track_of.clear()
        self.track_of.addItems(annotators)
        self.to.clear()
        self.to.addItem("To everyone on this clip", None)
        for name in annotators:
            self.to.addItem(f"To {name}", name)
        self.history.setText("\n".join(f"{lead} → {to or 'everyone'}: {text}"
                                       for _, to, lead, text in comments[-4:]))

    def show_check(self, answer: str | None, gold: str | None) -> None:
        """Whether the clip is a check clip (``answer``: its known answer) and whether it can
        become one (it needs a gold label)."""
        self.check_box.setChecked(answer is not None)
        self.check_box.setEnabled(answer is not None or gold is not None)
        self.check_box.setText(f"Check clip, known answer “{answer}”" if answer is not None
                               else "Check clip: its gold label is the known answer")

    def _send(self) -> None:
        text = self.text.toPlainText().strip()
        if text:
            self.commentSent.emit(text, self.to.currentData())

    def comment_sent(self) -> None:
        self.text.clear()
