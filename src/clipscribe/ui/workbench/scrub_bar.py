"""The scrub bar: a strip of thumbnails with the motion curve drawn under it and the playhead.

Press or drag anywhere to move the playhead; the bar only emits ``seekRequested``.
"""

from __future__ import annotations

import numpy as np
from PySide6.QtCore import QPointF, QRectF, QSize, Qt, Signal, Slot
from PySide6.QtGui import QColor, QImage, QPainter, QPainterPath, QPen
from PySide6.QtWidgets import QSizePolicy, QWidget

from .. import theme

STRIP_H = 56
CURVE_H = 30


class ScrubBar(QWidget):
    seekRequested = Signal(int)

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("scrubBar")
        self.setAccessibleName("Scrub bar")
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Fixed)
        self.setMinimumHeight(STRIP_H + CURVE_H + 4)
        self.frame_count = 1
        self.playhead = 0
        self.thumbs: list[QImage] = []
        self.curve: np.ndarray | None = None
        self.status = ""  # "thumbnails 40%" while jobs run
        self.status_box = QRectF()  # where the status was last drawn

    def sizeHint(self) -> QSize:
        return QSize(800, STRIP_H + CURVE_H + 4)

    # ---- inputs ----------------------------------------------------------------------
    def reset(self, frame_count: int) -> None:
        self.frame_count, self.playhead = max(1, frame_count), 0
        self.thumbs, self.curve, self.status = [], None, ""
        self.update()

    @Slot(int)
    def set_playhead(self, frame: int) -> None:
        self.playhead = frame
        self.update()

    def set_thumbnails(self, images: list[QImage]) -> None:
        self.thumbs = list(images)
        self.update()

    def set_curve(self, values: np.ndarray) -> None:
        self.curve = np.asarray(values, dtype=np.float64)
        self.update()

    def set_status(self, text: str) -> None:
        self.status = text
        self.update()

    # ---- geometry ----------------------------------------------------------------------
    def x_of(self, frame: float) -> float:
        return frame * self.width() / self.frame_count

    def frame_at(self, x: float) -> int:
        return int(min(self.frame_count - 1, max(0, x * self.frame_count / max(1, self.width()))))

    # ---- drawing -----------------------------------------------------------------------
    def paintEvent(self, event) -> None:  # noqa: N802
        p = QPainter(self)
        p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        p.setRenderHint(QPainter.RenderHint.SmoothPixmapTransform, True)
        w = self.width()
        p.fillRect(self.rect(), QColor(theme.TRACK_BG))
        if self.thumbs:
            step = w / len(self.thumbs)
            for j, img in enumerate(self.thumbs):
                cell = QRectF(j * step, 0, step, STRIP_H)
                # crop the thumbnail to the cell's aspect so nothing is squashed
                sw = min(img.width(), img.height() * cell.width() / STRIP_H)
                src = QRectF((img.width() - sw) / 2, 0, sw, img.height())
                p.drawImage(cell, img, src)
        self._draw_curve(p, w)
        if self.status:  # on a solid box: the thumbnails under it may be any colour
            box = p.boundingRect(QRectF(6, 0, w - 12, STRIP_H), Qt.AlignmentFlag.AlignCenter,
                                 self.status).adjusted(-6, -2, 6, 2)
            self.status_box = box
            p.setRenderHint(QPainter.RenderHint.Antialiasing, False)
            p.fillRect(box, QColor(theme.STATUS_BG))
            p.setPen(QColor(theme.STATUS_TEXT))
            p.drawText(box, Qt.AlignmentFlag.AlignCenter, self.status)
            p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
        x = self.x_of(self.playhead + 0.5)
        p.setPen(QPen(QColor(theme.PLAYHEAD), 2))
        p.drawLine(QPointF(x, 0), QPointF(x, self.height()))

    def _draw_curve(self, p: QPainter, w: int) -> None:
        top, h = STRIP_H + 2, CURVE_H
        p.fillRect(QRectF(0, top, w, h), QColor(theme.VIEWER_BG))
        if self.curve is None or not len(self.curve):
            return
        v = self.curve
        peak = float(np.nanmax(v)) or 1.0
        n = len(v)
        path = QPainterPath(QPointF(0, top + h))
        for i, value in enumerate(v):
            x = (i + 0.5) * w / n
            path.lineTo(QPointF(x, top + h - (h - 2) * float(value) / peak))
        path.lineTo(QPointF(w, top + h))
        path.closeSubpath()
        p.fillPath(path, QColor(*theme.CURVE_FILL))
        p.setPen(QPen(QColor(theme.CURVE), 1.2))
        p.drawPath(path)

    # ---- mouse -------------------------------------------------------------------------
    def mousePressEvent(self, event) -> None:  # noqa: N802
        if event.button() == Qt.MouseButton.LeftButton:
            self.seekRequested.emit(self.frame_at(event.position().x()))

    def mouseMoveEvent(self, event) -> None:  # noqa: N802
        if event.buttons() & Qt.MouseButton.LeftButton:
            self.seekRequested.emit(self.frame_at(event.position().x()))
