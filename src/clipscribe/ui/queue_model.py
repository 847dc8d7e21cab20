"""The clip queue model: a lazy table over ``Project.queue_rows`` pages.

Only the rows scrolled into view are fetched (``canFetchMore``/``fetchMore``), so a project with
100k clips opens with one count query and one page.
"""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

from ..project_parts.workbench import QueueRow

PAGE = 200
COLUMNS = ("Clip", "Group", "Your label", "Your state")
ClipIdRole = Qt.ItemDataRole.UserRole + 1
Index = QModelIndex | QPersistentModelIndex


class ClipQueueModel(QAbstractTableModel):
    def __init__(self, project, parent=None) -> None:
        super().__init__(parent)
        self.project = project
        self.filters: dict[str, Any] = {}
        self._rows: list[QueueRow] = []
        self._total = 0
        self.reload()

    # ---- loading -----------------------------------------------------------------------
    def set_filters(self, **filters: Any) -> None:
        self.filters = {k: v for k, v in filters.items() if v}
        self.reload()

    def reload(self) -> None:
        self.beginResetModel()
        self._total = self.project.queue_count(self.project.user, **self.filters)
        self._rows = self._page(0)
        self.endResetModel()

    def _page(self, offset: int) -> list[QueueRow]:
        return self.project.queue_rows(self.project.user, offset=offset, limit=PAGE, **self.filters)

    @property
    def total(self) -> int:
        return self._total

    def canFetchMore(self, parent: Index = QModelIndex()) -> bool:  # noqa: N802
        return not parent.isValid() and len(self._rows) < self._total

    def fetchMore(self, parent: Index = QModelIndex()) -> None:  # noqa: N802
        if not parent.isValid():
            self._fetch(PAGE)

    def _fetch(self, count: int) -> None:
        rows = self.project.queue_rows(self.project.user, offset=len(self._rows), limit=count,
                                       **self.filters)[: self._total - len(self._rows)]
        if not rows:
            self._total = len(self._rows)  # clips vanished meanwhile
            return
        first = len(self._rows)
        self.beginInsertRows(QModelIndex(), first, first + len(rows) - 1)
        self._rows.extend(rows)
        self.endInsertRows()

    def row_of(self, clip_id: int) -> int | None:
        """Row of a clip under the current filters, fetching pages up to it."""
        pos = self.project.queue_index(clip_id, self.project.user, **self.filters)
        if pos is None:
            return None
        if pos >= len(self._rows) and self.canFetchMore():
            self._fetch(pos + PAGE - len(self._rows))  # one query up to the row, not page by page
        return pos if pos < len(self._rows) else None

    def refresh_clip(self, clip_id: int) -> None:
        """Re-read one clip's row after an edit (state or label changed)."""
        for r, row in enumerate(self._rows):
            if row.clip.id == clip_id:
                fresh = self.project.queue_rows(self.project.user, offset=r, limit=1, **self.filters)
                if fresh and fresh[0].clip.id == clip_id:
                    self._rows[r] = fresh[0]
                    self.dataChanged.emit(self.index(r, 0), self.index(r, len(COLUMNS) - 1))
                return

    def row(self, r: int) -> QueueRow:
        return self._rows[r]

    # ---- the Qt interface --------------------------------------------------------------
    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._rows)

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(self, section: int, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if (orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.DisplayRole
                and 0 <= section < len(COLUMNS)):
            return COLUMNS[section]
        return None

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid() or not 0 <= index.row() < len(self._rows):
            return None
        row = self._rows[index.row()]
        col = index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return (f"{row.clip.id}  {row.clip.path}", row.clip.group or "",
                    row.my_label or "", row.my_state)[col]
        if role == ClipIdRole:
            return row.clip.id
        if role == Qt.ItemDataRole.ToolTipRole:
            c = row.clip
            return (f"{c.path}\n{c.frame_count} frames at {c.fps:g} fps, {c.width}×{c.height}\n"
                    f"group {c.group or '–'}; clip state {c.state}")
        return None
