"""The segments of the clip on screen (one annotator's), as a list model for the timeline."""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QAbstractListModel, QModelIndex, QPersistentModelIndex, Qt

from ...types import SegmentInfo
from ..segment_look import label_text

SegmentRole = Qt.ItemDataRole.UserRole + 1
Index = QModelIndex | QPersistentModelIndex


class SegmentModel(QAbstractListModel):
    """Rows are :class:`SegmentInfo` in start order; refreshed from the project after edits."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self._rows: list[SegmentInfo] = []

    def set_segments(self, rows: list[SegmentInfo]) -> None:
        self.beginResetModel()
        self._rows = sorted(rows, key=lambda g: (g.start, g.id))
        self.endResetModel()

    def segments(self) -> list[SegmentInfo]:
        return list(self._rows)

    def by_id(self, segment_id: int | None) -> SegmentInfo | None:
        return next((g for g in self._rows if g.id == segment_id), None)

    def at_frame(self, frame: int) -> SegmentInfo | None:
        return next((g for g in self._rows if g.start <= frame < g.end), None)

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._rows)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid() or not 0 <= index.row() < len(self._rows):
            return None
        g = self._rows[index.row()]
        if role == Qt.ItemDataRole.DisplayRole:
            return f"{label_text(g.label)}: frames {g.start}–{g.end - 1}"
        if role == SegmentRole:
            return g
        return None
