"""The viewer: draws the current frame, aspect-correct and sharp on high-density screens."""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, QSize, Qt, Slot
from PySide6.QtGui import QColor, QImage, QPainter, QPalette
from PySide6.QtWidgets import QSizePolicy, QWidget

from . import theme


class FrameView(QWidget):
    """Shows one QImage letterboxed into the widget; knows nothing about projects."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("viewer")
        self.setAccessibleName("Viewer")
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)
        self.setSizePolicy(QSizePolicy.Policy.Expanding, QSizePolicy.Policy.Expanding)
        self.setMinimumSize(320, 200)
        self._image: QImage | None = None
        self.frame_number: int | None = None
        self._note = "No clip open"
        self._scaled: tuple | None = None
        #: the motion look: (mode "flow" | "blend", flow QImage, frame, px/frame at full
        #: brightness, legend QImage), or None
        self.overlay: tuple | None = None
        self.setAutoFillBackground(True)
        pal = self.palette()
        pal.setColor(QPalette.ColorRole.Window, QColor(theme.VIEWER_BG))
        self.setPalette(pal)

    def sizeHint(self) -> QSize:
        return QSize(800, 520)

    @Slot(int, QImage)
    def show_frame(self, frame: int, image: QImage) -> None:
        self._image, self.frame_number = image, frame
        self.update()

    def set_note(self, text: str) -> None:
        """Text shown when there is no frame (loading, errors)."""
        self._note = text
        if self._image is None:
            self.update()

    def clear(self, note: str = "Loading…") -> None:
        self._image, self.frame_number, self._note = None, None, note
        self.overlay = None
        self.update()

    def set_overlay(self, overlay: tuple | None) -> None:
        """Show optical flow in place of (mode "flow") or over ("blend") the picture, with its
        legend; None shows the picture alone. See :attr:`overlay`."""
        self.overlay = overlay
        self.update()

    def target_rect(self) -> QRectF:
        """Where the frame lands: the largest rectangle of the image's aspect that fits."""
        if self._image is None or self._image.isNull():
            return QRectF()
        iw, ih = self._image.width(), self._image.height()
        scale = min(self.width() / iw, self.height() / ih)
        w, h = iw * scale, ih * scale
        return QRectF((self.width() - w) / 2, (self.height() - h) / 2, w, h)

    def paintEvent(self, event) -> None:  # noqa: N802 - Qt name
        p = QPainter(self)
        if self._image is None:
            p.setPen(QColor(theme.MUTED_TEXT))
            p.drawText(self.rect(), Qt.AlignmentFlag.AlignCenter, self._note)
            return
        rect = self.target_rect()
        dpr = self.devicePixelRatioF()
        # Scale once to device pixels and tag the result with the ratio: on a 2x screen the
        # frame is drawn from 2x pixels instead of being blown up from logical ones.
        want = QSize(max(1, round(rect.width() * dpr)), max(1, round(rect.height() * dpr)))
        if self._scaled is None or self._scaled[0] is not self._image or self._scaled[1] != want:
            img = self._image.scaled(want, Qt.AspectRatioMode.IgnoreAspectRatio,
                                     Qt.TransformationMode.SmoothTransformation)
            img.setDevicePixelRatio(dpr)
            self._scaled = (self._image, want, img)
        p.drawImage(rect.topLeft(), self._scaled[2])
        if self.overlay is not None:
            self._paint_flow(p, rect)

    def _paint_flow(self, p: QPainter, rect: QRectF) -> None:
        mode, flow, frame, scale, legend = self.overlay
        if mode == "flow":
            p.fillRect(rect, QColor(0, 0, 0))
            p.setOpacity(1.0)
        else:
            p.setOpacity(0.75)
            p.setCompositionMode(QPainter.CompositionMode.CompositionMode_Plus)
        p.drawImage(rect, flow)
        p.setCompositionMode(QPainter.CompositionMode.CompositionMode_SourceOver)
        p.setOpacity(1.0)
        # the legend: the colour wheel and what full brightness means
        text = (f"Optical flow, frame {max(0, frame - 1)}→{frame}\ncolour: direction\n"
                f"brightness: speed,\nfull at {scale:.1f} px/frame")
        size = p.fontMetrics().boundingRect(0, 0, 1000, 1000, 0, text).size()
        box = QRectF(rect.left() + 8, rect.top() + 8, legend.width() + size.width() + 32,
                     max(legend.height(), size.height()) + 16)
        p.fillRect(box, QColor(20, 24, 28, 210))
        p.drawImage(box.topLeft() + QPointF(8, 8), legend)
        p.setPen(QColor("#f2f4f5"))
        p.drawText(box.adjusted(legend.width() + 20, 8, -4, -4),
                   Qt.AlignmentFlag.AlignLeft | Qt.AlignmentFlag.AlignTop, text)
