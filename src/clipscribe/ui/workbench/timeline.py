"""The timeline: one track of the annotator's segments under the scrub bar and, with blind mode
off, one thin muted read-only track per other annotator under it.

Drag a segment's edge to move it (snapped to whole frames); click a segment to select it;
click empty track to move the playhead. The widget changes nothing itself: it emits
``edgeMoved``/``segmentSelected``/``seekRequested`` and the window writes through the project.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, QSize, Qt, Signal, Slot
from PySide6.QtGui import QColor, QPainter, QPen
from PySide6.QtWidgets import QSizePolicy, QWidget

from .. import theme
from ..segment_look import label_text, paint_segment
from .segment_model import SegmentModel

TRACK_H = 34
EDGE_GRAB_PX = 6
SCALE_H = 18         # ticks and the frame count under one's own track
OTHER_H = 12         # one other annotator's track
OTHER_ALPHA = 110    # their label colours, faded over the track background
MIN_SPAN = 10        # zoomed in furthest: this many frames across the track


def _height(n_others: int) -> int:
    """Widget height for one's own track, its scale and ``n_others`` thin tracks under it."""
    return TRACK_H + SCALE_H + (4 + OTHER_H * n_others if n_others else 0)


class Timeline(QWidget):
    seekRequested = Signal(int)
    segmentSelected = Signal(int)          # segment id, or -1 for none
    edgeMoved = Signal(int, int, int)      # segment id, new start, new end (exclusive)

    def __init__(self, model: SegmentModel, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("timeline")
        self.setAccessibleName("Timeline")
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self.setMinimumHeight(TRACK_H + SCALE_H)
        self.setMouseTracking(True)
        self.model = model
        for sig in (model.modelReset, model.rowsInserted, model.rowsRemoved, model.dataChanged):
            sig.connect(self.update)
        self.colours: dict[str, str] = {}
        self.frame_count = 1
        self.playhead = 0
        self.selected: int | None = None
        self.pending_start: int | None = None
        self.loop: tuple[int, int] | None = None
        self._drag: tuple[int, str, int, int] | None = None  # id, "start"|"end", start, end
        self.others: list[tuple[str, list]] = []  # (annotator, their segments), read only
        self.view_start, self.view_span = 0, 1  # the frames shown: zoomed in, a part of the clip

    def sizeHint(self) -> QSize:
        return QSize(800, _height(len(self.others)))

    def set_others(self, segments: list) -> None:
        """Show other annotators' segments (SegmentInfo), one thin track per person."""
        by: dict[str, list] = {}
        for g in segments:
            by.setdefault(g.annotator, []).append(g)
        others = sorted(by.items())
        if len(others) != len(self.others):
            self.setMinimumHeight(_height(len(others)))
            self.updateGeometry()
        self.others = others
        self.update()

    # ---- inputs ------------------------------------------------------------------------
    def reset(self, frame_count: int) -> None:
        self.frame_count, self.playhead = max(1, frame_count), 0
        self.view_start, self.view_span = 0, self.frame_count
        self.selected = self.pending_start = self.loop = None
        self._drag = None
        self.update()

    @Slot(int)
    def set_playhead(self, frame: int) -> None:
        self.playhead = frame
        if not self.view_start <= frame < self.view_start + self.view_span:  # keep it in view
            self._show_from(frame - self.view_span // 2)
        self.update()

    # ---- zoom --------------------------------------------------------------------------
    def zoom(self, factor: float) -> None:
        """Show ``factor`` times fewer frames (more below 1), centred on the playhead; at
        least MIN_SPAN frames, at most the whole clip."""
        span = int(round(self.view_span / factor))
        self.view_span = max(min(MIN_SPAN, self.frame_count), min(self.frame_count, span))
        self._show_from(self.playhead - self.view_span // 2)
        self.update()

    def zoom_all(self) -> None:
        self.view_start, self.view_span = 0, self.frame_count
        self.update()

    def _show_from(self, start: int) -> None:
        self.view_start = max(0, min(self.frame_count - self.view_span, start))

    def set_selected(self, segment_id: int | None) -> None:
        self.selected = segment_id
        self.update()

    def set_pending_start(self, frame: int | None) -> None:
        self.pending_start = frame
        self.update()

    # ---- geometry ----------------------------------------------------------------------
    def x_of(self, frame: float) -> float:
        return (frame - self.view_start) * self.width() / self.view_span

    def frame_at(self, x: float) -> int:
        """The frame boundary nearest ``x`` (0 .. frame_count): edges snap to whole frames."""
        f = self.view_start + round(x * self.view_span / max(1, self.width()))
        return int(min(self.frame_count, max(0, f)))

    def _hit(self, x: float) -> tuple[int, str] | None:
        """(segment id, "start"|"end"|"body") under ``x``; edges win within a few pixels."""
        best = None
        for g in self.model.segments():
            for edge, f in (("start", g.start), ("end", g.end)):
                d = abs(self.x_of(f) - x)
                if d <= EDGE_GRAB_PX and (best is None or d < best[0]):
                    best = (d, g.id, edge)
        if best:
            return best[1], best[2]
        for g in self.model.segments():
            if self.x_of(g.start) <= x < self.x_of(g.end):
                return g.id, "body"
        return None

    # ---- drawing -----------------------------------------------------------------------
    def paintEvent(self, event) -> None:  # noqa: N802
        p = QPainter(self)
        w, top = self.width(), 4
        p.fillRect(self.rect(), QColor(theme.TRACK_BG))
        p.setPen(QColor(theme.TRACK_GRID))
        fps_step = max(1, self.view_span // 20)
        first = self.view_start - self.view_start % fps_step
        for f in range(first, min(self.frame_count, self.view_start + self.view_span) + 1, fps_step):
            x = self.x_of(f)
            p.drawLine(QPointF(x, top + TRACK_H), QPointF(x, top + TRACK_H + 4))
        if self.loop:
            a, b = self.loop
            p.fillRect(QRectF(self.x_of(a), 0, self.x_of(b) - self.x_of(a), 3), QColor(theme.MARK))
        for g in self.model.segments():
            start, end = g.start, g.end
            if self._drag and self._drag[0] == g.id:
                start, end = self._drag[2], self._drag[3]
            r = QRectF(self.x_of(start), top, max(2.0, self.x_of(end) - self.x_of(start)), TRACK_H)
            paint_segment(p, r, g.label, self.colours, text=label_text(g.label))
            if g.id == self.selected:
                p.setPen(QPen(QColor(theme.SELECTED), 2))
                p.drawRect(r.adjusted(1, 1, -1, -1))
        if not self.model.rowCount() and self.pending_start is None:
            p.setPen(QColor(theme.MUTED_TEXT))
            p.drawText(QRectF(8, top, w - 16, TRACK_H), Qt.AlignmentFlag.AlignVCenter,
                       "No segments yet: B marks a start at the playhead, E marks the end")
        if self.pending_start is not None:
            x = self.x_of(self.pending_start)
            p.setPen(QPen(QColor(theme.MARK), 2, Qt.PenStyle.DashLine))
            p.drawLine(QPointF(x, 0), QPointF(x, top + TRACK_H))
            p.drawLine(QPointF(x, top + TRACK_H), QPointF(self.x_of(self.playhead + 1), top + TRACK_H))
        self._paint_others(p, top + TRACK_H + SCALE_H)
        x = self.x_of(self.playhead + 0.5)
        p.setPen(QPen(QColor(theme.PLAYHEAD), 2))
        p.drawLine(QPointF(x, 0), QPointF(x, self.height()))
        p.setPen(QColor(theme.MUTED_TEXT))
        zoomed = self.view_span < self.frame_count
        p.drawText(QRectF(4, top + TRACK_H, w - 8, 14), Qt.AlignmentFlag.AlignRight,
                   f"frames {self.view_start}–{self.view_start + self.view_span - 1} of "
                   f"{self.frame_count}" if zoomed else f"{self.frame_count} frames")

    def _paint_others(self, p: QPainter, y0: float) -> None:
        """Thin faded tracks of the other annotators, each named at its left end."""
        font = p.font()
        font.setPointSizeF(max(6.0, font.pointSizeF() * 0.75))
        p.setFont(font)
        for i, (who, segs) in enumerate(self.others):
            y = y0 + i * OTHER_H
            p.fillRect(QRectF(0, y, self.width(), OTHER_H - 2), QColor(theme.OTHERS_BG))
            for g in segs:
                paint_segment(p, QRectF(self.x_of(g.start), y + 1,
                                        max(2.0, self.x_of(g.end) - self.x_of(g.start)), OTHER_H - 4),
                              g.label, self.colours, alpha=OTHER_ALPHA)
            p.setPen(QColor(theme.MUTED_TEXT))
            p.drawText(QRectF(4, y, 200, OTHER_H - 2), Qt.AlignmentFlag.AlignVCenter, who)

    # ---- mouse -------------------------------------------------------------------------
    def mousePressEvent(self, event) -> None:  # noqa: N802
        if event.button() != Qt.MouseButton.LeftButton:
            return
        x = event.position().x()
        hit = self._hit(x)
        if hit is None:
            self.segmentSelected.emit(-1)
            self.seekRequested.emit(min(self.frame_count - 1, self.frame_at(x)))
            return
        seg_id, part = hit
        self.segmentSelected.emit(seg_id)
        g = self.model.by_id(seg_id)
        if part != "body" and g is not None:
            self._drag = (seg_id, part, g.start, g.end)

    def mouseMoveEvent(self, event) -> None:  # noqa: N802
        x = event.position().x()
        if self._drag is None:
            hit = self._hit(x)
            edge = hit is not None and hit[1] != "body"
            self.setCursor(Qt.CursorShape.SizeHorCursor if edge else Qt.CursorShape.ArrowCursor)
            return
        seg_id, part, start, end = self._drag
        f = self.frame_at(x)
        if part == "start":
            start = min(f, end - 1)
        else:
            end = max(f, start + 1)
        self._drag = (seg_id, part, start, end)
        self.update()

    def mouseReleaseEvent(self, event) -> None:  # noqa: N802
        if self._drag is None:
            return
        seg_id, _, start, end = self._drag
        self._drag = None
        g = self.model.by_id(seg_id)
        if g is not None and (start, end) != (g.start, g.end):
            self.edgeMoved.emit(seg_id, start, end)
        self.update()
