"""The gold segments of the clip under review as an editable table (label, first frame, last
frame). Frames are shown as everywhere on screen: first and last frame both included ("25–105"
on the tracks is start 25, last 105); the project stores the end exclusive (106).

Edits compute the whole new list and hand it to ``writer`` (the desk's editor, which calls
``Project.set_gold_segments``); a refused edit leaves the table as the project has it.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

Index = QModelIndex | QPersistentModelIndex
Seg = tuple[str, int, int]
HEADERS = ("Label", "First frame", "Last frame")


class GoldSegmentModel(QAbstractTableModel):
    def __init__(self, writer: Callable[[list[Seg]], bool] | None = None, parent=None) -> None:
        super().__init__(parent)
        self.writer = writer or (lambda _segs: False)
        self.rows: list[Seg] = []
        self.labels: list[str] = []

    def load(self, rows: list[Seg], labels: list[str]) -> None:
        self.beginResetModel()
        self.rows, self.labels = sorted(rows, key=lambda g: (g[1], g[2])), list(labels)
        self.endResetModel()

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self.rows)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else 3

    def headerData(self, section: int, orientation, role: int = Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if role == Qt.ItemDataRole.DisplayRole and orientation == Qt.Orientation.Horizontal \
                and 0 <= section < 3:
            return HEADERS[section]
        return None

    def flags(self, index: Index) -> Qt.ItemFlag:
        if not index.isValid():
            return Qt.ItemFlag.NoItemFlags
        return Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable | Qt.ItemFlag.ItemIsEditable

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid() or not 0 <= index.row() < len(self.rows):
            return None
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.EditRole):
            v = self.rows[index.row()][index.column()]
            return v - 1 if index.column() == 2 else v  # the last frame, included
        return None

    def setData(self, index: Index, value: Any, role: int = Qt.ItemDataRole.EditRole) -> bool:  # noqa: N802
        if not index.isValid() or role != Qt.ItemDataRole.EditRole:
            return False
        row = list(self.rows[index.row()])
        if index.column() == 0:
            if str(value) not in self.labels:
                return False
            row[0] = str(value)
        else:
            try:
                row[index.column()] = int(value) + (1 if index.column() == 2 else 0)
            except (TypeError, ValueError):
                return False
        rows = list(self.rows)
        rows[index.row()] = tuple(row)
        return self._write(rows)

    def add(self, seg: Seg) -> bool:
        return self._write(self.rows + [seg])

    def replace(self, rows: list[Seg]) -> bool:
        """The whole gold list at once (a dragged edge on the tracks)."""
        return self._write(list(rows))

    def remove(self, row: int) -> bool:
        if not 0 <= row < len(self.rows):
            return False
        return self._write(self.rows[:row] + self.rows[row + 1:])

    def _write(self, rows: list[Seg]) -> bool:
        if not self.writer(rows):
            return False
        self.load(rows, self.labels)
        return True
