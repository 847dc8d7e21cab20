"""Captions side by side: one column per annotator plus the gold reference set.

A tick on an annotator's caption accepts it into gold (unticking rejects it again); editing an
annotator's caption puts the edited text into gold with that caption as its source (the
annotator's own text is never changed); editing a gold cell changes the gold text, and a blank
gold cell removes it. The model only computes the new gold list and hands it to ``writer``
(the desk's editor), then shows what the project says.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt

from ...types import ClipComparison

Index = QModelIndex | QPersistentModelIndex
GoldItem = tuple[str, int | None]
GOLD = "Gold references"


class CaptionGridModel(QAbstractTableModel):
    def __init__(self, writer: Callable[[list[GoldItem]], bool] | None = None,
                 parent=None) -> None:
        super().__init__(parent)
        self.writer = writer or (lambda _items: False)
        self.names: list[str] = []
        self.cols: list[list[Any]] = []       # per annotator: CaptionInfo list
        self.gold: list[GoldItem] = []
        self.bleu: dict[int, float] = {}      # caption id -> leave-one-out BLEU
        self.flagged: dict[int, str] = {}     # caption id -> why it was flagged

    def load(self, cmp: ClipComparison | None, *, bleu: dict | None = None,
             flags: dict | None = None) -> None:
        self.beginResetModel()
        if cmp is None:
            self.names, self.cols, self.gold = [], [], []
        else:
            self.names = [a for a in cmp.annotators if cmp.captions.get(a)]
            self.cols = [sorted(cmp.captions[a], key=lambda c: c.position) for a in self.names]
            self.gold = [(g.text, g.source) for g in cmp.gold_captions]
        self.bleu, self.flagged = dict(bleu or {}), dict(flags or {})
        self.endResetModel()

    # ---- shape ---------------------------------------------------------------------------
    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        if parent.isValid():
            return 0
        return max([len(c) for c in self.cols] + [len(self.gold) + 1, 1])

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self.names) + 1

    def headerData(self, section: int, orientation, role: int = Qt.ItemDataRole.DisplayRole):  # noqa: N802
        if role != Qt.ItemDataRole.DisplayRole:
            return None
        if orientation == Qt.Orientation.Vertical:
            return str(section + 1)
        if 0 <= section < len(self.names):
            return self.names[section]
        return GOLD if section == len(self.names) else None

    def caption_at(self, row: int, col: int):
        if col < len(self.cols) and row < len(self.cols[col]):
            return self.cols[col][row]
        return None

    def _gold_index(self, caption_id: int) -> int | None:
        return next((i for i, (_, src) in enumerate(self.gold) if src == caption_id), None)

    # ---- reading -------------------------------------------------------------------------
    def flags(self, index: Index) -> Qt.ItemFlag:
        if not index.isValid():
            return Qt.ItemFlag.NoItemFlags
        f = Qt.ItemFlag.ItemIsEnabled | Qt.ItemFlag.ItemIsSelectable
        if index.column() == len(self.names):
            if index.row() <= len(self.gold):
                f |= Qt.ItemFlag.ItemIsEditable
            return f
        if self.caption_at(index.row(), index.column()) is not None:
            f |= Qt.ItemFlag.ItemIsUserCheckable | Qt.ItemFlag.ItemIsEditable
        return f

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid():
            return None
        r, c = index.row(), index.column()
        if c == len(self.names):
            if r >= len(self.gold):
                if role == Qt.ItemDataRole.DisplayRole and r == len(self.gold):
                    return "(type here to add a gold caption)"
                return None
            text, src = self.gold[r]
            if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.EditRole):
                return text
            if role == Qt.ItemDataRole.ToolTipRole:
                return "written by the lead" if src is None else f"from caption {src}"
            return None
        cap = self.caption_at(r, c)
        if cap is None:
            return None
        g = self._gold_index(cap.id)
        if role == Qt.ItemDataRole.DisplayRole:
            mark = " ⚑" if cap.id in self.flagged else ""
            return cap.text + mark
        if role == Qt.ItemDataRole.EditRole:
            return self.gold[g][0] if g is not None else cap.text
        if role == Qt.ItemDataRole.CheckStateRole:
            return Qt.CheckState.Checked if g is not None else Qt.CheckState.Unchecked
        if role == Qt.ItemDataRole.ToolTipRole:
            bleu = self.bleu.get(cap.id)
            lines = [f"{self.names[c]}, caption {cap.position + 1}",
                     "leave-one-out BLEU: " + ("–" if bleu is None else f"{bleu:.1f}")]
            if cap.id in self.flagged:
                lines.append(f"flagged: {self.flagged[cap.id]}")
            if g is not None and self.gold[g][0] != cap.text:
                lines.append(f"in gold as: {self.gold[g][0]}")
            lines.append("tick to accept into gold, untick to reject; edit to accept a changed text")
            return "\n".join(lines)
        return None

    # ---- writing (through ``writer``) ----------------------------------------------------
    def setData(self, index: Index, value: Any, role: int = Qt.ItemDataRole.EditRole) -> bool:  # noqa: N802
        if not index.isValid():
            return False
        r, c = index.row(), index.column()
        gold = list(self.gold)
        if c == len(self.names):
            if role != Qt.ItemDataRole.EditRole or r > len(gold):
                return False
            text = str(value).strip()
            if r == len(gold):
                if not text:
                    return False
                gold.append((text, None))
            elif not text:
                del gold[r]
            else:
                gold[r] = (text, gold[r][1])
            return self._write(gold)
        cap = self.caption_at(r, c)
        if cap is None:
            return False
        g = self._gold_index(cap.id)
        if role == Qt.ItemDataRole.CheckStateRole:
            on = _checked(value)
            if on and g is None:
                gold.append((cap.text, cap.id))
            elif not on and g is not None:
                del gold[g]
            else:
                return False
            return self._write(gold)
        if role == Qt.ItemDataRole.EditRole:
            text = str(value).strip()
            if not text:
                return False
            if g is None:
                gold.append((text, cap.id))
            else:
                gold[g] = (text, cap.id)
            return self._write(gold)
        return False

    def toggle(self, index: Index) -> bool:
        """Accept or reject the caption at ``index`` (the keyboard path)."""
        state = self.data(index, Qt.ItemDataRole.CheckStateRole)
        if state is None:
            return False
        return self.setData(index, state != Qt.CheckState.Checked, Qt.ItemDataRole.CheckStateRole)

    def accept_column(self, col: int) -> bool:
        """Accept every caption of the annotator in column ``col`` into gold, as one decision
        (those already accepted stay as they are)."""
        if not 0 <= col < len(self.cols):
            return False
        gold = list(self.gold)
        gold += [(c.text, c.id) for c in self.cols[col] if self._gold_index(c.id) is None]
        return len(gold) > len(self.gold) and self._write(gold)

    def _write(self, gold: list[GoldItem]) -> bool:
        if not self.writer(gold):
            return False
        old = self.rowCount()
        new = max([len(c) for c in self.cols] + [len(gold) + 1, 1])
        if new > old:
            self.beginInsertRows(QModelIndex(), old, new - 1)
            self.gold = gold
            self.endInsertRows()
        elif new < old:
            self.beginRemoveRows(QModelIndex(), new, old - 1)
            self.gold = gold
            self.endRemoveRows()
        else:
            self.gold = gold
        self.dataChanged.emit(self.index(0, 0), self.index(new - 1, len(self.names)))
        return True


def _checked(value: Any) -> bool:
    if isinstance(value, bool):
        return value
    if isinstance(value, Qt.CheckState):
        return value == Qt.CheckState.Checked
    return int(value) == Qt.CheckState.Checked.value
