"""Read-only Qt table models over the plain results of an export check.

:class:`RowsModel` shows a list of tuples under fixed headers (split counts, clips left out);
:class:`LeakageModel` shows leakage findings, blocking ones first, marked by text, icon, bold
type and a background of our own (never by colour alone). Neither model touches the project.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from PySide6.QtCore import QAbstractTableModel, QModelIndex, QPersistentModelIndex, Qt
from PySide6.QtGui import QBrush, QColor, QFont, QIcon, QPainter, QPixmap

Index = QModelIndex | QPersistentModelIndex
BLOCKING_BG = "#f6ddd3"   # pale brick
BLOCKING_FG = "#6e1f10"
BLOCKING_MARK = "#b5401f"
WARNING_MARK = "#b7791f"  # ochre
SEVERITY_TEXT = {"blocking": "Blocking", "warning": "Warning"}
CLIPS_SHOWN = 8  # clip ids listed in the cell; the tooltip lists them all


def _mark_icon(colour: str, blocking: bool) -> QIcon:
    """A small badge of our own: a filled square with a bar (blocking) or a ring (warning)."""
    pm = QPixmap(14, 14)
    pm.fill(Qt.GlobalColor.transparent)
    p = QPainter(pm)
    p.setRenderHint(QPainter.RenderHint.Antialiasing)
    p.setPen(Qt.PenStyle.NoPen)
    p.setBrush(QColor(colour))
    if blocking:
        p.drawRoundedRect(0, 0, 14, 14, 3, 3)
        p.setBrush(QColor("#ffffff"))
        p.drawRect(3, 6, 8, 2)
    else:
        p.drawEllipse(1, 1, 12, 12)
        p.setBrush(QColor("#ffffff"))
        p.drawRect(6, 3, 2, 5)
        p.drawRect(6, 10, 2, 2)
    p.end()
    return QIcon(pm)


def _natural(ids) -> list[str]:
    """Clip ids in reading order: 2 before 11 (numeric ids are strings here)."""
    return sorted(ids, key=lambda c: (len(c), c) if c.isdigit() else (1 << 30, c))


class _Table(QAbstractTableModel):
    """Counts and horizontal headers shared by the tables of this file (``headers`` and
    ``_count`` come from the subclass)."""

    headers: Sequence[str] = ()

    def _count(self) -> int:
        raise NotImplementedError

    def rowCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else self._count()

    def columnCount(self, parent: Index = QModelIndex()) -> int:  # noqa: N802
        return 0 if parent.isValid() else len(self.headers)

    def headerData(self, section: int, orientation: Qt.Orientation,  # noqa: N802
                   role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if (role == Qt.ItemDataRole.DisplayRole and orientation == Qt.Orientation.Horizontal
                and 0 <= section < len(self.headers)):
            return self.headers[section]
        return None


class RowsModel(_Table):
    """Rows of plain values under ``headers``; replace them all with :meth:`set_rows`."""

    def __init__(self, headers: Sequence[str], parent=None, *, total_row: bool = False) -> None:
        super().__init__(parent)
        self.headers = list(headers)
        self.rows: list[tuple] = []
        self.total_row = total_row  # the last row is a total: shown in bold

    def set_rows(self, rows: Sequence[Sequence[Any]], headers: Sequence[str] | None = None) -> None:
        self.beginResetModel()
        if headers is not None:
            self.headers = list(headers)
        self.rows = [tuple(r) for r in rows]
        self.endResetModel()

    def _count(self) -> int:
        return len(self.rows)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid() or index.row() >= len(self.rows):
            return None
        value = self.rows[index.row()][index.column()]
        if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.ToolTipRole):
            return str(value)
        if role == Qt.ItemDataRole.TextAlignmentRole and isinstance(value, int):
            return int(Qt.AlignmentFlag.AlignRight | Qt.AlignmentFlag.AlignVCenter)
        if role == Qt.ItemDataRole.FontRole and self.total_row and index.row() == len(self.rows) - 1:
            font = QFont()
            font.setBold(True)
            return font
        return None


class LeakageModel(_Table):
    """Leakage findings (objects with ``kind severity message clips``), blocking first; with
    rotating splits, a first "Split" column names the split each finding was found in."""

    HEADERS = ("Severity", "Kind", "What was found", "Files")

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.findings: list = []
        self.splits: list[str] | None = None  # split name per finding, or no split column
        self._icons = {"blocking": _mark_icon(BLOCKING_MARK, True),
                       "warning": _mark_icon(WARNING_MARK, False)}

    def set_findings(self, findings: Sequence, splits: Sequence[str] | None = None) -> None:
        """Show ``findings``; ``splits`` (one name per finding) adds the "Split" column."""
        rows = list(zip(findings, splits if splits is not None else [None] * len(findings)))
        rows.sort(key=lambda r: r[0].severity != "blocking")  # stable: split order kept
        self.beginResetModel()
        self.findings = [f for f, _ in rows]
        self.splits = [n for _, n in rows] if splits is not None else None
        self.endResetModel()

    @property
    def headers(self) -> tuple[str, ...]:
        return self.HEADERS if self.splits is None else ("Split", *self.HEADERS)

    def blocking_count(self) -> int:
        return sum(f.severity == "blocking" for f in self.findings)

    def finding(self, row: int):
        return self.findings[row]

    def _count(self) -> int:
        return len(self.findings)

    def data(self, index: Index, role: int = Qt.ItemDataRole.DisplayRole) -> Any:
        if not index.isValid() or index.row() >= len(self.findings):
            return None
        f, col = self.findings[index.row()], index.column()
        blocking = f.severity == "blocking"
        if self.splits is not None:
            col -= 1  # the split column comes first; the others keep their meaning
            if col < 0:
                if role in (Qt.ItemDataRole.DisplayRole, Qt.ItemDataRole.ToolTipRole):
                    return self.splits[index.row()]
                if role == Qt.ItemDataRole.BackgroundRole and blocking:
                    return QBrush(QColor(BLOCKING_BG))
                if role == Qt.ItemDataRole.ForegroundRole and blocking:
                    return QBrush(QColor(BLOCKING_FG))
                return None
        if role == Qt.ItemDataRole.DisplayRole:
            if col == 0:
                return SEVERITY_TEXT.get(f.severity, f.severity)
            if col == 1:
                return f.kind
            if col == 2:
                return f.message
            clips = _natural(getattr(f, "files", ()) or f.clips)  # media paths; ids if unknown
            shown = ", ".join(clips[:CLIPS_SHOWN])
            return shown + (f" … (+{len(clips) - CLIPS_SHOWN})" if len(clips) > CLIPS_SHOWN else "")
        if role == Qt.ItemDataRole.ToolTipRole:
            stop = ("Blocking: the export is refused unless you write anyway and give a reason."
                    if blocking else "Warning: recorded in the manifest; does not stop the export.")
            files = getattr(f, "files", ())
            return (f"{stop}\n{f.message}\n" + (f"Files: {', '.join(_natural(files))}\n" if files else "")
                    + f"Clip ids: {', '.join(_natural(f.clips))}")
        if role == Qt.ItemDataRole.DecorationRole and col == 0:
            return self._icons.get(f.severity)
        if role == Qt.ItemDataRole.BackgroundRole and blocking:
            return QBrush(QColor(BLOCKING_BG))
        if role == Qt.ItemDataRole.ForegroundRole and blocking:
            return QBrush(QColor(BLOCKING_FG))
        if role == Qt.ItemDataRole.FontRole and blocking and col == 0:
            font = QFont()
            font.setBold(True)
            return font
        if role == Qt.ItemDataRole.AccessibleTextRole:
            where = f"{self.splits[index.row()]}: " if self.splits is not None else ""
            return f"{where}{SEVERITY_TEXT.get(f.severity, f.severity)} {f.kind}: {f.message}"
        return None


def split_label_rows(assignment: dict[str, str], labels: dict[str, str],
                     splits: Sequence[str]) -> tuple[list[str], list[tuple]]:
    """Headers and rows of a label x split count table, with a total row and column.

    ``assignment`` maps clip id to split, ``labels`` clip id to its exported label; split
    columns follow ``splits`` (then any other split met, by name).
    """
    cols = list(splits) + sorted(set(assignment.values()) - set(splits))
    table: dict[str, dict[str, int]] = {}
    for clip, split in assignment.items():
        row = table.setdefault(labels.get(clip) or "(none)", {})
        row[split] = row.get(split, 0) + 1
    rows = [(label, *(table[label].get(s, 0) for s in cols), sum(table[label].values()))
            for label in sorted(table)]
    totals = [sum(table[l].get(s, 0) for l in table) for s in cols]
    rows.append(("All labels", *totals, sum(totals)))
    return ["Label", *cols, "Total"], rows
