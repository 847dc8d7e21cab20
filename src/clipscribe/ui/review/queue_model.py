"""The disputed-clip queue as a table model over :class:`DisputedClip` rows from the project."""

from __future__ import annotations

import math
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

from ...types import DisputedClip

ClipIdRole = Qt.ItemDataRole.UserRole + 1
SortRole = Qt.ItemDataRole.UserRole + 2
Index = QModelIndex | QPersistentModelIndex

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
    """Read-only rows, most disputed first; ``set_rows`` replaces them all."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self._rows: list[DisputedClip] = []

    def set_rows(self, rows: list[DisputedClip]) -> None:
        self.beginResetModel()
        self._rows = list(rows)
        self.endResetModel()

    def row(self, i: int) -> DisputedClip:
        return self._rows[i]

    def row_of(self, clip: int) -> int | None:
        return next((i for i, r in enumerate(self._rows) if r.clip == clip), None)

    def clips(self) -> list[int]:
        return [r.clip for r in self._rows]

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self._rows)

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
        if not index.isValid() or not 0 <= index.row() < len(self._rows):
            return None
        r, col = self._rows[index.row()], COLUMNS[index.column()]
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
