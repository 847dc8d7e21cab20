"""The disputed-clip queue as a lazy table model: the order of every clip at once, the rows of
:class:`DisputedClip` a page at a time (like the work queue), so 100k disputed clips cost one
page of rows until the lead scrolls."""

from __future__ import annotations

import math
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

from ...types import DisputedClip, DisputedOrder

ClipIdRole = Qt.ItemDataRole.UserRole + 1
SortRole = Qt.ItemDataRole.UserRole + 2
Index = QModelIndex | QPersistentModelIndex
PAGE = 200

COLUMNS = ("Clip #", "File", "Disagree", "Inferred", "Seg F1", "BLEU", "Gold", "Labels")
TIPS = {
    "Clip #": "the clip's number (rows are ordered most disputed first)",
    "Disagree": "label disagreement: 1 − share of the most common label among the annotators (0: all agree)",
    "Seg F1": "mean F1 over annotator pairs of one-to-one segment matches at IoU 0.5",
    "BLEU": "mean leave-one-out sentence BLEU of the clip's captions (0–100)",
    "Gold": "the label the lead settled, if any",
    "Inferred": "the most probable true label given every annotator's estimated confusion "
                "(Dawid-Skene), with its posterior probability (1: certain)",
}


def _num(v: float, fmt: str) -> str:
    return "–" if v is None or math.isnan(v) else fmt.format(v)


class DisputedClipsModel(QAbstractTableModel):
    """Read-only rows in the queue's order, read a page at a time.

    :meth:`set_order` gives the model a :class:`DisputedOrder` (every clip id, cheap) and its
    first page; further pages are read from ``project`` (:meth:`Project.review_queue` with the
    order) only when the view scrolls to them (``canFetchMore`` / ``fetchMore``) or a row is
    asked for. :meth:`set_rows` takes a ready list instead (all rows at once)."""

    def __init__(self, parent=None, project=None) -> None:
        super().__init__(parent)
        self.project = project
        self.order = DisputedOrder((), ())
        self.report: Any = None
        self._pages: dict[int, dict[int, DisputedClip]] = {}  # page -> {clip: row}, once read
        self._count = 0  # rows the view has been given so far
        self._at: dict[int, int] | None = None  # clip -> position, made on first use

    def set_rows(self, rows: list[DisputedClip]) -> None:
        rows = list(rows)
        order = DisputedOrder(tuple(r.clip for r in rows), tuple(r.rank for r in rows))
        pages = {k // PAGE: {r.clip: r for r in rows[k:k + PAGE]}
                 for k in range(0, len(rows), PAGE)}
        self._reset(order, None, pages, len(rows))

    def set_order(self, order: DisputedOrder, first: list[DisputedClip], report: Any = None) -> None:
        """Show ``order``; ``first`` is its first page of rows (read with ``report``)."""
        self._reset(order, report, {0: {r.clip: r for r in first}}, min(len(order), PAGE))

    def _reset(self, order: DisputedOrder, report: Any, pages: dict, count: int) -> None:
        self.beginResetModel()
        self.order, self.report, self._pages, self._count = order, report, pages, count
        self._at = None
        self.endResetModel()

    @property
    def total(self) -> int:
        """Rows in the order (the view may have been given fewer so far)."""
        return len(self.order)

    @property
    def pages_read(self) -> int:
        return len(self._pages)

    def _page(self, k: int) -> dict[int, DisputedClip]:
        rows = self._pages.get(k)
        if rows is None:
            got = self.project.review_queue(order=self.order, report=self.report,
                                            offset=k * PAGE, limit=PAGE)
            rows = self._pages[k] = {r.clip: r for r in got}
        return rows

    def get(self, i: int) -> DisputedClip | None:
        """Row ``i`` (its page read on first use), or None when not there."""
        if not 0 <= i < self._count:
            return None
        return self._page(i // PAGE).get(self.order.clips[i])  # None: deleted meanwhile

    def canFetchMore(self, parent: Index = QModelIndex()) -> bool:  # noqa: N802
        return not parent.isValid() and self._count < self.total

    def fetchMore(self, parent: Index = QModelIndex()) -> None:  # noqa: N802
        if not parent.isValid() and self.canFetchMore():
            self._grow(min(self.total, self._count + PAGE))

    def _grow(self, count: int) -> None:
        self.beginInsertRows(QModelIndex(), self._count, count - 1)
        self._count = count
        self.endInsertRows()

    def row(self, i: int) -> DisputedClip:
        r = self.get(i)
        if r is None:
            raise IndexError(f"disputed row {i} is not there")
        return r

    def clip_at(self, i: int) -> int:
        """The clip of row ``i`` of the whole order (no page read)."""
        return self.order.clips[i]

    def row_of(self, clip: int) -> int | None:
        """Position of ``clip`` in the order; rows up to it are given to the view."""
        if self._at is None:
            self._at = {c: i for i, c in enumerate(self.order.clips)}
        i = self._at.get(clip)
        if i is not None and i >= self._count:
            self._grow(min(self.total, (i // PAGE + 1) * PAGE))
        return i

    def clips(self) -> list[int]:
        return list(self.order.clips)

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else self._count

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(COLUMNS)

    def headerData(self, section: int, orientation, role: int = Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if orientation != Qt.Orientation.Horizontal or not 0 <= section < len(COLUMNS):
            return None
        if role == Qt.ItemDataRole.DisplayRole:
            return COLUMNS[section]
        if role == Qt.ItemDataRole.ToolTipRole:
            return TIPS.get(COLUMNS[section])
        return None

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        r = self.get(index.row()) if index.isValid() else None
        if r is None:
            return None
        col = COLUMNS[index.column()]
        if role == ClipIdRole:
            return r.clip
        if role == Qt.ItemDataRole.DisplayRole:
            return {
                "Clip #": str(r.clip), "File": r.path,
                "Labels": (", ".join(sorted(set(r.labels.values()))) or "–")
                + (f" · {len(r.skipped)} skipped" if r.skipped else "")
                + (f" · {len(r.unsure)} unsure" if r.unsure else ""),
                "Disagree": _num(r.label_disagreement, "{:.2f}"),
                "Seg F1": _num(r.segment_f1, "{:.2f}"),
                "BLEU": _num(r.caption_bleu, "{:.1f}"),
                "Gold": r.gold_label or "",
                "Inferred": f"{r.inferred_label} {r.certainty:.2f}" if r.inferred_label else "–",
            }[col]
        if role == Qt.ItemDataRole.ToolTipRole:
            who = "\n".join([f"{a}: {lab}" for a, lab in sorted(r.labels.items())]
                            + [f"{a}: skipped ({why})" for a, why in sorted(r.skipped.items())]
                            + [f"{a}: unsure" + (f" ({note})" if note else "")
                               for a, note in sorted(r.unsure.items())])
            return f"clip {r.clip} ({r.group or 'no group'})\n{who or 'no labels'}"
        if role == Qt.ItemDataRole.TextAlignmentRole and col in ("Clip #", "Disagree", "Seg F1",
                                                                 "BLEU"):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        return None
