"""Stacked tracks: every annotator's segments on one timeline, one row each, with the gold
track at the bottom and one playhead across all rows. Click a segment to jump to its start,
click empty track to move the playhead; drag an edge of a gold segment to move it (snapped to
frame boundaries, previewed while dragging). The widget only shows and emits: a finished drag
emits the whole new gold list, and whoever writes it reloads the tracks."""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, QSize, Qt, Signal, Slot
from PySide6.QtGui import QColor, QPainter, QPen
from PySide6.QtWidgets import QSizePolicy, QWidget

from .. import theme
from ..segment_look import label_text, paint_segment

ROW_H = 24
GAP = 4
NAME_W = 112
GOLD = "gold"
EDGE_PX = 5  # how close to a gold segment's edge a press grabs it
SCRUB_PX = 4  # how far a pressed mouse moves before it drags the playhead (a click stays a click)


def segment_text(label: str | None, start: int, end: int) -> str:
    """A segment as written on a track: first and last frame, both included."""
    return f"{label_text(label)} {start}–{end - 1}"


class TrackStack(QWidget):
    seekRequested = Signal(int)
    goldEdited = Signal(list)  # [(label, start, end)] after an edge drag

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("trackStack")
        self.setAccessibleName("Segments of every annotator")
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self.colours: dict[str, str] = {}
        self.tracks: list[tuple[str, list[tuple[str, int, int]]]] = []
        self.frame_count = 1
        self.playhead = 0
        self._drag: tuple[int, str, list] | None = None  # (gold index, "start"|"end", before)
        self._press_x: float | None = None  # a press away from the gold edges, until released
        self._scrubbing = False  # that press has moved far enough to drag the playhead
        self.setMouseTracking(True)  # the resize cursor over gold edges

    def set_tracks(self, tracks: list[tuple[str, list[tuple[str, int, int]]]],
                   frame_count: int) -> None:
        """``tracks``: (name, [(label, start, end)]) in display order; gold last."""
        self.tracks, self.frame_count = list(tracks), max(1, frame_count)
        self.setFixedHeight(self.sizeHint().height())
        self.update()

    def sizeHint(self) -> QSize:  # noqa: N802
        return QSize(700, max(1, len(self.tracks)) * (ROW_H + GAP) + 22)

    @Slot(int)
    def set_playhead(self, frame: int) -> None:
        self.playhead = frame
        self.update()

    def x_of(self, frame: float) -> float:
        return NAME_W + frame * (self.width() - NAME_W - 6) / self.frame_count

    def frame_at(self, x: float) -> int:
        w = max(1, self.width() - NAME_W - 6)
        return int(min(self.frame_count - 1, max(0, (x - NAME_W) * self.frame_count / w)))

    def paintEvent(self, event) -> None:  # noqa: N802
        p = QPainter(self)
        p.fillRect(self.rect(), QColor(theme.VIEWER_BG))
        for i, (name, segs) in enumerate(self.tracks):
            y = i * (ROW_H + GAP) + 2
            gold = name == GOLD
            p.setPen(QColor(theme.PLAYHEAD if gold else theme.MUTED_TEXT))
            p.drawText(QRectF(6, y, NAME_W - 10, ROW_H), Qt.AlignmentFlag.AlignVCenter,
                       "Gold" if gold else name)
            lane = QRectF(NAME_W, y, self.width() - NAME_W - 6, ROW_H)
            p.fillRect(lane, QColor(theme.TRACK_BG))
            if gold:
                p.setPen(QPen(QColor(theme.PLAYHEAD), 1, Qt.PenStyle.DashLine))
                p.drawRect(lane.adjusted(0, 0, -1, -1))
            for label, start, end in segs:
                r = QRectF(self.x_of(start), y + 2, max(2.0, self.x_of(end) - self.x_of(start)),
                           ROW_H - 4)
                paint_segment(p, r, label, self.colours, text=segment_text(label, start, end))
            if not segs:
                p.setPen(QColor(theme.MUTED_TEXT))
                p.drawText(lane.adjusted(6, 0, 0, 0), Qt.AlignmentFlag.AlignVCenter,
                           "no gold segments yet" if gold else "no segments")
        bottom = len(self.tracks) * (ROW_H + GAP)
        p.setPen(QColor(theme.TRACK_GRID))
        step = max(1, self.frame_count // 12)
        for f in range(0, self.frame_count + 1, step):
            x = self.x_of(f)
            p.drawLine(QPointF(x, bottom), QPointF(x, bottom + 4))
            p.setPen(QColor(theme.MUTED_TEXT))
            p.drawText(QRectF(x - 20, bottom + 4, 40, 14), Qt.AlignmentFlag.AlignCenter, str(f))
            p.setPen(QColor(theme.TRACK_GRID))
        x = self.x_of(self.playhead + 0.5)
        p.setPen(QPen(QColor(theme.PLAYHEAD), 2))
        p.drawLine(QPointF(x, 0), QPointF(x, bottom))

    # ---- gold edges ------------------------------------------------------------------------
    def _gold_row(self) -> int | None:
        return next((i for i, (name, _) in enumerate(self.tracks) if name == GOLD), None)

    def edge_at(self, x: float, y: float) -> tuple[int, str] | None:
        """(index, "start"|"end") of the gold segment edge under (x, y), or None."""
        row = self._gold_row()
        if row is None or int(y // (ROW_H + GAP)) != row:
            return None
        for i, (_, start, end) in enumerate(self.tracks[row][1]):
            for side, f in (("end", end), ("start", start)):
                if abs(x - self.x_of(f)) <= EDGE_PX:
                    return i, side
        return None

    def boundary_at(self, x: float) -> int:
        """The frame boundary nearest ``x`` (0..frame_count): where a dragged edge lands."""
        w = max(1, self.width() - NAME_W - 6)
        return int(min(self.frame_count, max(0, round((x - NAME_W) * self.frame_count / w))))

    def mouseMoveEvent(self, event) -> None:  # noqa: N802
        x, y = event.position().x(), event.position().y()
        if self._press_x is not None:  # a press away from the gold edges drags the playhead
            self._scrubbing = self._scrubbing or abs(x - self._press_x) >= SCRUB_PX
            f = self.frame_at(x)
            if self._scrubbing and f != self.playhead:
                self.seekRequested.emit(f)
            return
        if self._drag is None:
            edge = self.edge_at(x, y)
            self.setCursor(Qt.CursorShape.SizeHorCursor if edge else Qt.CursorShape.ArrowCursor)
            return
        i, side, _ = self._drag
        row = self._gold_row()
        segs = list(self.tracks[row][1])
        label, start, end = segs[i]
        f = self.boundary_at(x)
        segs[i] = (label, min(f, end - 1), end) if side == "start" else (label, start, max(f, start + 1))
        self.tracks[row] = (GOLD, segs)
        self.update()

    def mouseReleaseEvent(self, event) -> None:  # noqa: N802
        if event.button() == Qt.MouseButton.LeftButton:
            self._press_x, self._scrubbing = None, False
        if self._drag is None or event.button() != Qt.MouseButton.LeftButton:
            return
        before, self._drag = self._drag[2], None
        after = self.tracks[self._gold_row()][1]
        if after != before:
            self.goldEdited.emit(sorted(after, key=lambda g: (g[1], g[2])))

    def mousePressEvent(self, event) -> None:  # noqa: N802
        if event.button() != Qt.MouseButton.LeftButton:
            return
        x, y = event.position().x(), event.position().y()
        row = int(y // (ROW_H + GAP))
        if x < NAME_W:
            return
        edge = self.edge_at(x, y)
        if edge is not None:
            self._drag = (*edge, list(self.tracks[self._gold_row()][1]))
            return
        self._press_x = x
        if 0 <= row < len(self.tracks):
            for _, start, end in self.tracks[row][1]:
                if self.x_of(start) <= x < self.x_of(end):
                    self.seekRequested.emit(start)
                    return
        self.seekRequested.emit(self.frame_at(x))
