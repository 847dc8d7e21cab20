"""The viewer: draws the current frame, aspect-correct and sharp on high-density screens."""

from __future__ import annotations

from PySide6.QtCore import QRectF, QSize, Qt, Slot
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
