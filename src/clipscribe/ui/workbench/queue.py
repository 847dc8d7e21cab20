"""The clip queue panel: filters above a lazily filled list of clips."""

from __future__ import annotations

from PySide6.QtCore import QEvent, QItemSelectionModel, Qt, Signal, Slot
from PySide6.QtWidgets import (
    QAbstractItemView, QComboBox, QFormLayout, QHeaderView, QLabel, QTableView, QVBoxLayout, QWidget,
)

from .queue_model import ClipIdRole, ClipQueueModel

ORDERS = [("clip number", "id"), ("least certain first", "least-certain")]
STATES = [("any", None), ("not finished", "unfinished"), ("untouched", "open"),
          ("submitted", "submitted"), ("skipped", "skipped"), ("unsure", "unsure")]


QUEUE_MIN_WIDTH = 280


class QueuePanel(QWidget):
    clipChosen = Signal(int)
    orderChosen = Signal(str)   # "id" or "least-certain"

    def __init__(self, model: ClipQueueModel, *, labels: list[str], groups: list[str],
                 people: list[str], parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("clipQueue")
        self.setMinimumWidth(QUEUE_MIN_WIDTH)  # other panels' text must not squeeze the names away
        self.model = model
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        form = QFormLayout()
        form.setContentsMargins(4, 0, 4, 0)
        self.state = self._combo(STATES)
        self.label = self._combo([("any", None)] + [(n, n) for n in labels])
        self.group = self._combo([("any", None)] + [(g, g) for g in groups])
        self.assignee = self._combo([("anyone", None)] + [(n, n) for n in people])
        form.addRow("Your state", self.state)
        form.addRow("Your label", self.label)
        form.addRow("Group", self.group)
        form.addRow("Assigned to", self.assignee)
        self.order = self._combo(ORDERS)
        self.order.setObjectName("queueOrder")
        self.order.setToolTip("Least certain first: the clips whose two most likely suggested "
                              "labels are closest come first (needs label suggestions)")
        form.addRow("Order", self.order)
        self.order.currentIndexChanged.connect(lambda _i: self.orderChosen.emit(self.order.currentData()))
        for box in (self.state, self.label, self.group, self.assignee):
            box.currentIndexChanged.connect(self._filters_changed)
        lay.addLayout(form)
        # a table, not a tree: with fixed row heights it places row 100 000 by arithmetic,
        # where a tree view lays out (and asks the model about) every row before it
        self.view = QTableView()
        self.view.setObjectName("queueView")
        self.view.setAccessibleName("Clip queue")
        self.view.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.view.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.view.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        self.view.setTabKeyNavigation(False)
        self.view.setShowGrid(False)
        self.view.setWordWrap(False)
        self.view.setCornerButtonEnabled(False)
        self.view.setAlternatingRowColors(True)
        self.view.setTextElideMode(Qt.TextElideMode.ElideRight)  # the file name's start shows
        rows = self.view.verticalHeader()
        rows.setVisible(False)
        rows.setSectionResizeMode(QHeaderView.ResizeMode.Fixed)
        rows.setDefaultSectionSize(self.view.fontMetrics().height() + 4)
        self.view.setModel(model)
        header = self.view.horizontalHeader()
        header.setHighlightSections(False)
        header.setDefaultAlignment(Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignVCenter)
        header.setStretchLastSection(False)
        # fixed widths: sizing columns to their contents would measure every loaded row
        header.setSectionResizeMode(0, QHeaderView.ResizeMode.Stretch)
        for c, width in ((1, 90), (2, 80), (3, 80)):
            header.setSectionResizeMode(c, QHeaderView.ResizeMode.Interactive)
            header.resizeSection(c, width)
        self.view.setColumnHidden(1, True)  # the group is in the tooltip and the filter
        lay.addWidget(self.view, 1)
        self.count = QLabel()
        self.count.setObjectName("queueCount")
        lay.addWidget(self.count)
        self.view.installEventFilter(self)
        self.view.selectionModel().currentRowChanged.connect(self._current_changed)
        model.modelReset.connect(self._show_count)
        self._show_count()

    def eventFilter(self, obj, e) -> bool:  # noqa: N802
        """Home and End in the list go to its first and last clip (elsewhere they are the
        first and last frame)."""
        if obj is self.view and e.type() in (QEvent.Type.ShortcutOverride, QEvent.Type.KeyPress) \
                and e.key() in (Qt.Key.Key_Home, Qt.Key.Key_End) \
                and not e.modifiers() & ~Qt.KeyboardModifier.KeypadModifier:
            e.accept()
            if e.type() == QEvent.Type.KeyPress and self.model.rowCount():
                row = 0 if e.key() == Qt.Key.Key_Home else self.model.reach_end()
                self.view.setCurrentIndex(self.model.index(row, 0))
            return True
        return super().eventFilter(obj, e)

    def _combo(self, items) -> QComboBox:
        box = QComboBox()
        for text, value in items:
            box.addItem(text, value)
        return box

    @Slot()
    def _filters_changed(self) -> None:
        self.model.set_filters(state=self.state.currentData(), label=self.label.currentData(),
                               group=self.group.currentData(), assignee=self.assignee.currentData())

    @Slot()
    def _show_count(self) -> None:
        n = self.model.total
        self.count.setText(f"{n} clip{'s' if n != 1 else ''}")

    def _current_changed(self, current, _previous) -> None:
        if current.isValid():
            self.clipChosen.emit(current.data(ClipIdRole))

    def select_clip(self, clip_id: int) -> bool:
        """Make ``clip_id`` the current row without emitting ``clipChosen``."""
        row = self.model.row_of(clip_id)
        if row is None:
            return False
        sm = self.view.selectionModel()
        sm.blockSignals(True)
        idx = self.model.index(row, 0)
        sm.setCurrentIndex(idx, QItemSelectionModel.SelectionFlag.ClearAndSelect
                           | QItemSelectionModel.SelectionFlag.Rows)
        sm.blockSignals(False)
        self.view.viewport().update()
        self.view.scrollTo(idx)
        return True

    def neighbour(self, step: int) -> int | None:
        """Clip id ``step`` rows from the current one, fetching more rows when needed."""
        cur = self.view.currentIndex()
        row = (cur.row() if cur.isValid() else -1) + step
        if row >= self.model.rowCount() and self.model.canFetchMore():
            self.model.fetchMore()
        if 0 <= row < self.model.rowCount():
            return self.model.row(row).clip.id
        return None
