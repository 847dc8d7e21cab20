"""The clip queue model: a lazy, sparse table over ``Project.queue_rows`` pages.

Rows are read one page at a time and only when needed, so a project with 100k clips opens with
one count query and one page. Scrolling down adds rows page by page (``canFetchMore`` /
``fetchMore``); jumping to a clip far down (:meth:`ClipQueueModel.row_of`) adds every row up to
it at once but reads only the page holding it: the pages skipped over stay unread until they
are scrolled into view (``data`` reads a missing page on first use).
"""

from __future__ import annotations

from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

from ...types import QueueRow, clip_state_word

PAGE = 200
COLUMNS = ("Clip", "Group", "Your label", "Your state")
ClipIdRole = Qt.ItemDataRole.UserRole + 1
Index = QModelIndex | QPersistentModelIndex


class ClipQueueModel(QAbstractTableModel):
    def __init__(self, project, parent=None) -> None:
        super().__init__(parent)
        self.project = project
        self.filters: dict[str, Any] = {}
        #: clip ids in "least certain first" order (None: clip number order); clips the order
        #: does not name follow, in clip number order
        self.order: list[int] | None = None
        self._pages: dict[int, list[QueueRow]] = {}  # page number -> its rows, once read
        self._count = 0   # rows the view has been given so far
        self._total = 0   # rows under the filters
        self.reload()

    # ---- loading -----------------------------------------------------------------------
    def set_filters(self, **filters: Any) -> None:
        self.filters = {k: v for k, v in filters.items() if v}
        self.reload()

    def set_order(self, order: list[int] | None) -> None:
        self.order = order
        self.reload()

    def reload(self) -> None:
        self.beginResetModel()
        self._pages = {}
        if self.order is not None:  # every row read once (one query), then put in that order
            rank = {c: k for k, c in enumerate(self.order)}
            rows = sorted(self.project.queue_rows(self.project.user, **self.filters),
                          key=lambda r: (rank.get(r.clip.id, len(rank)), r.clip.id))
            self._pages = {k: rows[k * PAGE:(k + 1) * PAGE] for k in range(len(rows) // PAGE + 1)}
            self._total = len(rows)
            self._count = min(self._total, PAGE)
            self.endResetModel()
            return
        self._total = self.project.queue_count(self.project.user, **self.filters)
        self._count = min(self._total, PAGE)
        if self._count:
            self._page(0)
        self.endResetModel()

    def _page(self, k: int) -> list[QueueRow]:
        """Rows of page ``k``, read on first use."""
        rows = self._pages.get(k)
        if rows is None:
            rows = self._pages[k] = self.project.queue_rows(
                self.project.user, offset=k * PAGE, limit=PAGE, **self.filters)
        return rows

    def _get(self, r: int) -> QueueRow | None:
        if not 0 <= r < self._count:
            return None
        rows = self._page(r // PAGE)
        return rows[r % PAGE] if r % PAGE < len(rows) else None  # None: clips vanished meanwhile

    @property
    def total(self) -> int:
        return self._total

    @property
    def pages_read(self) -> int:
        """How many pages were read from the project (for tests and benchmarks)."""
        return len(self._pages)

    def canFetchMore(self, parent: Index = QModelIndex()) -> bool:  # noqa: N802
        return not parent.isValid() and self._count < self._total

    def fetchMore(self, parent: Index = QModelIndex()) -> None:  # noqa: N802
        if not parent.isValid() and self.canFetchMore():
            self._grow(min(self._total, self._count + PAGE))

    def _grow(self, count: int) -> None:
        """Give the view rows up to ``count``, reading only the page of the last one."""
        self.beginInsertRows(QModelIndex(), self._count, count - 1)
        self._count = count
        self.endInsertRows()
        self._page((count - 1) // PAGE)

    def row_of(self, clip_id: int) -> int | None:
        """Row of a clip under the current filters; rows up to it are added, but only the
        page holding it is read."""
        if self.order is not None:
            pos = next((k * PAGE + i for k, rows in self._pages.items()
                        for i, r in enumerate(rows) if r.clip.id == clip_id), None)
        else:
            pos = self.project.queue_index(clip_id, self.project.user, **self.filters)
        if pos is None or pos >= self._total:
            return None
        if pos >= self._count:
            self._grow(min(self._total, (pos // PAGE + 1) * PAGE))
        row = self._get(pos)
        return pos if row is not None and row.clip.id == clip_id else None

    def refresh_clip(self, clip_id: int) -> None:
        """Re-read one clip's row after an edit (state or label changed)."""
        for k, rows in self._pages.items():
            for i, row in enumerate(rows):
                if row.clip.id == clip_id:
                    r = k * PAGE + i
                    fresh = self.project.queue_row(clip_id, self.project.user, **self.filters)
                    if fresh is not None:  # (a clip that left the filter stays until a reload)
                        rows[i] = fresh
                        self.dataChanged.emit(self.index(r, 0), self.index(r, len(COLUMNS) - 1))
                    return

    def reach_end(self) -> int:
        """Give the view every row (reading only the last page); the last row's number."""
        if self._count < self._total:
            self._grow(self._total)
        return self._count - 1

    def row(self, r: int) -> QueueRow:
        row = self._get(r)
        if row is None:
            raise IndexError(f"queue row {r} is not there")
        return row

    # ---- the Qt interface --------------------------------------------------------------
    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else self._count

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(self, section: int, orientation, role=Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if (orientation == Qt.Orientation.Horizontal and role == Qt.ItemDataRole.DisplayRole
                and 0 <= section < len(COLUMNS)):
            return COLUMNS[section]
        return None

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        row = self._get(index.row()) if index.isValid() else None
        if row is None:
            return None
        col = index.column()
        if role == Qt.ItemDataRole.DisplayRole:
            return (f"{row.clip.path.rsplit('/', 1)[-1]}  #{row.clip.id}", row.clip.group or "",
                    row.my_label or "", row.my_state)[col]
        if role == ClipIdRole:
            return row.clip.id
        if role == Qt.ItemDataRole.ToolTipRole:
            c = row.clip
            folder = c.path.rsplit("/", 1)[0] if "/" in c.path else "(the media folder itself)"
            return (f"clip {c.id}: {c.path.rsplit('/', 1)[-1]}\nfolder {folder}\n"
                    f"{c.frame_count} frames at {c.fps:g} fps, {c.width}×{c.height}\n"
                    f"group {c.group or '–'}; clip state {clip_state_word(c.state)}")
        return None
